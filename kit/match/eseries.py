"""Buyable part values: rounding to the IEC 60063 E12 and E24 preferred-number series.

The series hold the mantissas of one decade; a value is rounded to the nearest series value
(in ratio, i.e. on a log scale) in its decade or the neighbouring ones. The values below are
those of IEC 60063 (*Preferred number series for resistors and capacitors*), written from
memory; they follow 10^(k/n) rounded to two significant figures, with the historical
exceptions (2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2) that the standard keeps.

References
----------
.. [1] IEC 60063:2015, *Preferred number series for resistors and capacitors* (series values
   from memory).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from kit.match.circuit import UNITS, MatchDesign, Part
from kit.units import eng

E12: tuple[float, ...] = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
E24: tuple[float, ...] = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
                          3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)
SERIES = {"E12": E12, "E24": E24}
REF_E = "IEC 60063:2015, preferred number series E12/E24 (series values from memory)"


def series_values(series: str = "E24") -> tuple[float, ...]:
    """Mantissas of one decade of ``series`` ("E12" or "E24")."""
    try:
        return SERIES[series.upper()]
    except KeyError:
        raise ValueError(f"series must be one of {sorted(SERIES)}, got {series!r}") from None


def round_to_series(value, series: str = "E24") -> np.ndarray | float:
    """Nearest value of the series (nearest in ratio) [same unit as ``value``].

    Parameters
    ----------
    value : float or array_like
        Positive values.
    series : {"E12", "E24"}

    References
    ----------
    .. [1] IEC 60063:2015 (series values from memory).
    """
    mant = np.asarray(series_values(series))
    v = np.asarray(value, dtype=float)
    if np.any(~(v > 0)) or np.any(~np.isfinite(v)):
        raise ValueError(f"values to round must be finite and > 0, got {value!r}")
    dec = np.floor(np.log10(v))
    cand = np.concatenate([mant / 10.0, mant, [10.0]])  # neighbours across the decade edges
    c = cand[None, :] * 10.0 ** dec.reshape(-1, 1)
    err = np.abs(np.log(c / v.reshape(-1, 1)))
    out = c[np.arange(c.shape[0]), np.argmin(err, axis=1)]
    # clean float noise, e.g. 3.3e-9 * 1.0000000000000002
    out = np.array([float(f"{x:.3g}") for x in out]).reshape(v.shape)
    return float(out) if out.ndim == 0 else out


def round_design(design: MatchDesign, series: str = "E24") -> MatchDesign:
    """The design with its inductors and capacitors rounded to an E-series.

    A transformer takes the whole-turns ratio suggested when it was designed (the turns
    ratio is not an E-series value).

    Returns
    -------
    MatchDesign
        A copy with rounded parts; ``info["rounding"]`` gives, per part, the designed and
        rounded values and the relative change.

    References
    ----------
    .. [1] IEC 60063:2015 (series values from memory).
    """
    series_values(series)
    parts, changes, words = [], {}, []
    for p in design.parts:
        if p.kind == "T":
            new = p.value if p.turns is None else p.turns[0] / p.turns[1]
            words.append(f"{p.name} Np/Ns {eng(p.value, '')} -> {eng(new, '')}")
        else:
            new = float(round_to_series(p.value, series))
            unit = UNITS[p.kind]
            words.append(f"{p.name} {eng(p.value, unit)} -> {eng(new, unit)}")
        changes[p.name] = {"designed": p.value, "rounded": new, "change": new / p.value - 1.0}
        parts.append(Part(p.name, p.kind, p.placement, new, p.turns))
    out = design.with_parts(parts, f"values rounded to {series.upper()} ({REF_E}): "
                            + ", ".join(words), rounding=changes, series=series.upper())
    return dataclasses.replace(out, title=f"{design.title} [{series.upper()} values]")
