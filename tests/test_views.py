"""Drawing functions: artists returned, units on axes, data untouched, quantities checked."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kit.views as kv
from kit.units import scale_for

mpl = pytest.importorskip("matplotlib")
from matplotlib.figure import Figure  # noqa: E402


def _bvd(n=4001, r1=10.0, l1=1e-3, c0=1e-9, fs=1.1e6):
    """Butterworth-Van Dyke impedance (methods sheet section 2.1) around its series resonance."""
    c1 = 1 / ((2 * np.pi * fs) ** 2 * l1)
    f = np.linspace(0.95 * fs, 1.1 * fs, n)
    w = 2 * np.pi * f
    zm = r1 + 1j * w * l1 + 1 / (1j * w * c1)
    return f, 1 / (1 / zm + 1j * w * c0), fs


def _axes(**kw):
    fig = Figure(figsize=(6, 4), dpi=100)
    return fig, fig.add_subplot(**kw)


def test_vswr_and_return_loss_match_methods_table():
    """VSWR 1.5 <-> |G| 0.2, RL 13.979400 dB; 25 ohm in 50 ohm: VSWR 2, RL 9.542425 dB (methods 8.3)."""
    assert kv.vswr(np.array([0.2]))[0] == pytest.approx(1.5, abs=1e-12)
    assert kv.return_loss_db(np.array([0.2]))[0] == pytest.approx(13.979400, abs=1e-6)
    g = kv.gamma_from_z(np.array([25.0]), 50.0)
    assert kv.vswr(g)[0] == pytest.approx(2.0, abs=1e-12)
    assert kv.return_loss_db(g)[0] == pytest.approx(9.542425, abs=1e-6)
    assert kv.vswr(np.array([1.0]))[0] == np.inf


def test_quantities_agree_with_scikit_rf():
    """VSWR, |S| dB and group delay agree with scikit-rf 2.2.0 (independent implementation)."""
    rf = pytest.importorskip("skrf")
    freq = rf.Frequency(1, 3, 201, unit="GHz")
    line = rf.media.DefinedGammaZ0(freq, z0=50).line(35, unit="deg") ** \
        rf.media.DefinedGammaZ0(freq, z0=50).resistor(30) ** \
        rf.media.DefinedGammaZ0(freq, z0=50).short()
    s = line.s[:, 0, 0]
    assert np.allclose(kv.vswr(s), line.s_vswr[:, 0, 0], rtol=1e-12)
    assert np.allclose(kv.db20(s), line.s_db[:, 0, 0], rtol=1e-12)
    assert np.allclose(kv.group_delay_s(freq.f, s), line.group_delay[:, 0, 0], rtol=1e-9)


def test_group_delay_of_pure_delay():
    """A pure delay exp(-j w tau) has group delay tau (definition tau = -dphi/dw, Pozar from memory)."""
    f = np.linspace(1e6, 5e8, 3001)
    tau = 7.3e-9
    assert np.allclose(kv.group_delay_s(f, np.exp(-2j * np.pi * f * tau)), tau, rtol=1e-9)


def test_trace_of_reflection_capture_uses_s11_and_kit_impedance():
    """A reflection trace keeps S11 as Gamma and Z from kit.impedance (Z = Z0 (1+G)/(1-G))."""
    rf = pytest.importorskip("skrf")
    import kit

    freq = rf.Frequency(1, 2, 11, unit="MHz")
    z = 20 + 1j * np.linspace(-40, 40, 11)
    ntwk = rf.Network(frequency=freq, s=kv.gamma_from_z(z, 50.0).reshape(-1, 1, 1), z0=50)
    t = kv.trace(kit.from_network(ntwk), label="d")
    assert np.allclose(t.gamma, ntwk.s[:, 0, 0]) and np.allclose(t.z, z)
    assert np.allclose(t.y, 1 / z) and t.z0_ohm == 50.0 and t.label == "d"


def test_trace_of_series_through_gamma_from_device_z():
    """A series-through trace: Z from S21 = 2Z0/(2Z0+Z) (methods sheet section 5), Gamma from Z."""
    rf = pytest.importorskip("skrf")
    import kit

    freq = rf.Frequency(1, 2, 5, unit="MHz")
    media = rf.media.DefinedGammaZ0(freq, z0=50)
    ntwk = media.resistor(1000)
    t = kv.trace(kit.from_network(ntwk), method="series-through")
    assert np.allclose(t.z, 1000.0) and np.allclose(t.s, 0.0909090909, atol=1e-9)
    assert np.allclose(t.gamma, 950 / 1050)


def test_smith_grid_circles_lie_where_the_textbook_puts_them():
    """Constant-r circles have centre r/(1+r) and radius 1/(1+r) (Pozar, Microwave Eng., from memory)."""
    _, ax = _axes()
    arts = kv.smith_grid(ax, z0_ohm=75, kind="z", values=(1.0,))
    texts = [a.get_text() for a in arts if hasattr(a, "get_text")]
    assert any("Z0 = 75 Ω" in s for s in texts)
    assert any(s == "75" for s in texts)
    circle = arts[2]  # unit circle, real axis, then the r = 1 circle
    x, y = circle.get_data()
    assert np.allclose(np.hypot(x - 0.5, y), 0.5, atol=1e-9)
    with pytest.raises(ValueError, match="kind"):
        kv.smith_grid(ax, kind="w")


def test_admittance_grid_is_the_mirror_of_the_impedance_grid():
    """The admittance grid is the impedance grid turned by 180 degrees (Gamma_Y = -Gamma_Z)."""
    _, ax = _axes()
    z = kv.smith_grid(ax, kind="z", values=(2.0,), label=False)
    y = kv.smith_grid(ax, kind="y", values=(2.0,), label=False)
    assert np.allclose(np.asarray(y[2].get_xdata()), -np.asarray(z[2].get_xdata()))


def test_long_sweep_is_decimated_without_altering_data():
    """100,001 points draw as a few points per pixel column; the input arrays are unchanged."""
    f, z, _ = _bvd(n=100_001)
    before = z.copy()
    fig, ax = _axes()
    (line,) = kv.plot_chart(ax, (f, z), "z_mag")
    cols = int(ax.get_window_extent().width)
    assert len(line.get_xdata()) <= 2 * cols + 2
    assert np.max(line.get_ydata()) == pytest.approx(np.max(np.abs(z)))
    assert np.array_equal(z, before)
    (sm,) = kv.plot_smith(ax, (f, z))
    assert len(sm.get_xdata()) <= 4 * kv.columns_of(ax) + 2


@pytest.mark.parametrize("chart", list(kv.CHARTS))
def test_every_chart_labels_units_and_returns_its_line(chart):
    """Each named chart draws one line and labels x as frequency in the unit of its ticks
    and y with a unit."""
    f, z, _ = _bvd(n=801)
    _, ax = _axes()
    arts = kv.plot_chart(ax, (f, z), chart, label="x")
    assert len(arts) == 1 and arts[0].get_label() == "x"
    assert ax.get_xlabel() == "frequency [MHz]"  # the prefix of the ticks (SI Table 7)
    assert "[" in ax.get_ylabel() and ax.get_ylabel().endswith("]")


def test_array_functions_return_artists_with_units():
    """The array-level plot functions draw their lines and unit labels."""
    f, z, _ = _bvd(n=401)
    g = kv.gamma_from_z(z)
    fig = Figure()
    a = fig.subplots(3, 3).ravel()
    assert len(kv.plot_z_mag_phase(a[0], a[1], f, z)) == 2 and a[0].get_ylabel() == "|Z| [Ω]"
    assert len(kv.plot_r_x(a[2], f, z)) == 2
    assert len(kv.plot_g_b(a[3], f, 1 / z)) == 2
    assert np.allclose(a[3].lines[0].get_ydata(), (1 / z).real)  # plotted in siemens
    assert len(kv.plot_s_db(a[4], f, g)) == 1 and a[4].get_ylabel() == "|S| [dB]"
    assert len(kv.plot_return_loss(a[5], f, g)) == 1
    assert len(kv.plot_vswr(a[6], f, g)) == 1 and a[6].get_yscale() == "log"
    assert len(kv.plot_group_delay(a[7], f, g)) == 1
    fig.draw_without_rendering()
    # SI units with the prefix of the visible range, label and ticks alike (BIPM SI
    # brochure, Table 7): the BVD disc's X reaches kilohms, its G millisiemens, its group
    # delay microseconds
    for ax, name, unit in ((a[2], "R, X", "Ω"), (a[3], "G, B", "S"),
                           (a[7], "group delay", "s")):
        factor, shown = scale_for(ax.get_ylim(), unit)
        assert ax.get_ylabel() == f"{name} [{shown}]"
        ticks = [t for t in ax.yaxis.get_major_ticks() if t.label1.get_text()]
        assert len(ticks) >= 3
        for tick in ticks:
            assert float(tick.label1.get_text().replace("\u2212", "-")) == pytest.approx(
                tick.get_loc() * factor, abs=1e-9)
    circ = kv.plot_admittance_circle(a[8], (f, z))
    assert a[8].get_xlabel() == "conductance G [mS]" and len(circ) == 1
    pol = Figure().add_subplot(projection="polar")
    assert len(kv.plot_polar(pol, g)) == 1


def test_admittance_circle_diameter_is_one_over_r1():
    """Near fs the motional admittance circle has diameter 1/R1 (IEEE 177 method, methods 2.3)."""
    f, z, fs = _bvd(n=20001, r1=10.0)
    _, ax = _axes()
    (line,) = kv.plot_admittance_circle(ax, (f, z), span_hz=(0.99 * fs, 1.01 * fs))
    g_ms = line.get_xdata()
    assert g_ms.max() == pytest.approx(100.0, rel=1e-3)  # 1/R1 = 0.1 S


def test_pin_searches_find_series_resonance():
    """min |Z|, max G and zero phase fall at fs = 1/(2 pi sqrt(L1 C1)) of a low-loss BVD (methods 2.1)."""
    f, z, fs = _bvd(n=20001, r1=1.0)
    t = kv.trace((f, z), label="bvd")
    step = f[1] - f[0]
    for kind in ("min_z", "max_g", "zero_phase"):
        assert abs(f[kv.find_pin(t, kind)] - fs) < 0.002 * fs, kind
    i = kv.find_pin(t, "nearest", f_hz=1.12e6)
    assert abs(f[i] - 1.12e6) <= step / 2
    assert f[kv.find_pin(t, "max_z")] > fs
    with pytest.raises(ValueError, match="frequency"):
        kv.find_pin(t, "nearest")
    with pytest.raises(ValueError, match="does not cross zero"):
        kv.find_pin(t, "zero_phase", span_hz=(f[0], f[10]))
    with pytest.raises(ValueError, match="unknown pin"):
        kv.find_pin(t, "peak")


def test_pin_reading_is_consistent():
    """The reading gives Y = 1/Z, Gamma = (Z-Z0)/(Z+Z0) and VSWR of |Gamma| (methods 0 and 8.3)."""
    t = kv.trace((np.array([1e6, 2e6]), np.array([25 + 0j, 100 + 50j])), label="p")
    r = kv.pin_reading(t, 0, "A")
    assert r["f_hz"] == 1e6 and r["z_ohm"] == 25 and r["g_siemens"] == pytest.approx(0.04)
    assert r["gamma"] == pytest.approx(-1 / 3) and r["vswr"] == pytest.approx(2.0)
    text = kv.reading_text(r)
    for unit in ("MHz", "Ω", "mS", "°", "VSWR"):
        assert unit in text
    assert "1.000000 MHz" in text and "40.00 mS" in text  # Y = 1/25 ohm (SI prefixes, Table 7)
    with pytest.raises(IndexError):
        kv.pin_reading(t, 5)


def test_pins_csv_written_atomically(tmp_path):
    """The pins table goes to CSV with units in the column names, and reads back; the shown
    table has the units in its headers and SI-prefixed numbers (SI brochure, Table 7)."""
    import pandas as pd

    t = kv.trace((np.array([1e6, 2e6]), np.array([25 + 0j, 100 + 50j])), label="p")
    table = kv.pins_table([kv.pin_reading(t, i, str(i + 1)) for i in range(2)])
    out = kv.write_pins_csv(table, tmp_path / "m.csv")
    back = pd.read_csv(out)
    assert list(back["pin"]) == [1, 2] and back["x_ohm"][1] == 50.0
    assert "f_hz" in back.columns and not list(tmp_path.glob("*.tmp"))
    shown = kv.pins_display(table)
    assert list(shown["f [MHz]"]) == ["1.000000", "2.000000"]
    assert list(shown["X [Ω]"]) == ["0.00", "50.00"] and "|Z| [Ω]" in shown.columns


def test_limits_and_pins_draw_where_asked():
    """Limit segments sit at their value over their span; a pin sits at its point."""
    _, ax = _axes()
    arts = kv.plot_limits(ax, [(1e6, 2e6, 3.0), (2e6, 3e6, 1.0, "lower")])
    assert list(arts[0].get_xdata()) == [1e6, 2e6] and list(arts[0].get_ydata()) == [3.0, 3.0]
    with pytest.raises(ValueError, match="side"):
        kv.plot_limits(ax, [(1, 2, 3, "middle")])
    dot, _ = kv.draw_pin(ax, 1.5e6, 2.0)
    assert list(dot.get_xdata()) == [1.5e6]


def test_overlay_gives_one_colour_per_trace():
    """An overlay draws one line per trace in distinct palette colours, with a legend."""
    f, z, _ = _bvd(n=301)
    _, ax = _axes()
    lines = kv.overlay(ax, [(f, z * k) for k in (1, 2, 3)], "z_mag")
    assert len(lines) == 3 and len({ln.get_color() for ln in lines}) == 3
    assert ax.get_legend() is not None


def test_update_line_follows_span():
    """update_line re-decimates within a span, so a zoomed view keeps full detail."""
    f, z, fs = _bvd(n=100_001)
    t = kv.trace((f, z))
    _, ax = _axes()
    (line,) = kv.plot_chart(ax, t, "z_mag")
    kv.update_line(line, t, "z_mag", span_hz=(0.999 * fs, 1.001 * fs))
    x = line.get_xdata()
    assert x.min() >= f[0] and x.max() <= 1.001 * fs + (f[1] - f[0])


def test_demo_capture_draws(demo_dir):
    """A demo lot capture loads and draws on the Smith chart and |Z| chart."""
    import kit

    t = kv.trace(kit.load(demo_dir / "lot" / "pzd7-01.s1p"))
    fig = Figure()
    a, b = fig.subplots(1, 2)
    kv.smith_grid(a)
    assert kv.plot_smith(a, t)[0].get_label() == "pzd7-01"
    assert kv.plot_chart(b, t, "z_mag")[0].get_label() == "pzd7-01"


def test_trace_keeps_the_capture_reference():
    """A 75 ohm capture: Z from Gamma in 75 ohm (Z = Z0 (1+G)/(1-G), Pozar from memory), Gamma = S11."""
    rf = pytest.importorskip("skrf")
    import kit

    freq = rf.Frequency(1, 2, 5, unit="MHz")
    ntwk = rf.media.DefinedGammaZ0(freq, z0=75).resistor(30) ** \
        rf.media.DefinedGammaZ0(freq, z0=75).short()
    t = kv.trace(kit.from_network(ntwk))
    assert t.z0_ohm == 75.0 and np.allclose(t.z, 30.0) and np.allclose(t.gamma, ntwk.s[:, 0, 0])
    t50 = kv.trace(kit.from_network(ntwk), z0_ohm=50.0)
    assert np.allclose(t50.gamma, (30 - 50) / (30 + 50))


def test_plot_fit_draws_the_registry_model():
    """The fit overlay draws the BVD model of the fitted parameters (registry model z(f, params))."""
    import kit
    from kit.resonators.registry import get_model

    f, z, fs = _bvd(n=2001)
    res = kit.fit((f, z), model="bvd", span_hz=(f[0], f[-1]))
    fig = Figure()
    ax_m, ax_p, ax_c = fig.subplots(1, 3)
    arts = kv.plot_fit(res, ax_m, ax_p, ax_c)
    assert len(arts) == 3
    x, y = arts[0].get_data()
    expected = np.abs(get_model("bvd").z(np.asarray(x), res.params))
    assert np.allclose(y, expected, rtol=1e-9)
    gx, gb = arts[2].get_data()
    ym = 1 / get_model("bvd").z(np.asarray(x), res.params)
    assert np.nanmax(gx) == pytest.approx(1e3 * np.max(ym.real), rel=1e-3)  # G in mS
    failed = kit.fit((f[:5], z[:5]), model="bvd")
    assert not failed.ok and kv.plot_fit(failed, ax_m) == []


def test_plane_coordinates_of_trace_and_pin_agree():
    """A pin's plane point lies on the trace's plane curve (Gamma, polar, G/B in mS)."""
    f, z, fs = _bvd(n=401)
    t = kv.trace((f, z), label="bvd")
    r = kv.pin_reading(t, 200)
    for kind in ("smith:z", "polar", "circle"):
        x, y = kv.plane_xy(t, kind, columns=10_000)
        px, py = kv.plane_point(r, kind)
        assert np.min(np.hypot(x - px, y - py)) < 1e-9, kind
    # and the absolute scale: the circle is Y = 1/Z in mS, the Smith plane Gamma itself
    y200 = 1.0 / z[200]
    assert kv.plane_point(r, "circle") == pytest.approx((1e3 * y200.real, 1e3 * y200.imag))
    g200 = (z[200] - 50.0) / (z[200] + 50.0)  # 50 ohm for bare arrays (methods sheet 0)
    assert kv.plane_point(r, "smith:z") == pytest.approx((g200.real, g200.imag))
    with pytest.raises(ValueError, match="plane"):
        kv.plane_xy(t, "bode", 100)


def test_heads_of_close_pins_never_overlap():
    """Pins on neighbouring points of a steep curve: after drawing, the bounding boxes of
    their heads (as the renderer draws them) do not intersect, and each needle still ends
    at its own point (geometry checked by matplotlib's own Bbox.overlaps)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    fig, ax = _axes()
    FigureCanvasAgg(fig)
    f = np.linspace(1e6, 3e6, 2001)
    ax.plot(f, np.sin(f / 1e5))
    kv.frequency_axis(ax)
    pins = [(f[i], np.sin(f[i] / 1e5), str(k + 1)) for k, i in enumerate(range(1000, 1012, 2))]
    arts = kv.draw_pins(ax, pins)
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    heads = arts[1::2]
    boxes = [h.get_bbox_patch().get_window_extent(renderer) for h in heads]  # drawn circles
    for i in range(len(boxes)):
        for j in range(i + 1, len(boxes)):
            assert not boxes[i].overlaps(boxes[j]), (i, j)
    for h, (x, y, _) in zip(heads, pins):
        assert h.xy == (x, y)


def test_frequency_axis_names_the_unit_of_its_ticks():
    """Under ticks in MHz the label reads "frequency [MHz]", under kHz "[kHz]" (SI Table 7)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    fig, ax = _axes()
    FigureCanvasAgg(fig)
    ax.plot([1.6e6, 2.4e6], [1, 2])
    kv.frequency_axis(ax)
    fig.canvas.draw()
    assert ax.get_xlabel() == "frequency [MHz]"
    texts = [t.get_text() for t in ax.get_xticklabels()]
    assert np.allclose([float(t) for t in texts], ax.get_xticks() * 1e-6)  # ticks in MHz
    ax.set_xlim(1e3, 9e5)
    fig.canvas.draw()
    assert ax.get_xlabel() == "frequency [kHz]"


# -- styles, legends, zoom (issue 14, item 6) ------------------------------------------------

#: The Okabe-Ito colours (M. Okabe and K. Ito, "Color Universal Design", J*FLY 2008; hex
#: values as widely reproduced, e.g. by the R palette.colors("Okabe-Ito"), from memory).
OKABE_ITO = {"#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7",
             "#000000"}


@pytest.mark.parametrize("n", [8, 12, 13, 24, 30])
def test_styles_of_n_traces_are_distinct(n):
    """The first 30 traces get 30 different (colour, dash pattern) pairs, all colours from
    the Okabe-Ito palette; the drawn lines carry them."""
    styles = [kv.style(i) for i in range(n)]
    assert len(set(map(repr, styles))) == n
    assert {c for c, _ in styles} <= OKABE_ITO
    f, z, _ = _bvd(n=101)
    _, ax = _axes()
    lines = kv.overlay(ax, [(f, z * (1 + k / 50)) for k in range(n)], "z_mag")
    drawn = {(ln.get_color(), repr(ln.get_linestyle()), repr(ln.get_dashes()
              if hasattr(ln, "get_dashes") else ln._dash_pattern)) for ln in lines}
    assert len(drawn) == n


def test_twelve_captures_of_the_demo_lot_look_different():
    """pzd7-04 and pzd7-12 (4th and 12th of twelve) no longer share a style (they shared
    a colour with an eight-colour cycle)."""
    assert kv.style(3) != kv.style(11)
    assert len({kv.style(i) for i in range(12)}) == 12


def _extent(artist, renderer):
    return artist.get_window_extent(renderer)


def test_smith_legend_stands_outside_the_chart_and_its_caption():
    """A legend made by legend_outside covers neither the unit circle (the data area of a
    Smith chart) nor the Z0 caption (boxes compared with matplotlib's Bbox.overlaps)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    fig = Figure(figsize=(7, 4), dpi=100)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.05, 0.1, 0.5, 0.8))
    grid = kv.smith_grid(ax, z0_ohm=50)
    f, z, _ = _bvd(n=401)
    for k in range(5):
        kv.plot_smith(ax, (f, z * (1 + k / 10)), label=f"part {k}", i=k)
    leg = kv.legend_outside(ax)
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    box = _extent(leg, r)
    circle = _extent(grid[0], r)
    caption = next(a for a in grid if hasattr(a, "get_text") and "Z0 =" in a.get_text())
    assert not box.overlaps(circle) and not box.overlaps(_extent(caption, r))
    assert box.x0 >= ax.bbox.x1  # right of the axes
    below = kv.legend_outside(ax, side="below")
    fig.canvas.draw()
    assert not _extent(below, r).overlaps(_extent(caption, r))
    with pytest.raises(ValueError, match="side"):
        kv.legend_outside(ax, side="inside")


def test_overlay_legend_is_outside_the_data_area():
    """The overlay's legend lies right of the axes box, never over the curves."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    fig = Figure(figsize=(8, 4), dpi=100)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.1, 0.12, 0.6, 0.8))
    f, z, _ = _bvd(n=301)
    kv.overlay(ax, [(f, z * k) for k in (1, 2, 3)], "z_mag")
    fig.canvas.draw()
    assert _extent(ax.get_legend(), fig.canvas.get_renderer()).x0 >= ax.bbox.x1


def test_charts_are_zoomed_to_the_data():
    """Without a span the x range is the sweep's own range (no margins)."""
    f, z, _ = _bvd(n=801)
    _, ax = _axes()
    kv.plot_chart(ax, (f, z), "z_mag")
    assert ax.get_xlim() == pytest.approx((f[0], f[-1]))


# -- decimation within a pixel (issue 14, item 1) ------------------------------------------

def test_decimated_trace_keeps_every_pixel_column_envelope():
    """A noisy 100,001 point sweep decimated to the axes width (about 4 points per pixel
    column) is drawn within the pixel error: rasterised alone at the same scale, in every
    pixel column the decimated line reaches the lowest and highest data point of that
    column (to a pixel), and in 99 % of the columns it draws nothing outside what the full
    line draws (to a pixel; a few pixels at most elsewhere).
    Rule: first, last, min and max per column (M4, Jugel et al., PVLDB 2014, from memory)."""
    import matplotlib
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    f, z, _ = _bvd(n=100_001)
    z = z * (1 + 0.02 * np.random.default_rng(7).standard_normal(f.size))

    def raster(x, y):
        fig = Figure(figsize=(6, 4), dpi=100)
        FigureCanvasAgg(fig)
        ax = fig.add_axes((0, 0, 1, 1))
        ax.set_axis_off()
        ax.plot(x, y, color="k", lw=1.0, antialiased=False)
        ax.set_xlim(f[0], f[-1])
        ax.set_ylim(0, 1.05 * np.max(np.abs(z)))
        with matplotlib.rc_context({"path.simplify": False}):
            fig.canvas.draw()
        ink = np.asarray(fig.canvas.get_renderer().buffer_rgba())[:, :, 0] < 128
        rows = np.arange(ink.shape[0])[:, None]
        top = np.where(ink, rows, ink.shape[0]).min(axis=0)
        bottom = np.where(ink, rows, -1).max(axis=0)
        return ink.any(axis=0), top, bottom, ax

    has_full, top_full, bot_full, ax = raster(f, np.abs(z))
    x, y = kv.xy_for_display(f, np.abs(z), kv.columns_of(ax))
    assert len(x) <= 4 * kv.columns_of(ax) + 2 and len(x) < f.size / 20
    has_dec, top_dec, bot_dec, _ = raster(x, y)
    assert np.array_equal(has_full, has_dec)
    over = np.maximum(top_full - top_dec, bot_dec - bot_full)[has_full]
    # where the curve is steep, joining a column's extremes in order may cross a pixel
    # the full line does not: measured 2 of about 600 columns, by at most 4 px
    print(f"decimated line beyond the full one: at most {over.max()} px, "
          f"{np.sum(over > 1)} columns over one pixel")
    assert np.mean(over <= 1) >= 0.99 and over.max() <= 5
    px = ax.transData.transform(np.column_stack([f, np.abs(z)]))
    col = np.clip(np.floor(px[:, 0]).astype(int), 0, has_full.size - 1)
    row = ax.figure.bbox.height - px[:, 1]  # data rows from the top
    for c in np.unique(col)[1:-1]:
        sel = row[col == c]
        assert top_dec[c] <= sel.min() + 1 and bot_dec[c] >= sel.max() - 1, c


# -- blitting: static parts kept, only what changed redrawn ---------------------------------

@pytest.fixture
def ipympl_figures():
    """matplotlib on the ipympl backend for the test (no frontend needed), then back."""
    pytest.importorskip("ipympl")
    pytest.importorskip("ipywidgets")
    import matplotlib.pyplot as plt

    old = plt.get_backend()
    plt.switch_backend("module://ipympl.backend_nbagg")
    try:
        yield plt
    finally:
        plt.close("all")
        plt.switch_backend(old)


def _pixels(fig):
    return np.asarray(fig.canvas.get_renderer().buffer_rgba()).copy()


def test_lot_browser_keeps_static_artists_and_blits(ipympl_figures, demo_dir):
    """A capture change, a span move and a pin reuse the figure's artists (same objects
    before and after: grid, axes, trace lines) and draw no full frame; the blitted picture
    equals a full draw of the same state (pixel for pixel)."""
    import kit
    from kit.ui.lot_browser import lot_browser
    from kit.ui.pins import pin_panel

    lot = kit.load_folder(demo_dir / "lot", pattern="{lot}-{serial}")
    rows = [i for i in lot.index if str(lot.loc[i, "name"]).startswith("pzd7")]
    b = lot_browser(lot, select=[0], display=False, interactive=True)
    fig = b.host.fig
    fig.canvas.syncing_data_url = False
    b.select.value = (rows[0], rows[1])
    fig.canvas.draw()  # the first frame (the browser asks for it on display)
    asked = []
    fig.canvas.draw_idle = lambda: asked.append(1)  # a request for a full frame
    static = {id(a) for a in b._grid_artists} | {id(b.ax_rect), id(b.ax_plane)}
    lines = [id(ln) for ln in b.lines_rect + b.lines_plane]
    full = b.layers.counts["full"]

    b.select.value = (rows[2], rows[1])                      # capture change
    b.span.value = (b.span.value[0] + 0.05, b.span.value[1])  # span
    m = pin_panel(b, display=False)
    before_pin = dict(b.layers.counts)
    m.add("min_z")                                            # pin
    assert b.layers.counts["blit"] == before_pin["blit"] + 1
    assert b.layers.counts["band"] == before_pin["band"]      # a pin redraws no axes
    assert b.layers.counts["full"] == full and not asked
    assert not fig.stale  # pyplot's draw-all hook (run after each widget message) skips it
    assert {id(a) for a in b._grid_artists} | {id(b.ax_rect), id(b.ax_plane)} == static
    assert [id(ln) for ln in b.lines_rect + b.lines_plane] == lines
    assert all(a.figure is fig for a in b._grid_artists)
    pins = [id(a) for a in b._pins_rect + b._pins_plane]
    m.add("nearest", 2.0)
    assert [id(a) for a in b._pins_rect[:2] + b._pins_plane[:2]] == pins  # first pin kept

    blitted = _pixels(fig)
    fig.canvas.draw()                                          # a full frame, same state
    assert np.array_equal(blitted, _pixels(fig))


def test_select_by_name_sha_and_row(ipympl_figures, demo_dir):
    """browser.select(key) selects one capture by name, sha256 (or its first 12 hex
    digits) or row label; unknown keys are refused with the key named; a filter hiding
    the capture is cleared."""
    import kit
    from kit.ui.lot_browser import lot_browser

    lot = kit.load_folder(demo_dir / "lot", pattern="{lot}-{serial}")
    b = lot_browser(lot, display=False, interactive=False)
    row = lot.index[lot["name"] == "pzd7-04"][0]
    assert b.select("pzd7-04") == row and b.select.value == (row,)
    assert [t.label for t in b.traces] == ["pzd7-04"]
    other = lot.index[lot["name"] == "pzd7-12"][0]
    b.name_filter.value = "pzd7-0"
    assert b.select(lot.loc[other, "sha256"][:12]) == other and b.select.value == (other,)
    assert b.name_filter.value == ""
    b.select(row, add=True)
    assert b.select.value == (other, row)
    with pytest.raises(KeyError, match="no-such"):
        b.select("no-such-part")


def test_lot_browser_pictures_equal_full_draws_along_a_session(ipympl_figures, demo_dir):
    """Along a session of capture flips, view and span changes back and forth and pins,
    every picture the layers produce (blit, legend patch, band drawn, band restored from a
    kept picture) equals, pixel for pixel, a full draw of the same state in a twin browser;
    returns to an earlier look are restored, not drawn (reference: a full matplotlib draw)."""
    import kit
    from kit.ui.lot_browser import lot_browser

    lot = kit.load_folder(demo_dir / "lot", pattern="{lot}-{serial}")
    rows = [i for i in lot.index if str(lot.loc[i, "name"]).startswith("pzd7")]
    a, b = (lot_browser(lot, select=[0], display=False, interactive=True) for _ in range(2))
    for x in (a, b):
        x.host.fig.canvas.syncing_data_url = False
        x.host.fig.canvas.draw()
    lo, hi = a.span.value
    full = a.layers.counts["full"]
    steps = [("select", (rows[0],)), ("select", (rows[1],)), ("select", (rows[0],)),
             ("select", (0,)), ("select", (rows[4],)),
             ("chart", "r"), ("chart", "z_mag"), ("chart", "r"),
             ("span", (lo + 0.1 * (hi - lo), hi)), ("span", (lo, hi)),
             ("span", (lo + 0.1 * (hi - lo), hi)), ("span", (lo + 0.2 * (hi - lo), hi)),
             ("span", (lo + 0.3 * (hi - lo), hi - 0.1 * (hi - lo))),
             ("select", (rows[2], rows[3])),
             ("select", (rows[3], rows[2])), ("chart", "z_mag"), ("plane", "smith:y"),
             ("plane", "smith:z"), ("plane", "smith:y")]
    # and as the browser benchmark drives it: every view, each after a new span and a
    # new part (kept labels near the other axis are drawn, not kept)
    charts = list(kv.CHARTS)
    for k, name in enumerate(charts * 2):
        steps += [("span", (lo + 0.002 * (k + 1), hi)), ("chart", name),
                  ("select", (rows[k % len(rows)],))]
    for what, value in steps:
        for x in (a, b):
            setattr(getattr(x, what), "value", value)
        b.host.fig.canvas.draw()  # the twin: a full draw of the same state
        pa, pb = _pixels(a.host.fig), _pixels(b.host.fig)
        where = np.argwhere((pa != pb).any(axis=2))
        assert not where.size, (what, value, a.layers.counts, where.min(0), where.max(0),
                                len(where))
    counts = a.layers.counts
    assert counts["kept"] >= 4 and counts["patch"] >= 1 and counts["full"] == full, counts
    assert counts["strip"] >= 2, counts  # one axis's labels kept while the other moved


@settings(max_examples=200, deadline=None)
@given(st.floats(1e-3, 1e6), st.floats(1.01, 1e3), st.floats(1e-3, 1e6), st.floats(1.01, 1e3),
       st.booleans())
def test_held_limits_show_the_data_and_fill_the_axis(c0, cr, w0, wr, log):
    """The limits always hold the wanted range; when they are not exactly the wanted
    ones, the wanted range fills at least 60 % of them (in decades on a log axis);
    returning the same wanted range again changes nothing (common practice, no source)."""
    cur, want = (c0, c0 * cr), (w0, w0 * wr)
    lo, hi = kv.held_limits(cur, want, log=log)
    assert lo <= want[0] and hi >= want[1]
    ext = (lambda a, b: np.log10(b / a)) if log else (lambda a, b: b - a)
    if (lo, hi) != want:
        assert ext(*want) >= 0.6 * ext(lo, hi) * (1 - 1e-12)
    assert kv.held_limits((lo, hi), want, log=log) == (lo, hi)


def test_log_axis_ticks_are_plain_prefixed_numbers():
    """A log |Z| axis over 1 Ω..3 kΩ labels its decades "1", "10", "100", "1k" (SI prefix,
    unit in the label; BIPM SI brochure Table 7), no mathtext; a view inside one decade
    gets labels that tell every tick apart."""
    from matplotlib.figure import Figure

    fig = Figure()
    ax = fig.add_subplot()
    kv.style_chart(ax, "z_mag")
    ax.set_ylim(1.0, 3000.0)
    fig.canvas.draw()
    labels = [t.get_text() for t in ax.get_yticklabels() if t.get_text()]
    assert {"1", "10", "100", "1k"} <= set(labels) and not any("$" in t for t in labels)
    assert ax.get_ylabel() == "|Z| [Ω]"
    ax.set_ylim(94.5, 99.0)
    fig.canvas.draw()
    lo, hi = ax.get_ylim()
    shown = [(t.get_position()[1], t.get_text()) for t in
             ax.get_yticklabels() + ax.get_yticklabels(minor=True)
             if t.get_text() and lo <= t.get_position()[1] <= hi]
    texts = [t for _, t in shown]
    assert len(texts) >= 3 and len(set(texts)) == len(texts)
    assert all(abs(float(t) - y) < 1e-6 * y + 0.051 for y, t in shown)


def test_smith_grid_labels_carry_si_prefixes():
    """Grid labels for a 10 kΩ reference read "2k", "+j5k" and "50 µS" (BIPM SI brochure,
    Table 7), never e-notation; a 50 Ω grid keeps its usual "10", "+j25", "20 mS"."""
    import re

    texts = {}
    for z0 in (50.0, 1.0e4):
        for kind in ("z", "y"):
            ax = Figure().add_subplot()
            texts[z0, kind] = [a.get_text() for a in kv.smith_grid(ax, z0_ohm=z0, kind=kind)
                               if hasattr(a, "get_text") and a.get_text()]
    every = [t for ts in texts.values() for t in ts]
    assert not any(re.search(r"\de[+-]?\d", t) for t in every)
    assert {"2k", "+j5k", "−j10k"} <= set(texts[1.0e4, "z"])
    assert {"50 µS", "200 µS"} <= set(texts[1.0e4, "y"])
    assert {"10", "+j25", "−j50"} <= set(texts[50.0, "z"]) and "20 mS" in texts[50.0, "y"]
    assert any(t.startswith("Z0 = 10 kΩ") for t in texts[1.0e4, "z"])
