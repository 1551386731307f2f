"""Display decimation keeps each pixel column's extremes and never alters the data."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from kit.outputs.decimate import minmax, minmax_indices, window


def _columns(n: int, columns: int) -> list[range]:
    """Brute force: the points of each column, point i in column floor(i * columns / n)."""
    out: dict[int, list[int]] = {}
    for i in range(n):
        out.setdefault(i * columns // n, []).append(i)
    return [range(v[0], v[-1] + 1) for _, v in sorted(out.items())]


@settings(max_examples=60, deadline=None)
@given(y=arrays(np.float64, st.integers(50, 3000),
                elements=st.floats(-1e6, 1e6, allow_nan=False)),
       columns=st.integers(1, 40))
def test_every_column_keeps_its_min_and_max(y, columns):
    """Each column of the decimated curve reaches the same min and max as the full curve."""
    idx = minmax_indices(columns, y)
    assert np.all(np.diff(idx) > 0)
    assert idx[0] == 0 and idx[-1] == y.size - 1
    if idx.size == y.size:
        return
    kept = set(idx.tolist())
    assert idx.size <= 4 * columns + 2
    for points in _columns(y.size, columns):
        sel = [y[i] for i in points if i in kept]
        assert min(sel) == y[points].min() and max(sel) == y[points].max()


def test_spike_in_a_long_sweep_survives():
    """A one-point spike in 100,001 points is kept when decimating to 800 columns."""
    y = np.zeros(100_001)
    y[54_321] = 7.0
    y[12_345] = -3.0
    x = np.arange(y.size, dtype=float)
    xd, yd = minmax(x, y, 800)
    assert yd.size <= 4 * 800 + 2
    assert 7.0 in yd and -3.0 in yd
    assert xd[np.argmax(yd)] == 54_321.0


def test_inputs_unchanged_and_short_curves_whole():
    """Decimation returns new arrays, leaves the input alone, and keeps short curves whole."""
    y = np.linspace(0, 1, 1001)
    before = y.copy()
    _, yd = minmax(np.arange(1001.0), y, 100)
    yd[:] = -1
    assert np.array_equal(y, before)
    assert np.array_equal(minmax_indices(800, y), np.arange(1001))


def test_nan_columns_keep_a_gap():
    """A column that is all NaN keeps one point, so the gap in the line stays visible."""
    y = np.ones(10_000)
    y[5000:5100] = np.nan
    idx = minmax_indices(100, y)
    assert np.isnan(y[idx]).any()


def test_window_covers_span_with_one_point_margin():
    """The span window includes one point beyond each end of the span."""
    x = np.arange(10.0)
    sl = window(x, 3.5, 6.2)
    assert x[sl][0] == 3.0 and x[sl][-1] == 7.0
    assert window(x, None, None) == slice(0, 10)


def test_complex_curve_keeps_extremes_of_both_parts():
    """For a Smith trace the extremes of both real and imaginary parts are kept."""
    t = np.linspace(0, 40 * np.pi, 50_000)
    g = 0.9 * np.exp(1j * t) * np.linspace(1, 0.2, t.size)
    idx = minmax_indices(200, g.real, g.imag)
    assert np.isclose(g.real[idx].max(), g.real.max()) and np.isclose(g.imag[idx].min(), g.imag.min())
