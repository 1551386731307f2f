"""Widget cell: choose standards, cable and fixture, switch corrections, compare raw/corrected.

The panel only wires controls to :mod:`kit.corrections` and draws with :mod:`kit.views`:
no formula lives here. Corrections are applied in the order of the physical set-up, the
one nearest the analyser first: cable, fixture file, port extension, then open/short/load
(or open/short) compensation. When a standards-based compensation is on together with a
line or fixture step, the standards are passed through the same steps first, so they
describe what is left between the new reference plane and the device.
"""

from __future__ import annotations

import html
import warnings
from pathlib import Path
from typing import Any

from kit import views as kv
from kit.network.coerce import reference_ohm
from kit.network.immittance import SingularPointsWarning
from kit.ui.common import FigureHost, MessageBar, classed, guess, section, show, touchstone_names
from kit.units import from_unit

NONE = "(none)"


def _scan(source: Any) -> dict[str, Any]:
    """name -> path or Capture, from a folder (recursive) or a list/dict of captures."""
    from kit.capture import Capture

    if isinstance(source, (str, Path)):
        if not Path(source).is_dir():
            raise FileNotFoundError(f"{source}: not a folder of Touchstone files")
        return touchstone_names(source)
    if isinstance(source, dict):
        return dict(source)
    out: dict[str, Any] = {}
    for c in source:
        if not isinstance(c, Capture):
            raise TypeError(f"expected Captures, got {type(c).__name__}")
        out[c.name if c.name not in out else f"{c.name} ({len(out)})"] = c
    return out


def _ports_of(item: Any) -> int:
    if isinstance(item, Path):
        return 2 if item.suffix.lower() == ".s2p" else 1
    return int(item.ports)


class CorrectionsPanel:
    """The corrections cell; controls are attributes (see :func:`corrections_panel`).

    Attributes
    ----------
    widget : ipywidgets.VBox
    dut, check, open, short, load, fixture_file : ipywidgets.Dropdown
    compensation : ipywidgets.Dropdown
        "off", "open/short/load" or "open/short".
    use_cable, use_fixture, use_extension : ipywidgets.Checkbox
    cable_length_m, cable_vf, cable_z0_ohm, cable_loss_db_per_m, cable_loss_ref_mhz,
    load_ohms, delay_ps, check_ohms : ipywidgets.FloatText
    status, residual_text : ipywidgets.HTML
    message : kit.ui.common.MessageBar
    host : kit.ui.common.FigureHost
    chain : kit.corrections.Chain or None
        The correction applied now (None when everything is off or it could not be built).
    raw, corrected : Capture or None
    residual : kit.corrections.Residual or None
        Residual of the corrected check part against ``check_ohms``.
    """

    def __init__(self, source: Any, interactive: bool | None = None) -> None:
        import ipywidgets as w

        self.items = _scan(source)
        self._loaded: dict[str, Any] = {}
        names = list(self.items)
        one = [n for n in names if _ports_of(self.items[n]) == 1]
        two = [n for n in names if _ports_of(self.items[n]) == 2]
        std_words = ("open", "short", "load", "check", "_dut")
        duts = [n for n in one if not any(k in Path(n).stem.lower() for k in std_words)] or one
        dd = lambda desc, opts, val: classed(w.Dropdown(  # noqa: E731
            description=desc, options=opts, value=val, style={"description_width": "90px"},
            layout=w.Layout(width="360px")), "corr-select")
        ft = lambda desc, val: classed(w.FloatText(  # noqa: E731
            description=desc, value=val, style={"description_width": "120px"},
            layout=w.Layout(width="230px")), "corr-number")
        self.dut = dd("capture", duts or [NONE], duts[0] if duts else NONE)
        self.check = dd("check part", [NONE] + one, guess(one, "check"))
        self.check_ohms = ft("check [Ω]", 100.0)
        self.compensation = classed(w.Dropdown(
            description="standards", options=["off", "open/short/load", "open/short"],
            value="open/short/load" if guess(one, "open") != NONE else "off",
            style={"description_width": "90px"}), "corr-compensation")
        self.open = dd("open", [NONE] + one, guess(one, "open"))
        self.short = dd("short", [NONE] + one, guess(one, "short"))
        self.load = dd("load", [NONE] + one, guess(one, "load"))
        self.load_ohms = ft("load [Ω]", 50.0)
        self.use_cable = classed(w.Checkbox(description="remove cable", value=False), "corr-cable")
        self.cable_length_m = ft("length [m]", 1.5)
        self.cable_vf = ft("velocity factor", 0.66)
        self.cable_z0_ohm = ft("Z0 [Ω]", 50.0)
        self.cable_loss_db_per_m = ft("loss [dB/m]", 0.0)
        self.cable_loss_ref_mhz = ft("at [MHz]", 10.0)
        self.use_fixture = classed(w.Checkbox(description="remove fixture file", value=False),
                                   "corr-fixture")
        self.fixture_file = dd("fixture", [NONE] + two, NONE)
        self.use_extension = classed(w.Checkbox(description="port extension", value=False),
                                     "corr-extension")
        self.delay_ps = ft("one-way [ps]", 0.0)
        self.status = classed(w.HTML(""), "corr-status")
        self.residual_text = classed(w.HTML(""), "corr-residual")
        self.message = MessageBar()
        self.host = FigureHost(figsize=(11.0, 4.2), interactive=interactive, css="corr-figure")
        self.chain = None
        self.raw = self.corrected = None
        self.residual = None

        controls = [self.dut, self.check, self.check_ohms, self.compensation, self.open,
                    self.short, self.load, self.load_ohms, self.use_cable, self.cable_length_m,
                    self.cable_vf, self.cable_z0_ohm, self.cable_loss_db_per_m,
                    self.cable_loss_ref_mhz, self.use_fixture, self.fixture_file,
                    self.use_extension, self.delay_ps]
        self._update = self.message.guard(self._redraw)
        for c in controls:
            c.observe(lambda _change: self._update(), names="value")
        left = w.VBox([self.dut, self.check, self.check_ohms])
        stds = w.VBox([self.compensation, self.open, self.short, self.load, self.load_ohms])
        cab = w.VBox([self.use_cable, self.cable_length_m, self.cable_vf, self.cable_z0_ohm,
                      self.cable_loss_db_per_m, self.cable_loss_ref_mhz])
        fix = w.VBox([self.use_fixture, self.fixture_file, self.use_extension, self.delay_ps])
        body = w.HBox([left, stds, cab, fix], layout=w.Layout(flex_flow="row wrap"))
        self.widget = classed(w.VBox([
            section("Corrections", body, "corr-controls"), self.message.widget, self.status,
            self.residual_text, self.host.widget]), "corrections-panel")
        self._update()

    # ------------------------------------------------------------------ computation wiring
    def capture(self, name: str):
        """The Capture of a listed file or capture (loaded once)."""
        from kit.io.touchstone import load

        if name not in self._loaded:
            item = self.items[name]
            self._loaded[name] = load(item) if isinstance(item, Path) else item
        return self._loaded[name]

    def build_chain(self):
        """The correction for the current controls (kit.corrections objects), or None."""
        import kit.corrections as kc

        steps = []
        if self.use_cable.value:
            loss = float(self.cable_loss_db_per_m.value)
            steps.append(kc.cable(self.cable_length_m.value, self.cable_vf.value,
                                   self.cable_z0_ohm.value, loss,
                                   from_unit(self.cable_loss_ref_mhz.value, "MHz") if loss
                                   else None))
        if self.use_fixture.value:
            if self.fixture_file.value == NONE:
                raise ValueError("pick a fixture file (a two-port capture) or switch the "
                                 "fixture off")
            steps.append(kc.fixture(self.capture(self.fixture_file.value)))
        if self.use_extension.value:
            steps.append(kc.port_extension(from_unit(self.delay_ps.value, "ps")))
        mode = self.compensation.value
        if mode != "off":
            keys = ("open", "short", "load") if mode == "open/short/load" else ("open", "short")
            picked = {k: getattr(self, k).value for k in keys}
            missing = [k for k, v in picked.items() if v == NONE]
            if missing:
                raise ValueError(f"pick the {', '.join(missing)} standard(s), or set "
                                 "standards to off")
            stds = [self.capture(v) for v in picked.values()]
            if steps:  # refer the standards to the plane the earlier steps reach
                ahead = kc.chain(*steps)
                stds = [ahead(s) for s in stds]
            if mode == "open/short/load":
                steps.append(kc.osl(*stds, load_ohms=self.load_ohms.value))
            else:
                steps.append(kc.open_short(*stds))
        return kc.chain(*steps) if steps else None

    def _redraw(self) -> None:
        from kit.corrections import residual

        self.chain = None
        self.corrected = self.residual = None
        self.residual_text.value = ""
        if self.dut.value == NONE:
            self.status.value = "no one-port capture to show"
            return
        self.raw = self.capture(self.dut.value)
        self.chain = self.build_chain()
        self.corrected = self.chain(self.raw) if self.chain is not None else self.raw
        kinds = [s["kind"] for s in (self.chain.describe()["steps"] if self.chain else [])]
        self.status.value = ("corrections: " + (" &rarr; ".join(kinds) if kinds else "none"))
        active = [f for f in self.corrected.findings if f.code == "active"]
        if active:
            self.message.show(active[-1].message, "note")
        if self.check.value != NONE:
            chk = self.capture(self.check.value)
            chk_c = self.chain(chk) if self.chain is not None else chk
            self.residual = residual(chk_c, self.check_ohms.value)
            # the result's own words (kit.corrections.residual.Residual), reason included
            self.residual_text.value = f"check part {html.escape(str(self.residual))}"
        self._draw()

    # ------------------------------------------------------------------ drawing
    def _draw(self) -> None:
        fig = self.host.fig
        fig.clear()
        gs = fig.add_gridspec(2, 2, width_ratios=[1.0, 1.6])
        ax_s = fig.add_subplot(gs[:, 0])
        ax_m = fig.add_subplot(gs[0, 1])
        ax_p = fig.add_subplot(gs[1, 1], sharex=ax_m)
        kv.smith_grid(ax_s, z0_ohm=reference_ohm(self.raw))
        pairs = [(self.raw, "raw", 0)]
        if self.corrected is not self.raw:
            pairs.append((self.corrected, "corrected", 1))
        for cap, label, i in pairs:
            with warnings.catch_warnings():  # an ideal open's Z is NaN: drawn as a gap
                warnings.simplefilter("ignore", SingularPointsWarning)
                t = kv.trace(cap, label=label)
            kv.plot_smith(ax_s, t, i=i)
            kv.plot_chart(ax_m, t, "z_mag", i=i)
            kv.plot_chart(ax_p, t, "z_phase", i=i)
        ax_s.legend(loc="upper left", bbox_to_anchor=(-0.02, 1.04), fontsize=8, frameon=False)
        ax_m.legend(loc="best", fontsize=8)
        ax_m.tick_params(labelbottom=False)
        ax_m.set_xlabel("")
        ax_m.set_title(self.raw.name, fontsize=9)
        fig.subplots_adjust(left=0.04, right=0.98, bottom=0.12, top=0.92, wspace=0.25,
                            hspace=0.08)
        self.host.refresh()


def corrections_panel(folder_or_captures: Any, display: bool = True,
                      interactive: bool | None = None) -> CorrectionsPanel:
    """Build (and show) the corrections cell.

    Parameters
    ----------
    folder_or_captures : str, Path, list of Capture or dict of name -> Capture
        A folder searched (with sub-folders) for Touchstone files, or captures in memory.
        Files whose names contain "open", "short", "load" and "check" are pre-selected as
        the standards and the check part.
    display : bool
        Show the panel now (False in tests and when composing).
    interactive : bool, optional
        Force or refuse an ipympl canvas (default: follow the matplotlib backend).

    Returns
    -------
    CorrectionsPanel
        With the controls, the current ``chain``, ``raw``, ``corrected`` and ``residual``.
    """
    panel = CorrectionsPanel(folder_or_captures, interactive=interactive)
    if display:
        show(panel.widget)
    return panel
