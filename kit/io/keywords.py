"""Keyword lines of Touchstone 2 files (``[Number of Ports] 2`` ...), checked one by one.

Each known keyword is checked (value, order, repetition) and written back in canonical form
for the reader; an unknown keyword or the information block is left out of the reader's
text with a warning.

References
----------
.. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009) and
   Version 2.1 (2024): the keywords, their arguments and their order ([Version] first,
   [Number of Ports] before [Reference], every header keyword before [Network Data]).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

VERSIONS = ("2.0", "2.1")
#: Keywords that shape the data; they must come before the first data line.
HEADER = {"NUMBER OF PORTS", "TWO-PORT DATA ORDER", "MATRIX FORMAT", "REFERENCE",
          "MIXED-MODE ORDER", "NUMBER OF FREQUENCIES", "NUMBER OF NOISE FREQUENCIES"}
_CANON = {"NUMBER OF PORTS": "Number of Ports", "TWO-PORT DATA ORDER": "Two-Port Data Order",
          "MATRIX FORMAT": "Matrix Format", "NUMBER OF FREQUENCIES": "Number of Frequencies",
          "NUMBER OF NOISE FREQUENCIES": "Number of Noise Frequencies",
          "MIXED-MODE ORDER": "Mixed-Mode Order", "NETWORK DATA": "Network Data",
          "NOISE DATA": "Noise Data", "END": "End"}
_MIXED = re.compile(r"^(s\d+|[dc]\d+,\d+)$")


@dataclass
class LineState:
    """Where the line scan is (internal)."""

    in_data: bool = True        # version 1 data follow the option line directly
    in_noise: bool = False
    in_info: bool = False
    after_end: bool = False
    data_started: bool = False
    content_seen: bool = False  # a line that is not a comment came before
    option_at: int | None = None
    ref_index: int | None = None
    ref_pending: int = 0
    nf_declared: tuple[int, int] | None = None
    seen: dict[str, int] = field(default_factory=dict)


def _whole(arg: str, least: int) -> int | None:
    try:
        n = int(arg)
    except ValueError:
        return None
    return n if n >= least else None


def _mixed_mode_ok(arg: str, n: int) -> bool:
    """The order names every port once (as scikit-rf maps it: D to the lower, C to the
    higher port of a pair)."""
    toks = arg.lower().split()
    if len(toks) != n or not all(_MIXED.match(t) for t in toks):
        return False
    order = []
    for t in toks:
        if t[0] == "s":
            order.append(int(t[1:]) - 1)
        else:
            p1, p2 = sorted(int(e) - 1 for e in t[1:].split(","))
            order.append(p1 if t[0] == "d" else p2)
    return sorted(order) == list(range(n))


def keyword_line(scan, st: LineState, key: str, arg: str, lineno: int) -> str:
    """Check one keyword line; returns the reader's line ('' to leave it out)."""
    def err(msg: str, fix: str | None = None, code: str = "bad-keyword") -> str:
        scan.add("error", msg, lineno, fix, code)
        return ""

    name = f"[{_CANON.get(key, key.title())}]"
    if key == "VERSION":
        if st.content_seen:
            return err("[Version] must be the first line that is not a comment", "move "
                       "'[Version] 2.0' to the top of the file", "keyword-order")
        if arg not in VERSIONS:
            return err(f"[Version] {arg!r} is not 2.0 or 2.1", "write '[Version] 2.0'",
                       "bad-version")
        scan.version = arg
        st.in_data = False
        st.seen[key] = lineno
        return f"[Version] {arg}"
    if not scan.version.startswith("2"):
        return err(f"keyword {name} in a file without [Version]: a Touchstone 1 file has no "
                   "keywords", "add '[Version] 2.0' as the first line, or delete the keyword",
                   "keyword-order")
    if key in ("BEGIN INFORMATION", "END INFORMATION"):
        st.in_info = key == "BEGIN INFORMATION"
        return ""
    if key not in _CANON and key != "REFERENCE":
        scan.add("warning", f"unknown keyword {name}; it is ignored", lineno,
                 "check the keyword's spelling", "unknown-keyword")
        return ""
    if key in st.seen:
        return err(f"{name} appears twice (first on line {st.seen[key]})",
                   "delete the second one")
    st.seen[key] = lineno
    if key in HEADER and st.data_started:
        return err(f"{name} comes after the network data began", f"move {name} before "
                   "[Network Data]", "keyword-order")
    if key in ("REFERENCE", "MIXED-MODE ORDER") and scan.nports is None:
        return err(f"{name} comes before [Number of Ports]", "put [Number of Ports] first",
                   "keyword-order")
    if key == "NUMBER OF PORTS":
        n = _whole(arg, 1)
        if n is None:
            return err(f"[Number of Ports] {arg!r} is not a whole number of 1 or more")
        scan.nports = n
        return f"[Number of Ports] {n}"
    if key in ("NUMBER OF FREQUENCIES", "NUMBER OF NOISE FREQUENCIES"):
        n = _whole(arg, 1 if key == "NUMBER OF FREQUENCIES" else 0)
        if n is None:
            return err(f"{name} {arg!r} is not a whole number of 1 or more")
        if key == "NUMBER OF FREQUENCIES":
            st.nf_declared = (n, lineno)
        return f"{name} {n}"
    if key == "TWO-PORT DATA ORDER":
        scan.two_port_order = arg.upper()
        if scan.two_port_order not in ("12_21", "21_12"):
            return err(f"[Two-Port Data Order] {arg!r} must be 12_21 or 21_12")
        return f"{name} {scan.two_port_order}"
    if key == "MATRIX FORMAT":
        if arg.upper() not in ("FULL", "LOWER", "UPPER"):
            return err(f"[Matrix Format] {arg!r} must be Full, Lower or Upper")
        scan.matrix_format = arg.upper()
        return f"{name} {arg.title()}"
    if key == "MIXED-MODE ORDER":
        if not _mixed_mode_ok(arg, scan.nports):
            return err(f"[Mixed-Mode Order] {arg!r} does not name each of the {scan.nports} "
                       "port(s) once", "write e.g. 'D2,1 C2,1' for a two-port")
        return f"{name} {' '.join(arg.lower().split())}"
    if key == "REFERENCE":
        scan.reference = []
        st.ref_index = lineno - 1
        reference_values(scan, arg, lineno)
        st.ref_pending = max(0, scan.nports - len(scan.reference))
        return ""  # written once every value is known (continuation lines)
    if key == "NETWORK DATA":
        if "NOISE DATA" in st.seen:
            return err("[Network Data] comes after [Noise Data]", "put the network data first",
                       "keyword-order")
        st.in_data, st.in_noise, st.data_started = True, False, True
    elif key == "NOISE DATA":
        st.in_data, st.in_noise = False, True
    elif key == "END":
        st.in_data = st.in_noise = False
        st.after_end = True
    return name


def reference_values(scan, text: str, lineno: int) -> None:
    """Append the [Reference] values of one line to ``scan.reference`` (error findings for
    a value that is not a positive, finite number)."""
    for tok in text.split():
        try:
            v = float(tok)
        except ValueError:
            v = math.nan
        if not (math.isfinite(v) and v > 0):
            scan.add("error", f"[Reference] value {tok!r} is not a positive number", lineno,
                     "give one reference impedance in ohm per port", "bad-reference")
            continue
        scan.reference.append(v)
