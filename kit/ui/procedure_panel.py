"""Procedure panel: what the user set, as a procedure file that runs on a whole lot.

``procedure_panel(folder)`` collects the import method and name pattern, the corrections
(open/short/load or open/short standards picked from the Touchstone files found under the
standards folder, a cable by length and velocity factor), the fit (model, span, modes) and
the limits (min/max per summary quantity) into a :class:`kit.Procedure`, and shows its
TOML text. *Save* writes the procedure file (atomically, through
:meth:`kit.Procedure.to_file`) to the path typed in the panel; *Load* reads one and sets
the controls; *Run on folder* calls :func:`kit.batch.engine.run` on the folder and shows the
summary table. The panel only wires controls to those kit functions; every error goes to
the panel's message bar.

The button runs the lot in a background thread (:mod:`kit.ui.background`): the kernel stays
free for other cells, a bar shows the captures done, and *Cancel* stops the run before its
next chunk of captures (nothing is written then). From a script or a test,
:meth:`ProcedurePanel.run` waits by default (``block=True``) and returns the result, as it
always did; ``run(block=False)`` is what the button does, and :meth:`ProcedurePanel.wait`
waits for it.

The panel's correction order is the procedure's: a cable step (nearest the analyser)
before the standards. The standards are applied as they were measured, so with both
switched on they must have been measured through the same cable (see the note shown then).
"""

from __future__ import annotations

import html
from pathlib import Path
from typing import Any

from kit.resonators.registry import MODEL_NAMES
from kit.ui.background import BackgroundJob
from kit.ui.common import MessageBar, classed, guess, plain_error, section, show, touchstone_names
from kit.units import from_unit, to_unit

NONE = "(none)"
NO_FIT = "(no fit)"
COMPENSATIONS = ("off", "open/short/load", "open/short")
#: Fit models offered (those of kit.fit that take a one-port resonator capture).
FIT_MODELS = (NO_FIT, *MODEL_NAMES)
#: Summary quantities with a min/max row in the panel: (column, label with unit).
LIMIT_QUANTITIES = (
    ("fs_hz", "fs [Hz]"),
    ("fp_hz", "fp [Hz]"),
    ("k_eff", "k_eff [-]"),
    ("qm", "Qm [-]"),
    ("c0_f", "C0 [F]"),
    ("r1_ohm", "R1 [Ω]"),
)
#: Summary columns shown after a run (those present).
TABLE_COLUMNS = ("capture", "status", "fs_hz", "fp_hz", "k_eff", "qm", "c0_f", "fit_ok",
                 "verdict", "error")


#: Top-level settings of a loaded procedure that no control shows, saved as they were.
KEPT_AS_LOADED = ("name", "description", "limits_file", "resonance")


def _number(text: str, what: str) -> float | None:
    """A bound typed by the user: '' means no bound; anything else must be a number."""
    t = text.strip()
    if not t:
        return None
    try:
        return float(t)
    except ValueError:
        raise ValueError(f"{what}: {t!r} is not a number (leave it empty for no bound)") from None


def summary_html(summary) -> str:
    """The key columns of a batch summary as an HTML table, units in the headers
    (:func:`kit.units.table`), every cell escaped."""
    import pandas as pd

    from kit.units import table

    if summary is None or len(summary) == 0:
        return "<i>No run yet.</i>"
    shown = table(summary[[c for c in TABLE_COLUMNS if c in summary.columns]])
    head = "".join(f"<th>{html.escape(str(c))}</th>" for c in shown.columns)
    rows = "".join("<tr>" + "".join(f"<td>{html.escape('' if pd.isna(v) else str(v))}</td>"
                                    for v in r) + "</tr>" for r in shown.itertuples(index=False))
    return ('<table class="sb-proc-summary" style="border-collapse:collapse;font-size:12px">'
            f"<tr>{head}</tr>{rows}</table>")


class ProcedurePanel:
    """The procedure cell; controls are attributes (see :func:`procedure_panel`).

    Attributes
    ----------
    widget : ipywidgets.VBox
        The panel (class ``sb-procedure-panel``).
    folder : ipywidgets.Text
        The folder (or file) the procedure runs on.
    method : ipywidgets.Dropdown
        Import method: "reflection", "series-through" or "shunt-through".
    name_pattern : ipywidgets.Text
        File-name pattern such as ``{lot}-{serial}`` ('' for none).
    compensation : ipywidgets.Dropdown
        "off", "open/short/load" or "open/short".
    open, short, load : ipywidgets.Dropdown
        Standards, from the Touchstone files under the standards folder.
    load_ohms : ipywidgets.FloatText
        Value of the load standard [ohm].
    use_cable : ipywidgets.Checkbox
    cable_length_m, cable_vf : ipywidgets.FloatText
        Cable length [m] and velocity factor [-].
    model : ipywidgets.Dropdown
        Fit model, or "(no fit)".
    span_lo_mhz, span_hi_mhz : ipywidgets.FloatText
        Fit span [MHz].
    modes : ipywidgets.BoundedIntText
    limits : dict of str -> (ipywidgets.Text, ipywidgets.Text)
        Min and max per quantity (empty: no bound).
    toml : ipywidgets.HTML
        The procedure's TOML text (escaped).
    path : ipywidgets.Text
        Procedure file for Save and Load.
    save_button, load_button, run_button : ipywidgets.Button
    job : kit.ui.background.BackgroundJob
        The run's progress bar, count and cancel button (``job.cancel_button``).
    workers : ipywidgets.BoundedIntText
        Local worker processes for the run (1: in the kernel's process).
    out : ipywidgets.Text
        Output folder of the run ('' writes nothing; otherwise summary, sweeps,
        provenance and report go there).
    status : ipywidgets.HTML
        Progress and status line of the run.
    table : ipywidgets.HTML
        Summary of the last run (escaped).
    message : kit.ui.common.MessageBar
    result : kit.batch.engine.BatchResult or None
        The last run that finished (None while a run goes, or after a failed or cancelled
        one).
    kept : dict
        Settings of a loaded procedure that the panel has no control for (resonance span,
        extra fit options, other limits, masks, name); they are kept in what it saves.
    """

    def __init__(self, source: Any = None, standards: Any = None, path: str = "procedure.toml",
                 cache_dir: Any = None, use_cache: bool = True) -> None:
        import ipywidgets as w

        from kit.batch.procedure import IMPORT_METHODS

        src = Path(source) if source is not None else None
        std_root = Path(standards) if standards is not None else (src.parent if src else None)
        self.standard_files = touchstone_names(std_root)
        self.cache_dir = cache_dir
        self.use_cache = use_cache
        self.result = None
        self.kept: dict[str, Any] = {}
        self.message = MessageBar()
        names = list(self.standard_files)
        style = {"description_width": "110px"}
        text = lambda desc, val="", width="330px": classed(w.Text(  # noqa: E731
            description=desc, value=val, style=style, layout=w.Layout(width=width)), "proc-text")
        num = lambda desc, val: classed(w.FloatText(  # noqa: E731
            description=desc, value=val, style=style, layout=w.Layout(width="220px")),
            "proc-number")
        dd = lambda desc, opts, val: classed(w.Dropdown(  # noqa: E731
            description=desc, options=opts, value=val, style=style,
            layout=w.Layout(width="330px")), "proc-select")

        self.folder = classed(text("run on", str(src) if src else "", "520px"), "proc-folder")
        self.method = classed(dd("import method", list(IMPORT_METHODS), "reflection"),
                              "proc-method")
        self.start, start_note = self._start_from(src)
        self.name_pattern = classed(text("name pattern", (self.start and self.start.pattern)
                                         or ""), "proc-pattern")
        has_open = guess(names, "open") != NONE
        self.compensation = classed(dd("standards", list(COMPENSATIONS),
                                       "open/short/load" if has_open else "off"),
                                    "proc-compensation")
        self.open = dd("open", [NONE, *names], guess(names, "open"))
        self.short = dd("short", [NONE, *names], guess(names, "short"))
        self.load = dd("load", [NONE, *names], guess(names, "load"))
        self.load_ohms = num("load [Ω]", 50.0)
        self.use_cable = classed(w.Checkbox(description="remove cable", value=False),
                                 "proc-cable")
        self.cable_length_m = num("length [m]", 1.5)
        self.cable_vf = num("velocity factor", 0.66)
        self.model = classed(dd("fit model", list(FIT_MODELS), "bvd"), "proc-model")
        lo, hi = self.start.span_hz if self.start else (0.0, 0.0)
        self.span_lo_mhz = num("span from [MHz]", round(to_unit(lo, "MHz"), 4))
        self.span_hi_mhz = num("span to [MHz]", round(to_unit(hi, "MHz"), 4))
        self.start_note = classed(w.HTML(f"<small>{html.escape(start_note)}</small>"),
                                  "proc-start")
        self.modes = classed(w.BoundedIntText(description="modes", value=1, min=1, max=8,
                                              style=style, layout=w.Layout(width="220px")),
                             "proc-modes")
        self.limits: dict[str, tuple[Any, Any]] = {}
        rows = [w.HTML("<b>limits</b> (empty: no bound)")]
        for key, label in LIMIT_QUANTITIES:
            lo = classed(w.Text(description=label, placeholder="min", style=style,
                                layout=w.Layout(width="230px")), "proc-limit", f"proc-{key}-min")
            hi = classed(w.Text(placeholder="max", layout=w.Layout(width="120px")),
                         "proc-limit", f"proc-{key}-max")
            self.limits[key] = (lo, hi)
            rows.append(w.HBox([lo, hi]))
        self.toml = classed(w.HTML(""), "proc-toml")
        self.path = classed(text("procedure file", path, "520px"), "proc-path")
        self.save_button = classed(w.Button(description="Save", icon="save",
                                            tooltip="write the procedure file"), "proc-save")
        self.load_button = classed(w.Button(description="Load", icon="folder-open",
                                            tooltip="read the procedure file into the controls"),
                                   "proc-load")
        self.workers = classed(w.BoundedIntText(description="workers", value=1, min=1, max=64,
                                                style=style, layout=w.Layout(width="180px")),
                               "proc-workers")
        self.out = classed(text("write to", "", "520px"), "proc-out")
        self.run_button = classed(w.Button(description="Run on folder", icon="play",
                                           button_style="", tooltip="kit.batch.engine.run"), "proc-run")
        self.status = classed(w.HTML(""), "proc-status")
        self.table = classed(w.HTML(summary_html(None)), "proc-table")
        self.job = BackgroundJob(self.run_button, prefix="proc")

        self._controls = [self.method, self.name_pattern, self.compensation, self.open,
                          self.short, self.load, self.load_ohms, self.use_cable,
                          self.cable_length_m, self.cable_vf, self.model, self.span_lo_mhz,
                          self.span_hi_mhz, self.modes,
                          *[t for pair in self.limits.values() for t in pair]]
        self._quiet = False
        self._update = self.message.guard(self.refresh)
        for c in self._controls:
            c.observe(lambda _change: None if self._quiet else self._update(), names="value")
        self.save_button.on_click(self.message.guard(lambda _b: self.save()))
        self.load_button.on_click(self.message.guard(lambda _b: self.load_file()))
        self.run_button.on_click(self.message.guard(lambda _b: self.run(block=False)))

        imp = w.VBox([self.folder, self.method, self.name_pattern])
        corr = w.VBox([self.compensation, self.open, self.short, self.load, self.load_ohms,
                       self.use_cable, self.cable_length_m, self.cable_vf])
        fit = w.VBox([self.model, self.span_lo_mhz, self.span_hi_mhz, self.start_note,
                      self.modes])
        lim = w.VBox(rows)
        body = w.HBox([w.VBox([imp, fit]), corr, lim], layout=w.Layout(flex_flow="row wrap"))
        files = w.HBox([self.path, self.save_button, self.load_button])
        runrow = w.HBox([self.workers, self.out, self.run_button, self.job.cancel_button])
        self.widget = classed(w.VBox([
            section("Procedure", body, "proc-controls"), self.message.widget,
            section("Procedure file", w.VBox([files, self.toml]), "proc-file"),
            section("Run", w.VBox([runrow, self.job.widget, self.status, self.table]),
                    "proc-run-section")]),
            "procedure-panel")
        self._update()

    @staticmethod
    def _start_from(src):
        """(LotStart or None, a sentence): the span and pattern read off the folder."""
        from kit.resonators.starts import lot_start

        if src is None or not src.exists():
            return None, "span 0 to 0: the whole sweep (no folder read yet)"
        try:
            s = lot_start(src)
        except ValueError as exc:
            return None, f"span 0 to 0: the whole sweep ({plain_error(exc)})"
        pattern = f"name pattern from {s.files} file name(s)" if s.pattern else \
            "no name pattern could be told from the file names"
        return s, f"span {s.basis}; {pattern}"

    # ------------------------------------------------------------------ controls -> procedure
    def _standard(self, dropdown, what: str) -> str:
        if dropdown.value == NONE:
            raise ValueError(f"pick the {what} standard, or set standards to off")
        return str(self.standard_files[dropdown.value])

    def procedure(self):
        """The :class:`kit.Procedure` for the current controls (paths absolute)."""
        from kit.batch.procedure import Procedure

        corrections: list[dict[str, Any]] = []
        if self.use_cable.value:
            corrections.append({"kind": "cable", "length_m": float(self.cable_length_m.value),
                                "velocity_factor": float(self.cable_vf.value)})
        mode = self.compensation.value
        if mode == "open/short/load":
            corrections.append({"kind": "osl", "open": self._standard(self.open, "open"),
                                "short": self._standard(self.short, "short"),
                                "load": self._standard(self.load, "load"),
                                "load_ohms": float(self.load_ohms.value)})
        elif mode == "open/short":
            corrections.append({"kind": "open_short", "open": self._standard(self.open, "open"),
                                "short": self._standard(self.short, "short")})
        doc: dict[str, Any] = {"import": {"method": self.method.value}}
        if self.name_pattern.value.strip():
            doc["import"]["name_pattern"] = self.name_pattern.value.strip()
        if corrections:
            doc["correction"] = corrections
        if self.model.value != NO_FIT:
            fit = dict(self.kept.get("fit", {}))
            fit.update(model=self.model.value, modes=int(self.modes.value))
            if self.span_lo_mhz.value or self.span_hi_mhz.value:  # 0 to 0: the whole sweep
                fit["span_hz"] = [float(from_unit(self.span_lo_mhz.value, "MHz")),
                                  float(from_unit(self.span_hi_mhz.value, "MHz"))]
            doc["fit"] = fit
        limits = dict(self.kept.get("limits", {}))
        for key, (lo, hi) in self.limits.items():
            bounds = {}
            for name, box in (("min", lo), ("max", hi)):
                v = _number(box.value, f"limit {key} {name}")
                if v is not None:
                    bounds[name] = v
            if bounds:
                limits[key] = bounds
        if limits:
            doc["limits"] = limits
        for k in KEPT_AS_LOADED:
            if self.kept.get(k):
                doc[k] = self.kept[k]
        return Procedure.from_dict(doc, base_dir=Path.cwd(), source="<procedure panel>")

    def toml_text(self) -> str:
        """The TOML text the current controls would save."""
        from kit.batch.procedure import dumps_toml

        return dumps_toml(self.procedure().to_dict())

    def refresh(self) -> None:
        """Rebuild the procedure from the controls and show its TOML text (escaped)."""
        self.toml.value = ""
        text = self.toml_text()
        self.toml.value = ('<pre style="font-size:12px;background:#f3f6f5;padding:4px;'
                           f'margin:2px 0">{html.escape(text)}</pre>')
        if self.use_cable.value and self.compensation.value != "off":
            self.message.show("the standards are applied as measured: with the cable step "
                              "before them they must have been measured through the same "
                              "cable; usually the standards alone are enough", "note")

    # ------------------------------------------------------------------ files
    def save(self, path: str | Path | None = None) -> Path:
        """Write the procedure file (atomically) to ``path`` or the typed path; returns it."""
        target = Path(path) if path is not None else Path(self.path.value.strip())
        if not str(target) or not target.name:
            raise ValueError("type the procedure file's path first")
        written = self.procedure().to_file(target)
        self.status.value = f"saved {html.escape(str(written))}"
        return written

    def load_file(self, path: str | Path | None = None):
        """Read a procedure file into the controls; returns the kit.Procedure read."""
        from kit.batch.procedure import Procedure

        src = Path(path) if path is not None else Path(self.path.value.strip())
        proc = Procedure.from_file(src)
        self.set_procedure(proc)
        self.status.value = f"loaded {html.escape(str(src))}"
        return proc

    def _select_standard(self, dropdown, path: Path) -> None:
        path = path.resolve()
        for name, p in self.standard_files.items():
            if p == path:
                dropdown.value = name
                return
        name = str(path)  # a standard outside the scanned folder: listed by its full path
        self.standard_files[name] = path
        for dd in (self.open, self.short, self.load):
            if name not in dd.options:
                dd.options = [*dd.options, name]
        dropdown.value = name

    def set_procedure(self, proc) -> None:
        """Set the controls from a :class:`kit.Procedure` (refused when the panel cannot
        show it)."""
        kinds = [c["kind"] for c in proc.corrections]
        shown = {"cable", "osl", "open_short"}
        if set(kinds) - shown or len(kinds) != len(set(kinds)) or (
                "osl" in kinds and "open_short" in kinds) or (
                "cable" in kinds and kinds[0] != "cable"):
            raise ValueError(f"this panel shows a cable then open/short/load or open/short; the "
                             f"procedure has {', '.join(kinds)}: edit it as a file instead")
        for c in proc.corrections:
            extra = set(c) - {"kind", "length_m", "velocity_factor", "open", "short", "load",
                              "load_ohms"}
            if extra:
                raise ValueError(f"correction {c['kind']} sets {', '.join(sorted(extra))}, "
                                 "which this panel has no control for: edit it as a file instead")
        self._quiet = True
        try:
            self.method.value = proc.import_.get("method", "reflection")
            self.name_pattern.value = proc.import_.get("name_pattern") or ""
            self.compensation.value = "off"
            self.use_cable.value = False
            for c in proc.corrections:
                if c["kind"] == "cable":
                    self.use_cable.value = True
                    self.cable_length_m.value = float(c["length_m"])
                    self.cable_vf.value = float(c["velocity_factor"])
                    continue
                self.compensation.value = ("open/short/load" if c["kind"] == "osl"
                                           else "open/short")
                keys = ("open", "short", "load") if c["kind"] == "osl" else ("open", "short")
                for k in keys:
                    self._select_standard(getattr(self, k), proc.resolve(c[k]))
                if c["kind"] == "osl":
                    self.load_ohms.value = float(c.get("load_ohms", 50.0))
            fit = dict(proc.fit or {})
            self.model.value = fit.pop("model", "bvd") if proc.fit else NO_FIT
            lo, hi = fit.pop("span_hz", (0.0, 0.0))
            self.span_lo_mhz.value = to_unit(lo, "MHz")
            self.span_hi_mhz.value = to_unit(hi, "MHz")
            self.modes.value = int(fit.pop("modes", 1))
            limits = dict(proc.limits or {})
            for key, (lo, hi) in self.limits.items():
                bounds = limits.get(key)
                if isinstance(bounds, dict) and set(bounds) <= {"min", "max"}:
                    limits.pop(key)
                    lo.value = "" if bounds.get("min") is None else repr(float(bounds["min"]))
                    hi.value = "" if bounds.get("max") is None else repr(float(bounds["max"]))
                else:
                    lo.value = hi.value = ""
            self.kept = {"fit": fit, "limits": limits, "name": proc.name,
                         "description": proc.description,
                         # absolute: the panel's procedure is read from the current folder
                         "limits_file": (str(proc.resolve(proc.limits_file))
                                         if proc.limits_file else ""),
                         "resonance": dict(proc.resonance)}
        finally:
            self._quiet = False
        self.refresh()
        if any(self.kept.values()):
            what = [k for k, v in self.kept.items() if v]
            self.message.show(f"kept as loaded (no control here): {', '.join(what)}", "note")

    # ------------------------------------------------------------------ run
    def run(self, block: bool = True):
        """Run the procedure on the folder with :func:`kit.batch.engine.run`.

        Parameters
        ----------
        block : bool
            True (scripts, tests): run here and return the
            :class:`kit.batch.engine.BatchResult`; a failure raises (a cancelled run raises
            :class:`kit.io.pool.Cancelled`). False (the *Run on folder* button): start the
            run in a background thread and return that thread; the outcome goes to
            ``result``, the table, the status line and the message bar.
        """
        from kit.batch import engine as batch
        from kit.io.pool import Cancelled

        target = self.folder.value.strip()
        if not target:
            raise ValueError("type the folder to run on")
        if self.job.running:
            raise RuntimeError("a run is in progress: wait for it to finish or cancel it")
        proc = self.procedure()
        out, workers = self.out.value.strip(), int(self.workers.value)
        self.status.value = f"running on {html.escape(target)} &hellip;"
        self.result = None
        self.table.value = summary_html(None)

        def work(on_progress, cancel):
            result = batch.run(proc, target, workers=workers, cache_dir=self.cache_dir,
                               use_cache=self.use_cache, progress=False,
                               on_progress=on_progress, cancel=cancel)
            if cancel.is_set():  # set after the last chunk: still nothing is written
                n = len(result.summary)
                raise Cancelled(n, n)
            return result, (result.write(out) if out else None)

        value = self.job.start(work, self._finished, block=block)
        return self.result if block else value

    def _finished(self, value=None, error=None) -> None:
        """The end of a run (in the run's thread): result, table, status line, message."""
        from kit.io.pool import Cancelled

        if isinstance(error, Cancelled):
            self.status.value = "cancelled"
            self.message.show(f"run cancelled after {error.done} of {error.total} capture(s); "
                              "no result kept and nothing written", "note")
            return
        if error is not None:
            self.status.value = "run failed"
            self.message.show(plain_error(error), "error")
            return
        result, written = value
        self.result = result
        self.table.value = summary_html(result.summary)
        s = result.stats
        counts = result.summary["verdict"].value_counts(dropna=True).to_dict()
        verdicts = ", ".join(f"{k} {v}" for k, v in counts.items()) or "none"
        line = (f"{s['inputs']} capture(s), {s['errors']} error row(s); verdicts: {verdicts}; "
                f"engine: {s['engine']}")
        if written is not None:
            line += f"; written to {written}"
        self.status.value = html.escape(line)

    def wait(self, timeout: float | None = None) -> bool:
        """Wait for a run started with ``run(block=False)`` (or the button); True when no run
        goes any more, False when ``timeout`` [s] passed first. The outcome is in ``result``,
        ``status`` and ``message``."""
        return self.job.wait(timeout)

    def cancel(self) -> None:
        """Stop the running run before its next chunk (what the Cancel button does)."""
        self.job.cancel()

    # ------------------------------------------------------------------ from other panels
    @classmethod
    def from_panels(cls, corrections=None, fit=None, **options) -> "ProcedurePanel":
        """A panel whose controls start from a corrections panel and/or a fit panel.

        Takes the standards, load value and cable of a
        :class:`kit.ui.corrections_panel.CorrectionsPanel` and the model, span, modes and
        method of a :class:`kit.ui.fit_panel.FitPanel`. A fixture file or port extension
        switched on in the corrections panel has no control here and is refused.
        Other keywords are those of :func:`procedure_panel` (``display`` defaults to False).
        """
        display = options.pop("display", False)
        if corrections is not None and options.get("standards") is None:
            first = next(iter(corrections.items.values()), None)
            if isinstance(first, Path):  # the corrections panel scanned a folder
                root = Path(first)
                for _ in Path(next(iter(corrections.items))).parts:
                    root = root.parent
                options["standards"] = root
        panel = cls(**options)
        panel._quiet = True
        try:
            if corrections is not None:
                if corrections.use_fixture.value or corrections.use_extension.value:
                    raise ValueError("the corrections panel uses a fixture file or a port "
                                     "extension, which procedures from this panel cannot hold")
                if corrections.use_cable.value and (corrections.cable_loss_db_per_m.value or
                                                    corrections.cable_z0_ohm.value != 50.0):
                    raise ValueError("the corrections panel's cable has a loss or a Z0 other "
                                     "than 50 ohm, which this panel cannot hold")
                panel.use_cable.value = bool(corrections.use_cable.value)
                panel.cable_length_m.value = float(corrections.cable_length_m.value)
                panel.cable_vf.value = float(corrections.cable_vf.value)
                panel.compensation.value = corrections.compensation.value
                for k in ("open", "short", "load"):
                    name = getattr(corrections, k).value
                    if name != NONE:
                        item = corrections.items[name]
                        if not isinstance(item, Path):
                            raise ValueError(f"the {k} standard of the corrections panel is a "
                                             "capture in memory; a procedure needs its file")
                        panel._select_standard(getattr(panel, k), item)
                panel.load_ohms.value = float(corrections.load_ohms.value)
            if fit is not None:
                panel.model.value = fit.model.value
                panel.modes.value = int(fit.modes.value)
                panel.method.value = fit.method.value
                panel.span_lo_mhz.value, panel.span_hi_mhz.value = fit.span.value
                panel.kept["fit"] = {"weighting": fit.weighting.value}
        finally:
            panel._quiet = False
        panel._update()
        if display:
            show(panel.widget)
        return panel


def procedure_panel(source: Any = None, display: bool = True, standards: Any = None,
                    path: str = "procedure.toml", cache_dir: Any = None,
                    use_cache: bool = True) -> ProcedurePanel:
    """Build (and show) the procedure cell.

    Parameters
    ----------
    source : str or Path, optional
        The folder (or file) the procedure runs on.
    display : bool
        Show the panel now (False in tests and when composing).
    standards : str or Path, optional
        Folder searched (with sub-folders) for the open/short/load files; default: the
        parent of ``source``. Files named open, short and load are pre-selected.
    path : str
        The procedure file's path for Save and Load.
    cache_dir : str or Path, optional
        Cache of parsed captures for the run (default: the user's cache folder).
    use_cache : bool
        False parses every file on each run.

    Returns
    -------
    ProcedurePanel
        With the controls, ``procedure()``, ``save()``, ``load_file()``, ``run()`` and the
        last ``result``.
    """
    panel = ProcedurePanel(source, standards=standards, path=path, cache_dir=cache_dir,
                           use_cache=use_cache)
    if display:
        show(panel.widget)
    return panel


def for_desk(dk) -> ProcedurePanel:
    """The procedure panel as a desk section: runs on the desk's lot folder and
    picks standards where the corrections panel does."""
    return ProcedurePanel(dk.folder, standards=dk.options.get("corrections_source")
                          or dk.folder.parent)
