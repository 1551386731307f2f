"""Residual check of a corrected capture against a part of known impedance."""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from kit.capture import CaptureError
from kit.corrections.base import as_capture
from kit.network.coerce import sweep
from kit.network.immittance import SingularPointsWarning
from kit.results import Result, nan_if_none
from kit.units import delta, eng

_ARRAYS = ("rel", "z_ohm", "expected_ohm", "freq_hz")


@dataclass(frozen=True, eq=False)
class Residual(Result):
    """How far a corrected capture of a known part is from its expected impedance.

    Attributes
    ----------
    worst_rel : float
        Largest ``|Z - Z_expected| / |Z_expected|`` over the valid points [1].
    f_hz : float
        Frequency of the worst point [Hz].
    rel : numpy.ndarray
        The relative error at every frequency (NaN where Z could not be computed) [1].
    z_ohm : numpy.ndarray
        Measured (corrected) impedance [ohm].
    expected_ohm : numpy.ndarray
        Expected impedance on the same grid [ohm].
    freq_hz : numpy.ndarray
        The grid [Hz].
    median_rel : float
        Median relative error [1].
    limit : float
        The acceptance limit asked for [1]; NaN when none was given.
    margin : float
        ``limit - worst_rel`` [1] (positive: inside the limit by that much); NaN without a
        limit.
    invalid_points : int
        Points where Z was not finite (ideal open) and that were left out.
    name : str
        The capture checked.
    ok, reason : bool, str
        False with a plain reason when no point had a finite impedance.
    """

    worst_rel: float
    f_hz: float
    rel: np.ndarray = field(repr=False)
    z_ohm: np.ndarray = field(repr=False)
    expected_ohm: np.ndarray = field(repr=False)
    freq_hz: np.ndarray = field(repr=False)
    median_rel: float = math.nan
    limit: float = math.nan
    margin: float = math.nan
    invalid_points: int = 0
    name: str = ""
    ok: bool = True
    reason: str = ""

    _ROWS = (("worst_rel", "worst relative error", ""), ("f_hz", "at", "Hz"),
             ("median_rel", "median relative error", ""), ("limit", "limit", ""),
             ("margin", "margin to the limit", ""), ("invalid_points", "points left out", ""))

    def __post_init__(self) -> None:
        # arrays back from lists (from_dict), missing scalars as NaN
        for key in _ARRAYS:
            v = getattr(self, key)
            dtype = complex if key in ("z_ohm", "expected_ohm") else float
            object.__setattr__(self, key, np.asarray(v, dtype=dtype))
        for key in ("worst_rel", "f_hz", "median_rel", "limit", "margin"):
            object.__setattr__(self, key, nan_if_none(getattr(self, key)))

    def __str__(self) -> str:
        if not self.ok:
            return f"{self.name}: residual not computed: {self.reason}"
        text = (f"{self.name}: worst |Z \u2212 Zexp|/|Zexp| = {eng(self.worst_rel, '', 3)} at "
                f"{eng(self.f_hz, 'Hz', 7)} (median {eng(self.median_rel, '', 3)})")
        if not math.isnan(self.limit):
            text += f", margin to limit {eng(self.limit, '')}: {delta(self.margin, '', digits=3)}"
        return text


def residual(corrected: Any, expected_ohm: Any, *, limit: float | None = None,
             method: str = "reflection", port: int = 1) -> Residual:
    r"""Relative residual of a corrected capture of a known part.

    .. math:: r(f) = \frac{|Z(f) - Z_{exp}(f)|}{|Z_{exp}(f)|}

    Parameters
    ----------
    corrected : Capture or skrf.Network
        The corrected capture of the known part (a check resistor, a load standard).
    expected_ohm : complex, array_like or callable
        The part's impedance [ohm]: a number, an array on the capture's grid, or a
        function of frequency [Hz] returning impedance.
    limit : float, optional
        An acceptance limit on the worst relative error [1]; the result then carries
        ``margin = limit - worst_rel``.
    method : {"reflection", "series-through", "shunt-through"}
        How Z is taken from the capture (see :func:`kit.impedance`).
    port : int
        1-based port for "reflection".

    Returns
    -------
    Residual
        ``ok`` False with a reason when no point has a finite impedance.

    Raises
    ------
    CaptureError
        When ``expected_ohm`` does not fit the grid or is 0 somewhere.

    References
    ----------
    .. [1] Verification on a known part after compensation: an instrument maker's impedance
       measurement handbook, §4.3 (common practice of checking with a known standard).
    """
    cap = as_capture(corrected)
    with warnings.catch_warnings():
        # an ideal open has no finite Z: it is counted in invalid_points, not warned about
        warnings.simplefilter("ignore", SingularPointsWarning)
        sw = sweep(cap, method=method, port=port, what="residual")
    f, z = sw.f_hz, sw.z_ohm
    exp = expected_ohm(f) if callable(expected_ohm) else expected_ohm
    exp = np.broadcast_to(np.asarray(exp, dtype=complex), f.shape) if np.ndim(exp) == 0 \
        else np.asarray(exp, dtype=complex)
    if exp.shape != f.shape:
        raise CaptureError(f"expected_ohm has {exp.size} values but {cap.name!r} has "
                           f"{f.size} frequency points", cap.path)
    if np.any(np.abs(exp) == 0):
        raise CaptureError("expected_ohm is 0 somewhere: a relative residual needs a "
                           "non-zero expected impedance", cap.path)
    with np.errstate(invalid="ignore", over="ignore"):
        rel = np.abs(z - exp) / np.abs(exp)
    good = np.isfinite(rel)
    lim = nan_if_none(limit)
    if not np.any(good):
        return Residual(math.nan, math.nan, rel, z, np.array(exp), f.copy(), limit=lim,
                        invalid_points=int(rel.size), name=cap.name, ok=False,
                        reason="no frequency point has a finite impedance (every point is "
                               "an ideal open or not a number)")
    k = int(np.argmax(np.where(good, rel, -np.inf)))
    worst = float(rel[k])
    return Residual(worst, float(f[k]), rel, z, np.array(exp), f.copy(),
                    float(np.median(rel[good])), lim, lim - worst,
                    int(np.count_nonzero(~good)), cap.name)
