"""Units: the one suffix rule of the kit's names, and engineering scaling for display.

Every public parameter, result field and summary column that carries a unit ends in the
suffix of that unit (SI, no prefixes): see :data:`SUFFIXES` and ``docs/nomenclature.md``.
:func:`unit_of` reads the unit off a name; :func:`scale_for` turns values into prefixed
units for axes, and the number formatter (:func:`quantity`, its trimmed form :func:`eng`,
:func:`delta`, :func:`percent`, :func:`column_label`, :func:`table`) writes every number a
user reads, so that no widget or report scales or rounds by hand.

References
----------
.. [1] BIPM, *The International System of Units (SI)*, 9th ed., 2019: unit symbols and
   the decimal prefixes (Table 7).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["SUFFIXES", "PREFIXES", "UNPREFIXED", "unit_of", "circuit_unit", "scale_for", "eng", "tick_text",
           "to_unit", "from_unit", "quantity", "complex_quantity", "delta", "percent", "column_label",
           "table"]

#: name suffix -> unit symbol. `_s` is seconds only; siemens is `_siemens`.
SUFFIXES: tuple[tuple[str, str], ...] = (
    ("_hz", "Hz"), ("_ohm", "Ω"), ("_siemens", "S"), ("_f", "F"), ("_h", "H"),
    ("_s", "s"), ("_m", "m"), ("_db", "dB"), ("_deg", "°"), ("_degc", "°C"),
    ("_v", "V"), ("_a", "A"), ("_w", "W"), ("_ppm", "ppm"), ("_pct", "%"),
    ("_m2_per_n", "m²/N"), ("_db_per_m", "dB/m"),
)

#: Decimal prefixes by power of ten (BIPM SI brochure, Table 7); "µ" is the micro sign.
PREFIXES: dict[int, str] = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k",
                            6: "M", 9: "G", 12: "T"}

#: Units that take no SI prefix: logarithmic and relative units, angles, the degree
#: Celsius, and compound units where a prefix would be ambiguous (BIPM SI brochure,
#: 9th ed., sections 4 and 5.4; "mdB" or "k°" are not written).
UNPREFIXED: frozenset[str] = frozenset({"dB", "°", "°C", "%", "ppm", "dB/m", "m²/N", "1"})

#: Circuit element symbols (first letters of fit parameters) -> unit.
_ELEMENTS = {"R": "Ω", "L": "H", "C": "F", "G": "S"}
_DIMENSIONLESS = {"kt", "k31", "k33", "k_eff", "qm", "q", "tan_delta", "vswr"}


def unit_of(name: str) -> str:
    """Unit symbol of a parameter, field or column by its name ("" when dimensionless).

    Reads the suffix rule first (longest suffix wins), then the circuit-element names of
    the fit models (``C0``, ``R1``, ``L1``, ``ESR``, ``ESL``).
    """
    low = name.lower()
    for suffix, unit in sorted(SUFFIXES, key=lambda su: -len(su[0])):
        if low.endswith(suffix):
            return unit
    return circuit_unit(name)


def circuit_unit(name: str) -> str:
    """Unit of a circuit-model parameter by its symbol: R/ESR ohm, L/ESL henry, C farad."""
    if name.lower() in _DIMENSIONLESS:
        return ""
    if name.startswith("ESR"):
        return "Ω"
    if name.startswith("ESL"):
        return "H"
    head = name[:1]
    rest = name[1:]
    if head in _ELEMENTS and (rest == "" or rest[0].isdigit() or rest in ("s", "p", "T")):
        return _ELEMENTS[head]
    return ""


def scale_for(values, unit: str) -> tuple[float, str]:
    """Factor and prefixed unit that bring ``values`` to between 1 and 1000.

    ``x * factor`` is in the returned unit, e.g. ``scale_for([1.6e6, 2.4e6], "Hz") ==
    (1e-6, "MHz")``. Chosen from the largest finite magnitude; (1.0, unit) for none, for a
    dimensionless quantity and for the units of :data:`UNPREFIXED`.
    """
    v = np.abs(np.asarray(values, dtype=float))
    v = v[np.isfinite(v) & (v > 0)]
    if v.size == 0 or not unit or unit in UNPREFIXED:
        return 1.0, unit
    exp = int(math.floor(math.log10(float(v.max())) / 3.0) * 3)
    exp = max(min(PREFIXES), min(max(PREFIXES), exp))
    return 10.0 ** -exp, PREFIXES[exp] + unit


def eng(value: float, unit: str, digits: int = 4) -> str:
    """:func:`quantity` with trailing zeros dropped: ``eng(3.9e-8, "H") == "39 nH"``.

    For titles, legends and part values, where "39 nH" reads better than "39.00 nH"; the
    prefix, rounding, minus sign and missing text are those of :func:`quantity` (there is
    one SI-prefix formatter). ``digits`` is the most significant digits shown.

    References
    ----------
    .. [1] BIPM, *The International System of Units (SI)*, 9th ed., 2019, Table 7 (decimal
       prefixes).
    """
    return quantity(value, unit, digits=digits, trim=True)



def tick_text(value: float, unit: str, digits: int = 4) -> str:
    """:func:`eng` without the unit and without the space, for tick and grid labels whose
    axis or caption names the unit: ``tick_text(2500.0, "Ω") == "2.5k"``,
    ``tick_text(5e-5, "S") == "50µ"``, ``tick_text(25.0, "Ω") == "25"``."""
    return eng(value, unit, digits).removesuffix(unit).replace(" ", "")

def _prefix_exp(unit: str) -> int:
    """Power of ten of the prefix of ``unit`` (0 without a prefix), e.g. -3 for "mS"."""
    bases = {u for _, u in SUFFIXES}
    if unit in bases:
        return 0
    for exp, p in PREFIXES.items():
        if p and unit.startswith(p) and unit[len(p):] in bases:
            return exp
    raise ValueError(f"unknown display unit {unit!r}: an SI prefix and one of "
                     f"{', '.join(sorted(bases))}")


def to_unit(values, unit: str):
    """Values in SI units expressed in the prefixed ``unit``: ``to_unit(2e-3, "mS") == 2.0``.

    The one home of fixed display units of views and widgets (admittance in mS, span
    controls in MHz, group delay in ns); the prefixes are those of :data:`PREFIXES`.

    References
    ----------
    .. [1] BIPM, *The International System of Units (SI)*, 9th ed., 2019, Table 7 (decimal
       prefixes).
    """
    return _scale(values, -_prefix_exp(unit))


def from_unit(values, unit: str):
    """Values given in the prefixed ``unit`` back in SI units: ``from_unit(1.5, "MHz") == 1.5e6``.

    The inverse of :func:`to_unit` (same prefixes, BIPM SI brochure Table 7).
    """
    return _scale(values, _prefix_exp(unit))


def _scale(values, exp: int):
    """values * 10**exp, multiplying or dividing by an exact power of ten."""
    v = values if np.isscalar(values) else np.asarray(values)
    return v * 10.0 ** exp if exp >= 0 else v / 10.0 ** -exp


# -- the number formatter --------------------------------------------------------------------
#
# One rule for every number a user reads (tables, reasons, reports, read-outs):
#
# * a value is printed with ``digits`` significant digits, trailing zeros kept, in the SI
#   prefix that puts it between 1 and 1000, a space before the unit (none before "°");
# * a negative number carries the true minus sign U+2212 ("−"), never a hyphen;
# * a standard uncertainty is printed "value ± u" with ``u`` to two significant digits in
#   its *own* prefix ("2.032 nF ± 1.5 pF"), and the value is never printed finer than the
#   last digit of ``u`` (GUM 7.2.6); the "±" here states a standard uncertainty, not an
#   interval of a high level of confidence (GUM 7.2.2, fourth form, and its note);
# * a missing value reads "not available", an infinite one "∞".

MINUS = "\u2212"
MISSING = "not available"


def _missing(value) -> bool:
    if value is None:
        return True
    try:
        return math.isnan(float(value))
    except (TypeError, ValueError):
        return True


def _place(x: float, digits: int) -> int:
    """Power of ten of the last of ``digits`` significant digits of ``x`` (x != 0), after
    rounding (999.96 at four digits rounds up to 1000, whose last digit is the ones)."""
    e = math.floor(math.log10(abs(x)))
    r = round(abs(x), digits - 1 - e)
    if r >= 10.0 ** (e + 1):
        e += 1
    return e - (digits - 1)


def _prefix_for(x: float, unit: str) -> int:
    """Power of ten of the SI prefix that brings the (rounded) ``x`` between 1 and 1000."""
    if not unit or unit in UNPREFIXED or x == 0:
        return 0
    exp = int(math.floor(math.log10(abs(x)) / 3.0) * 3)
    return max(min(PREFIXES), min(max(PREFIXES), exp))


def _join(number: str, unit: str) -> str:
    if not unit:
        return number
    return f"{number}{unit}" if unit == "°" else f"{number} {unit}"


def _fixed(x: float, decimals: int) -> str:
    """``x`` with ``decimals`` decimals, the true minus sign, no negative zero."""
    text = f"{abs(x):.{max(decimals, 0)}f}"
    return (MINUS if x < 0 and float(text) != 0 else "") + text


def _parts(value: float, unit: str, place: int) -> tuple[str, str]:
    """(number, prefixed unit) of ``value`` rounded at the power of ten ``place``."""
    rounded = round(value, -place)
    exp = _prefix_for(rounded if rounded != 0 else value, unit)
    return _fixed(rounded / 10.0 ** exp, exp - place), (PREFIXES[exp] if exp else "") + unit


def _infinite(value: float, unit: str) -> str:
    return _join(("" if value > 0 else MINUS) + "∞", unit)


def quantity(value, unit: str = "", stderr=None, digits: int = 4, trim: bool = False) -> str:
    """A value with its unit in an SI prefix, and its standard uncertainty if given.

    Parameters
    ----------
    value : float or None
        The value in the SI unit ``unit`` (no prefix) [unit].
    unit : str
        Unit symbol without prefix ("Hz", "F", "Ω", "dB", "°", "" for a number).
    stderr : float, optional
        Standard uncertainty of ``value`` [unit]; NaN says it could not be estimated.
    digits : int
        Significant digits of the value (trailing zeros kept).
    trim : bool
        Drop trailing zeros (and a bare decimal point) of the value: "39 nH" for
        "39.00 nH" (see :func:`eng`); the uncertainty is never trimmed.

    Returns
    -------
    str
        ``quantity(1975126.7, "Hz") == "1.975 MHz"``, ``quantity(2.03226e-9, "F",
        1.5e-12) == "2.032 nF ± 1.5 pF"``; "not available" for None or NaN, "∞ Hz" for an
        infinite value. Units of :data:`UNPREFIXED` and numbers without unit take no
        prefix; a dimensionless number outside 10^-3..10^6 is written with a power of ten.

    References
    ----------
    .. [1] BIPM, *The International System of Units (SI)*, 9th ed., 2019: prefixes
       (Table 7); a space between number and unit except for the degree of plane angle
       (8th ed. section 5.3.3, 9th ed. section 5.4.3, from memory).
    .. [2] JCGM 100:2008 (GUM), section 7.2.2: how a result is stated with its combined
       standard uncertainty (the "±" form names the standard uncertainty and not a
       confidence interval); section 7.2.6: the uncertainty to at most two significant
       digits, the estimate rounded consistently (from memory).
    """
    if _missing(value):
        return MISSING
    x = float(value)
    if math.isinf(x):
        return _infinite(x, unit)
    digits = max(int(digits), 1)
    if x == 0:
        number, shown = _fixed(0.0, digits - 1), unit
    elif (not unit or unit in UNPREFIXED) and not 1e-3 <= abs(x) < 1e6:
        number, shown = _power_of_ten(x, digits, trim), unit
    else:
        place = _place(x, digits)
        u = None if stderr is None else float(stderr)
        if u is not None and math.isfinite(u) and u > 0:
            place = max(place, _place(u, 2))
        number, shown = _parts(x, unit, place)
    head = _join(_trimmed(number) if trim else number, shown)
    if stderr is None:
        return head
    return head + " ± " + _uncertainty(stderr, unit)


def _uncertainty(stderr, unit: str) -> str:
    if _missing(stderr):
        return MISSING
    u = abs(float(stderr))
    if math.isinf(u):
        return _infinite(u, unit)
    if u == 0:
        return _join("0", unit)
    if (not unit or unit in UNPREFIXED) and not 1e-3 <= u < 1e6:
        return _join(_power_of_ten(u, 2), unit)
    return _join(*_parts(u, unit, _place(u, 2)))


def complex_quantity(value, unit: str = "", digits: int = 4) -> str:
    """A complex value as "12.30 Ω − j4.500 Ω": both parts by :func:`quantity`.

    Parameters
    ----------
    value : complex
        The value in the SI unit ``unit`` [unit].
    unit : str
        Unit symbol without prefix ("Ω", "S").
    digits : int
        Significant digits of each part.

    Returns
    -------
    str
        Real part, the sign of the imaginary part (the true minus sign U+2212), "j" and
        the magnitude of the imaginary part, each part in its own SI prefix.

    References
    ----------
    .. [1] BIPM, *The International System of Units (SI)*, 9th ed., 2019, Table 7 (decimal
       prefixes); IEC 60027-1 writes the imaginary unit j in electrical engineering (from
       memory).
    """
    v = complex(value)
    sign = "+" if v.imag >= 0 else MINUS
    return (f"{quantity(v.real, unit, digits=digits)} {sign} "
            f"j{quantity(abs(v.imag), unit, digits=digits)}")


_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def _power_of_ten(x: float, digits: int, trim: bool = False) -> str:
    """"1.234 × 10⁻⁷": a mantissa of ``digits`` significant digits and a power of ten."""
    place = _place(x, digits)
    e = place + digits - 1
    mantissa = _fixed(round(x, -place) / 10.0 ** e, digits - 1)
    return f"{_trimmed(mantissa) if trim else mantissa} × 10{str(e).translate(_SUPERSCRIPT)}"


def _trimmed(number: str) -> str:
    """A number text without trailing zeros after its decimal point: "39.00" -> "39"."""
    if "." not in number or "×" in number:
        return number
    return number.rstrip("0").rstrip(".")


def percent(fraction, digits: int = 2, signed: bool = False) -> str:
    """A fraction as a percentage to ``digits`` significant digits: ``0.0366 -> "3.7 %"``.

    ``signed`` writes "+" or the true minus sign; NaN or None give "not available". The
    space before "%" follows the BIPM SI brochure (9th ed., section 5.4.7, from memory).
    """
    if _missing(fraction):
        return MISSING
    p = 100.0 * float(fraction)
    if math.isinf(p):
        return _infinite(p, "%")
    if p == 0:  # a signed zero keeps its sign: a tiny difference whose ratio underflowed
        return ((MINUS if math.copysign(1.0, p) < 0 else "+") if signed else "") + "0 %"
    text = quantity(p if signed else abs(p), "%", digits=digits)
    return "+" + text if signed and p > 0 else text


def delta(value, unit: str = "", relative_to=None, digits: int = 3) -> str:
    """A signed difference with its unit, and relative to a reference if given.

    ``delta(-75126.7, "Hz", relative_to=1.95e6) == "−75.1 kHz (−3.9 %)"``: always a sign
    ("+" or the true minus U+2212), ``digits`` significant digits; the percentage is
    ``value / |relative_to|`` (omitted when the reference is zero or missing).
    """
    if _missing(value):
        return MISSING
    x = float(value)
    text = quantity(abs(x), unit, digits=digits)
    if x > 0:
        text = "+" + text
    elif x < 0:
        text = MINUS + text
    if relative_to is not None and not _missing(relative_to) and float(relative_to) != 0:
        ratio = x / abs(float(relative_to))
        text += f" ({percent(math.copysign(ratio, x), signed=True)})"
    return text


_ELEMENT_STEM = ("c0", "c1", "c2", "r0", "r1", "r2", "l1", "l2", "esr", "esl", "cp", "rs")


def column_label(name: str) -> tuple[str, str]:
    """(label, unit) of a column by the suffix rule: ``"fs_hz" -> ("fs", "Hz")``,
    ``"c0_f" -> ("C0", "F")``, ``"k_eff" -> ("k_eff", "")``; circuit elements with a
    capital initial ("Cp", "R1"), ESR and ESL in capitals."""
    unit = unit_of(name)
    low = name.lower()
    if low in _DIMENSIONLESS:  # a symbol of its own: k_eff, tan_delta, qm
        return name, ""
    stem = name
    for suffix, u in sorted(SUFFIXES, key=lambda su: -len(su[0])):
        if low.endswith(suffix) and u == unit:
            stem = name[: -len(suffix)]
            break
    tokens, words = stem.split("_"), []
    while tokens:  # a two-part symbol (k_eff, tan_delta) stays whole anywhere in the name
        if len(tokens) > 1 and f"{tokens[0]}_{tokens[1]}".lower() in _DIMENSIONLESS:
            words.append(f"{tokens.pop(0)}_{tokens.pop(0)}")
        else:
            words.append(tokens.pop(0))
    head, rest = words[0], " ".join(words[1:])
    if head.lower() in _ELEMENT_STEM or (head[:1].lower() in "rlc" and head[1:].isdigit()
                                         and head[1:] != ""):
        head = head.upper() if head.lower() in ("esr", "esl") else head[0].upper() + head[1:]
    return head + (" " + rest if rest else ""), unit


def table(frame, digits=4, labels: dict | None = None):
    """A DataFrame for reading: unit-suffixed columns get "label [prefixed unit]" headers
    and formatted cells; other columns are kept as they are.

    Parameters
    ----------
    frame : pandas.DataFrame
        Columns named by the suffix rule (``fs_hz``, ``c0_f``, ``qm``...); the frame is
        not modified.
    digits : int or dict
        Significant digits of the largest value of a column (one for all, or by column
        name, default 4 for the others).
    labels : dict, optional
        Column name -> label where the one of :func:`column_label` does not suit
        (``{"r_ohm": "R"}``); the unit is still read off the name.

    Returns
    -------
    pandas.DataFrame
        Text cells. A numeric column whose values lie within a factor of 1000 shares one
        prefix, named in its header ("fs [MHz]" over "1.975"); a wider column gives each
        cell its own prefix and unit. Missing values are empty cells.
    """
    import pandas as pd

    out = {}
    for name in frame.columns:
        col = frame[name]
        n = digits.get(name, 4) if isinstance(digits, dict) else int(digits)
        numeric = pd.api.types.is_numeric_dtype(col) and not pd.api.types.is_bool_dtype(col)
        if not numeric:
            out[str(name)] = col
            continue
        label, unit = column_label(str(name))
        label = (labels or {}).get(name, label)
        if pd.api.types.is_integer_dtype(col) and not unit:
            out[label] = col.map(str)
            continue
        header, cells = _column(col.to_numpy(dtype=float), unit, n)
        out[label + (f" [{header}]" if header else "")] = cells
    return pd.DataFrame(out, index=frame.index)


def _column(v: np.ndarray, unit: str, digits: int) -> tuple[str, list[str]]:
    """Header unit and cells of one numeric column (see :func:`table`)."""
    finite = np.abs(v[np.isfinite(v) & (v != 0)])
    if finite.size and finite.max() / finite.min() >= 1000.0 or (
            finite.size and (not unit or unit in UNPREFIXED)
            and not 1e-3 <= finite.max() < 1e6):
        return "", ["" if _missing(x) else quantity(x, unit, digits=digits) for x in v]
    top = float(finite.max()) if finite.size else 1.0
    exp = _prefix_for(top, unit)
    place = _place(top, digits)
    shown = (PREFIXES[exp] if exp else "") + unit
    cells = ["" if _missing(x) else (_infinite(x, "") if math.isinf(x)
             else _fixed(round(x, -place) / 10.0 ** exp, exp - place)) for x in v]
    return shown, cells
