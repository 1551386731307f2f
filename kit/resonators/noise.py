r"""Measurement noise of a sampled trace, estimated from the data alone.

A fit can only be judged against the noise of the data: a residual at the noise is as good
as the model can get, a residual well above it means the model (or the minimum found) does
not describe the data. :func:`difference_variance` estimates the noise variance point by
point from finite differences of neighbouring samples, without a model.

Method
------
For a smooth curve sampled densely, the k-th finite difference of the samples,
d_i = sum_j (-1)^j C(k, j) y_{i+j}, removes a polynomial of degree k - 1, so only the noise
and a small curvature term remain. For independent noise of variance s_i^2 at point i,
Var(d_i) = sum_j C(k, j)^2 s_{i+j}^2, which is C(2k, k) s^2 for constant s (Vandermonde's
identity: sum_j C(k, j)^2 = C(2k, k); 6 for k = 2, 70 for k = 4). Dividing d_i by
sqrt(sum_j C(k, j)^2 w_{i+j}^2), where w is the expected shape of the noise (the fit's
weighting), gives a variable of variance s^2 wherever the shape is right.

The default order is k = 4: at a high-Q peak sampled with a few tens of points per
half-power band the second difference still carries the curvature of the peak, the fourth
difference reduces it by the square of (step / half bandwidth) once more.

The variance is then read robustly: the median of d^2 over a running window of neighbouring
points (real and imaginary parts together) divided by 0.4549, the median of a chi-square
variable with one degree of freedom, i.e. the square of the normalised median absolute
deviation 1.4826 MAD (for complex data |d|^2 is 2 s^2 times an exponential variable, whose
sample median of n = 2m + 1 values has the expectation H_n - H_m, H the harmonic numbers, a
property of order statistics of the exponential distribution [3]). Points whose differences
still carry curvature or an outlier are the minority of a window and do not move its median;
a weighting whose shape does not match the noise is handled because the estimate is local.

References
----------
.. [1] G. Tintner, *The Variate Difference Method*, Principia Press, Bloomington, 1940
   (estimating the noise variance of a smooth series from its k-th differences with the
   divisor C(2k, k); from memory).
.. [2] P. J. Rousseeuw and C. Croux, "Alternatives to the median absolute deviation",
   J. Am. Stat. Assoc. 88(424), 1273-1283, 1993 (the normalised MAD, 1.4826 MAD estimates
   the standard deviation of normal data; from memory).
.. [3] H. A. David and H. N. Nagaraja, *Order Statistics*, 3rd ed., Wiley, 2003, section 2.5
   (expected order statistics of the exponential distribution, E X_(r) = sum_{j=n-r+1}^{n}
   1/j; from memory).
"""

from __future__ import annotations

import warnings
from math import comb

import numpy as np

__all__ = ["MEDIAN_CHI2_1", "difference_variance", "mean_variance", "noise_rms"]

#: Median of a chi-square variable with one degree of freedom (= 0.6745^2) [1].
MEDIAN_CHI2_1 = 0.454936423119572


def difference_variance(y, shape=None, *, order: int = 4, window: int = 21) -> np.ndarray:
    """Noise variance per point and per real component, from finite differences.

    Parameters
    ----------
    y : array_like of complex or float
        Samples on an increasing, roughly uniform grid.
    shape : array_like of float, optional
        Expected relative size of the noise at each point (the fit's sigma_Y); default 1.
    order : int
        Order k of the difference (2 or more).
    window : int
        Number of neighbouring differences whose median gives the local variance.

    Returns
    -------
    numpy.ndarray
        v_i [units of (y / shape)^2]: the variance of the real part (and of the imaginary
        part) of the noise at point i divided by shape_i^2. All NaN when fewer than
        ``order + 3`` samples are given; NaN where a whole window is not finite.

    References
    ----------
    .. [1] Module docstring: variate differences (Tintner 1940, from memory) and the median
       of chi-square(1) (Rousseeuw and Croux 1993, from memory).
    """
    y = np.asarray(y)
    n = len(y)
    if shape is None:
        shape = np.ones(n)
    shape = np.asarray(shape, dtype=float)
    if n < order + 3:
        return np.full(n, np.nan)
    coef = np.array([(-1) ** j * comb(order, j) for j in range(order + 1)], dtype=float)
    d = np.convolve(y, coef, mode="valid")
    norm = np.sqrt(np.convolve(shape**2, coef**2, mode="valid"))
    with np.errstate(divide="ignore", invalid="ignore"):
        e = d / norm
    e2 = np.abs(e) ** 2
    e2 = np.where(np.isfinite(e2), e2, np.nan)
    m = len(e2)
    half = max(1, min(window, m) // 2)
    padded = np.pad(e2, half, mode="reflect") if m > half else np.pad(e2, half, mode="edge")
    from numpy.lib.stride_tricks import sliding_window_view

    wins = sliding_window_view(padded, 2 * half + 1)
    with warnings.catch_warnings():  # a window of non-finite points gives NaN, said below
        warnings.simplefilter("ignore", RuntimeWarning)
        med = np.median(wins, axis=1) if np.all(np.isfinite(e2)) else np.nanmedian(wins, axis=1)
    if np.iscomplexobj(e):
        # |e|^2 = re^2 + im^2 is 2 s^2 times an exponential variable, whose sample median
        # of n = 2 m + 1 values has the expectation H_n - H_m (harmonic numbers; ln 2 for
        # large n): the divisor that makes the window median unbiased
        nw = wins.shape[1]
        h = float(np.sum(1.0 / np.arange((nw - 1) // 2 + 1, nw + 1)))
        local = med / (2 * h)
    else:
        local = med / MEDIAN_CHI2_1
    # centre the (n - order) differences on the n samples
    lead = order // 2
    out = np.empty(n)
    out[lead:lead + m] = local
    out[:lead] = local[0]
    out[lead + m:] = local[-1]
    return out


def mean_variance(variance) -> float:
    """Mean of the finite per-point variances (NaN when there are none)."""
    v = np.asarray(variance, dtype=float)
    v = v[np.isfinite(v)]
    return float(np.mean(v)) if len(v) else float("nan")


def noise_rms(variance, shape, reference) -> float:
    """RMS of the noise relative to a reference magnitude, sqrt(mean(2 v s^2 / |ref|^2)).

    Parameters
    ----------
    variance : array_like
        Per-component variance from :func:`difference_variance` [(y / shape)^2].
    shape : array_like
        The noise shape passed to :func:`difference_variance` [units of y].
    reference : array_like
        Magnitudes the noise is compared with (e.g. |Y|) [units of y].

    Returns
    -------
    float
        The expected value of sqrt(mean(|n_i / ref_i|^2)) for complex noise n [1]: what the
        normalised RMS residual of a perfect model would be.
    """
    v = np.asarray(variance, dtype=float)
    s = np.asarray(shape, dtype=float)
    ref = np.abs(np.asarray(reference))
    with np.errstate(divide="ignore", invalid="ignore"):
        q = 2.0 * v * s**2 / ref**2
    q = q[np.isfinite(q)]
    return float(np.sqrt(np.mean(q))) if len(q) else float("nan")
