"""Lot browser: the folder table with filters; selected rows overlaid in two views.

``lot_browser(folder_or_table)`` builds the panel and returns a :class:`LotBrowser` whose
attributes are the named controls. The figure is made once: a reflection-plane view on
the left (Smith chart, polar or admittance circle) and a rectangular chart on the right
(any of :data:`kit.views.CHARTS`). Selecting rows, choosing charts, moving the span and
the raw/corrected toggle only update line data (``set_data``) and redraw.

Computation happens in kit functions only: :func:`kit.load_folder`,
:func:`kit.io.folder.capture_of`, :func:`kit.views.trace` and the view functions.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, Callable

from kit import views as kv
from kit.ui.common import FigureHost, MessageBar, classed, set_span_hz, show, span_hz, span_slider
from kit.units import table

PLANE_OPTIONS = [("Smith chart, Z grid", "smith:z"), ("Smith chart, Y grid", "smith:y"),
                 ("Smith chart, Z and Y", "smith:both"), ("polar |Γ|", "polar"),
                 ("admittance circle", "circle")]
CHART_OPTIONS = [(c.title, name) for name, c in kv.CHARTS.items()]
_PLANE_BOX = (0.02, 0.12, 0.36, 0.80)
_CIRCLE_BOX = (0.08, 0.14, 0.32, 0.78)
METHOD_OPTIONS = [("auto", "auto"), ("reflection (S11)", "reflection"),
                  ("series-through (S21)", "series-through"),
                  ("shunt-through (S21)", "shunt-through")]


def _row_label(rec) -> str:
    pts = "" if rec.get("points") != rec.get("points") else f" · {int(rec['points'])} pts"
    status = rec.get("status", "")
    flag = {"ok": "", "warning": " · warning", "error": " · REFUSED"}.get(status, f" · {status}")
    return f"{rec['name']}{pts}{flag}"


class LotBrowser:
    """Handles of the lot browser panel.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole panel (class ``sb-lot-browser``).
    table : pandas.DataFrame
        The folder table (from :func:`kit.load_folder`).
    name_filter, status_filter, select, plane, chart, method, span, corrected : widgets
        The controls (classes ``sb-name-filter``, ``sb-status-filter``, ``sb-select``,
        ``sb-plane``, ``sb-chart``, ``sb-method``, ``sb-span``, ``sb-corrected``).
    table_html : ipywidgets.HTML
        The filtered table (class ``sb-lot-table``).
    status : ipywidgets.HTML
        One line under the figure: captures, chart, span, pins (class ``sb-status``);
        written just before each redraw.
    host : FigureHost
        The figure; ``host.fig``, ``ax_plane`` and ``ax_rect`` are its axes.
    message : MessageBar
    traces : list of kit.views.Trace
        The traces drawn, in selection order.
    """

    def __init__(self, table, correction: Callable | None = None, chart: str = "z_mag",
                 plane: str = "smith:z", interactive: bool | None = None) -> None:
        import ipywidgets as w

        self.table = table
        self.correction = correction
        self.message = MessageBar()
        self._cache: dict[tuple, Any] = {}
        self.traces: list[kv.Trace] = []
        self.lines_plane: list[Any] = []
        self.lines_rect: list[Any] = []
        self.pin_artists: list[Any] = []
        self.pins: list[dict[str, Any]] = []
        self._listeners: list[Callable[[], None]] = []

        self.name_filter = classed(w.Text(placeholder="part of the name", description="name",
                                          layout=w.Layout(width="220px")), "name-filter")
        statuses = ["all"] + sorted(set(map(str, table["status"]))) if len(table) else ["all"]
        self.status_filter = classed(w.Dropdown(options=statuses, value="all",
                                                description="status",
                                                layout=w.Layout(width="180px")), "status-filter")
        self.select = classed(w.SelectMultiple(options=[], rows=8, description="captures",
                                               layout=w.Layout(width="320px")), "select")
        self.plane = classed(w.Dropdown(options=PLANE_OPTIONS, value=plane, description="left view",
                                        layout=w.Layout(width="270px")), "plane")
        self.chart = classed(w.Dropdown(options=CHART_OPTIONS, value=chart,
                                        description="right view",
                                        layout=w.Layout(width="270px")), "chart")
        self.method = classed(w.Dropdown(options=METHOD_OPTIONS, value="auto",
                                         description="impedance from",
                                         style={"description_width": "initial"},
                                         layout=w.Layout(width="270px")), "method")
        self.corrected = classed(w.ToggleButtons(options=["raw", "corrected"], value="raw",
                                                 description="data",
                                                 disabled=correction is None), "corrected")
        self.table_html = classed(w.HTML(), "lot-table")
        self.status = classed(w.HTML(), "status")
        ok = table[table["status"] != "error"] if len(table) else table
        lo = float(ok["f_start_hz"].min()) if len(ok) else 0.0
        hi = float(ok["f_stop_hz"].max()) if len(ok) else 1.0
        self.span = span_slider(lo, hi if hi > lo else lo + 1.0)

        self.host = FigureHost(figsize=(10.4, 4.4), interactive=interactive, css="lot-figure")
        fig = self.host.fig
        self.ax_plane = fig.add_axes(_PLANE_BOX)
        self.ax_rect = fig.add_axes([0.48, 0.14, 0.49, 0.78])
        self._polar_ax = None
        self._grid_artists: list[Any] = []
        self._draw_plane_grid()
        kv.style_chart(self.ax_rect, chart)
        self._empty = self.ax_rect.text(0.5, 0.5, "select captures on the left", ha="center",
                                        va="center", transform=self.ax_rect.transAxes,
                                        color="#777777")
        self._span_selector = None
        if self.host.interactive:
            self._add_span_selector()

        g = self.message.guard
        self.name_filter.observe(g(lambda _c: self.refresh_table()), names="value")
        self.status_filter.observe(g(lambda _c: self.refresh_table()), names="value")
        self.select.observe(g(lambda _c: self.redraw(new_data=True)), names="value")
        self.chart.observe(g(lambda _c: self.redraw()), names="value")
        self.plane.observe(g(lambda _c: self.redraw(new_grid=True)), names="value")
        self.method.observe(g(lambda _c: self.redraw(new_data=True)), names="value")
        self.corrected.observe(g(lambda _c: self.redraw(new_data=True)), names="value")
        self.span.observe(g(lambda _c: self.redraw()), names="value")

        controls = w.VBox([w.HBox([self.name_filter, self.status_filter]), self.select,
                           self.plane, self.chart, self.method, self.corrected])
        self.widget = classed(w.VBox([
            w.HBox([controls, self.table_html]), self.span, self.host.widget, self.status,
            self.message.widget]), "lot-browser")
        self.refresh_table()
        self._show_status()
        self.host.refresh()

    # -- table ---------------------------------------------------------------------------
    def filtered(self):
        """The table rows passing the name and status filters."""
        t = self.table
        text = self.name_filter.value.strip().lower()
        if text:
            t = t[t["name"].astype(str).str.lower().str.contains(text, regex=False)]
        if self.status_filter.value != "all":
            t = t[t["status"].astype(str) == self.status_filter.value]
        return t

    def refresh_table(self) -> None:
        """Update the selectable list and the HTML table from the filters."""
        t = self.filtered()
        keep = [v for v in self.select.value if v in set(t.index)]
        self.select.options = [(_row_label(t.loc[i]), i) for i in t.index]
        self.select.value = tuple(keep)
        cols = [c for c in t.columns if c not in ("path", "sha256", "message", "warnings")]
        shown = table(t[cols], digits={"f_start_hz": 6, "f_stop_hz": 6})
        self.table_html.value = (
            '<div style="max-height:210px;overflow:auto;font-size:12px">'
            + shown.to_html(escape=True, index=False, na_rep="", border=0,
                            classes="sb-table") + "</div>")

    # -- data ----------------------------------------------------------------------------
    def _method_for(self, cap) -> str:
        m = self.method.value
        if m != "auto":
            return m
        return "reflection" if cap.ports == 1 else "series-through"

    def trace_of(self, row) -> kv.Trace:
        """The trace of a table row, as drawn now (raw or corrected, chosen method)."""
        from kit.io import folder

        use_corr = self.corrected.value == "corrected" and self.correction is not None
        key = (row, self.method.value, use_corr, id(self.correction))
        if key not in self._cache:
            cap = folder.capture_of(self.table, row)
            if use_corr:
                cap = self.correction(cap)
            self._cache[key] = kv.trace(cap, method=self._method_for(cap))
        return self._cache[key]

    def set_correction(self, correction: Callable | None) -> None:
        """Use another correction (callable Capture -> Capture) for the "corrected" view."""
        self.correction = correction
        self.corrected.disabled = correction is None
        if correction is None:
            self.corrected.value = "raw"
        self.redraw(new_data=True)

    # -- drawing -------------------------------------------------------------------------
    def span_hz(self) -> tuple[float, float]:
        """The chosen frequency span [Hz]."""
        return span_hz(self.span)

    def _draw_plane_grid(self) -> None:
        for a in self._grid_artists:
            a.remove()
        self._grid_artists = []
        kind = self.plane.value
        fig = self.host.fig
        if kind == "polar":
            self.ax_plane.set_visible(False)
            if self._polar_ax is None:
                self._polar_ax = fig.add_axes(self.ax_plane.get_position(), projection="polar")
            self._polar_ax.set_visible(True)
            return
        if self._polar_ax is not None:
            self._polar_ax.set_visible(False)
        self.ax_plane.set_visible(True)
        ax = self.ax_plane
        ax.set_position(_CIRCLE_BOX if kind == "circle" else _PLANE_BOX)
        if kind.startswith("smith"):
            z0 = self.traces[0].z0_ohm if self.traces else 50.0
            self._grid_artists = kv.smith_grid(ax, z0_ohm=z0, kind=kind.split(":")[1])
        else:
            ax.set_axis_on()
            ax.set_aspect("auto")
            ax.set_autoscale_on(True)
            kv.style_admittance_circle(ax)

    def _plane_ax(self):
        return self._polar_ax if self.plane.value == "polar" else self.ax_plane

    def redraw(self, new_data: bool = False, new_grid: bool = False) -> None:
        """Bring the figure in line with the controls (called by every control)."""
        if new_data:
            self.traces = [self.trace_of(r) for r in self.select.value]
        if new_grid:
            for ln in self.lines_plane:
                ln.remove()
            self.lines_plane = []
            self._draw_plane_grid()
        span = self.span_hz()
        chart = self.chart.value
        pax = self._plane_ax()
        while len(self.lines_rect) > len(self.traces):
            self.lines_rect.pop().remove()
            self.lines_plane.pop().remove()
        for i, t in enumerate(self.traces):
            if i < len(self.lines_rect):
                kv.update_line(self.lines_rect[i], t, chart, span_hz=span)
                self.lines_rect[i].set_label(t.label)
            else:
                self.lines_rect += kv.plot_chart(self.ax_rect, t, chart, i=i, span_hz=span)
            if i >= len(self.lines_plane):
                self.lines_plane += pax.plot([], [], color=kv.color(i), lw=1.4, zorder=3,
                                             label=t.label)
            self.lines_plane[i].set_data(*kv.plane_xy(t, self.plane.value,
                                                      kv.columns_of(pax), span))
        kv.style_chart(self.ax_rect, chart)
        self.ax_rect.set_xlim(*span)
        self._empty.set_visible(not self.traces)
        self.ax_rect.relim(visible_only=True)
        self.ax_rect.autoscale_view(scalex=False)
        if self.plane.value == "circle" and self.traces:
            self.ax_plane.relim()
            self.ax_plane.autoscale_view()
        if self.plane.value == "polar" and self.traces:
            kv.fit_polar_radius(self._polar_ax, *(ln.get_ydata() for ln in self.lines_plane))
        leg = self.ax_rect.get_legend()
        if leg is not None:
            leg.remove()
        if 0 < len(self.traces) <= 12:
            self.ax_rect.legend(fontsize=7, frameon=False, ncols=2 if len(self.traces) > 6 else 1)
        self._draw_pins()
        self._show_status()
        self.host.refresh()
        for fn in self._listeners:
            fn()

    # -- pins ----------------------------------------------------------------------------
    def on_change(self, fn: Callable[[], None]) -> None:
        """Call ``fn()`` after every redraw (the pin panel follows the selection)."""
        self._listeners.append(fn)

    def set_pins(self, readings: list[dict[str, Any]]) -> None:
        """Show these pins (readings from :func:`kit.views.pin_reading`) on both views."""
        self.pins = list(readings)
        self._draw_pins()
        self._show_status()
        self.host.refresh()

    def _show_status(self) -> None:
        lo, hi = self.span.value  # as the slider reads them (MHz)
        n, k = len(self.traces), len(self.pins)
        self.status.value = (
            f'<span style="color:#4d5b5e;font-size:12px">{n} capture{"s" * (n != 1)} · '
            f"{kv.CHARTS[self.chart.value].title} · span {lo:.4f}–{hi:.4f} MHz · "
            f'{k} pin{"s" * (k != 1)}</span>')

    def _draw_pins(self) -> None:
        """Pins on both views, heads kept apart; their readings are in the pin panel's table,
        never over the data."""
        for a in self.pin_artists:
            a.remove()
        self.pin_artists = []
        chart = kv.CHARTS[self.chart.value]
        by_label = {t.label: t for t in self.traces}
        rect, plane = [], []
        for r in self.pins:
            t = by_label.get(r["trace"])
            if t is None:
                continue
            rect.append((r["f_hz"], chart.quantity(t)[r["index"]], r["pin"]))
            plane.append((*kv.plane_point(r, self.plane.value), r["pin"]))
        if rect:
            self.pin_artists += kv.draw_pins(self.ax_rect, rect)
            self.pin_artists += kv.draw_pins(self._plane_ax(), plane)

    # -- span selection on the plot (ipympl only) -----------------------------------------
    def _add_span_selector(self) -> None:
        from matplotlib.widgets import SpanSelector

        def _picked(lo, hi):
            if hi > lo:
                set_span_hz(self.span, lo, hi)

        self._span_selector = SpanSelector(self.ax_rect, self.message.guard(_picked), "horizontal",
                                           useblit=False, props={"alpha": 0.15,
                                                                 "facecolor": kv.color(0)})


def lot_browser(source, pattern: str | None = None, correction: Callable | None = None,
                select: int | list | None = None, chart: str = "z_mag", plane: str = "smith:z",
                display: bool = True, interactive: bool | None = None) -> LotBrowser:
    """Build the lot browser over a folder (path) or a table from :func:`kit.load_folder`.

    Parameters
    ----------
    source : str, Path or pandas.DataFrame
        A folder of Touchstone files, or its table.
    pattern : str, optional
        File-name pattern, e.g. ``"{lot}-{serial}"`` (when ``source`` is a folder).
    correction : callable, optional
        Capture -> Capture (e.g. a kit.corrections chain) for the "corrected" view.
    select : int or list of int, optional
        Row positions selected at start.
    chart, plane : str
        Right view (a key of :data:`kit.views.CHARTS`) and left view
        ("smith:z", "smith:y", "smith:both", "polar", "circle").
    display : bool
        Show the panel now (False in tests).
    interactive : bool, optional
        Force or refuse an ipympl canvas (default: follow the matplotlib backend).

    Returns
    -------
    LotBrowser
    """
    if isinstance(source, (str, Path)):
        from kit.io.folder import load_folder

        table = load_folder(source, pattern=pattern)
    else:
        table = source
    b = LotBrowser(table, correction=correction, chart=chart, plane=plane, interactive=interactive)
    if select is not None:
        rows = [select] if isinstance(select, int) else list(select)
        b.select.value = tuple(table.index[r] for r in rows)
    if display:
        show(b.widget)
    return b


__all__ = ["LotBrowser", "lot_browser", "PLANE_OPTIONS", "CHART_OPTIONS"]
