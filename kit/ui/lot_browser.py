"""Lot browser: the folder table with filters; selected rows overlaid in two views.

``lot_browser(folder_or_table)`` builds the panel and returns a :class:`LotBrowser` whose
attributes are the named controls. The figure is made once: a reflection-plane view on
the left (Smith chart, polar or admittance circle) and a rectangular chart on the right
(any of :data:`kit.views.CHARTS`), its legend outside the data on the right. Selecting
rows, choosing charts, moving the span, pins and the raw/corrected toggle only update
existing artists (``set_data``); the figure's static parts are kept as pixels and only the
band that changed is drawn again, the traces and pins blitted over it
(:class:`kit.views.blit.BlitLayers`). ``browser.select(key)`` selects a capture by its
sha256, row label or name (the lot overview uses it).

Computation happens in kit functions only: :func:`kit.load_folder`,
:func:`kit.io.folder.capture_of`, :func:`kit.views.trace` and the view functions.
"""

from __future__ import annotations

import functools
import html
from collections import OrderedDict
from pathlib import Path
from typing import Any, Callable

from kit import views as kv
from kit.ui.common import FigureHost, MessageBar, classed, set_span_hz, show, span_hz, span_slider
from kit.units import eng, table
from kit.views.blit import BlitLayers, axis_texts, ticks_only

PLANE_OPTIONS = [("Smith chart, Z grid", "smith:z"), ("Smith chart, Y grid", "smith:y"),
                 ("Smith chart, Z and Y", "smith:both"), ("polar |Γ|", "polar"),
                 ("admittance circle", "circle")]
CHART_OPTIONS = [(c.title, name) for name, c in kv.CHARTS.items()]
_PLANE_BOX = (0.02, 0.12, 0.36, 0.80)
_CIRCLE_BOX = (0.08, 0.14, 0.30, 0.78)
_RECT_BOX = (0.475, 0.14, 0.385, 0.78)  # the legend stands right of it, outside the data
_SPLIT = 0.405  # figure fraction between the plane band and the chart band
METHOD_OPTIONS = [("auto", "auto"), ("reflection (S11)", "reflection"),
                  ("series-through (S21)", "series-through"),
                  ("shunt-through (S21)", "shunt-through")]


def _row_label(rec) -> str:
    pts = "" if rec.get("points") != rec.get("points") else f" · {int(rec['points'])} pts"
    status = rec.get("status", "")
    flag = {"ok": "", "warning": " · warning", "error": " · REFUSED"}.get(status, f" · {status}")
    return f"{rec['name']}{pts}{flag}"


def _capture_list(**kw):
    """The capture list: an ``ipywidgets.SelectMultiple`` that can also be called,
    ``browser.select(key)``, to select one capture by key (see :meth:`LotBrowser.pick`)."""
    import ipywidgets as w

    global _CaptureList
    if _CaptureList is None:
        class CaptureList(w.SelectMultiple):
            browser: Any = None

            def __call__(self, key, add: bool = False):
                return self.browser.pick(key, add=add)

        _CaptureList = CaptureList
    return _CaptureList(**kw)


_CaptureList: Any = None
_CACHE_SIZE = 512  # decimated curves kept (a few kB each)


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
        ``select`` is the capture list (a SelectMultiple); calling it,
        ``browser.select(key)``, selects one capture by its sha256, row label or name
        (:meth:`pick`).
    table_html : ipywidgets.HTML
        The filtered table (class ``sb-lot-table``).
    status : ipywidgets.HTML
        One line under the figure: captures, chart, span, pins (class ``sb-status``);
        written just before each redraw.
    host : FigureHost
        The figure; ``host.fig``, ``ax_plane`` and ``ax_rect`` are its axes.
    layers : kit.views.blit.BlitLayers
        Keeps the static parts of the figure (grids, axes, legend) as pixels; each
        interaction redraws the band that changed, or only the traces and pins.
    message : MessageBar
    traces : list of kit.views.Trace
        The traces drawn, in selection order.

    Notes
    -----
    Nothing is computed twice: traces are kept per (row, method, raw/corrected,
    correction), their drawn quantities per chart, and the decimated curves per trace,
    view, span and pixel width. Lines, pins and the legend are updated in place
    (``set_data``); new artists are made only when more traces or pins are shown.
    """

    def __init__(self, table, correction: Callable | None = None, chart: str = "z_mag",
                 plane: str = "smith:z", interactive: bool | None = None) -> None:
        import ipywidgets as w

        self.table = table
        self.correction = correction
        self.message = MessageBar()
        self._cache: dict[tuple, Any] = {}
        self._curves: OrderedDict[tuple, Any] = OrderedDict()
        self._keys: list[tuple] = []
        self.traces: list[kv.Trace] = []
        self.lines_plane: list[Any] = []
        self.lines_rect: list[Any] = []
        self.pin_artists: list[Any] = []
        self._pins_rect: list[Any] = []
        self._pins_plane: list[Any] = []
        self._spare_pins: dict[str, list[Any]] = {"rect": [], "plane": []}  # hidden, reused
        self.pins: list[dict[str, Any]] = []
        self._listeners: list[Callable[[], None]] = []
        self._signature: dict[str, Any] = {}

        self.name_filter = classed(w.Text(placeholder="part of the name", description="name",
                                          layout=w.Layout(width="220px")), "name-filter")
        statuses = ["all"] + sorted(set(map(str, table["status"]))) if len(table) else ["all"]
        self.status_filter = classed(w.Dropdown(options=statuses, value="all",
                                                description="status",
                                                layout=w.Layout(width="180px")), "status-filter")
        self.select = classed(_capture_list(options=[], rows=8, description="captures",
                                            layout=w.Layout(width="320px")), "select")
        self.select.browser = self
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
        self.ax_rect = fig.add_axes(_RECT_BOX)
        self._polar_ax = None
        self._grid_artists: list[Any] = []
        self.layers = BlitLayers(fig, self._dynamic_artists, fallback=self.host.refresh)
        self.layers.add_band("plane", 0.0, _SPLIT, lambda: [self._plane_ax()])
        self.layers.add_band("rect", _SPLIT, 1.0, lambda: [self.ax_rect])
        legend = lambda: [self.ax_rect.get_legend()]  # noqa: E731 - one getter, two uses
        self.layers.add_patch("legend", legend)  # redrawn alone when only it changed
        for which in ("x", "y"):  # an axis's labels kept as pixels when only the other moves
            self.layers.add_strip(f"{which} labels", functools.partial(axis_texts, self.ax_rect,
                                                                       which),
                                  skip=functools.partial(_axis_of, self.ax_rect, which),
                                  stand_in=ticks_only)
        self.layers.add_strip("legend", legend)  # kept while the axes around it change
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
        self._render()

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

    def row_of(self, key) -> Any:
        """The table row label of a capture given by its sha256 (or a unique prefix of at
        least 8 hex digits), its row label or its name.

        Raises
        ------
        KeyError
            No capture, or more than one, has that key; the message says which keys exist.
        """
        t = self.table
        if key in t.index:
            return key
        text = str(key).strip()
        if "sha256" in t.columns and len(text) >= 8:
            sha = t["sha256"].astype(str).str.lower()
            hits = t.index[sha.str.startswith(text.lower())]
            if len(hits) == 1:
                return hits[0]
        hits = t.index[t["name"].astype(str) == text]
        if len(hits) == 1:
            return hits[0]
        if len(hits) > 1:
            raise KeyError(f"{len(hits)} captures are named {text!r}; select one by its sha256")
        raise KeyError(f"no capture with sha256, row or name {text!r} in the lot table "
                       f"({len(t)} captures, e.g. {', '.join(map(str, t['name'][:3]))})")

    def pick(self, key, add: bool = False) -> Any:
        """Select the capture ``key`` (sha256, row label or name) and redraw.

        Also reachable as ``browser.select(key)``. The filters are cleared when they hide
        that capture. ``add=True`` adds it to the current selection. Returns the row label.
        """
        row = self.row_of(key)
        if row not in set(self.filtered().index):
            self.name_filter.value = ""
            self.status_filter.value = "all"
        keep = tuple(v for v in self.select.value if v != row) if add else ()
        self.select.value = (*keep, row)
        return row

    # -- data ----------------------------------------------------------------------------
    def _method_for(self, cap) -> str:
        m = self.method.value
        if m != "auto":
            return m
        return "reflection" if cap.ports == 1 else "series-through"

    def _key_of(self, row) -> tuple:
        use_corr = self.corrected.value == "corrected" and self.correction is not None
        return (row, self.method.value, use_corr, id(self.correction))

    def trace_of(self, row) -> kv.Trace:
        """The trace of a table row, as drawn now (raw or corrected, chosen method)."""
        from kit.io import folder

        key = self._key_of(row)
        if key not in self._cache:
            cap = folder.capture_of(self.table, row)
            if key[2]:
                cap = self.correction(cap)
            self._cache[key] = kv.trace(cap, method=self._method_for(cap))
        return self._cache[key]

    def _kept(self, key: tuple, make: Callable[[], Any]) -> Any:
        """A computed curve from the cache (made and kept on the first call)."""
        hit = self._curves.get(key)
        if hit is None:
            hit = self._curves[key] = make()
            if len(self._curves) > _CACHE_SIZE:
                self._curves.popitem(last=False)
        else:
            self._curves.move_to_end(key)
        return hit

    def _quantity(self, i: int, chart: str) -> Any:
        t = self.traces[i]
        return self._kept((self._keys[i], chart), lambda: kv.CHARTS[chart].quantity(t))

    def _rect_xy(self, i: int, chart: str, span, cols: int):
        t = self.traces[i]
        return self._kept((self._keys[i], chart, span, cols), lambda: kv.xy_for_display(
            t.f_hz, self._quantity(i, chart), cols, span))

    def _plane_xy(self, i: int, kind: str, span, cols: int):
        t = self.traces[i]
        base = kind.split(":")[0]
        return self._kept((self._keys[i], base, span, cols),
                          lambda: kv.plane_xy(t, base, cols, span))

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

    def _dynamic_artists(self) -> list[Any]:
        return self.lines_rect + self.lines_plane + self.pin_artists

    def _render(self) -> None:
        """Show the figure: only what changed is drawn again (:attr:`layers`)."""
        if self.layers.can_blit:  # else the layers' fallback is host.refresh, which counts
            self.host.renders += 1
        self.layers.render()

    def _restyle(self, lines: list[Any]) -> None:
        for i, ln in enumerate(lines):
            c, ls = kv.style(i)
            ln.set_color(c)
            ln.set_linestyle(ls)

    def redraw(self, new_data: bool = False, new_grid: bool = False) -> None:
        """Bring the figure in line with the controls (called by every control)."""
        if new_data:
            self._keys = [self._key_of(r) for r in self.select.value]
            self.traces = [self.trace_of(r) for r in self.select.value]
        pax = self._plane_ax()
        if new_grid:
            self._draw_plane_grid()
            if pax is not self._plane_ax():  # polar <-> cartesian: lines change axes
                for ln in self.lines_plane:
                    ln.remove()
                self.lines_plane = []
                pax = self._plane_ax()
            self.layers.invalidate("plane")
        elif (self.plane.value.startswith("smith") and self.traces
              and self._signature.get("z0") != self.traces[0].z0_ohm):
            self._draw_plane_grid()  # another reference impedance: other grid labels
        span = self.span_hz()
        chart = self.chart.value
        while len(self.lines_rect) > len(self.traces):
            self.lines_rect.pop().remove()
        while len(self.lines_plane) > len(self.traces):
            self.lines_plane.pop().remove()
        while len(self.lines_rect) < len(self.traces):
            self.lines_rect += self.ax_rect.plot([], [], lw=1.3, animated=True)
        while len(self.lines_plane) < len(self.traces):
            self.lines_plane += pax.plot([], [], lw=1.4, zorder=3, animated=True)
        self._restyle(self.lines_rect)
        self._restyle(self.lines_plane)
        cols_r, cols_p = kv.columns_of(self.ax_rect), kv.columns_of(pax)
        for i, t in enumerate(self.traces):
            self.lines_rect[i].set_data(*self._rect_xy(i, chart, span, cols_r))
            self.lines_rect[i].set_label(t.label)
            self.lines_plane[i].set_data(*self._plane_xy(i, self.plane.value, span, cols_p))
        if self._signature.get("chart") != chart:
            kv.style_chart(self.ax_rect, chart)
        self.ax_rect.set_xlim(*span)
        self._empty.set_visible(not self.traces)
        self._fit_y(chart)
        self._fit_plane(pax)
        self._legend()
        self._draw_pins()
        self._note_changes(chart, pax)
        self._render()
        self._show_status()  # after the frame: the page draws the figure first
        for fn in self._listeners:
            fn()

    def _fit_y(self, chart: str) -> None:
        """y limits of the rectangular chart around the visible curves, then held (so that
        pins and selection rectangles never rescale it). Within one chart the limits stay
        while the curves still fill them well (:func:`kit.views.held_limits`): flipping
        through similar parts leaves the axis, and its ticks, where they are."""
        ax = self.ax_rect
        before = ax.get_ylim()
        ax.set_autoscaley_on(True)
        if self.traces:
            ax.relim(visible_only=True)
            ax.autoscale_view(scalex=False)
        wanted = ax.get_ylim()
        if self.traces and self._signature.get("held") == chart:
            wanted = kv.held_limits(before, wanted, log=ax.get_yscale() == "log")
        ax.set_ylim(wanted)
        self._signature["held"] = chart if self.traces else None

    def _fit_plane(self, pax) -> None:
        if self.plane.value == "circle" and self.traces:
            pax.set_autoscale_on(True)
            pax.relim()
            pax.autoscale_view()
            pax.set_xlim(pax.get_xlim())
            pax.set_ylim(pax.get_ylim())
        if self.plane.value == "polar" and self.traces:
            kv.fit_polar_radius(pax, *(ln.get_ydata() for ln in self.lines_plane))

    def _legend(self) -> None:
        """Legend outside the data, right of the chart; remade only when the names change."""
        names = tuple(t.label for t in self.traces)
        if names == self._signature.get("legend"):
            return
        leg = self.ax_rect.get_legend()
        if leg is not None:
            leg.remove()
        if 0 < len(names) <= kv.LEGEND_MAX:
            kv.legend_outside(self.ax_rect, self.lines_rect)
        self._signature["legend"] = names

    def _note_changes(self, chart: str, pax) -> None:
        """Mark the band whose static parts changed (limits, scale, chart, legend)."""
        rect = (chart, self.ax_rect.get_xlim(), self.ax_rect.get_ylim(),
                self.ax_rect.get_yscale(), self._empty.get_visible())
        legend = self._signature.get("legend")
        old = self._signature.get("rect")
        if rect != old:
            # the whole look of the band, legend included: a return to it is restored;
            # when only one axis moved, the other one's labels keep their pixels
            same = [old is not None and rect[i] == old[i] for i in range(len(rect))]
            keep = (["x labels"] * same[1]                       # x labels: the span only
                    + ["y labels"] * (same[0] and same[2] and same[3])   # chart, limits, scale
                    + ["legend"] * (legend == self._signature.get("legend drawn")))
            self.layers.invalidate("rect", key=(rect, legend), keep=keep)
        elif legend != self._signature.get("legend drawn"):
            self.layers.invalidate("legend")  # only the legend's own region
        self._signature["legend drawn"] = legend
        lims = ((pax.get_ylim(),) if self.plane.value == "polar"
                else (pax.get_xlim(), pax.get_ylim()))
        plane = (self.plane.value, self.traces[0].z0_ohm if self.traces else 50.0, lims)
        if plane != self._signature.get("plane"):
            self.layers.invalidate("plane", key=plane)
        self._signature.update(rect=rect, plane=plane, chart=chart, z0=plane[1])

    # -- pins ----------------------------------------------------------------------------
    def on_change(self, fn: Callable[[], None]) -> None:
        """Call ``fn()`` after every redraw (the pin panel follows the selection)."""
        self._listeners.append(fn)

    def set_pins(self, readings: list[dict[str, Any]]) -> None:
        """Show these pins (readings from :func:`kit.views.pin_reading`) on both views."""
        self.pins = list(readings)
        self._draw_pins()
        self._render()
        self._show_status()

    def _show_status(self) -> None:
        lo, hi = self.span_hz()
        n, k = len(self.traces), len(self.pins)
        self.status.value = (
            f'<span style="color:#4d5b5e;font-size:12px">{n} capture{"s" * (n != 1)} · '
            f"{html.escape(kv.CHARTS[self.chart.value].title)} · span {eng(lo, 'Hz', 7)} – "
            f"{eng(hi, 'Hz', 7)} · "
            f'{k} pin{"s" * (k != 1)}</span>')

    def _draw_pins(self) -> None:
        """Pins on both views, heads kept apart, updated in place; their readings are in
        the pin panel's table, never over the data."""
        chart = self.chart.value
        index = {t.label: i for i, t in enumerate(self.traces)}
        rect, plane = [], []
        for r in self.pins:
            i = index.get(r["trace"])
            if i is None:
                continue
            rect.append((r["f_hz"], self._quantity(i, chart)[r["index"]], r["pin"]))
            plane.append((*kv.plane_point(r, self.plane.value), r["pin"]))
        pax = self._plane_ax()
        if self._pins_plane and self._pins_plane[0].axes is not pax:
            for a in self._pins_plane + self._spare_pins["plane"]:
                a.remove()
            self._pins_plane, self._spare_pins["plane"] = [], []
        self._pins_rect = kv.update_pins(self.ax_rect, self._pins_rect, rect,
                                         spare=self._spare_pins["rect"])
        self._pins_plane = kv.update_pins(pax, self._pins_plane, plane,
                                          spare=self._spare_pins["plane"])
        self.pin_artists = self._pins_rect + self._pins_plane
        self.layers.mark_dynamic(self.pin_artists)

    # -- span selection on the plot (ipympl only) -----------------------------------------
    def _add_span_selector(self) -> None:
        from matplotlib.widgets import SpanSelector

        def _picked(lo, hi):
            if hi > lo:
                set_span_hz(self.span, lo, hi)

        self._span_selector = SpanSelector(self.ax_rect, self.message.guard(_picked), "horizontal",
                                           useblit=False, props={"alpha": 0.15,
                                                                 "facecolor": kv.color(0)})


def _axis_of(ax, which: str) -> list[Any]:
    return [ax.xaxis if which == "x" else ax.yaxis]


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
