"""The option line of a Touchstone file (``# <unit> <parameter> <format> R <ohms>``).

The options may appear in any order (from memory of the specification's option-line
section) and each one left out takes the specification's default. The parsed options are
written back in one canonical order for the reader (:func:`option_text`), so the reader
never sees a line it would read differently.

References
----------
.. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 1.1 (2002), the option
   line and its defaults; Version 2.0 (2009), section "Option Line".
"""

from __future__ import annotations

import math
from typing import Any, Callable

FREQ_UNITS = {"HZ": 1.0, "KHZ": 1e3, "MHZ": 1e6, "GHZ": 1e9}
PARAMS = {"S", "Y", "Z", "H", "G"}
FORMATS = {"DB", "MA", "RI"}
#: The specification's defaults for options left out: '# GHz S MA R 50'.
DEFAULT_OPTION: dict[str, Any] = {"unit": "GHZ", "parameter": "S", "format": "MA", "r_ohm": 50.0}
_KIND = {**{u: "unit" for u in FREQ_UNITS}, **{p: "parameter" for p in PARAMS},
         **{f: "format" for f in FORMATS}}
_WORDS = {"unit": "frequency unit", "parameter": "parameter", "format": "data format",
          "r_ohm": "reference impedance"}
_FIX = "write one of each, e.g. '# MHz S RI R 50'"

#: ``add(severity, message, line, fix, code)`` of a scan.
Add = Callable[[str, str, "int | None", "str | None", str], None]


def parse_ohms(tok: str) -> float | complex:
    """A reference impedance token: a real number or, outside the specification, ``(re+imj)``.

    Raises ValueError for anything else, and for a value that is not finite or whose real
    part is not positive (a reference impedance of a passive port has a positive real part).
    """
    if tok.startswith("("):
        value: float | complex = complex(tok.strip("()").replace(" ", ""))
        if value.imag == 0:
            value = value.real
    else:
        value = float(tok)
    if not (math.isfinite(abs(value)) and value.real > 0):
        raise ValueError(f"{tok!r} is not a positive, finite impedance")
    return value


def parse_option(tokens: list[str], add: Add, lineno: int) -> dict[str, Any] | None:
    """Options of the option line (tokens after ``#``); None after an error finding.

    ``r_ohm`` is None when 'R' ends the line without a value (legal only when the comments
    give a reference per frequency; the caller decides). An option given twice with the same
    value is a warning, with two different values an error.
    """
    opt: dict[str, Any] = dict(DEFAULT_OPTION)
    seen: dict[str, str] = {}

    def given(kind: str, tok: str, value: Any) -> bool:
        if kind in seen:
            if opt[kind] != value:
                add("error", f"malformed option line: the {_WORDS[kind]} is given twice "
                    f"({seen[kind]} and {tok})", lineno, _FIX, "bad-option")
                return False
            add("warning", f"the option line repeats the {_WORDS[kind]} {tok}; the repeat is "
                "ignored", lineno, _FIX, "repeated-option-token")
        seen[kind] = tok
        opt[kind] = value
        return True

    i = 0
    while i < len(tokens):
        t = tokens[i].upper()
        if t in _KIND:
            if not given(_KIND[t], tokens[i], t):
                return None
        elif t == "R":
            if i + 1 >= len(tokens):
                if not given("r_ohm", "R", None):
                    return None
                break
            tok = tokens[i + 1]
            try:
                value = parse_ohms(tok)
            except ValueError:
                add("error", f"malformed option line: reference impedance {tok!r} is not a "
                    "positive number", lineno, "write e.g. '# MHz S RI R 50'", "bad-option")
                return None
            if isinstance(value, complex):
                add("warning", f"complex reference impedance {tok} in the option line is "
                    "outside the Touchstone specification", lineno,
                    "use a real reference, or [Reference] in a version 2 file", "complex-reference")
            if not given("r_ohm", tok, value):
                return None
            i += 1
        else:
            add("error", f"malformed option line: unknown unit, parameter or format "
                f"{tokens[i]!r}", lineno,
                "use Hz/kHz/MHz/GHz, S/Y/Z/H/G, DB/MA/RI and 'R <ohms>'", "bad-option")
            return None
        i += 1
    return opt


def option_text(opt: dict[str, Any]) -> str:
    """The option line in the order every reader expects: ``# <unit> <param> <format> R <ohms>``."""
    r = opt.get("r_ohm")
    r = DEFAULT_OPTION["r_ohm"] if r is None else r
    return f"# {opt['unit']} {opt['parameter']} {opt['format']} R {r!r}"
