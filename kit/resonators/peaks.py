r"""The one peak reader: extrema, level crossings and half-power points of a sampled trace.

Every analysis that reads a peak, a dip, a zero crossing or a half-power width from a sweep
(:func:`kit.resonance`, the fit's start values, the physical models, the Bode-Fano series
branch, component and filter figures, the match panel through :func:`kit.resonance`) calls
these functions, so that the same capture and span give the same numbers everywhere.

How the numbers are obtained:

* Cleaning (:func:`clean_trace`). Points with a non-finite frequency or value are dropped;
  the rest are sorted by frequency and values at repeated frequencies are averaged
  (:func:`sort_merge`); both are reported as flags.
* Extrema (:func:`vertex_min`, :func:`peak_by_reciprocal`). The discrete extremum is refined
  by the vertex of the parabola through it and its two neighbours. For a peak of a positive
  quantity v the parabola is fitted to 1/v, which is exactly quadratic in frequency for the
  conductance of a single series-resonant branch near its resonance (1/G = R1 (1 + x^2),
  x = X1/R1 nearly linear in f); this gives sub-step accuracy where a parabola through v
  itself (a Lorentzian) is biased by up to a fraction of a step.
* Which peak (:func:`prominent_peak`, :func:`nearest_peak`). Among interior local maxima the
  most prominent one, so that the 1/(omega C) slope of a wide sweep is not taken for a peak.
* Crossings (:func:`crossing`). Where y - level changes sign between two samples: the root of
  a quadratic through three neighbouring samples inside that interval, with linear
  interpolation as the fall-back (non-finite samples, no real root inside the interval).
* Half-power points (:func:`half_power_points`, :func:`q_half_power`). Where a peak above a
  baseline falls to half its height; the crossing is found on 1/(v - base), quadratic for a
  single resonance as above, falling back to a crossing of v itself. Q = f0/(f2 - f1).

References
----------
.. [1] W. H. Press, S. A. Teukolsky, W. T. Vetterling, B. P. Flannery, *Numerical Recipes*,
   3rd ed., Cambridge University Press, 2007, section 10.3 (parabolic interpolation through
   three points) and section 5.6 (numerically stable roots of a quadratic); section numbers
   from memory.
.. [2] ANSI/IEEE Std 176-1987 and ANSI/IEEE Std 177-1966: fs at the maximum of G, half-power
   points G = Gmax/2 and Qm = fs/(f2 - f1), exact for the Butterworth-Van Dyke circuit
   (omega2 - omega1 = R1/L1); definitions from memory, checked numerically, methods sheet
   sections 1.2 and 1.7(b).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from kit.capture import CaptureError

__all__ = ["Peak", "clean_trace", "conductance_peak", "crossing", "drop_nonfinite",
           "half_power_points", "nearest_peak", "parabola", "peak_by_reciprocal",
           "prominent_peak", "q_half_power", "resistance_peak", "sort_merge", "vertex_min"]


class Peak(NamedTuple):
    """A refined peak of a sampled trace.

    Attributes
    ----------
    index : int
        Index of the discrete maximum.
    f_hz : float
        Refined frequency of the peak [Hz].
    value : float
        Refined peak value (unit of the trace).
    refined : bool
        False when the sample itself is returned (edge sample, or a non-positive neighbour
        so that the reciprocal parabola does not apply).
    """

    index: int
    f_hz: float
    value: float
    refined: bool


# --------------------------------------------------------------------------- cleaning


def sort_merge(f_hz, values) -> tuple[np.ndarray, np.ndarray, int]:
    """Sort by frequency and average the values at repeated frequencies.

    Parameters
    ----------
    f_hz : array_like
        Frequencies [Hz] (finite).
    values : array_like
        One value per frequency, real or complex (real and imaginary parts averaged apart).

    Returns
    -------
    f_hz, values : numpy.ndarray
        Strictly increasing frequencies [Hz] and their (mean) values.
    merged : int
        How many samples were merged away (0 if none).

    References
    ----------
    .. [1] Common practice, no source: a repeated frequency (a band joint of a segmented
       sweep) carries two readings of the same quantity; their mean is the estimate.
    """
    f = np.asarray(f_hz, dtype=float)
    v = np.asarray(values)
    if len(f) == 0 or np.all(np.diff(f) > 0):
        return f, v, 0
    order = np.argsort(f, kind="stable")
    f, v = f[order], v[order]
    uf, inv, counts = np.unique(f, return_inverse=True, return_counts=True)
    if len(uf) == len(f):
        return f, v, 0
    mean = np.bincount(inv, weights=v.real) / counts
    if np.iscomplexobj(v):
        mean = mean + 1j * (np.bincount(inv, weights=v.imag) / counts)
    return uf, mean, len(f) - len(uf)


def drop_nonfinite(f_hz, values) -> tuple[np.ndarray, np.ndarray, int]:
    """Drop the points whose frequency or value (real or imaginary part) is not finite.

    Returns
    -------
    f_hz, values : numpy.ndarray
        The finite points, in the given order.
    dropped : int
        How many points were dropped.
    """
    f = np.asarray(f_hz, dtype=float)
    v = np.asarray(values)
    good = np.isfinite(f) & np.isfinite(v)
    n_bad = int(np.count_nonzero(~good))
    return (f[good], v[good], n_bad) if n_bad else (f, v, 0)


def clean_trace(f_hz, values, span_hz=None, *, min_points: int = 7,
                path=None) -> tuple[np.ndarray, np.ndarray, list[str], tuple[float, float]]:
    """Select a span, drop non-finite points, sort and merge repeated frequencies.

    Parameters
    ----------
    f_hz : array_like
        Frequencies [Hz].
    values : array_like
        One value per frequency (for example the impedance [ohm]).
    span_hz : (float, float), optional
        Keep only lo <= f <= hi [Hz].
    min_points : int
        Fewest usable points accepted.
    path : str or Path, optional
        Source file named in error messages.

    Returns
    -------
    f_hz, values : numpy.ndarray
        Strictly increasing frequencies [Hz] and finite values.
    flags : list of str
        ``"nan-points:N"`` and ``"repeated-frequencies:N"`` where they apply.
    span : (float, float)
        First and last frequency kept [Hz].

    Raises
    ------
    CaptureError
        When the span is malformed or fewer than ``min_points`` usable points remain.

    References
    ----------
    .. [1] Common practice, no source.
    """
    f = np.asarray(f_hz, dtype=float)
    v = np.asarray(values)
    flags: list[str] = []
    if span_hz is not None:
        try:
            lo, hi = (float(x) for x in span_hz)
        except (TypeError, ValueError):
            raise CaptureError(f"span_hz must be a pair (f_low, f_high) in Hz, got {span_hz!r}",
                               path) from None
        if not lo < hi:
            raise CaptureError(f"span_hz = {span_hz!r}: the low edge must be below the high edge",
                               path)
        sel = (f >= lo) & (f <= hi)
        f, v = f[sel], v[sel]
    f, v, n_bad = drop_nonfinite(f, v)
    if n_bad:
        flags.append(f"nan-points:{n_bad}")
    f, v, n_rep = sort_merge(f, v)
    if n_rep:
        flags.append(f"repeated-frequencies:{n_rep}")
    if len(f) < min_points:
        where = "" if span_hz is None else f" inside span_hz={tuple(span_hz)!r}"
        raise CaptureError(f"only {len(f)} usable point(s){where}; at least {min_points} are "
                           "needed: widen the span or check the data for NaN values", path)
    return f, v, flags, (float(f[0]), float(f[-1]))


# --------------------------------------------------------------------------- extrema


def parabola(x, y) -> tuple[float, float, float]:
    """Coefficients (a, b, c) of y = a (x - x1)^2 + b (x - x1) + c through three points.

    Parameters
    ----------
    x, y : array_like of length 3
        Abscissae (distinct) and ordinates; x1 = x[1]. Each may also be a sequence of
        three arrays (x0, x1, x2), giving arrays of coefficients.

    References
    ----------
    .. [1] Press et al., *Numerical Recipes*, 3rd ed., 2007, section 10.3 (three-point
       parabola; from memory for the section).
    """
    d0, d2 = x[0] - x[1], x[2] - x[1]
    e0, e2 = y[0] - y[1], y[2] - y[1]
    a = (e2 * d0 - e0 * d2) / (d0 * d2 * (d2 - d0))
    b = (e0 - a * d0 * d0) / d0
    return a, b, y[1]


def vertex_min(f_hz, t, i: int) -> tuple[float, float]:
    """Refine a discrete minimum of ``t`` at interior index ``i`` by a 3-point parabola.

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz].
    t : numpy.ndarray
        The sampled quantity (choose one that is locally quadratic, e.g. \\|Z\\|^2 near a
        series resonance, 1/G near a conductance peak).
    i : int
        Index of the discrete minimum; 0 < i < len - 1.

    Returns
    -------
    f_hz, t : float
        Vertex position [Hz] (kept inside the three samples) and value. The sample itself
        when the parabola does not open upwards or a neighbour is not finite.

    References
    ----------
    .. [1] Press et al., *Numerical Recipes*, 3rd ed., 2007, eq. 10.3.1 (vertex of the
       three-point parabola; from memory for the equation number).
    """
    x = f_hz[i - 1:i + 2]
    y = t[i - 1:i + 2]
    if len(x) < 3 or not np.all(np.isfinite(y)):
        return float(f_hz[i]), float(t[i])
    a, b, c = parabola(x, y)
    if not a > 0:
        return float(f_hz[i]), float(t[i])
    dx = -b / (2 * a)
    dx = min(max(dx, x[0] - x[1]), x[2] - x[1])
    return float(x[1] + dx), float(c + b * dx + a * dx * dx)


def peak_by_reciprocal(f_hz, v, i: int) -> Peak:
    """Refined maximum of a positive quantity ``v`` at index ``i``, by the vertex of 1/v.

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz].
    v : numpy.ndarray
        The sampled quantity (conductance [S], resistance [ohm], power ratio [1]...).
    i : int
        Index of the discrete maximum.

    Returns
    -------
    Peak
        ``refined`` is False (the sample is returned) at the edge of the trace or when one
        of the three samples is not positive.

    Notes
    -----
    Near fs the conductance of a single series branch is G = (1/R1)/(1 + x^2) with x the
    normalised motional reactance, nearly linear in f, so 1/G is a parabola in f and its
    vertex is fs to rounding; a parabola through G itself is not (methods sheet 1.7(b)).

    References
    ----------
    .. [1] Press et al., *Numerical Recipes*, 3rd ed., 2007, section 10.3 (from memory).
    .. [2] ANSI/IEEE Std 177-1966 (motional admittance of the BVD circuit; from memory);
       methods sheet sections 1.2 and 1.7.
    """
    i = int(i)
    if 0 < i < len(v) - 1 and np.all(v[i - 1:i + 2] > 0):
        with np.errstate(divide="ignore"):
            f0, t = vertex_min(f_hz, 1.0 / v, i)
        return Peak(i, f0, 1.0 / t, True)
    return Peak(i, float(f_hz[i]), float(v[i]), False)


def _peaks(y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Interior local maxima of y and their prominences (NaN-free input)."""
    from scipy.signal import find_peaks

    idx, props = find_peaks(y, prominence=0)
    return idx, props["prominences"]


def prominent_peak(y, mask=None) -> int | None:
    """Index of the most prominent interior local maximum of ``y`` (None if there is none).

    Parameters
    ----------
    y : numpy.ndarray
        NaN-free samples.
    mask : numpy.ndarray of bool, optional
        Only maxima at indices where ``mask`` is True are considered.

    References
    ----------
    .. [1] Topographic prominence as computed by ``scipy.signal.peak_prominences`` (SciPy
       reference documentation).
    """
    idx, prom = _peaks(np.asarray(y, dtype=float))
    if mask is not None and len(idx):
        keep = np.asarray(mask)[idx]
        idx, prom = idx[keep], prom[keep]
    if len(idx) == 0:
        return None
    return int(idx[np.argmax(prom)])


def nearest_peak(y, target: int) -> int | None:
    """Index of the interior local maximum of ``y`` nearest to index ``target``.

    Among equally near maxima the more prominent one; None if there is none.

    References
    ----------
    .. [1] ``scipy.signal.find_peaks`` (SciPy reference documentation).
    """
    idx, prom = _peaks(np.asarray(y, dtype=float))
    if len(idx) == 0:
        return None
    order = np.lexsort((-prom, np.abs(idx - target)))
    return int(idx[order[0]])


def conductance_peak(f_hz, z) -> Peak | None:
    """Series (motional) resonance: the most prominent maximum of G = Re(1/Z).

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing, finite frequencies [Hz] (see :func:`clean_trace`).
    z : numpy.ndarray of complex
        Impedance [ohm].

    Returns
    -------
    Peak or None
        fs [Hz] and G(fs) [S], refined by the vertex of 1/G (:func:`peak_by_reciprocal`);
        None when G has no interior local maximum.

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987 / 177-1966: fs at the maximum of the conductance (from
       memory); methods sheet section 1.2.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        g = (1.0 / np.asarray(z, dtype=complex)).real
    i = prominent_peak(np.nan_to_num(g, nan=-np.inf, posinf=np.finfo(float).max))
    return None if i is None else peak_by_reciprocal(np.asarray(f_hz, float), g, i)


def resistance_peak(f_hz, z, after: int | None = None) -> Peak | None:
    """Parallel resonance: the most prominent maximum of R = Re Z (above index ``after``).

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing, finite frequencies [Hz].
    z : numpy.ndarray of complex
        Impedance [ohm].
    after : int, optional
        Only maxima at indices above this one (the index of fs) are considered.

    Returns
    -------
    Peak or None
        fp [Hz] and R(fp) [ohm], refined by the vertex of 1/R; None when there is none.

    References
    ----------
    .. [1] IEC 60050-561:2014, IEV 561-01-66 (fp); ANSI/IEEE Std 176-1987 (from memory);
       methods sheet section 1.2.
    """
    r = np.asarray(z, dtype=complex).real
    mask = None if after is None else np.arange(len(r)) > after
    i = prominent_peak(r, mask)
    return None if i is None else peak_by_reciprocal(np.asarray(f_hz, float), r, i)


# --------------------------------------------------------------------------- crossings


def crossing(f_hz, y, i: int, level: float) -> float:
    """Where ``y - level`` changes sign between samples ``i`` and ``i + 1`` [Hz].

    The root of the quadratic through three neighbouring samples that lies inside the
    interval (nearest to the linear estimate); linear interpolation where the quadratic
    does not apply (non-finite samples, no real root inside, fewer than 3 samples).

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz].
    y : numpy.ndarray
        The sampled quantity.
    i : int
        Left sample of the bracketing interval.
    level : float
        The level crossed (unit of ``y``).

    Returns
    -------
    float
        Crossing frequency [Hz].

    References
    ----------
    .. [1] Press et al., *Numerical Recipes*, 3rd ed., 2007, section 5.6 (stable roots
       q = -(b + sgn(b) sqrt(b^2 - 4ac))/2, x = q/a, c/q; from memory for the section).
    """
    lo, hi = float(f_hz[i]), float(f_hz[i + 1])
    y0, y1 = float(y[i]) - level, float(y[i + 1]) - level
    lin = lo + (hi - lo) * y0 / (y0 - y1) if y0 != y1 else lo
    j = i - 1 if i >= 1 else (i if i + 2 < len(f_hz) else None)
    if j is None or not np.isfinite(lin):
        return lin
    x = f_hz[j:j + 3]
    yy = y[j:j + 3] - level
    if not np.all(np.isfinite(yy)):
        return lin
    a, b, c = parabola(x, yy)
    x1 = float(x[1])
    if abs(a) < 1e-300:
        return lin
    disc = b * b - 4 * a * c
    if disc < 0:
        return lin
    sq = math.sqrt(disc)
    q = -0.5 * (b + math.copysign(sq, b))
    roots = [q / a] + ([c / q] if q != 0 else [])
    tol = 1e-9 * (hi - lo)
    inside = [x1 + r for r in roots if lo - tol <= x1 + r <= hi + tol]
    if not inside:
        return lin
    return float(min(inside, key=lambda r: abs(r - lin)))


def half_power_points(f_hz, v, i: int, peak_value: float,
                      base: float = 0.0) -> tuple[float, float] | None:
    """Frequencies on both sides of a peak where ``v`` falls to half its height [Hz].

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz].
    v : numpy.ndarray
        The sampled quantity (a conductance [S], a power ratio [1]...).
    i : int
        Index of the discrete peak.
    peak_value : float
        Refined peak value (from :func:`peak_by_reciprocal`).
    base : float
        Baseline under the peak; the level is base + (peak_value - base)/2.

    Returns
    -------
    (f1, f2) or None
        Lower and upper half-power frequencies [Hz]; None when ``v`` does not fall to the
        level on both sides inside the trace, or the points are not in order.

    Notes
    -----
    The crossing is taken on 1/(v - base) at the level 2/(peak_value - base): for a single
    series resonance over a flat baseline this is quadratic in frequency (see
    :func:`peak_by_reciprocal`), so three samples give it to rounding. Where v - base is
    not positive at the bracketing samples, the crossing of v itself is used.

    References
    ----------
    .. [1] ANSI/IEEE Std 177-1966 (half-power points of the motional conductance; from
       memory); methods sheet section 1.7(b): G = Gmax/2 at omega = omega_s +- R1/(2 L1).
    """
    height = peak_value - base
    if not height > 0:
        return None
    half = base + 0.5 * height
    left = np.nonzero(v[:i] <= half)[0]
    right = np.nonzero(v[i + 1:] <= half)[0]
    if not (len(left) and len(right)):
        return None
    il = int(left[-1])
    ir = int(i + right[0])
    with np.errstate(divide="ignore", invalid="ignore"):
        inv = 1.0 / (v - base)

    def cross(k):
        if v[k] - base > 0 and v[k + 1] - base > 0:
            return crossing(f_hz, inv, k, 2.0 / height)
        return crossing(f_hz, v, k, half)

    f1, f2 = cross(il), cross(ir)
    return (f1, f2) if f2 > f1 else None


def q_half_power(f0_hz: float, f1_hz: float, f2_hz: float) -> float:
    """Quality factor from the half-power points, Q = f0/(f2 - f1) [1].

    References
    ----------
    .. [1] ANSI/IEEE Std 177-1966 (Qm from the half-power width; from memory); methods sheet
       section 1.7(b), exact for the BVD circuit.
    """
    width = f2_hz - f1_hz
    if not width > 0:
        raise ValueError(f"the half-power points must be in order, got f1={f1_hz}, f2={f2_hz}")
    return float(f0_hz / width)
