"""Pin panel: stick pins into the lot browser's traces and list their readings.

Searches (kit.views.find_pin): minimum or maximum |Z|, phase of Z crossing zero, maximum
conductance, nearest to a typed frequency; each within the browser's span. The readings
stand in a table beside the figure (headers with units, numbers with SI prefixes), never
over the data; the table can be copied (a CSV text box) or written to a CSV file.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from kit import views as kv
from kit.ui.common import MessageBar, classed, show
from kit.ui.lot_browser import LotBrowser
from kit.units import from_unit


class PinPanel:
    """Handles of the pin panel.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The panel (class ``sb-pin-panel``).
    target, kind, freq_mhz, place, clear, csv_path, export : widgets
        Classes ``sb-pin-target``, ``sb-pin-kind``, ``sb-pin-freq``, ``sb-pin-place``,
        ``sb-pin-clear``, ``sb-pin-path``, ``sb-pin-export``.
    table_html : ipywidgets.HTML
        Every pin's reading, one row each (class ``sb-pin-table``).
    csv_text : ipywidgets.Textarea
        The table as CSV in SI units, to copy (class ``sb-pin-csv``).
    readings : list of dict
        The pins (kit.views.pin_reading dicts), numbered from 1.
    message : MessageBar
    """

    def __init__(self, browser: LotBrowser, csv_path: str | Path = "pins.csv") -> None:
        import ipywidgets as w

        self.browser = browser
        self.readings: list[dict[str, Any]] = []
        self.message = MessageBar()
        self.target = classed(w.Dropdown(options=[], description="trace",
                                         layout=w.Layout(width="240px")), "pin-target")
        self.kind = classed(w.Dropdown(options=[(v, k) for k, v in kv.PIN_SEARCHES.items()],
                                       value="min_z", description="find",
                                       layout=w.Layout(width="300px")), "pin-kind")
        self.freq_mhz = classed(w.FloatText(value=0.0, description="at [MHz]", step=0.001,
                                            layout=w.Layout(width="200px")), "pin-freq")
        self.place = classed(w.Button(description="place pin", icon="map-pin"), "pin-place")
        self.clear = classed(w.Button(description="clear pins", icon="eraser"), "pin-clear")
        self.csv_path = classed(w.Text(value=str(csv_path), description="CSV file",
                                       layout=w.Layout(width="320px")), "pin-path")
        self.export = classed(w.Button(description="write CSV", icon="save"), "pin-export")
        self.table_html = classed(w.HTML(""), "pin-table")
        self.csv_text = classed(w.Textarea(value="", rows=4, description="copy",
                                           layout=w.Layout(width="100%")), "pin-csv")
        g = self.message.guard
        self.place.on_click(g(lambda _b: self.add()))
        self.clear.on_click(g(lambda _b: self.remove_all()))
        self.export.on_click(g(lambda _b: self.write_csv()))
        browser.on_change(g(self._follow_selection))
        self._follow_selection()
        self.widget = classed(w.VBox([
            w.HBox([self.target, self.kind, self.freq_mhz]),
            w.HBox([self.place, self.clear, self.csv_path, self.export]),
            self.table_html, self.csv_text, self.message.widget,
        ]), "pin-panel")

    def _follow_selection(self) -> None:
        labels = [t.label for t in self.browser.traces]
        if list(self.target.options) != labels:
            current = self.target.value
            self.target.options = labels
            self.target.value = current if current in labels else (labels[0] if labels else None)

    def add(self, kind: str | None = None, f_mhz: float | None = None) -> dict[str, Any]:
        """Stick a pin into the chosen trace (controls' values unless given); returns it."""
        if kind is not None:
            self.kind.value = kind
        if f_mhz is not None:
            self.freq_mhz.value = f_mhz
        traces = {t.label: t for t in self.browser.traces}
        if not traces:
            raise ValueError("select at least one capture in the lot browser first")
        t = traces.get(self.target.value) or self.browser.traces[0]
        idx = kv.find_pin(t, self.kind.value, f_hz=from_unit(self.freq_mhz.value, "MHz"),
                          span_hz=self.browser.span_hz())
        r = kv.pin_reading(t, idx, name=str(len(self.readings) + 1))
        self.readings.append(r)
        self._show()
        return r

    def remove_all(self) -> None:
        """Remove every pin."""
        self.readings = []
        self._show()

    def table(self):
        """The pins as a DataFrame in SI units (kit.views.pins_table)."""
        return kv.pins_table(self.readings)

    def write_csv(self) -> Path:
        """Write the pins table to the CSV path (atomically); returns the path."""
        if not self.readings:
            raise ValueError("no pins to write; place a pin first")
        out = kv.write_pins_csv(self.table(), self.csv_path.value)
        self.message.show(f"wrote {len(self.readings)} pin(s) to {out}", "note")
        return out

    def _show(self) -> None:
        self.browser.set_pins(self.readings)
        if not self.readings:
            self.table_html.value = ""
            self.csv_text.value = ""
            return
        tab = self.table()
        shown = kv.pins_display(tab)
        self.table_html.value = ('<div style="font-size:12px;overflow-x:auto">' + shown.to_html(
            escape=True, index=False, border=0, classes="sb-table") + "</div>")
        self.csv_text.value = tab.to_csv(index=False, float_format="%.10g")


def pin_panel(browser: LotBrowser, csv_path: str | Path = "pins.csv",
              display: bool = True) -> PinPanel:
    """Build the pin panel over a lot browser (its selection, span and figure)."""
    p = PinPanel(browser, csv_path=csv_path)
    if display:
        show(p.widget)
    return p
