"""The desk: one stacked layout hosting the lot browser, pins and the other panels.

Sections are titled blocks, one under the other, each folding on its header (no tabs):
"Lot" (the browser), "Pins", then whatever other panels are available (corrections,
fits, review, matching). Another panel joins with :meth:`Desk.add_section`, or
automatically through :data:`PANEL_BUILDERS` when it can be built (a panel whose module is
missing, or which lacks its input, is listed in ``Desk.skipped`` with the reason).
"""

from __future__ import annotations

from typing import Any, Callable

from kit.ui.common import classed, plain_error, section, show
from kit.ui.lot_browser import LotBrowser, lot_browser
from kit.ui.pins import PinPanel, pin_panel


def _corrections(dk: "Desk"):
    import ipywidgets as w

    from kit.ui.corrections_panel import corrections_panel

    panel = corrections_panel(dk.options.get("corrections_source") or dk.folder.parent,
                              display=False, interactive=dk.browser.host.interactive)
    use = classed(w.Button(description="use in lot browser", icon="check",
                           tooltip="corrected view of the lot browser uses this chain"),
                  "use-correction")

    def _use(_b):
        if panel.chain is None:
            raise ValueError("no correction is built yet: choose standards or a cable first")
        dk.browser.set_correction(panel.chain)
        dk.browser.corrected.value = "corrected"

    use.on_click(dk.browser.message.guard(_use))
    panel.use_button = use
    panel.widget = w.VBox([panel.widget, use])
    return panel


def _fits(dk: "Desk"):
    from kit.io import folder
    from kit.ui.fit_panel import fit_panel

    return fit_panel(folder.captures_of(dk.browser.table), display=False,
                     interactive=dk.browser.host.interactive)


def _review(dk: "Desk"):
    from kit.ui.review_panel import review_panel

    log = dk.options.get("review_log")
    if log is None:
        raise LookupError("give review_log= (a kit.ReviewLog or a path) to add the review panel")
    return review_panel(dk.browser.table, log, display=False)


def _matching(dk: "Desk"):
    from kit.capture import CaptureError
    from kit.io import folder
    from kit.resonators.frequencies import resonance
    from kit.ui.match_panel import match_panel

    caps = [c for c in folder.captures_of(dk.browser.table) if c.ports == 1]
    if not caps:
        raise LookupError("no one-port capture in the lot to match")
    for c in caps:  # the first element with a resonance, not a check resistor
        try:
            if resonance(c).ok:
                return match_panel(c, display=False)
        except CaptureError:
            continue
    return match_panel(caps[0], display=False)


def _procedure(dk: "Desk"):
    from kit.ui.procedure_panel import for_desk

    return for_desk(dk)


#: Optional panels: (section title, builder). A builder takes the desk and returns
#: an object with a ``widget`` attribute; one that raises is skipped with its reason.
PANEL_BUILDERS: list[tuple[str, Callable[["Desk"], Any]]] = [
    ("Corrections", _corrections),
    ("Resonator fits", _fits),
    ("Review and report", _review),
    ("Matching", _matching),
    ("Procedure", _procedure),
]


class Desk:
    """Handles of the desk.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The stacked layout (class ``sb-desk``).
    browser : LotBrowser
    pins : PinPanel
    sections : dict of str -> ipywidgets.VBox
        Each section by title (``.header`` toggles it, ``.body`` is the panel).
    panels : dict of str -> object
        The handles of each hosted panel by title.
    skipped : dict of str -> str
        Optional panels that could not be added, with the reason.
    """

    def __init__(self, browser: LotBrowser, pins: PinPanel, **options: Any) -> None:
        from pathlib import Path

        import ipywidgets as w

        self.options = options
        self.folder = Path(browser.table.attrs.get("folder") or ".")
        self.browser = browser
        self.pins = pins
        self.sections: dict[str, Any] = {}
        self.panels: dict[str, Any] = {"Lot": browser, "Pins": pins}
        self.skipped: dict[str, str] = {}
        title = classed(w.HTML('<div style="font-size:15px;font-weight:600;color:#23414a;'
                               'border-bottom:2px solid #1f6f78;padding:2px 0 4px 0">'
                               "sweepbook desk</div>"), "desk-title")
        self.widget = classed(w.VBox([title]), "desk")
        self.add_section("Lot", browser.widget, css="lot")
        self.add_section("Pins", pins.widget, css="pins")

    def add_section(self, title: str, panel: Any, css: str | None = None,
                    open_: bool = True) -> Any:
        """Append a panel (an object with ``.widget``, or a widget) as a new section."""
        body = getattr(panel, "widget", panel)
        name = css or title.lower().replace(" ", "-")
        box = section(title, body, name, open_=open_)
        self.sections[title] = box
        if panel is not body:
            self.panels[title] = panel
        self.widget.children = (*self.widget.children, box)
        return box

    def add_available_panels(self, builders=None) -> None:
        """Add each optional panel that can be built; record the others in ``skipped``."""
        for title, build in builders or PANEL_BUILDERS:
            try:
                panel = build(self)
            except ModuleNotFoundError as exc:
                self.skipped[title] = f"module {exc.name} is not available"
                continue
            except Exception as exc:  # noqa: BLE001 - one panel must not stop the others
                self.skipped[title] = plain_error(exc)
                continue
            self.add_section(title, panel, open_=False)


def desk(source, pattern: str | None = None, select=None, chart: str = "z_mag",
              plane: str = "smith:z", correction=None, pins_csv: str = "pins.csv",
              extras: bool = True, corrections_source=None, review_log=None,
              display: bool = True, interactive: bool | None = None) -> Desk:
    """Build the desk over a folder of captures (or its :func:`kit.load_folder` table).

    Parameters
    ----------
    source : str, Path or pandas.DataFrame
    pattern : str, optional
        File-name pattern, e.g. ``"{lot}-{serial}"``.
    select : int or list of int, optional
        Rows selected at start.
    chart, plane : str
        Starting views (see :func:`kit.ui.lot_browser.lot_browser`).
    correction : callable, optional
        Capture -> Capture for the "corrected" view.
    pins_csv : str
        Where the pin panel writes its CSV.
    extras : bool
        Add the optional panels that exist (see :data:`PANEL_BUILDERS`).
    corrections_source : str or Path, optional
        Folder searched for standards by the corrections panel (default: the lot folder's
        parent).
    review_log : kit.ReviewLog or path, optional
        The review log; without it the review panel is left out.
    display : bool
        Show it now (False in tests).

    Returns
    -------
    Desk
    """
    b = lot_browser(source, pattern=pattern, correction=correction, select=select, chart=chart,
                    plane=plane, display=False, interactive=interactive)
    m = pin_panel(b, csv_path=pins_csv, display=False)
    dk = Desk(b, m, corrections_source=corrections_source, review_log=review_log)
    if extras:
        dk.add_available_panels()
    if display:
        show(dk.widget)
    return dk
