"""The lot overview cell (kit/ui/overview.py) and its drawing (kit/views/lot_plots.py).

Sources: the limit bounds are those written in the limits text below (docs/limits.md
format); Cp and Cpk follow the NIST/SEMATECH e-Handbook of Statistical Methods, 6.1.6,
recomputed here with Python's ``statistics`` module as an independent implementation;
histogram counts are checked against ``numpy.histogram`` and the nearest point against
``scipy.spatial.cKDTree``. The lot is the invented demo lot (never the only check of a
number: every number is compared with one of the above).
"""

from __future__ import annotations

import math
import statistics

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kit
from kit.review.limits import parse_limits
from kit.ui.lot_browser import lot_browser
from kit.ui.overview import open_in_browser, overview_cell
from kit.units import quantity
from kit.views import lot_plots as lp

LIMITS_TEXT = """
format = "sweepbook-limits"
version = 1
[quantity.fs_hz]
min = 1.80e6
max = 1.90e6
label = "series resonance"
[quantity.k_eff]
min = 0.40
"""
SPAN_HZ = (1.6e6, 2.3e6)


@pytest.fixture(scope="module")
def lot(demo_dir):
    """The demo lot's folder table (file-name fields are text: serial "01")."""
    return kit.load_folder(demo_dir / "lot", pattern="{lot}-{serial}")


@pytest.fixture(scope="module")
def limits():
    return parse_limits(LIMITS_TEXT)


@pytest.fixture(scope="module")
def summary(lot, limits):
    """One summary row per row of the folder table, in the same order."""
    caps = [kit.io.folder.capture_of(lot, i) for i in lot.index]
    res = {c.name: kit.resonance(c, span_hz=SPAN_HZ) for c in caps}
    return kit.summary(caps, resonances=res, limits=limits)


def _cell(summary, limits=None, browser=None):
    return overview_cell(summary, limits=limits, browser=browser, display=False,
                         interactive=False)


def _selected(browser):
    """The browser's selection, read off its SelectMultiple widget (whatever its name)."""
    import ipywidgets as w

    (sel,) = [v for v in vars(browser).values() if isinstance(v, w.SelectMultiple)]
    return sel.value


def test_numeric_columns_only(summary):
    """Dropdowns offer numeric columns only: names, hashes, verdicts, flags, true/false and
    the text field "serial" ("01") are left out; labels carry units."""
    ov = _cell(summary)
    offered = [v for _, v in ov.x.options]
    assert offered == lp.numeric_columns(summary)
    for text_col in ("capture", "sha256", "path", "verdict", "verdict_reasons", "status",
                     "serial", "lot", "fit_ok", "resonance_flags"):
        assert text_col not in offered
    assert {"fs_hz", "k_eff", "qm"} <= set(offered)
    labels = dict((v, k) for k, v in ov.x.options)
    assert labels["fs_hz"] == "fs [MHz]"  # SI prefix of the values (BIPM SI brochure, Table 7)


def test_no_numeric_column_is_a_clear_error(summary):
    """A summary without a numeric column is refused with a message saying what to give."""
    with pytest.raises(ValueError, match="no numeric column"):
        _cell(summary[["capture", "sha256", "verdict"]])


def test_defaults_and_limit_box(summary, limits):
    """The first two limited quantities are drawn; the limit box sits at the bounds of the
    limits text (1.80 and 1.90 MHz for fs, 0.40 below for k_eff, no upper k_eff bound)."""
    ov = _cell(summary, limits)
    assert (ov.x.value, ov.y.value, ov.hist.value) == ("fs_hz", "k_eff", "fs_hz")
    box = ov.scatter.limits
    assert box["x_lo"].get_xdata()[0] == pytest.approx(1.80)  # MHz, from LIMITS_TEXT
    assert box["x_hi"].get_xdata()[0] == pytest.approx(1.90)
    assert box["y_lo"].get_ydata()[0] == pytest.approx(0.40)
    assert box["x_lo"].get_visible() and box["x_hi"].get_visible() and box["y_lo"].get_visible()
    assert not box["y_hi"].get_visible()
    assert ov.scatter.ax.get_xlabel() == "fs [MHz]"
    hl = ov.histogram.limits
    assert [hl["lo"].get_xdata()[0], hl["hi"].get_xdata()[0]] == pytest.approx([1.80, 1.90])


def test_parts_drawn_by_verdict_with_shape(summary, limits):
    """Each part is drawn once, in its verdict's group, with a marker shape per verdict."""
    ov = _cell(summary, limits)
    x, y = summary["fs_hz"].to_numpy(float), summary["k_eff"].to_numpy(float)
    total = 0
    for verdict, coll in ov.scatter.groups.items():
        sel = (summary["verdict"].to_numpy() == verdict) & np.isfinite(x) & np.isfinite(y)
        got = coll.get_offsets()
        assert len(got) == sel.sum()
        assert np.allclose(got, np.column_stack([x[sel] * 1e-6, y[sel]]))
        total += len(got)
    assert total == np.isfinite(x + y).sum()
    markers = {lp.VERDICT_STYLE[v][1] for v in ov.scatter.groups}
    assert len(markers) == len(ov.scatter.groups)  # colour is never the only cue


def test_choosing_quantities_redraws_in_place(summary, limits):
    """Another quantity moves the same artists to the new column's values and redraws."""
    ov = _cell(summary, limits)
    colls = dict(ov.scatter.groups)
    bars = ov.histogram.bars
    renders = ov.host.renders
    ov.x.value = "qm"
    assert ov.host.renders == renders + 1
    assert ov.scatter.groups == colls
    q, k = summary["qm"].to_numpy(float), summary["k_eff"].to_numpy(float)
    fail = (summary["verdict"].to_numpy() == "fail") & np.isfinite(q) & np.isfinite(k)
    assert np.allclose(ov.scatter.groups["fail"].get_offsets(), np.column_stack([q, k])[fail])
    assert not ov.scatter.limits["x_lo"].get_visible()  # no qm limit in LIMITS_TEXT
    assert ov.scatter.ax.get_xlabel() == "qm"
    ov.hist.value = "k_eff"
    assert ov.histogram.bars is bars
    finite = k[np.isfinite(k)]
    counts, _ = np.histogram(finite, bins=ov.histogram.edges)  # numpy as the reference
    assert np.array_equal(ov.histogram.counts, counts) and counts.sum() == finite.size
    assert ov.histogram.limits["lo"].get_xdata()[0] == pytest.approx(0.40)
    assert not ov.histogram.limits["hi"].get_visible()


def test_capability_text_matches_capability(summary, limits):
    """The histogram's Cp/Cpk line is capability()'s, and its values agree with the NIST
    handbook 6.1.6 formulas computed with the statistics module."""
    ov = _cell(summary, limits)
    cap = ov.capability
    fs = [v for v in summary["fs_hz"] if math.isfinite(v)]
    m, s = statistics.fmean(fs), statistics.stdev(fs)
    assert cap.cp == pytest.approx((1.90e6 - 1.80e6) / (6 * s), rel=1e-9)
    assert cap.cpk == pytest.approx(min(1.90e6 - m, m - 1.80e6) / (3 * s), rel=1e-9)
    title = ov.histogram.title.get_text()
    assert f"Cp = {quantity(cap.cp, '', digits=3)}" in title
    assert f"Cpk = {quantity(cap.cpk, '', digits=3)}" in title
    assert f"n = {len(fs)}" in title
    ov.hist.value = "k_eff"  # one-sided: Cpk only, and why
    assert ov.capability.name == "k_eff" and math.isnan(ov.capability.cp)
    assert "Cp =" not in ov.histogram.title.get_text()
    assert "Cp needs both bounds" in ov.histogram.title.get_text()


def test_pick_opens_that_capture_in_the_lot_browser(summary, limits, lot):
    """A click on part i (through matplotlib's pick events) selects capture i in a lot
    browser built from demo_data/lot, and the browser draws that capture."""
    browser = lot_browser(lot, display=False, interactive=False)
    ov = _cell(summary, limits, browser=browser)
    for i in (1, 4, len(summary) - 1):
        ov.pick(i)
        assert ov.opened == i
        assert _selected(browser) == (lot.index[i],)
        assert [t.label for t in browser.traces] == [lot.loc[lot.index[i], "name"]]
        assert summary["capture"].iloc[i] in ov.status.value
        assert ov.message.last == ""
    assert np.allclose(ov.scatter.highlight.get_xydata(), ov.scatter.xy[[i]])


def test_pick_nearest_within_a_few_pixels(summary, limits):
    """A click 3 px beside a marker opens that part; a click far from every marker opens none."""
    from matplotlib.backend_bases import MouseEvent

    ov = _cell(summary, limits)
    ov.host.fig.canvas.draw()
    px = ov.scatter.positions_px()
    ok = np.isfinite(px).all(axis=1)
    gaps = [np.sort(np.hypot(*(px[ok] - px[i]).T))[1] if ok[i] else 0 for i in range(len(px))]
    i = int(np.argmax(gaps))  # the most isolated part
    canvas = ov.host.fig.canvas

    def click(x, y):
        ev = MouseEvent("button_press_event", canvas, x, y, button=1)
        canvas.callbacks.process(ev.name, ev)

    click(px[i, 0] + 3.0, px[i, 1])
    assert ov.opened == i
    ov.opened = None
    x0, y0, w, h = ov.scatter.ax.bbox.bounds
    grid = np.array([(x0 + a * w, y0 + b * h) for a in np.linspace(0.02, 0.98, 25)
                     for b in np.linspace(0.02, 0.98, 25)])
    far = grid[np.argmax([np.min(np.hypot(*(px[ok] - g).T)) for g in grid])]
    click(*far)
    assert ov.opened is None


def test_summary_without_limits(summary, lot):
    """Without limits and without a verdict column: all parts "none", no limit box, the
    capability says why there is no index, and clicks still open captures."""
    bare = summary.drop(columns=["verdict"])
    browser = lot_browser(lot, display=False, interactive=False)
    ov = _cell(bare, None, browser=browser)
    assert (ov.x.value, ov.y.value) == (lp.numeric_columns(bare)[0], lp.numeric_columns(bare)[1])
    assert not any(line.get_visible() for line in ov.scatter.limits.values())
    assert not any(line.get_visible() for line in ov.histogram.limits.values())
    assert all(len(c.get_offsets()) == 0 for v, c in ov.scatter.groups.items() if v != "none")
    assert ov.capability.reason == "no bound given" and "no bound given" in (
        ov.histogram.title.get_text())
    ov.pick(2)
    assert _selected(browser) == (lot.index[2],)


def test_pick_without_browser_and_filtered_rows(summary, limits, lot):
    """Without a browser the part is marked and the status says so; with a browser whose
    name filter hides the part, the part is still opened (the filter is cleared)."""
    ov = _cell(summary, limits)
    ov.pick(3)
    assert "no lot browser attached" in ov.status.value
    browser = lot_browser(lot, display=False, interactive=False)
    browser.name_filter.value = "pzd7-1"
    open_in_browser(browser, summary["sha256"].iloc[3])
    assert _selected(browser) == (lot.index[3],)
    with pytest.raises(KeyError, match="no capture with sha256"):
        open_in_browser(browser, "no-such-capture")


def test_part_without_values_cannot_be_picked(summary, limits):
    """A part lacking a value of either quantity is not drawn; picking it says why; the
    status counts the parts left out."""
    ov = _cell(summary, limits)
    ov.x.value = "qm"
    missing = np.flatnonzero(~np.isfinite(summary["qm"].to_numpy(float)))
    if missing.size == 0:
        pytest.skip("every demo part has a qm")
    with pytest.raises(ValueError, match="not in the scatter"):
        ov.pick(int(missing[0]))
    assert f"{missing.size} part" in ov.status.value


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(-1e3, 1e3), st.floats(-1e3, 1e3)), min_size=1, max_size=40),
       st.floats(-1e3, 1e3), st.floats(-1e3, 1e3))
def test_nearest_point_agrees_with_kdtree(points, x, y):
    """nearest_point finds the point scipy's cKDTree finds (distance equal; NaN rows skipped)."""
    from scipy.spatial import cKDTree

    xy = np.array(points, float)
    with_nan = np.vstack([xy, [[np.nan, 0.0]]])
    i = lp.nearest_point(with_nan, x, y)
    d, _ = cKDTree(xy).query([x, y])
    assert i is not None and i < len(xy)
    assert math.hypot(*(xy[i] - (x, y))) == pytest.approx(d, rel=1e-9, abs=1e-9)
    if d > 1e-3:
        assert lp.nearest_point(xy, x, y, radius_px=0.5 * d) is None
    assert lp.nearest_point(xy, x, y, radius_px=d * (1 + 1e-9) + 1e-9) is not None


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-1e9, 1e9), max_size=30), st.floats(-1e9, 1e9), st.floats(-1e9, 1e9))
def test_padded_range_covers_values_and_bounds(values, lo, hi):
    """The axis range holds every finite value and bound, strictly inside."""
    a, b = lp.padded_range(values, (lo, hi))
    pts = np.array(values + [lo, hi])
    assert a < b and a <= pts.min() and pts.max() <= b
