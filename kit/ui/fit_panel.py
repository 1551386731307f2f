"""Fit panel: pick a capture, set the span, choose the model, see the fit and its errors.

``fit_panel(captures)`` returns a :class:`FitPanel` whose attributes are the named controls:
a capture selector, a span slider (and, on an interactive ipympl canvas, a span drawn with
the mouse on the |Z| plot), the model, the number of modes, the impedance method and the
weighting. Every change refits with :func:`kit.fit` (the computation stays there) and
redraws measured against model on |Z|, phase and the admittance circle (B against G), with
the parameter table (values, standard errors, flags) as escaped HTML. Errors raised by a
callback are shown in the ``output`` widget instead of a traceback.
"""

from __future__ import annotations

import html
import os
from typing import Any

import numpy as np

from kit.ui.common import FigureHost, classed, show, span_slider

MODEL_CHOICES = ("bvd", "bvd-loss", "multi", "plate", "bar", "inductor", "capacitor")


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
    output : ipywidgets.Output
        Callback errors (also kept in ``errors``).
    host : FigureHost
        The figure: |Z|, phase, admittance circle.
    result : FitResult or None
        The last fit.
    """

    def __init__(self, captures, model: str = "bvd", modes: int = 1,
                 method: str = "reflection") -> None:
        import ipywidgets as w

        self.items = _items(captures)
        if not self.items:
            raise ValueError("the fit panel needs at least one capture")
        self._cache: dict[int, tuple[np.ndarray, np.ndarray, Any]] = {}
        self.errors: list[str] = []
        self.result = None
        self.output = classed(w.Output(), "fit-output")
        self.selector = classed(w.Dropdown(options=[(n, i) for i, (n, _) in
                                                    enumerate(self.items)],
                                           value=0, description="capture"), "fit-capture")
        self.model = classed(w.Dropdown(options=list(MODEL_CHOICES), value=model,
                                        description="model"), "fit-model")
        self.modes = classed(w.BoundedIntText(value=modes, min=1, max=8, description="modes",
                                              layout=w.Layout(width="160px")), "fit-modes")
        self.method = classed(w.Dropdown(options=["reflection", "series-through",
                                                  "shunt-through"], value=method,
                                         description="method"), "fit-method")
        self.weighting = classed(w.Dropdown(options=["relative", "reflection", "uniform"],
                                            value="relative", description="weighting"),
                                 "fit-weighting")
        self.fit_button = classed(w.Button(description="Fit", icon="refresh"), "fit-run")
        self.table = classed(w.HTML(params_html(None)), "fit-table")
        self.host = FigureHost(figsize=(10.0, 6.0), css="fit-figure")
        fig = self.host.fig
        gs = fig.add_gridspec(2, 2, width_ratios=(1.6, 1.0))
        self.ax_mag = fig.add_subplot(gs[0, 0])
        self.ax_phase = fig.add_subplot(gs[1, 0], sharex=self.ax_mag)
        self.ax_circle = fig.add_subplot(gs[:, 1])
        lo, hi = self._range(0)
        self.span = span_slider(lo, hi, "fit span [MHz]")
        self._selector_tool = None
        self._busy = False
        self.selector.observe(self._guard(self._on_capture), names="value")
        for ctl in (self.span, self.model, self.modes, self.method, self.weighting):
            ctl.observe(self._guard(lambda _change: self.refit()), names="value")
        self.fit_button.on_click(self._guard(lambda _b: self.refit()))
        controls = w.VBox([w.HBox([self.selector, self.model, self.modes]),
                           w.HBox([self.method, self.weighting, self.fit_button]), self.span])
        self.widget = classed(w.VBox([controls, self.host.widget, self.table, self.output]),
                              "fit-panel")
        self._attach_span_tool()
        self._guard(lambda: self.refit())()

    # -- data
    def _data(self, i: int):
        key = (i, self.method.value if hasattr(self, "method") else "reflection")
        if key not in self._cache:
            import kit

            name, item = self.items[i]
            if isinstance(item, (str, os.PathLike)):
                item = kit.load(item)
            if isinstance(item, (tuple, list)):
                f, z = np.asarray(item[0], float), np.asarray(item[1], complex)
            else:
                f = np.asarray(item.network.frequency.f if hasattr(item, "network")
                               else item.frequency.f, float)
                z = kit.impedance(item, method=key[1])
            self._cache[key] = (f, z, item)
        return self._cache[key]

    def _range(self, i: int) -> tuple[float, float]:
        try:
            f = self._data(i)[0]
            return float(np.nanmin(f)), float(np.nanmax(f))
        except Exception as exc:  # noqa: BLE001 - shown in the output widget
            self._report(exc)
            return 0.0, 1.0

    # -- callbacks
    def _report(self, exc: Exception) -> None:
        text = f"{type(exc).__name__}: {exc}"
        self.errors.append(text)
        from IPython.display import HTML

        self.output.outputs = ()
        self.output.append_display_data(
            HTML(f'<span style="color:#8c1d18">{html.escape(text)}</span>'))

    def _guard(self, fn):
        def wrapper(*args, **kwargs):
            try:
                return fn(*args, **kwargs)
            except Exception as exc:  # noqa: BLE001 - shown to the user instead
                self._report(exc)
                return None

        return wrapper

    def _on_capture(self, change) -> None:
        lo, hi = self._range(change["new"])
        self._busy = True
        try:
            self.span.min, self.span.max = -1e12, 1e12
            self.span.value = (lo / 1e6, hi / 1e6)
            self.span.min, self.span.max = lo / 1e6, hi / 1e6
            self.span.step = max((hi - lo) / 1e9, 1e-9)
        finally:
            self._busy = False
        self.refit()

    def set_span(self, lo_hz: float, hi_hz: float) -> None:
        """Set the fit span [Hz] (as the span tool on the plot does) and refit."""
        lo, hi = sorted((lo_hz / 1e6, hi_hz / 1e6))
        self.span.value = (max(lo, self.span.min), min(hi, self.span.max))

    def _attach_span_tool(self) -> None:
        if not self.host.interactive:
            return
        from matplotlib.widgets import SpanSelector

        self._selector_tool = SpanSelector(
            self.ax_mag, self._guard(lambda a, b: self.set_span(a, b) if b > a else None),
            "horizontal", useblit=True, interactive=False)

    # -- the work
    def refit(self):
        """Fit the selected capture with the chosen settings and redraw; returns the result."""
        import kit

        if self._busy:
            return self.result
        self.output.outputs = ()
        f, z, item = self._data(self.selector.value)
        lo, hi = (v * 1e6 for v in self.span.value)
        # a capture is fitted as itself, so that its own reference impedance is used
        data = (f, z) if isinstance(item, (tuple, list)) else item
        method = self.method.value if hasattr(self, "method") else "reflection"
        res = kit.fit(data, model=self.model.value, span_hz=(lo, hi), method=method,
                      modes=int(self.modes.value), weighting=self.weighting.value,
                      name=self.items[self.selector.value][0])
        self.result = res
        self.table.value = params_html(res)
        self._draw(f, z, res, (lo, hi))
        return res

    def _draw(self, f, z, res, span) -> None:
        from kit import views as kv

        for ax in (self.ax_mag, self.ax_phase, self.ax_circle):
            ax.clear()
        sel = (f >= span[0]) & (f <= span[1])
        fs, zs = f[sel], z[sel]
        kv.plot_z_mag_phase(self.ax_mag, self.ax_phase, fs, zs, label="measured")
        kv.plot_admittance_circle(self.ax_circle, 1.0 / zs, f_hz=fs, label="measured")
        if res.params and all(np.isfinite(v) for v in res.params.values()):
            ff = np.linspace(span[0], span[1], max(801, len(fs)))
            zm = res.model_z(ff)
            self.ax_mag.plot(ff, np.abs(zm), "--", color="k", lw=1, label=f"model {res.model}")
            self.ax_phase.plot(ff, np.degrees(np.angle(zm)), "--", color="k", lw=1)
            ym = 1.0 / zm
            # kit.views draws the circle in mS
            self.ax_circle.plot(1e3 * ym.real, 1e3 * ym.imag, "--", color="k", lw=1,
                                label="model")
        self.ax_mag.set_yscale("log")
        self.ax_mag.set_xlabel("")
        self.ax_mag.legend(loc="best", fontsize="small")
        self.ax_circle.set_title("admittance circle", fontsize="small")
        status = "ok" if res.ok else f"not ok: {res.reason}"
        self.ax_mag.set_title(f"{res.name}: {res.model} - {status}", fontsize="small")
        self.host.fig.tight_layout()
        self.host.refresh()


def fit_panel(captures, model: str = "bvd", modes: int = 1, method: str = "reflection",
              display: bool = True) -> FitPanel:
    """Build (and by default show) the fit panel over ``captures``.

    Parameters
    ----------
    captures : Capture, path, or a list/dict of Captures, Networks, paths or (f, z) pairs
    model, modes, method : as for :func:`kit.fit`
    display : bool
        Show the panel in the notebook; False builds it only (tests).

    Returns
    -------
    FitPanel
    """
    panel = FitPanel(captures, model=model, modes=modes, method=method)
    if display:
        show(panel.widget)
    return panel
