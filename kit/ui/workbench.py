"""The workbench: one stacked layout hosting the lot browser, markers and the other panels.

Sections are titled blocks, one under the other, each folding on its header (no tabs):
"Lot" (the browser), "Markers", then whatever other panels are available (corrections,
fits, review, matching). Another panel joins with :meth:`Workbench.add_section`, or
automatically through :data:`PANEL_BUILDERS` when its module exists.
"""

from __future__ import annotations

import importlib
from typing import Any, Callable

from .common import classed, section, show
from .lot_browser import LotBrowser, lot_browser
from .markers import MarkerPanel, marker_panel

#: Optional panels: (section title, module under kit.ui, builder name). The builder is
#: called as ``builder(workbench, display=False)`` and returns an object with a
#: ``widget`` attribute (or a widget).
PANEL_BUILDERS: list[tuple[str, str, str]] = [
    ("Corrections", "corrections_panel", "workbench_section"),
    ("Resonator fits", "fit_panel", "workbench_section"),
    ("Review and report", "review_panel", "workbench_section"),
    ("Matching", "match_panel", "workbench_section"),
]


class Workbench:
    """Handles of the workbench.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The stacked layout (class ``sb-workbench``).
    browser : LotBrowser
    markers : MarkerPanel
    sections : dict of str -> ipywidgets.VBox
        Each section by title (``.header`` toggles it, ``.body`` is the panel).
    panels : dict of str -> object
        The handles of each hosted panel by title.
    skipped : dict of str -> str
        Optional panels that could not be added, with the reason.
    """

    def __init__(self, browser: LotBrowser, markers: MarkerPanel) -> None:
        import ipywidgets as w

        self.browser = browser
        self.markers = markers
        self.sections: dict[str, Any] = {}
        self.panels: dict[str, Any] = {"Lot": browser, "Markers": markers}
        self.skipped: dict[str, str] = {}
        title = classed(w.HTML('<div style="font-size:15px;font-weight:600;color:#23414a;'
                               'border-bottom:2px solid #1f6f78;padding:2px 0 4px 0">'
                               "sweepbook workbench</div>"), "workbench-title")
        self.widget = classed(w.VBox([title]), "workbench")
        self.add_section("Lot", browser.widget, css="lot")
        self.add_section("Markers", markers.widget, css="markers")

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
        """Add each optional panel whose module and builder exist; record the others."""
        for title, mod, fn in builders or PANEL_BUILDERS:
            try:
                module = importlib.import_module(f"kit.ui.{mod}")
            except ModuleNotFoundError as exc:
                self.skipped[title] = f"kit.ui.{mod} is not available ({exc.name})"
                continue
            build: Callable | None = getattr(module, fn, None)
            if build is None:
                self.skipped[title] = f"kit.ui.{mod} has no {fn}()"
                continue
            try:
                panel = build(self, display=False)
            except Exception as exc:  # noqa: BLE001 - one panel must not stop the others
                self.skipped[title] = f"{type(exc).__name__}: {exc}"
                continue
            self.add_section(title, panel, open_=False)


def workbench(source, pattern: str | None = None, select=None, chart: str = "z_mag",
              plane: str = "smith:z", correction=None, markers_csv: str = "markers.csv",
              extras: bool = True, display: bool = True,
              interactive: bool | None = None) -> Workbench:
    """Build the workbench over a folder of captures (or its :func:`kit.load_folder` table).

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
    markers_csv : str
        Where the marker panel writes its CSV.
    extras : bool
        Add the optional panels that exist (see :data:`PANEL_BUILDERS`).
    display : bool
        Show it now (False in tests).

    Returns
    -------
    Workbench
    """
    b = lot_browser(source, pattern=pattern, correction=correction, select=select, chart=chart,
                    plane=plane, display=False, interactive=interactive)
    m = marker_panel(b, csv_path=markers_csv, display=False)
    wb = Workbench(b, m)
    if extras:
        wb.add_available_panels()
    if display:
        show(wb.widget)
    return wb
