"""The lot overview cell: two quantities against their limit box, one histogram with Cp/Cpk.

``overview_cell(summary, limits, browser)`` shows, for a lot's summary table
(:func:`kit.summary`), a scatter of any two numeric columns with every part coloured and
shaped by its limits verdict inside the limit box, and a histogram of any column with its
bounds and its process capability (:func:`kit.review.capability.capability`). Three
dropdowns choose the quantities; a change moves the existing artists
(:mod:`kit.views.lot_plots`), it never makes a new figure. A click on a part (a matplotlib
pick event on the ipympl canvas; the nearest part to the click) opens that capture in the
lot browser given as ``browser``.

Nothing is computed here beyond choosing rows: the drawing is :mod:`kit.views.lot_plots`,
the capability :mod:`kit.review.capability`, the numbers :func:`kit.units.quantity`.
"""

from __future__ import annotations

import math

import numpy as np

from kit.outputs.part_figure import VERDICT_STYLE
from kit.review.capability import capability
from kit.ui.common import FigureHost, MessageBar, classed, show
from kit.units import column_label, quantity, unit_of
from kit.views import lot_plots as lp

__all__ = ["LotOverview", "overview_cell", "open_in_browser"]

_SCATTER_BOX = (0.10, 0.13, 0.39, 0.66)
_HIST_BOX = (0.59, 0.13, 0.39, 0.66)


def open_in_browser(browser, key: str) -> None:
    """Select the capture ``key`` (its sha256, name or row label) in a lot browser.

    The browser does it (:meth:`kit.ui.lot_browser.LotBrowser.pick`: filters that hide the
    row are cleared, the figure redrawn).

    Raises
    ------
    KeyError
        When no row of the browser's table has that sha256, name or label.
    """
    browser.pick(key)


class LotOverview:
    """Handles of the lot overview cell.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole cell (class ``sb-overview``).
    x, y, hist : ipywidgets.Dropdown
        The scatter's horizontal and vertical quantities and the histogram's (classes
        ``sb-overview-x``, ``sb-overview-y``, ``sb-overview-hist``); options are the numeric
        summary columns, labelled with their units.
    status : ipywidgets.HTML
        The part last opened (class ``sb-overview-status``).
    host : FigureHost
        The figure (class ``sb-overview-figure``).
    scatter, histogram : kit.views.lot_plots.ScatterArtists, HistogramArtists
    capability : kit.review.capability.Capability
        Of the histogram's quantity against its limits.
    opened : int or None
        Row position (in ``summary``) of the part last opened.
    message : MessageBar
    """

    def __init__(self, summary, limits=None, browser=None, interactive: bool | None = None):
        import ipywidgets as w

        self.summary, self.limits, self.browser = summary, limits, browser
        self.columns = lp.numeric_columns(summary)
        if not self.columns:
            raise ValueError("the summary has no numeric column to draw; make it with "
                             "kit.summary(captures, resonances=..., fits=...)")
        self.verdicts = lp.verdicts_of(summary)
        self.opened: int | None = None
        self.message = MessageBar()
        options = [(lp.axis_label(c, lp.column_values(summary, c))[0], c) for c in self.columns]
        x0, y0 = self._default_pair()

        def dropdown(desc, value, css):
            return classed(w.Dropdown(options=options, value=value, description=desc,
                                      layout=w.Layout(width="260px")), css)

        self.x = dropdown("across", x0, "overview-x")
        self.y = dropdown("up", y0, "overview-y")
        self.hist = dropdown("histogram", x0, "overview-hist")
        self.status = classed(w.HTML(self._status_text()), "overview-status")
        self.host = FigureHost(figsize=(10.4, 4.0), interactive=interactive,
                               css="overview-figure")
        fig = self.host.fig
        self.scatter = lp.plot_lot_scatter(fig.add_axes(_SCATTER_BOX), *self._xy(),
                                           self.verdicts, self.x.value, self.y.value,
                                           *self._bounds(self.x.value, self.y.value))
        values = self._values(self.hist.value)
        self.capability = self._capability(values)
        self.histogram = lp.plot_lot_histogram(
            fig.add_axes(_HIST_BOX), values, self.hist.value,
            lp.bounds_of(limits, self.hist.value), self.capability)
        self._last_mouse = None
        g = self.message.guard
        fig.canvas.mpl_connect("pick_event", g(self._on_pick))
        self.x.observe(g(lambda _c: self.redraw_scatter()), names="value")
        self.y.observe(g(lambda _c: self.redraw_scatter()), names="value")
        self.hist.observe(g(lambda _c: self.redraw_histogram()), names="value")
        self.widget = classed(w.VBox([
            w.HBox([self.x, self.y, self.hist]), self.host.widget, self.status,
            self.message.widget]), "overview")
        self.host.refresh()

    # -- data ----------------------------------------------------------------------------
    def _default_pair(self) -> tuple[str, str]:
        limited = [q.name for q in (() if self.limits is None else self.limits.quantities)
                   if q.name in self.columns]
        pair = (limited + [c for c in self.columns if c not in limited])[:2]
        return pair[0], pair[-1]

    def _values(self, name: str) -> np.ndarray:
        return lp.column_values(self.summary, name)

    def _xy(self) -> tuple[np.ndarray, np.ndarray]:
        return self._values(self.x.value), self._values(self.y.value)

    def _bounds(self, *names: str):
        return [lp.bounds_of(self.limits, n) for n in names]

    def _capability(self, values):
        lo, hi = lp.bounds_of(self.limits, self.hist.value)
        return capability(values, None if math.isnan(lo) else lo,
                          None if math.isnan(hi) else hi, name=self.hist.value)

    def key_of(self, index: int) -> str:
        """The key that names row ``index`` to the lot browser: its sha256, else its name."""
        row = self.summary.iloc[index]
        sha = row.get("sha256")
        return sha if isinstance(sha, str) and sha else str(row.get("capture", index))

    def name_of(self, index: int) -> str:
        """The capture's name of row ``index`` (its position when the summary has none)."""
        name = self.summary.iloc[index].get("capture")
        return str(name) if isinstance(name, str) and name else f"row {index}"

    # -- drawing -------------------------------------------------------------------------
    def redraw_scatter(self) -> None:
        """Move the scatter to the chosen quantities (artists updated in place)."""
        lp.update_lot_scatter(self.scatter, *self._xy(), self.x.value, self.y.value,
                              *self._bounds(self.x.value, self.y.value))
        lp.mark_part(self.scatter, self.opened)
        self.status.value = self._status_text()
        self.host.refresh()

    def redraw_histogram(self) -> None:
        """Show the chosen quantity's histogram, bounds and capability."""
        values = self._values(self.hist.value)
        self.capability = self._capability(values)
        lp.update_lot_histogram(self.histogram, values, self.hist.value,
                                lp.bounds_of(self.limits, self.hist.value), self.capability)
        self.host.refresh()

    def _status_text(self) -> str:
        import html

        hidden = int((~np.isfinite(self.scatter.xy).all(axis=1)).sum()) if hasattr(
            self, "scatter") else 0
        note = (f' <span class="sb-overview-hidden" style="color:#4d5b5e;font-size:12px">'
                f"({hidden} part{'s' * (hidden != 1)} without both values not drawn)</span>"
                if hidden else "")
        if self.opened is None:
            return ('<span class="sb-overview-hint" style="color:#4d5b5e;font-size:12px">'
                    "click a part to open it in the lot browser</span>" + note)
        i = self.opened
        v = self.verdicts[i]
        mark = VERDICT_STYLE[v][2]
        figures = ", ".join(f"{column_label(c)[0]} "
                            f"{quantity(self._values(c)[i], unit_of(c))}"
                            for c in dict.fromkeys((self.x.value, self.y.value)))
        where = "opened in the lot browser" if self.browser is not None else (
            "no lot browser attached")
        return (f'<span style="font-size:12px" data-row="{i}">{html.escape(self.name_of(i))} · '
                f"{mark} {v} · {html.escape(figures)} · {where}</span>" + note)

    # -- clicks --------------------------------------------------------------------------
    def _on_pick(self, event) -> None:
        """A pick on any verdict's markers: open the part nearest to the click (once per
        click, however many collections reported it; not while the toolbar zooms or pans)."""
        me = event.mouseevent
        toolbar = getattr(self.host.fig.canvas, "toolbar", None)
        if me is self._last_mouse or me.button not in (1, None) or str(
                getattr(toolbar, "mode", "")):
            return  # one click, left button, and not while zooming or panning
        self._last_mouse = me
        i = lp.nearest_point(self.scatter.positions_px(), me.x, me.y)
        if i is not None:
            self.open(i)

    def open(self, index: int) -> None:
        """Open row ``index`` of the summary in the lot browser and ring it in the scatter."""
        self.opened = int(index)
        lp.mark_part(self.scatter, self.opened)
        self.status.value = self._status_text()
        self.host.refresh()
        if self.browser is not None:
            open_in_browser(self.browser, self.key_of(self.opened))

    def position(self, index: int) -> tuple[float, float]:
        """Where part ``index`` is drawn, as fractions of the figure's width and height from
        its top left corner (what a browser test clicks)."""
        x, y = self.scatter.positions_px()[index]
        if not (math.isfinite(x) and math.isfinite(y)):
            raise ValueError(f"{self.name_of(index)} has no value of {self.x.value} or "
                             f"{self.y.value}, so it is not in the scatter")
        w, h = self.host.fig.bbox.width, self.host.fig.bbox.height
        return float(x / w), float(1.0 - y / h)

    def pick(self, index: int) -> None:
        """Click on part ``index`` as a mouse would: a button press at its marker's pixel,
        through matplotlib's pick machinery (for tests and scripts)."""
        from matplotlib.backend_bases import MouseEvent

        fx, fy = self.position(index)
        fig = self.host.fig
        x, y = fx * fig.bbox.width, (1.0 - fy) * fig.bbox.height
        event = MouseEvent("button_press_event", fig.canvas, x, y, button=1)
        fig.canvas.callbacks.process(event.name, event)


def overview_cell(summary, limits=None, browser=None, display: bool = True,
                  interactive: bool | None = None) -> LotOverview:
    """Build the lot overview cell over a summary table.

    Parameters
    ----------
    summary : pandas.DataFrame
        From :func:`kit.summary` (one row per capture; not modified). Its numeric columns
        are the choices; its ``verdict`` column colours the parts ("none" without it).
    limits : kit.review.limits.Limits, optional
        Bounds drawn as the limit box and used for Cp/Cpk.
    browser : kit.ui.lot_browser.LotBrowser, optional
        Where a clicked part opens (matched by sha256, else by capture name).
    display : bool
        Show the cell at once; False leaves showing ``cell.widget`` to the caller.
    interactive : bool, optional
        True for an ipympl canvas (clicks work), False for a PNG image; None follows the
        matplotlib backend (``%matplotlib widget`` gives ipympl).

    Returns
    -------
    LotOverview
        Its ``pick(i)`` clicks part ``i`` from Python.
    """
    cell = LotOverview(summary, limits=limits, browser=browser, interactive=interactive)
    if display:
        show(cell.widget)
    return cell

