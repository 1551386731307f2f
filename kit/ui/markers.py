"""Marker search panel: place markers on the lot browser's traces and list their readouts.

Searches (kit.views.find_marker): minimum or maximum |Z|, phase of Z crossing zero,
maximum conductance, nearest to a typed frequency; each within the browser's span. The
markers table can be copied (a CSV text box) or written to a CSV file.
"""

from __future__ import annotations

import html
from pathlib import Path
from typing import Any

from kit import views as kv
from kit.ui.common import MessageBar, classed, show
from kit.ui.lot_browser import LotBrowser
from kit.units import from_unit


class MarkerPanel:
    """Handles of the marker panel.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The panel (class ``sb-marker-panel``).
    target, kind, freq_mhz, place, clear, csv_path, export : widgets
        Classes ``sb-marker-target``, ``sb-marker-kind``, ``sb-marker-freq``,
        ``sb-marker-place``, ``sb-marker-clear``, ``sb-marker-path``, ``sb-marker-export``.
    readout : ipywidgets.HTML
        The last marker's readout (class ``sb-readout``).
    table_html : ipywidgets.HTML
        All markers (class ``sb-marker-table``).
    csv_text : ipywidgets.Textarea
        The table as CSV, to copy (class ``sb-marker-csv``).
    readouts : list of dict
        The markers (kit.views.marker_readout dicts).
    message : MessageBar
    """

    def __init__(self, browser: LotBrowser, csv_path: str | Path = "markers.csv") -> None:
        import ipywidgets as w

        self.browser = browser
        self.readouts: list[dict[str, Any]] = []
        self.message = MessageBar()
        self.target = classed(w.Dropdown(options=[], description="trace",
                                         layout=w.Layout(width="240px")), "marker-target")
        self.kind = classed(w.Dropdown(options=[(v, k) for k, v in kv.MARKER_KINDS.items()],
                                       value="min_z", description="find",
                                       layout=w.Layout(width="300px")), "marker-kind")
        self.freq_mhz = classed(w.FloatText(value=0.0, description="at [MHz]", step=0.001,
                                            layout=w.Layout(width="200px")), "marker-freq")
        self.place = classed(w.Button(description="place marker", button_style="",
                                      icon="map-pin"), "marker-place")
        self.clear = classed(w.Button(description="clear markers", icon="eraser"), "marker-clear")
        self.csv_path = classed(w.Text(value=str(csv_path), description="CSV file",
                                       layout=w.Layout(width="320px")), "marker-path")
        self.export = classed(w.Button(description="write CSV", icon="save"), "marker-export")
        self.readout = classed(w.HTML(""), "readout")
        self.table_html = classed(w.HTML(""), "marker-table")
        self.csv_text = classed(w.Textarea(value="", rows=4, description="copy",
                                           layout=w.Layout(width="100%")), "marker-csv")
        g = self.message.guard
        self.place.on_click(g(lambda _b: self.add()))
        self.clear.on_click(g(lambda _b: self.remove_all()))
        self.export.on_click(g(lambda _b: self.write_csv()))
        browser.on_change(g(self._follow_selection))
        self._follow_selection()
        self.widget = classed(w.VBox([
            w.HBox([self.target, self.kind, self.freq_mhz]),
            w.HBox([self.place, self.clear, self.csv_path, self.export]),
            w.HBox([self.readout, self.table_html]), self.csv_text, self.message.widget,
        ]), "marker-panel")

    def _follow_selection(self) -> None:
        labels = [t.label for t in self.browser.traces]
        if list(self.target.options) != labels:
            current = self.target.value
            self.target.options = labels
            self.target.value = current if current in labels else (labels[0] if labels else None)

    def add(self, kind: str | None = None, f_mhz: float | None = None) -> dict[str, Any]:
        """Place a marker on the chosen trace (controls' values unless given); returns it."""
        if kind is not None:
            self.kind.value = kind
        if f_mhz is not None:
            self.freq_mhz.value = f_mhz
        traces = {t.label: t for t in self.browser.traces}
        if not traces:
            raise ValueError("select at least one capture in the lot browser first")
        t = traces.get(self.target.value) or self.browser.traces[0]
        idx = kv.find_marker(t, self.kind.value, f_hz=from_unit(self.freq_mhz.value, "MHz"),
                             span_hz=self.browser.span_hz())
        r = kv.marker_readout(t, idx, name=f"M{len(self.readouts) + 1}")
        self.readouts.append(r)
        self._show()
        return r

    def remove_all(self) -> None:
        """Remove every marker."""
        self.readouts = []
        self._show()

    def table(self):
        """The markers as a DataFrame (kit.views.markers_table)."""
        return kv.markers_table(self.readouts)

    def write_csv(self) -> Path:
        """Write the markers table to the CSV path (atomically); returns the path."""
        if not self.readouts:
            raise ValueError("no markers to write; place a marker first")
        out = kv.write_markers_csv(self.table(), self.csv_path.value)
        self.message.show(f"wrote {len(self.readouts)} marker(s) to {out}", "note")
        return out

    def _show(self) -> None:
        self.browser.set_markers(self.readouts)
        if not self.readouts:
            self.readout.value = ""
            self.table_html.value = ""
            self.csv_text.value = ""
            return
        text = kv.readout_text(self.readouts[-1])
        self.readout.value = ('<pre class="sb-readout-text" style="font-size:12px;margin:0 12px 0 0">'
                              + html.escape(text) + "</pre>")
        tab = self.table()
        shown = tab[["marker", "trace", "f_hz", "r_ohm", "x_ohm", "z_mag_ohm", "z_phase_deg",
                     "vswr"]].copy()
        self.table_html.value = ('<div style="font-size:12px">' + shown.to_html(
            escape=True, index=False, float_format=lambda v: f"{v:.6g}", border=0) + "</div>")
        self.csv_text.value = tab.to_csv(index=False, float_format="%.10g")


def marker_panel(browser: LotBrowser, csv_path: str | Path = "markers.csv",
                 display: bool = True) -> MarkerPanel:
    """Build the marker panel over a lot browser (its selection, span and figure)."""
    p = MarkerPanel(browser, csv_path=csv_path)
    if display:
        show(p.widget)
    return p
