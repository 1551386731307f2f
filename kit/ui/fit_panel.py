"""Fit panel: pick a capture, set the span, choose the model, see the fit and its errors.

``fit_panel(captures)`` returns a :class:`FitPanel` whose attributes are the named controls:
a capture selector, a span slider (and, on an interactive ipympl canvas, a span drawn with
the mouse on the |Z| plot), the model, the number of modes, the impedance method and the
weighting. Every change refits with :func:`kit.fit` (the computation stays there) and
redraws measured against model on |Z|, phase and the admittance circle (B against G), with
the parameter table (values, standard errors, flags) as escaped HTML; the model curve is
drawn by :func:`kit.views.plot_fit` from the fit result. Errors raised by a callback are
shown in the panel's message bar instead of a traceback.
"""

from __future__ import annotations

import os
from typing import Any

from kit import views as kv
from kit.network.immittance import METHODS
from kit.resonators.fitting import WEIGHTINGS
from kit.resonators.registry import MODEL_NAMES
from kit.ui.common import FigureHost, MessageBar, classed, reset_span, set_span_hz, show, span_hz, span_slider

#: Models offered: all of the fit registry's.
MODEL_CHOICES = MODEL_NAMES


def _items(captures) -> list[tuple[str, Any]]:
    if isinstance(captures, dict):
        return [(str(k), v) for k, v in captures.items()]
    if isinstance(captures, (str, os.PathLike)) or hasattr(captures, "network"):
        captures = [captures]
    out = []
    for i, c in enumerate(captures):
        if isinstance(c, (str, os.PathLike)):
            out.append((os.path.basename(str(c)), c))
        else:
            out.append((str(getattr(c, "name", "") or f"capture-{i + 1}"), c))
    return out


def params_html(result) -> str:
    """The fit's parameters, errors and flags as an HTML table (all text escaped)."""
    if result is None:
        return "<i>No fit yet.</i>"
    return result._repr_html_()


class FitPanel:
    """The fit panel's controls and state (see :func:`fit_panel`).

    Every control refits on change; the figure and the table follow the last fit.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole panel (class ``sb-fit-panel``).
    selector : ipywidgets.Dropdown
        The capture (value: index).
    span : ipywidgets.FloatRangeSlider
        Fit span [MHz].
    model : ipywidgets.Dropdown
    modes : ipywidgets.BoundedIntText
    method : ipywidgets.Dropdown
        "reflection", "series-through" or "shunt-through".
    weighting : ipywidgets.Dropdown
    fit_button : ipywidgets.Button
        Refit (also done on every change).
    table : ipywidgets.HTML
        Parameters, standard errors, flags.
    message : kit.ui.common.MessageBar
        Callback errors and notes (class ``sb-message``).
    host : FigureHost
        The figure: |Z|, phase, admittance circle.
    result : FitResult or None
        The last fit.
    """

    def __init__(self, captures, model: str = "bvd", modes: int = 1,
                 method: str = "reflection", interactive: bool | None = None) -> None:
        import ipywidgets as w

        self.items = _items(captures)
        if not self.items:
            raise ValueError("the fit panel needs at least one capture")
        self._cache: dict[tuple[int, str], tuple[Any, Any]] = {}
        self.result = None
        self.message = MessageBar()
        self.selector = classed(w.Dropdown(options=[(n, i) for i, (n, _) in
                                                    enumerate(self.items)],
                                           value=0, description="capture"), "fit-capture")
        self.model = classed(w.Dropdown(options=list(MODEL_CHOICES), value=model,
                                        description="model"), "fit-model")
        self.modes = classed(w.BoundedIntText(value=modes, min=1, max=8, description="modes",
                                              layout=w.Layout(width="160px")), "fit-modes")
        self.method = classed(w.Dropdown(options=list(METHODS), value=method,
                                         description="method"), "fit-method")
        self.weighting = classed(w.Dropdown(options=list(WEIGHTINGS), value="auto",
                                            description="weighting"),
                                 "fit-weighting")
        self.fit_button = classed(w.Button(description="Fit", icon="refresh"), "fit-run")
        self.table = classed(w.HTML(params_html(None)), "fit-table")
        self.host = FigureHost(figsize=(10.0, 6.0), interactive=interactive, css="fit-figure")
        fig = self.host.fig
        gs = fig.add_gridspec(2, 2, width_ratios=(1.6, 1.0))
        self.ax_mag = fig.add_subplot(gs[0, 0])
        self.ax_phase = fig.add_subplot(gs[1, 0], sharex=self.ax_mag)
        self.ax_circle = fig.add_subplot(gs[:, 1])
        self.span = span_slider(0.0, 1.0, "fit span [MHz]")
        self._selector_tool = None
        self._busy = False
        g = self.message.guard
        self.selector.observe(g(self._on_capture), names="value")
        for ctl in (self.span, self.model, self.modes, self.method, self.weighting):
            ctl.observe(g(lambda _change: self.refit()), names="value")
        self.fit_button.on_click(g(lambda _b: self.refit()))
        controls = w.VBox([w.HBox([self.selector, self.model, self.modes]),
                           w.HBox([self.method, self.weighting, self.fit_button]), self.span])
        self.widget = classed(w.VBox([controls, self.message.widget, self.host.widget,
                                      self.table]), "fit-panel")
        self._attach_span_tool()
        g(self._on_capture)({"new": 0})

    # -- data
    def _data(self, i: int):
        """(trace, item) of capture ``i`` with the chosen method; the item is what is fitted."""
        key = (i, self.method.value)
        if key not in self._cache:
            from kit.io.touchstone import load

            item = self.items[i][1]
            if isinstance(item, (str, os.PathLike)):
                item = load(item)
            elif isinstance(item, list):
                item = tuple(item)
            self._cache[key] = (kv.trace(item, method=key[1]), item)
        return self._cache[key]

    def _on_capture(self, change) -> None:
        f = self._data(change["new"])[0].f_hz
        self._busy = True
        try:
            reset_span(self.span, float(f.min()), float(f.max()))
        finally:
            self._busy = False
        self.refit()

    def set_span(self, lo_hz: float, hi_hz: float) -> None:
        """Set the fit span [Hz] (as the span tool on the plot does) and refit."""
        set_span_hz(self.span, lo_hz, hi_hz)

    def _attach_span_tool(self) -> None:
        if not self.host.interactive:
            return
        from matplotlib.widgets import SpanSelector

        self._selector_tool = SpanSelector(
            self.ax_mag, self.message.guard(lambda a, b: self.set_span(a, b) if b > a else None),
            "horizontal", useblit=True, interactive=False)

    # -- the work
    def refit(self):
        """Fit the selected capture with the chosen settings and redraw; returns the result.

        The capture itself goes to :func:`kit.fit`, which takes its impedance and reference
        impedance the one way the kit does (:func:`kit.network.coerce.sweep`).
        """
        from kit.resonators.fitting import fit

        if self._busy:
            return self.result
        t, item = self._data(self.selector.value)
        span = span_hz(self.span)
        res = fit(item, model=self.model.value, span_hz=span, modes=int(self.modes.value),
                  method=self.method.value, weighting=self.weighting.value,
                  name=self.items[self.selector.value][0])
        self.result = res
        self.table.value = params_html(res)
        self._draw(t, res, span)
        return res

    def _draw(self, t, res, span) -> None:
        for ax in (self.ax_mag, self.ax_phase, self.ax_circle):
            ax.clear()
        measured = kv.trace(t, label="measured")
        kv.plot_chart(self.ax_mag, measured, "z_mag", span_hz=span)
        kv.plot_chart(self.ax_phase, measured, "z_phase", span_hz=span)
        kv.plot_admittance_circle(self.ax_circle, measured, span_hz=span)
        kv.plot_fit(res, self.ax_mag, self.ax_phase, self.ax_circle, span_hz=span)
        self.ax_mag.set_xlabel("")
        self.ax_mag.legend(loc="best", fontsize="small")
        self.ax_circle.set_title("admittance circle", fontsize="small")
        status = "ok" if res.ok else f"not ok: {res.reason}"
        self.ax_mag.set_title(f"{res.name}: {res.model} - {status}", fontsize="small")
        self.host.fig.tight_layout()
        self.host.refresh()


def fit_panel(captures, model: str = "bvd", modes: int = 1, method: str = "reflection",
              display: bool = True, interactive: bool | None = None) -> FitPanel:
    """Build (and by default show) the fit panel over ``captures``.

    Parameters
    ----------
    captures : Capture, path, or a list/dict of Captures, Networks, paths or (f, z) pairs
    model, modes, method : as for :func:`kit.fit`
    display : bool
        Show the panel in the notebook; False builds it only (tests).
    interactive : bool, optional
        Force or refuse an ipympl canvas (default: follow the matplotlib backend).

    Returns
    -------
    FitPanel
    """
    panel = FitPanel(captures, model=model, modes=modes, method=method, interactive=interactive)
    if display:
        show(panel.widget)
    return panel
