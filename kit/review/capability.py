r"""Process capability of one judged quantity over a lot: n, mean, spread, Cp and Cpk.

:func:`capability` reads the values of one summary column over the parts of a lot and the
bounds of its limit, and returns a :class:`Capability` (a :class:`kit.results.Result`):
how many values, their mean and sample standard deviation, the capability indices and how
many values lie beyond each bound. An index that cannot be computed is NaN and the result
says why (``reason``), never raises.

References
----------
.. [1] NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6 "What is Process
   Capability?" (https://www.itl.nist.gov/div898/handbook/pmc/section1/pmc16.htm):
   Cp = (USL - LSL) / (6 s), Cpu = (USL - mean) / (3 s), Cpl = (mean - LSL) / (3 s),
   Cpk = min(Cpu, Cpl).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from kit.results import Result
from kit.units import unit_of

__all__ = ["Capability", "capability"]


@dataclass(frozen=True)
class Capability(Result):
    """Capability of one quantity: sample figures, indices and counts beyond the bounds.

    Attributes
    ----------
    name : str
        The quantity (summary column), e.g. ``"fs_hz"``.
    n : int
        Finite values used (NaN and infinite values are left out and counted in
        ``n_missing``).
    mean, std : float
        Sample mean and sample standard deviation (``ddof=1``) [unit of the quantity].
    lower, upper : float
        The bounds (NaN where the limit has none) [unit of the quantity].
    cp : float
        (upper - lower) / (6 std) [1]; NaN unless both bounds are given.
    cpl, cpu : float
        (mean - lower) / (3 std) and (upper - mean) / (3 std) [1]; NaN without that bound.
    cpk : float
        The smaller of ``cpl`` and ``cpu`` (the one present for a one-sided limit) [1].
    n_below, n_above : int
        Values below ``lower`` and above ``upper``.
    n_missing : int
        Values that were NaN, infinite or missing.
    ok : bool
        False when no index could be computed; ``reason`` then says why.
    reason : str
        Why indices are NaN (empty when everything was computed).

    References
    ----------
    .. [1] NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6 "What is Process
       Capability?".
    """

    name: str = ""
    n: int = 0
    mean: float = math.nan
    std: float = math.nan
    lower: float = math.nan
    upper: float = math.nan
    cp: float = math.nan
    cpl: float = math.nan
    cpu: float = math.nan
    cpk: float = math.nan
    n_below: int = 0
    n_above: int = 0
    n_missing: int = 0
    ok: bool = False
    reason: str = ""

    @property
    def _ROWS(self):  # noqa: N802 - the Result protocol's row table, in the quantity's unit
        u = unit_of(self.name)
        return (("n", "values", ""), ("mean", "mean", u), ("std", "standard deviation", u),
                ("cp", "Cp", ""), ("cpk", "Cpk", ""), ("n_below", "below the lower bound", ""),
                ("n_above", "above the upper bound", ""))

    @property
    def heading(self) -> str:
        return f"capability of {self.name}" if self.name else "capability"


def _bound(b: Any) -> float:
    return math.nan if b is None else float(b)


def capability(values: Any, lower: float | None = None, upper: float | None = None,
               name: str = "") -> Capability:
    r"""Process capability of a set of values against a lower and/or upper bound.

    Parameters
    ----------
    values : array_like of float
        One value per part [unit of the quantity]; NaN, infinite and None values are left
        out (counted in ``n_missing``).
    lower, upper : float, optional
        Lower and upper specification limits, LSL and USL [unit of the quantity].
    name : str
        The quantity's name (shown in the heading).

    Returns
    -------
    Capability
        With the sample standard deviation s (``ddof=1``) and mean m:

        .. math::

            C_p = \frac{USL - LSL}{6 s}, \qquad
            C_{pk} = \min\left(\frac{USL - m}{3 s}, \frac{m - LSL}{3 s}\right)

        A one-sided limit gives only the side it has (``cpl`` or ``cpu``) and Cpk equal to
        it; Cp is NaN. With fewer than two values, or all values equal (s = 0), the
        indices are NaN and ``reason`` says why. The counts beyond the bounds are always
        given.

    Raises
    ------
    ValueError
        When ``lower`` is above ``upper``.

    References
    ----------
    .. [1] NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6 "What is Process
       Capability?" (definitions of Cp, Cpk, Cpl and Cpu).
    """
    lo, hi = _bound(lower), _bound(upper)
    if lo > hi:
        raise ValueError(f"capability of {name or 'a quantity'}: lower bound {lo:g} is above "
                         f"the upper bound {hi:g}")
    raw = np.asarray([math.nan if v is None else v for v in np.ravel(values)], dtype=float)
    x = raw[np.isfinite(raw)]
    n = int(x.size)
    base = {"name": name, "n": n, "lower": lo, "upper": hi,
            "n_below": int(np.sum(x < lo)) if math.isfinite(lo) else 0,
            "n_above": int(np.sum(x > hi)) if math.isfinite(hi) else 0,
            "n_missing": int(raw.size - n)}
    if n:
        base["mean"] = float(np.mean(x))
    if n < 2:
        return Capability(**base, reason=f"{n} value(s): a spread needs at least two")
    s = float(np.std(x, ddof=1))
    base["std"] = s
    if not math.isfinite(lo) and not math.isfinite(hi):
        return Capability(**base, reason="no bound given")
    if s == 0.0:
        return Capability(**base, reason="all values are equal (standard deviation 0)")
    m = base["mean"]
    cpl = (m - lo) / (3.0 * s) if math.isfinite(lo) else math.nan
    cpu = (hi - m) / (3.0 * s) if math.isfinite(hi) else math.nan
    cp = (hi - lo) / (6.0 * s) if math.isfinite(lo) and math.isfinite(hi) else math.nan
    cpk = float(np.nanmin([cpl, cpu]))
    reason = "" if math.isfinite(cp) else "one-sided limit: Cp needs both bounds; Cpk is " + (
        "Cpl" if math.isfinite(cpl) else "Cpu")
    return Capability(**base, cp=cp, cpl=cpl, cpu=cpu, cpk=cpk, ok=True, reason=reason)
