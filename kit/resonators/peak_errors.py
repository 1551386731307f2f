r"""Standard errors of the readings of the peak reader (:mod:`kit.resonators.peaks`).

The peak reader refines an extremum by the vertex of a parabola through three samples and a
level crossing by interpolation between two samples. This module gives the standard error
of those readings from the data alone:

* Noise (:func:`noise_scale`). For white noise of variance sigma^2 on equally spaced samples
  the second difference d_i = y_{i-1} - 2 y_i + y_{i+1} has variance
  (1 + 4 + 1) sigma^2 = 6 sigma^2 (the variance of a linear combination of independent
  variables is the sum of the squared weights times sigma^2). A smooth curve adds its
  curvature times step^2 to every d_i, nearly the same over a few samples, so the scale is
  the median absolute deviation of the d_i about their median (robust: a peak's curvature
  and a few outliers do not inflate it), times 1.4826 (the MAD of a normal variable is
  0.6745 sigma), over sqrt(6).
* Vertex (:func:`vertex_stderr`). The vertex x* = x1 - b/(2a) of the three-point parabola is a
  smooth function of the three ordinates; with independent noise sigma on each, its variance
  to first order (the delta method) is sigma^2 sum_k (dx*/dy_k)^2, where a and b are linear in
  the y_k so that dx*/dy_k = -(beta_k a - b alpha_k)/(2 a^2) with (alpha_k, beta_k) the
  coefficients of the parabola through the k-th unit vector. The value at the vertex has
  dt*/dy_k = c_k + beta_k dx + alpha_k dx^2 (the derivative in x vanishes at the vertex).
* Crossing (:func:`crossing_stderr`). A level crossing moves by the ordinate error over the
  local slope: sigma_f = sqrt(sigma_y^2 + sigma_level^2) / \|dy/df\|.
* Grid. A reading that is the sample itself (edge of the trace, parabola not applicable, or
  the vertex held at the bracketing samples) is only known to within one step: a uniform
  distribution of width one step has the standard uncertainty step/sqrt(12), combined in
  quadrature with the noise part.

References
----------
.. [1] JCGM 100:2008 (GUM), *Evaluation of measurement data - Guide to the expression of
   uncertainty in measurement*, section 5.1.2 (law of propagation of uncertainty, first-order
   Taylor series) and section 4.3.7 (rectangular distribution of half-width a: u = a/sqrt(3),
   so a full width of one step gives step/sqrt(12)).
.. [2] P. J. Rousseeuw, C. Croux, "Alternatives to the median absolute deviation", J. Amer.
   Statist. Assoc. 88 (1993) 1273-1283: MAD consistency factor 1.4826 for the normal
   distribution.
.. [3] Variance of the second difference of white noise, 6 sigma^2: the variance of a sum of
   independent variables with weights (1, -2, 1); common practice, no source.
"""

from __future__ import annotations

import math

import numpy as np

from kit.resonators.peaks import parabola

__all__ = ["GRID_FACTOR", "crossing_stderr", "noise_scale", "vertex_spread", "vertex_stderr"]

#: Standard uncertainty of a grid-limited reading per unit step, 1/sqrt(12) (GUM 4.3.7).
GRID_FACTOR = 1.0 / math.sqrt(12.0)
#: Consistency factor of the MAD for a normal distribution (Rousseeuw & Croux 1993).
_MAD_NORMAL = 1.4826


def noise_scale(values, center: int | None = None, half_width: int = 12,
                relative: bool = False) -> float:
    """Robust rms noise of sampled values from their second differences.

    Parameters
    ----------
    values : array_like
        The samples, real or complex (real and imaginary parts pooled).
    center : int, optional
        Use only a window of ``2 half_width + 1`` samples around this index (moved inside
        the trace at its ends); the whole trace when None.
    half_width : int
        Half width of the window [samples].
    relative : bool
        Divide each second difference by the magnitude of its middle sample, giving the
        noise relative to the value [1].

    Returns
    -------
    float
        sigma = 1.4826 MAD(d) / sqrt(6), d the second differences (unit of ``values``,
        or 1 when ``relative``), per real component; NaN with fewer than three finite
        second differences.

    References
    ----------
    .. [1] See the module docstring: var(d) = 6 sigma^2 (common practice, no source) and the
       MAD factor 1.4826 (Rousseeuw & Croux, J. Amer. Statist. Assoc. 88 (1993) 1273).
    """
    v = np.asarray(values)
    if center is not None:
        width = 2 * int(half_width) + 1
        lo = min(max(int(center) - int(half_width), 0), max(len(v) - width, 0))
        v = v[lo:lo + width]
    parts = (v.real, v.imag) if np.iscomplexobj(v) else (v.astype(float),)
    with np.errstate(divide="ignore", invalid="ignore"):
        norm = 1.0 / np.abs(v[1:-1]) if relative else 1.0
    dev = []
    for p in parts:
        d = (p[:-2] - 2.0 * p[1:-1] + p[2:]) * norm
        d = d[np.isfinite(d)]
        if len(d):
            dev.append(np.abs(d - np.median(d)))
    dev = np.concatenate(dev) if dev else np.empty(0)
    if len(dev) < 3:
        return math.nan
    return float(_MAD_NORMAL * np.median(dev) / math.sqrt(6.0))


def vertex_stderr(f_hz, t, i: int, sigma: float) -> tuple[float, float]:
    """Standard errors of the vertex of the three-point parabola at index ``i``.

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz].
    t : numpy.ndarray
        The quantity whose minimum is read (as in :func:`kit.resonators.peaks.vertex_min`).
    i : int
        Index of the discrete minimum.
    sigma : float or numpy.ndarray
        Noise rms of ``t`` (unit of ``t``): one value, or one per sample of ``t``.

    Returns
    -------
    f_stderr_hz, t_stderr : float
        Standard error of the vertex position [Hz] and of the value at the vertex (unit of
        ``t``). Where the reading is the sample itself or the vertex is held at a bracketing
        sample, the position error includes the grid part, step/sqrt(12) (GUM 4.3.7), in
        quadrature; the value error is then sigma.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), 5.1.2 (first-order propagation) and 4.3.7 (rectangular
       distribution).
    .. [2] Press et al., *Numerical Recipes*, 3rd ed., 2007, section 10.3 (the vertex of the
       three-point parabola; from memory for the section).
    """
    i = int(i)
    n = len(t)
    sig = np.broadcast_to(np.asarray(sigma, dtype=float), np.shape(t))
    step = float(f_hz[min(i + 1, n - 1)] - f_hz[max(i - 1, 0)]) / (2 if 0 < i < n - 1 else 1)
    grid = GRID_FACTOR * step
    if not (0 < i < n - 1) or not np.all(np.isfinite(t[i - 1:i + 2])):
        return grid, float(sig[i])
    sig = sig[i - 1:i + 2]
    x = f_hz[i - 1:i + 2]
    a, b, _ = parabola(x, t[i - 1:i + 2])
    if not a > 0:
        return grid, float(sig[1])
    dx = -b / (2 * a)
    if not (x[0] - x[1] < dx < x[2] - x[1]):
        return grid, float(sig[1])
    unit = np.eye(3)
    coef = np.array([parabola(x, unit[k]) for k in range(3)])  # rows (alpha, beta, c)
    g_x = -(coef[:, 1] * a - b * coef[:, 0]) / (2 * a * a) * sig
    g_t = (coef[:, 2] + coef[:, 1] * dx + coef[:, 0] * dx * dx) * sig
    return float(math.sqrt(float(g_x @ g_x))), float(math.sqrt(float(g_t @ g_t)))


def vertex_spread(f_hz, t, i: int, sigma: float, draws: int = 256,
                  seed: int = 0) -> tuple[float, float]:
    """Standard errors of the peak reading by simulating it on the local parabola.

    Where the curvature over three samples is not large against the noise (many samples
    across the peak), the sample taken as the extremum is itself chosen by the noise, and
    the delta method of :func:`vertex_stderr`, which holds that sample fixed, understates
    the error. Here the whole reading is repeated: a parabola is fitted by least squares to
    the samples around ``i`` where ``t`` is below twice its minimum (at least five), noise
    of rms ``sigma`` is added ``draws`` times, and each time the discrete minimum is taken and
    refined by the three-point vertex; the standard deviations of the vertex position and
    value are returned. The larger of this and :func:`vertex_stderr` is the stated error.

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz].
    t : numpy.ndarray
        The positive quantity whose minimum is read.
    i : int
        Index of the discrete minimum (interior).
    sigma : float or numpy.ndarray
        Noise rms of ``t`` (unit of ``t``): one value, or one per sample of ``t``.
    draws : int
        Number of simulated readings.
    seed : int
        Seed of the simulation (the result is reproducible).

    Returns
    -------
    f_stderr_hz, t_stderr : float
        Standard deviation of the simulated vertex position [Hz] and value (unit of ``t``);
        NaN when the window holds fewer than five finite samples.

    References
    ----------
    .. [1] JCGM 101:2008, *Supplement 1 to the GUM - Propagation of distributions using a
       Monte Carlo method*, section 7 (the standard deviation of the simulated outputs as the
       standard uncertainty).
    .. [2] Press et al., *Numerical Recipes*, 3rd ed., 2007, sections 10.3 and 15.4 (vertex
       of a parabola; linear least squares; from memory for the section numbers).
    """
    i, n = int(i), len(t)
    sig = np.broadcast_to(np.asarray(sigma, dtype=float), np.shape(t))
    if not (0 < i < n - 1 and t[i] > 0):
        return math.nan, math.nan
    below = np.isfinite(t) & (t <= 2.0 * t[i])
    lo, hi = i, i
    while lo > 0 and below[lo - 1]:
        lo -= 1
    while hi < n - 1 and below[hi + 1]:
        hi += 1
    lo, hi = max(min(lo - 1, i - 2), 0), min(max(hi + 1, i + 2), n - 1)
    x = f_hz[lo:hi + 1] - f_hz[i]
    y = t[lo:hi + 1]
    sig = sig[lo:hi + 1]
    if len(x) < 5 or not np.all(np.isfinite(y) & np.isfinite(sig)):
        return math.nan, math.nan
    scale = float(np.max(np.abs(x))) or 1.0
    coef = np.polyfit(x / scale, y, 2)
    smooth = np.polyval(coef, x / scale)
    rng = np.random.default_rng(seed)
    sim = smooth[None, :] + sig[None, :] * rng.standard_normal((int(draws), len(x)))
    k = np.argmin(sim[:, 1:-1], axis=1) + 1
    rows = np.arange(len(k))
    xs = [x[k - 1], x[k], x[k + 1]]
    a, b, c = parabola(xs, [sim[rows, k - 1], sim[rows, k], sim[rows, k + 1]])
    with np.errstate(divide="ignore", invalid="ignore"):
        dx = np.where(a > 0, -b / (2 * a), 0.0)
    dx = np.clip(dx, xs[0] - xs[1], xs[2] - xs[1])
    return float(np.std(xs[1] + dx)), float(np.std(c + b * dx + a * dx * dx))


def crossing_stderr(f_hz, y, i: int, sigma: float, sigma_level: float = 0.0) -> float:
    """Standard error of a level crossing between samples ``i`` and ``i + 1`` [Hz].

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz].
    y : numpy.ndarray
        The sampled quantity crossed.
    i : int
        Left sample of the bracketing interval.
    sigma : float
        Noise rms of ``y`` at the crossing (unit of ``y``).
    sigma_level : float
        Standard error of the level itself (unit of ``y``), e.g. half the peak height.

    Returns
    -------
    float
        sqrt(sigma^2 + sigma_level^2) / \\|slope\\| with the slope of the chord between the
        bracketing samples [Hz]; NaN when the slope is zero or not finite.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), 5.1.2: first-order propagation through f = f(y) with
       df/dy = 1/slope.
    """
    i = int(i)
    slope = (float(y[i + 1]) - float(y[i])) / (float(f_hz[i + 1]) - float(f_hz[i]))
    if not (math.isfinite(slope) and slope != 0):
        return math.nan
    return float(math.hypot(sigma, sigma_level) / abs(slope))
