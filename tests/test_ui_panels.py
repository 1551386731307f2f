"""Widget cells in plain pytest (display=False): controls drive kit functions and the figure."""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("ipywidgets")

import kit.views as kv  # noqa: E402
from kit.ui.common import FigureHost, MessageBar, section  # noqa: E402


@pytest.fixture(scope="module")
def lot(demo_dir):
    """The demo lot table (kit.load_folder with the lot's name pattern)."""
    import kit

    return kit.load_folder(demo_dir / "lot", pattern="{lot}-{serial}")


def _rows(table, *names):
    return tuple(table.index[table["name"] == n][0] for n in names)


def test_message_bar_turns_errors_into_escaped_messages():
    """A failing callback shows its error (HTML-escaped) instead of raising."""
    bar = MessageBar()

    @bar.guard
    def boom():
        raise ValueError("bad <file> & worse")

    assert boom() is None
    assert bar.kind == "error" and bar.last == "bad <file> & worse"  # no "ValueError: "
    assert "&lt;file&gt; &amp; worse" in bar.widget.value
    assert bar.guard(lambda: {}["fs_hz"])() is None and bar.last == "fs_hz"
    assert bar.guard(lambda: 1 / 0)() is None and bar.last == "division by zero"


def test_errors_never_show_a_python_class_name():
    """Messages quoting another exception, or none at all, still read as plain sentences
    (the issue's example: "ValueError: ..." must not reach the panel)."""
    from kit.ui.common import plain_error

    cases = {ValueError("ValueError: the span is empty; widen it"): "the span is empty; widen it",
             RuntimeError("fit failed: numpy.linalg.LinAlgError('Singular matrix')"):
                 "fit failed: Singular matrix",
             KeyError("fs_hz"): "fs_hz"}
    for exc, text in cases.items():
        assert plain_error(exc) == text
    empty = plain_error(ValueError())
    assert "Error" not in empty and "check the inputs" in empty


def test_one_style_for_errors_warnings_and_notes():
    """Every kind goes through the same bar with its mark; a warning a callback showed is
    kept when the callback also warns (the note is added to it)."""
    import warnings

    bar = MessageBar()
    marks = {}
    for kind in ("error", "warning", "note"):
        bar.show("x", kind)
        marks[kind] = bar.widget.value.split('">')[1][0]
    assert marks == {"error": "⚠", "warning": "⚠", "note": "ℹ"}
    with pytest.raises(ValueError, match="error, a warning or a note"):
        bar.show("x", "info")

    def both():
        bar.show("L1 changes by 40 %", "warning")
        warnings.warn("3 points set to NaN", UserWarning)

    bar.guard(both)()
    assert bar.kind == "warning" and bar.last == "L1 changes by 40 %; 3 points set to NaN"


def test_message_bar_reports_warnings_as_notes():
    """A warning raised in a callback is shown as a note; the result is returned."""
    import warnings

    bar = MessageBar()
    out = bar.guard(lambda: (warnings.warn("points set to NaN", UserWarning), 3)[1])()
    assert out == 3 and bar.kind == "note" and "NaN" in bar.last


def test_figure_host_png_fallback_refreshes():
    """Without ipympl the figure is a PNG in an Image widget, renewed by refresh()."""
    host = FigureHost(interactive=False)
    ax = host.fig.add_subplot()
    (line,) = ax.plot([0, 1], [0, 1])
    host.refresh()
    first = host.widget.value
    line.set_data([0, 1], [1, 0])
    host.refresh()
    assert first[:4] == b"\x89PNG" and host.widget.value != first and host.renders == 2


def test_section_folds_its_body():
    """A section's header hides and shows its body."""
    import ipywidgets as w

    box = section("Lot", w.Label("x"), "lot")
    box.header.value = False
    assert box.body.layout.display == "none"
    box.header.value = True
    assert box.body.layout.display is None


def test_lot_browser_overlays_selected_rows(lot):
    """Selecting rows overlays their captures; the figure is updated in place, not rebuilt."""
    from kit.ui.lot_browser import lot_browser

    b = lot_browser(lot, display=False, interactive=False)
    fig, ax = b.host.fig, b.ax_rect
    b.select.value = _rows(lot, "pzd7-01", "pzd7-02", "pzd7-03")
    assert [t.label for t in b.traces] == ["pzd7-01", "pzd7-02", "pzd7-03"]
    assert len(b.lines_rect) == 3 and len(b.lines_plane) == 3
    line0 = b.lines_rect[0]
    before = b.host.widget.value
    b.select.value = _rows(lot, "pzd7-04")
    assert b.lines_rect[0] is line0 and len(b.lines_rect) == 1 and b.host.fig is fig
    assert b.host.widget.value != before and b.ax_rect is ax
    # the line holds the capture's |Z| (decimated), never altered
    t = b.traces[0]
    assert np.max(line0.get_ydata()) == pytest.approx(np.nanmax(np.abs(t.z)))


def test_lot_browser_filters_and_table(lot):
    """The name and status filters narrow the list; the HTML table escapes its text."""
    from kit.ui.lot_browser import lot_browser

    b = lot_browser(lot, display=False, interactive=False)
    b.name_filter.value = "pzd7-1"
    assert [lbl.split(" ")[0] for lbl, _ in b.select.options] == ["pzd7-10", "pzd7-11", "pzd7-12"]
    b.name_filter.value = ""
    b.status_filter.value = "warning"
    assert all("warning" in lbl for lbl, _ in b.select.options)
    assert "<table" in b.table_html.value


def test_chart_span_and_plane_switch(lot):
    """Switching chart relabels the axis; the span sets x limits; every left view draws."""
    from kit.ui.lot_browser import lot_browser

    b = lot_browser(lot, select=[1, 2], display=False, interactive=False)
    b.chart.value = "z_phase"
    assert b.ax_rect.get_ylabel() == "phase of Z [°]"
    b.span.value = (1.7, 2.1)
    assert b.ax_rect.get_xlim() == pytest.approx((1.7e6, 2.1e6))
    assert b.lines_rect[0].get_xdata().max() <= 2.1e6 + 2e3
    for plane in ("smith:y", "polar", "circle", "smith:both"):
        b.plane.value = plane
        assert len(b.lines_plane) == 2 and b.message.last == "", plane
    b.plane.value = "circle"
    x = b.lines_plane[0].get_xdata()
    assert np.nanmax(x) == pytest.approx(1e3 * np.nanmax(b.traces[0].y.real[
        (b.traces[0].f_hz >= 1.7e6) & (b.traces[0].f_hz <= 2.1e6)]), rel=1e-9)


def test_callback_error_stays_in_panel(lot):
    """A failing correction shows a message and leaves the panel working."""
    from kit.ui.lot_browser import lot_browser

    def broken(cap):
        raise RuntimeError("standards missing for this fixture")

    b = lot_browser(lot, select=[1], display=False, interactive=False, correction=broken)
    b.corrected.value = "corrected"
    assert "standards missing" in b.message.last
    b.corrected.value = "raw"
    assert b.message.last == "" and len(b.lines_rect) == 1


def test_corrected_toggle_uses_the_correction(lot):
    """The corrected view draws the correction's output (here a known 10 ohm series removal)."""
    import skrf as rf

    import kit
    from kit.ui.lot_browser import lot_browser

    def minus_10_ohm(cap):
        z = kit.impedance(cap) - 10.0
        ntwk = rf.Network(frequency=cap.network.frequency, s=kv.gamma_from_z(z).reshape(-1, 1, 1),
                          z0=50)
        return cap.derive(ntwk, step={"kind": "test"})

    b = lot_browser(lot, select=[1], display=False, interactive=False, correction=minus_10_ohm)
    raw = b.traces[0].z.copy()
    b.corrected.value = "corrected"
    assert np.allclose(b.traces[0].z, raw - 10.0)


def test_pin_panel_places_lists_and_exports(lot, tmp_path):
    """Pins are found with kit.views.find_pin, listed in a table beside the figure (units
    in the headers), drawn without a read-out box and written to CSV."""
    import pandas as pd

    from kit.ui.lot_browser import lot_browser
    from kit.ui.pins import pin_panel

    b = lot_browser(lot, select=[1, 2], display=False, interactive=False)
    m = pin_panel(b, csv_path=tmp_path / "m.csv", display=False)
    assert m.target.options == ("pzd7-01", "pzd7-02")
    m.kind.value = "min_z"
    m.place.click()
    t = b.traces[0]
    assert m.readings[0]["index"] == kv.find_pin(t, "min_z", span_hz=b.span_hz())
    assert "f [MHz]" in m.table_html.value and "|Z| [Ω]" in m.table_html.value
    m.add("nearest", 2.2)
    assert abs(m.readings[1]["f_hz"] - 2.2e6) < 2e3
    assert len(b.pin_artists) == 2 * 2 * 2  # 2 pins x 2 views x (dot, head); no read-out box
    assert not any(getattr(a, "get_bbox_patch", lambda: None)() is not None
                   and a.get_text().count("\n") for a in b.pin_artists)
    m.export.click()
    back = pd.read_csv(tmp_path / "m.csv")
    assert list(back["pin"]) == [1, 2] and "wrote 2" in m.message.last
    assert m.csv_text.value.startswith("pin,trace,f_hz")
    b.chart.value = "r"  # pins follow a chart change
    assert len(b.pin_artists) == 8
    m.clear.click()
    assert b.pin_artists == [] and m.readings == []


def test_pin_panel_reports_impossible_search(lot):
    """A search that finds nothing says why in the panel."""
    from kit.ui.lot_browser import lot_browser
    from kit.ui.pins import pin_panel

    b = lot_browser(lot, display=False, interactive=False)
    m = pin_panel(b, display=False)
    m.place.click()
    assert "select at least one capture" in m.message.last
    b.select.value = _rows(lot, "pzd7-01")
    b.span.value = (1.0, 1.1)
    m.kind.value = "zero_phase"
    m.place.click()
    assert "does not cross zero" in m.message.last


def test_desk_stacks_sections(lot, tmp_path):
    """The desk stacks the lot and pin sections (no tabs) and adds extra panels."""
    import ipywidgets as w

    from kit.ui.desk import desk

    dk = desk(lot, select=[1], display=False, interactive=False,
                   pins_csv=str(tmp_path / "m.csv"), extras=False)
    assert list(dk.sections) == ["Lot", "Pins"]
    assert not any(isinstance(c, w.Tab) for c in dk.widget.children)
    dk.add_section("Notes", w.Label("free text"))
    assert dk.widget.children[-1] is dk.sections["Notes"]
    def missing(_wb):
        import kit.ui.no_such_panel  # noqa: F401

    dk.add_available_panels([("Nothing", missing)])
    assert "not available" in dk.skipped["Nothing"]


@pytest.mark.slow
def test_desk_hosts_the_other_panels(lot, demo_dir):
    """With extras the desk adds the corrections, fit and matching panels it can build."""
    from kit.ui.desk import desk

    dk = desk(lot, select=[1], display=False, interactive=False,
                   corrections_source=demo_dir)
    built = set(dk.sections) - {"Lot", "Pins"}
    assert built | set(dk.skipped) == {"Corrections", "Resonator fits", "Review and report",
                                        "Matching", "Procedure"}
    assert "review_log" in dk.skipped.get("Review and report", "review_log")
    if "Corrections" in dk.sections:
        panel = dk.panels["Corrections"]
        if panel.chain is not None:
            panel.use_button.click()
            assert dk.browser.corrected.value == "corrected" and dk.browser.message.kind != "error"


def test_interactive_canvas_when_ipympl_present(lot):
    """With ipympl the figure is a canvas widget updated by draw_idle, and a span selector exists."""
    pytest.importorskip("ipympl")
    import matplotlib.pyplot as plt

    from kit.ui.lot_browser import lot_browser

    old = plt.get_backend()  # this test's own backend: it used to rely on an earlier test's
    plt.switch_backend("module://ipympl.backend_nbagg")
    try:
        b = lot_browser(lot, select=[1], display=False, interactive=True)
        assert type(b.host.widget).__name__ == "Canvas" and b._span_selector is not None
        b._span_selector.onselect(1.8e6, 2.0e6)
        assert b.span.value == pytest.approx((1.8, 2.0), abs=b.span.step)
        b.host.close()
    finally:
        plt.close("all")
        plt.switch_backend(old)
