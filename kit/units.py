"""Units: the one suffix rule of the kit's names, and engineering scaling for display.

Every public parameter, result field and summary column that carries a unit ends in the
suffix of that unit (SI, no prefixes): see :data:`SUFFIXES` and ``docs/nomenclature.md``.
:func:`unit_of` reads the unit off a name; :func:`scale_for` and :func:`eng` turn values
into prefixed units for axes, tables and reports, so that no widget or report scales by
hand.

References
----------
.. [1] BIPM, *The International System of Units (SI)*, 9th ed., 2019: unit symbols and
   the decimal prefixes (Table 7).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["SUFFIXES", "PREFIXES", "unit_of", "circuit_unit", "scale_for", "eng", "to_unit",
           "from_unit"]

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
    (1e-6, "MHz")``. Chosen from the largest finite magnitude; (1.0, unit) for none.
    """
    v = np.abs(np.asarray(values, dtype=float))
    v = v[np.isfinite(v) & (v > 0)]
    if v.size == 0 or not unit:
        return 1.0, unit
    exp = int(math.floor(math.log10(float(v.max())) / 3.0) * 3)
    exp = max(min(PREFIXES), min(max(PREFIXES), exp))
    return 10.0 ** -exp, PREFIXES[exp] + unit


def eng(value: float, unit: str, digits: int = 4) -> str:
    """Engineering notation with an SI prefix, e.g. ``eng(3.9e-8, "H") == "39 nH"``.

    NaN and None read "not found"; zero and infinities are printed without a prefix.
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "not found"
    if not np.isfinite(value) or value == 0:
        return f"{value:g} {unit}".strip()
    factor, prefixed = scale_for([value], unit)
    return f"{value * factor:.{digits}g} {prefixed}".strip()


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
