r"""Start values of a motional branch from its admittance circle.

Near its series resonance a motional branch R1 - L1 - C1 traces, in the admittance plane,
a circle of diameter 1/R1 through the origin of the branch; the static capacitance only
shifts it by j omega C0, which changes little across the half-power band. Reading the
circle instead of single samples uses every point near the peak, so the start values hold
at high Q, where the conductance peak is a handful of samples wide, and under noise.

* :func:`kasa_circle`: the algebraic least-squares circle through points (x, y).
* :func:`circle_start`: BVD start values (C0, R1, L1, C1) from a measured impedance curve:
  fs from the conductance maximum (:func:`kit.resonators.peaks.conductance_peak`), R1 from
  the diameter, Qm from the angle of the points around the centre (the quadrant points,
  +-45 degrees of the branch impedance, are where that angle is +-90 degrees), C0 from the
  susceptance away from resonance once the motional branch is removed.

Relations: for Y1 = 1/(R1 (1 + j x)) with x = X1/R1,
Y1 - 1/(2 R1) = (1/(2 R1)) exp(-2 j arctan x), so the angle phi of a point around the centre
gives x = -tan(phi/2). Near resonance x = 2 Qm (f - fs)/fs to first order in (f - fs)/fs,
so the slope of x against f gives Qm = (fs/2) dx/df, and x = +-1 are the quadrant points
of IEEE Std 177 (f2 - f1 = fs/Qm).

References
----------
.. [1] I. Kasa, "A circle fitting procedure and its error analysis", IEEE Trans. Instrum.
   Meas. IM-25(1), 8-14, 1976 (the algebraic fit: minimise sum (x^2 + y^2 + D x + E y + F)^2,
   linear in D, E, F; citation from memory).
.. [2] Methods sheet section 2.3 (admittance circle: diameter 1/R1, quadrant points give
   Qm = fs/(f2 - f1)); ANSI/IEEE Std 177-1966 and ANSI/IEEE Std 176-1987 for the
   Butterworth-Van Dyke circuit (from memory for the clauses).
"""

from __future__ import annotations

import numpy as np

from kit.resonators.peaks import conductance_peak

__all__ = ["circle_start", "kasa_circle"]


def kasa_circle(x, y) -> tuple[float, float, float]:
    """Least-squares circle through points (x, y) by the algebraic (Kasa) fit.

    Parameters
    ----------
    x, y : array_like of float
        At least three points, not all on one line.

    Returns
    -------
    xc, yc, radius : float
        Centre and radius [units of x and y]; NaN when the points do not define a circle.

    References
    ----------
    .. [1] I. Kasa, IEEE Trans. Instrum. Meas. IM-25(1), 8-14, 1976 (from memory): the
       residual x^2 + y^2 + D x + E y + F is linear in (D, E, F); centre (-D/2, -E/2),
       radius sqrt(D^2/4 + E^2/4 - F). The points are centred and scaled first so that the
       normal equations stay well conditioned.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if len(x) < 3:
        return (np.nan, np.nan, np.nan)
    mx, my = float(np.mean(x)), float(np.mean(y))
    scale = float(np.max(np.hypot(x - mx, y - my)))
    if not scale > 0:
        return (np.nan, np.nan, np.nan)
    u, v = (x - mx) / scale, (y - my) / scale
    a = np.column_stack([u, v, np.ones_like(u)])
    sol, *_ = np.linalg.lstsq(a, -(u**2 + v**2), rcond=None)
    d, e, f = sol
    r2 = d * d / 4 + e * e / 4 - f
    if not r2 > 0:
        return (np.nan, np.nan, np.nan)
    return (mx - scale * d / 2, my - scale * e / 2, scale * float(np.sqrt(r2)))


def circle_start(f_hz, z) -> dict | None:
    """BVD start values from the admittance circle of the motional branch.

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz] (cleaned, see :func:`kit.resonators.models.clean_fz`).
    z : numpy.ndarray of complex
        Impedance [ohm].

    Returns
    -------
    dict or None
        "C0" [F], "R1" [ohm], "L1" [H], "C1" [F]; None when there is no conductance peak,
        fewer than 5 points lie on the upper half of the circle, the circle's diameter
        differs from the height of the conductance peak by more than a factor 2, or Qm or
        C0 come out non-positive.

    Notes
    -----
    Steps: (1) fs and Gmax from :func:`kit.resonators.peaks.conductance_peak`; (2) a first
    circle through the points with G above the half height, then a second through the points
    within +-60 degrees of the branch impedance (|x| < sqrt(3)) as read on the first circle;
    (3) R1 = 1/(2 radius); (4) x = -tan(phi/2) against f by least squares over those points:
    Qm = (fs/2) dx/df; (5) C1 = 1/(2 pi fs Qm R1), L1 = 1/((2 pi fs)^2 C1); (6) C0 as the
    median of (B - B1)/omega over the points outside +-5 half-power bands, B1 the
    susceptance of the motional branch just found.

    References
    ----------
    .. [1] Methods sheet section 2.3; Kasa (1976) for the circle (module docstring).
    """
    pk = conductance_peak(f_hz, z)
    if pk is None:
        return None
    i, fs, gmax, _ = pk
    y = 1.0 / z
    g, b = y.real, y.imag
    base = max(float(np.min(g)), 0.0)
    if not gmax > base:
        return None
    sel = g >= base + 0.5 * (g[i] - base)
    # the contiguous run around the peak only
    lo, hi = i, i
    while lo > 0 and sel[lo - 1]:
        lo -= 1
    while hi < len(g) - 1 and sel[hi + 1]:
        hi += 1
    idx = np.arange(lo, hi + 1)
    if len(idx) < 5:
        return None
    for _ in range(2):
        xc, yc, rad = kasa_circle(g[idx], b[idx])
        if not (np.isfinite(rad) and rad > 0):
            return None
        phi = np.angle((g - xc) + 1j * (b - yc))
        with np.errstate(invalid="ignore"):
            xr = -np.tan(phi / 2)
        near = np.nonzero(np.abs(xr) < np.sqrt(3.0))[0]
        near = near[(near >= lo - 3 * len(idx)) & (near <= hi + 3 * len(idx))]
        if len(near) < 5:
            break
        idx = near
    slope, _icpt = np.polyfit(f_hz[idx], xr[idx], 1)
    r1 = 1.0 / (2 * rad)
    qm = 0.5 * fs * slope
    # a circle that is not the peak's (noise, a neighbouring mode) gives no start value
    if not (qm > 0 and np.isfinite(qm) and 0.5 < 2 * rad / (gmax - base) < 2):
        return None
    ws = 2 * np.pi * fs
    c1 = 1.0 / (ws * qm * r1)
    l1 = 1.0 / (ws**2 * c1)
    w = 2 * np.pi * f_hz
    b1 = (1.0 / (r1 + 1j * w * l1 + 1.0 / (1j * w * c1))).imag
    far = np.abs(f_hz - fs) > 5 * fs / qm
    c0s = ((b - b1) / w)[far] if np.count_nonzero(far) >= 3 else (b - b1) / w
    c0 = float(np.median(c0s))
    if not c0 > 0:
        return None
    return {"C0": c0, "R1": r1, "L1": l1, "C1": c1}
