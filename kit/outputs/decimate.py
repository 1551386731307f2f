"""Display decimation: keep the extremes of each pixel column of a long sweep.

A 100,001 point sweep drawn on an axes 800 pixels wide puts about 125 points in each pixel
column. Drawing them all costs time and shows nothing more than the lowest and highest
value in each column. :func:`minmax_indices` picks, per column, the indices of the minimum
and maximum of every coordinate given, in their original order, so that the drawn line
has the same envelope (peaks, notches and spikes are all kept) with at most a few points
per column. The data are never changed: the functions return indices or new arrays.

Columns are formed by point index (point i of n falls in column floor(i * columns / n)),
which matches pixel columns when the frequency grid is uniform on the axis scale (linear
sweeps on a linear axis, logarithmic sweeps on a log axis), the usual case for swept
captures.
"""

from __future__ import annotations

import numpy as np

#: Below this many points per column nothing is removed (the saving would be small).
MIN_POINTS_PER_COLUMN = 4


def minmax_indices(columns: int, *values: np.ndarray, x=None, x_range=None) -> np.ndarray:
    """Indices that keep the minimum and maximum of each column, for every coordinate.

    Parameters
    ----------
    columns : int
        Number of pixel columns the curve spans (at least 1).
    *values : array_like of float
        One or more real coordinate arrays of the same length n (for a Smith chart pass
        the real and the imaginary part). NaN values are never chosen unless a whole
        column is NaN, in which case the first index of that column is kept so that the
        gap stays visible.

    x : array_like of float, optional
        The sorted abscissa (frequency) of the points: columns are then equal steps of x
        over ``x_range`` (default the first to the last x), so that they fall on the
        pixel columns of an axes showing that range, whatever the spacing of the points.
    x_range : (float, float), optional
        The x range shown across the ``columns``.

    Returns
    -------
    numpy.ndarray of int
        Sorted unique indices into the arrays, always including the first and the last
        point. ``arange(n)`` when the curve is short enough to draw whole.

    References
    ----------
    .. [1] U. Jugel, Z. Jerzak, G. Hackenbroich, V. Markl, "M4: a visualization-oriented
       time series data aggregation", Proc. VLDB Endowment 7(10), 2014 (from memory): the
       first, last, minimum and maximum point of each pixel column give the same
       rasterised line as all points.
    """
    if not values:
        raise ValueError("minmax_indices needs at least one coordinate array")
    arrays = [np.asarray(v, dtype=float).ravel() for v in values]
    n = arrays[0].size
    if any(a.size != n for a in arrays):
        raise ValueError("all coordinate arrays must have the same length")
    columns = max(int(columns), 1)
    if n <= MIN_POINTS_PER_COLUMN * columns or n < 3:
        return np.arange(n)
    if x is None:
        # column of each point: floor(i * columns / n), so that the column edges fall where
        # the pixel edges do for an evenly spaced sweep (no drift across the width)
        col = (np.arange(n, dtype=np.int64) * columns) // n
    else:
        xs = np.asarray(x, dtype=float).ravel()
        lo, hi = (xs[0], xs[-1]) if x_range is None else map(float, x_range)
        scale = columns / (hi - lo) if hi > lo else 0.0
        col = np.clip(np.floor((xs - lo) * scale), 0, columns - 1).astype(np.int64)
        if xs.size != n or np.any(np.diff(col) < 0):
            raise ValueError("x must be sorted and as long as the values")
    # col is sorted: a column starts where it differs from the one before (no sort needed)
    starts = np.concatenate(([0], np.flatnonzero(col[1:] != col[:-1]) + 1))
    lengths = np.diff(np.append(starts, n))
    keep = np.zeros(n, bool)
    keep[starts] = True  # first and last point of each column: the line between two
    keep[starts + lengths - 1] = True  # columns then joins the same points as the full one
    for a in arrays:
        nan = np.isnan(a)
        if nan.any():
            lo, hi = np.where(nan, np.inf, a), np.where(nan, -np.inf, a)
        else:
            lo = hi = a
        low = np.minimum.reduceat(lo, starts)
        high = np.maximum.reduceat(hi, starts)
        for hit in ((lo == np.repeat(low, lengths)) & ~nan,
                    (hi == np.repeat(high, lengths)) & ~nan):
            pos = np.flatnonzero(hit)
            first = np.ones(pos.size, bool)  # the first of equal extremes in a column
            first[1:] = col[pos[1:]] != col[pos[:-1]]
            keep[pos[first]] = True
        keep[starts[~np.isfinite(low)]] = True  # an all-NaN column keeps its first point
    return np.flatnonzero(keep)


def minmax(x: np.ndarray, y: np.ndarray, columns: int) -> tuple[np.ndarray, np.ndarray]:
    """Decimated copy of a curve y(x) for display (min/max of y per pixel column).

    Parameters
    ----------
    x, y : array_like of float
        The curve, x sorted (a frequency axis) [any unit].
    columns : int
        Pixel columns available for the curve.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        New arrays holding the kept points; the inputs are not modified.
    """
    x = np.asarray(x)
    y = np.asarray(y)
    idx = minmax_indices(columns, y)
    return x[idx].copy(), y[idx].copy()


def window(x: np.ndarray, lo: float | None, hi: float | None) -> slice:
    """Slice of a sorted x that covers [lo, hi] plus one point either side.

    Used before decimation when the user zooms to a span, so that the visible part keeps
    its full detail.
    """
    x = np.asarray(x)
    n = x.size
    if n == 0:
        return slice(0, 0)
    start = 0 if lo is None else max(int(np.searchsorted(x, lo, side="left")) - 1, 0)
    stop = n if hi is None else min(int(np.searchsorted(x, hi, side="right")) + 1, n)
    return slice(start, max(stop, start))


def columns_of(ax, default: int = 800) -> int:
    """Width of a matplotlib axes in device pixels (the number of pixel columns)."""
    try:
        width = ax.get_window_extent().width
    except Exception:  # noqa: BLE001 - an axes without a renderer yet
        return default
    return max(int(round(width)), 1) if np.isfinite(width) and width > 0 else default
