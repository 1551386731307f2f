"""Match panel: design a match for a measured element, see the response and the part stress.

Controls: the design (shunt or series tuning inductor, transformer with or without tuning,
L-network solutions, band design), the design frequency, the band, the E-series, the
inductor Q and the drive power. Shown: the element before and after on a Smith chart and
on return loss, the Bode-Fano limit and the design's share of it, the part list with values
(designed and rounded) and the RMS voltage and current on each at the drive power, and the
safety cautions (:data:`kit.match.CAUTIONS`). The design frequency starts at fs of a fit
(:func:`kit.match.design_frequency`); a design that depends on it sharply is warned about;
the charts show the band and one band width on each side.
"""

from __future__ import annotations

import html
from typing import Any

import numpy as np

from kit import match as km
from kit import views as kv
from kit.match.circuit import UNITS
from kit.ui.common import FigureHost, MessageBar, classed, set_span_hz, show, span_hz, span_slider
from kit.units import eng, from_unit, quantity, to_unit

#: (label, key) of the designs offered.
DESIGNS: tuple[tuple[str, str], ...] = (
    ("shunt tuning inductor", "tune-shunt"),
    ("series tuning inductor", "tune-series"),
    ("transformer", "transformer"),
    ("shunt inductor + transformer", "tuned-shunt"),
    ("series inductor + transformer", "tuned-series"),
    ("L-network, solution 1", "l1"),
    ("L-network, solution 2", "l2"),
    ("two parts over the band", "band"),
)


def cautions_html() -> str:
    """The safety cautions as an HTML block (class ``sb-cautions``)."""
    items = "".join(f"<li>{html.escape(c)}</li>" for c in km.CAUTIONS)
    return ('<div class="sb-cautions" style="border-left:4px solid #b5651d;padding:4px 8px;'
            'background:#fbf3e9"><b>Safety</b><ul style="margin:2px 0">' + items + "</ul></div>")


def make_design(key: str, capture, f_hz: float, f_lo_hz: float, f_hi_hz: float,
                r_source_ohm: float = 50.0, q_inductor: float | None = None):
    """The design chosen by ``key`` (see :data:`DESIGNS`) for ``capture``."""
    if key == "tune-shunt":
        return km.tuning_inductor(capture, f_hz, "shunt", r_source_ohm)
    if key == "tune-series":
        return km.tuning_inductor(capture, f_hz, "series", r_source_ohm)
    if key == "transformer":
        return km.transformer(capture, r_source_ohm, f_hz=f_hz)
    if key == "tuned-shunt":
        return km.tuned_transformer(capture, f_hz, "shunt", r_source_ohm)
    if key == "tuned-series":
        return km.tuned_transformer(capture, f_hz, "series", r_source_ohm)
    if key in ("l1", "l2"):
        sols = km.l_network(capture, f_hz, r_source_ohm)
        return sols[min(int(key[1]) - 1, len(sols) - 1)]
    if key == "band":
        return km.band(capture, f_lo_hz, f_hi_hz, r_source_ohm, q_inductor=q_inductor)
    raise ValueError(f"unknown design {key!r}")


def parts_table_html(design, rounded, stress) -> str:
    """Part list: designed and rounded values, RMS voltage and current (escaped HTML)."""
    rows = ['<tr><th>part</th><th>designed</th><th>buy</th><th>V rms</th><th>V peak</th>'
            '<th>I rms</th></tr>']
    by_name = {r.name: r for r in stress.rows}

    def cells(name, a, b):
        s = by_name.get(name)
        v = "" if s is None else "</td><td>".join(
            html.escape(quantity(x, u)) for x, u in ((s.v_rms_v, "V"), (s.v_peak_v, "V"), (s.i_rms_a, "A")))
        return f"<tr><td>{html.escape(name)}</td><td>{a}</td><td>{b}</td><td>{v}</td></tr>"

    rows.append(cells("element", "", ""))
    for p, q in zip(design.parts, rounded.parts):
        if p.kind == "T":
            t = f"{q.turns[0]}:{q.turns[1]} turns" if q.turns else eng(q.value, "")
            rows.append(cells(f"{p.name} primary", f"Np/Ns {eng(p.value, '')}", html.escape(t)))
            rows.append(cells(f"{p.name} secondary", "", ""))
        else:
            rows.append(cells(p.name, html.escape(f"{p.placement} {eng(p.value, UNITS[p.kind])}"),
                              html.escape(eng(q.value, UNITS[q.kind]))))
    return ('<table class="sb-match-parts" style="border-collapse:collapse">'
            + "".join(rows) + "</table>")


class MatchPanel:
    """Handles of the match panel.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The panel (class ``sb-match-panel``).
    design_kind, f_mhz, band_mhz, series, q_inductor, drive_w, rl_db, apply : widgets
        Classes ``sb-match-design``, ``sb-match-freq``, ``sb-span``, ``sb-match-series``,
        ``sb-match-q``, ``sb-match-drive``, ``sb-match-rl``, ``sb-match-apply``.
    summary_html, parts_html, cautions : ipywidgets.HTML
        Classes ``sb-match-summary``, ``sb-match-parts-box``, ``sb-match-cautions``.
    host : FigureHost
        Smith chart (left) and return loss (right).
    message : MessageBar
    design, rounded, response_before, response_after, limit, stress : results of the last
        update (None before the first or after an error).
    """

    def __init__(self, capture, f_hz: float | None = None, r_source_ohm: float = 50.0,
                 fit=None) -> None:
        import ipywidgets as w

        self.capture = capture
        self.r_source_ohm = float(r_source_ohm)
        f = np.asarray(capture.f_hz, dtype=float)
        if f_hz is None:  # fs of a fit (kit.match.design_frequency), not a grid point
            f_hz, self.f_basis = km.design_frequency(capture, fit)
        else:
            self.f_basis = "given"
        span = 0.02 * f_hz
        lo, hi = max(f[0], f_hz - span), min(f[-1], f_hz + span)
        self.message = MessageBar()
        self.design_kind = classed(w.Dropdown(options=list(DESIGNS), value="tuned-shunt",
                                              description="design",
                                              layout=w.Layout(width="330px")), "match-design")
        self.f_mhz = classed(w.BoundedFloatText(
            value=to_unit(f_hz, "MHz"), min=to_unit(f[0], "MHz"),
            max=to_unit(f[-1], "MHz"), step=0.0001, description="at [MHz]",
            layout=w.Layout(width="200px")), "match-freq")
        self._f_start = float(f_hz)
        self.band_mhz = span_slider(f[0], f[-1], "band [MHz]")
        set_span_hz(self.band_mhz, lo, hi)
        self.series = classed(w.Dropdown(options=["E12", "E24"], value="E24",
                                         description="values", layout=w.Layout(width="170px")),
                              "match-series")
        self.q_inductor = classed(w.BoundedFloatText(value=80.0, min=0.0, max=1e6,
                                                     description="inductor Q",
                                                     layout=w.Layout(width="180px")), "match-q")
        self.drive_w = classed(w.BoundedFloatText(value=10.0, min=0.0, max=1e5,
                                                  description="drive [W]",
                                                  layout=w.Layout(width="180px")), "match-drive")
        self.rl_db = classed(w.BoundedFloatText(value=10.0, min=0.1, max=60.0,
                                                description="RL level [dB]",
                                                style={"description_width": "initial"},
                                                layout=w.Layout(width="180px")), "match-rl")
        self.apply = classed(w.Button(description="design", icon="sliders"), "match-apply")
        self.summary_html = classed(w.HTML(""), "match-summary")
        self.sensitivity = None
        self.parts_html = classed(w.HTML(""), "match-parts-box")
        self.cautions = classed(w.HTML(cautions_html()), "match-cautions")
        self.host = FigureHost(figsize=(10.0, 4.4), css="match-figure")
        fig = self.host.fig
        self.ax_smith = fig.add_subplot(1, 2, 1)
        self.ax_rl = fig.add_subplot(1, 2, 2)
        fig.subplots_adjust(left=0.03, right=0.78, wspace=0.25, bottom=0.14)
        self.design = self.rounded = self.response_before = self.response_after = None
        self.limit = self.stress = None
        g = self.message.guard
        self.apply.on_click(g(lambda _b: self.update()))
        for c in (self.design_kind, self.series, self.band_mhz, self.f_mhz):
            c.observe(g(lambda _c: self.update()), names="value")
        self.widget = classed(w.VBox([
            self.cautions,
            w.HBox([self.design_kind, self.f_mhz, self.series, self.apply]),
            w.HBox([self.band_mhz, self.rl_db]),
            w.HBox([self.q_inductor, self.drive_w]),
            self.message.widget, self.host.widget,
            w.HBox([self.parts_html, self.summary_html]),
        ]), "match-panel")
        g(self.update)()

    def q(self) -> float | None:
        """Inductor Q from the control (0 means lossless)."""
        return float(self.q_inductor.value) or None

    def update(self) -> None:
        """Design, evaluate and draw with the current controls."""
        self.design = self.rounded = self.response_after = self.limit = self.stress = None
        f_hz = float(from_unit(self.f_mhz.value, "MHz"))
        basis = self.f_basis if abs(f_hz - self._f_start) <= 1e-6 * f_hz else "typed"
        f_lo, f_hi = span_hz(self.band_mhz)
        q = self.q()
        d = make_design(self.design_kind.value, self.capture, f_hz, f_lo, f_hi,
                        self.r_source_ohm, q)
        self.design = d
        self.sensitivity = None
        if self.design_kind.value != "band":  # a band design has no one design frequency
            self.sensitivity = km.design_sensitivity(
                lambda fx: make_design(self.design_kind.value, self.capture, fx, f_lo, f_hi,
                                       self.r_source_ohm, q), f_hz)
            if self.sensitivity.sensitive:
                self.message.show(self.sensitivity.message(), "warning")
        self.rounded = km.round_design(d, self.series.value)
        self.response_before = km.response(None, self.capture, r_source_ohm=self.r_source_ohm)
        self.response_after = km.response(self.rounded, self.capture, q_inductor=q)
        ideal = km.response(d, self.capture)
        f = self.response_after.f_hz
        band = (f >= f_lo) & (f <= f_hi)
        f_stress = f[band] if np.any(band) else np.array([f_hz])
        self.stress = km.stress(self.rounded, self.capture, f_stress, float(self.drive_w.value),
                                q_inductor=q)
        lim_text = ""
        for model in ("series-rlc", "parallel-rc"):
            try:
                self.limit = km.bode_fano(self.capture, f_lo, f_hi, model=model)
                break
            except ValueError as exc:
                lim_text = f"Bode-Fano limit not computed: {exc}"
        self._draw(ideal)
        bw = self.response_after.bandwidth(float(self.rl_db.value))
        lines = [f"<b>{html.escape(self.rounded.title)}</b>",
                 html.escape(f"design frequency {quantity(f_hz, 'Hz', digits=7)} "
                             f"({basis})"),
                 html.escape(f"bandwidth ({self.series.value} values, inductor Q "
                             f"{q if q else 'lossless'}): {bw.message}")]
        if self.limit is not None:
            lines.append(html.escape(self.limit.summary()).replace("\n", "<br>"))
            lines.append(html.escape(
                f"share of the limit used in the band: designed {eng(self.limit.ratio(ideal), '', 3)}, "
                f"{self.series.value} values {eng(self.limit.ratio(self.response_after), '', 3)}"))
        else:
            lines.append(html.escape(lim_text))
        lines.append(html.escape(self.stress.assumptions))
        lines += [html.escape("note: " + n) for n in self.rounded.notes]
        self.summary_html.value = "<br>".join(lines)
        self.parts_html.value = parts_table_html(d, self.rounded, self.stress)

    def view_hz(self) -> tuple[float, float]:
        """The frequencies drawn [Hz]: the band and one band width on each side, within the
        sweep (the design band fills the middle of the chart)."""
        f = self.response_before.f_hz
        lo, hi = span_hz(self.band_mhz)
        w = max(hi - lo, 1e-3 * (lo + hi))
        return max(float(f[0]), lo - w), min(float(f[-1]), hi + w)

    def _draw(self, ideal) -> None:
        ax, ar = self.ax_smith, self.ax_rl
        ax.clear()
        ar.clear()
        kv.smith_grid(ax, self.r_source_ohm)
        before, after = self.response_before, self.response_after
        v_lo, v_hi = self.view_hz()
        sel = (before.f_hz >= v_lo) & (before.f_hz <= v_hi)
        curves = (("element alone", before, "-"), ("matched (bought values)", after, "-"),
                  ("matched (designed)", ideal, "--"))
        for i, (label, r, ls) in enumerate(curves):
            kv.plot_smith(ax, r.gamma[sel], label=label, i=i, ls=ls)
            kv.plot_return_loss(ar, r.f_hz, r.gamma, label=label, i=i, ls=ls,
                                span_hz=(v_lo, v_hi))
        ax.set_title("reflection over the view, same colours as the right", fontsize=8)
        kv.frame_return_loss(ar, float(self.rl_db.value), span_hz(self.band_mhz),
                             before.return_loss_db[sel], after.return_loss_db[sel])
        ar.set_xlim(v_lo, v_hi)
        kv.legend_outside(ar, fontsize=7)
        self.host.refresh()

    def state(self) -> dict[str, Any]:
        """Plain-data summary of the last result (for tests and the notebook)."""
        return {"design": None if self.design is None else self.design.describe(),
                "rounded": None if self.rounded is None else self.rounded.describe(),
                "message": self.message.last}


def match_panel(capture, display: bool = True, f_hz: float | None = None,
                r_source_ohm: float = 50.0, fit=None) -> MatchPanel:
    """Build (and show) the match panel for a measured, corrected one-port capture.

    Parameters
    ----------
    capture : Capture
        The element (its impedance is taken with :func:`kit.impedance`).
    display : bool
        Show it in the notebook; False to build only (tests).
    f_hz : float, optional
        Design frequency [Hz]; default :func:`kit.match.design_frequency` (fs of a
        Butterworth-Van Dyke fit, or of ``fit``).
    r_source_ohm : float
        Source (amplifier) resistance [Ω].
    fit : kit FitResult, optional
        A fit of the element whose fs is the default design frequency.

    A single-frequency design whose parts change by more than 10 % for a 0.1 % shift of
    the design frequency is warned about in the message bar
    (:func:`kit.match.design_sensitivity`).
    """
    panel = MatchPanel(capture, f_hz=f_hz, r_source_ohm=r_source_ohm, fit=fit)
    if display:
        show(panel.widget)
    return panel
