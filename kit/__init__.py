"""sweepbook: analysis of Touchstone captures of piezoelectric resonators and RF parts.

The public API is re-exported here lazily, so that ``import kit`` stays light: numpy is
imported at once, scikit-rf, scipy.optimize, matplotlib and ipywidgets only by the
functions that use them.

Main entry points: :func:`load`, :func:`check`, :func:`load_table`, :func:`load_folder`,
:func:`impedance`, :func:`admittance`. See README.md and DEVELOPERS.md.
"""

from __future__ import annotations

import importlib
from typing import Any

from kit._version import __version__  # noqa: E402
from kit.capture import Capture, CaptureError, Finding  # noqa: E402  (light: numpy only)

# name -> "module" or "module:attribute" (relative to kit). One line per public name;
# each concept keeps its block. Modules are imported on first use.
_EXPORTS: dict[str, str] = {
    # -- import and pre-flight (foundation)
    "load": "io.touchstone",
    "check": "io.touchstone",
    "load_table": "io.tables",
    "load_folder": "io.folder",
    "from_network": "capture",
    "parse_name": "io.names",
    # -- impedance methods (foundation)
    "impedance": "network.immittance",
    "admittance": "network.immittance",
    "SingularPointsWarning": "network.immittance",
    # -- corrections (issue 3)
    "port_extension": "corrections",
    "cable": "corrections",
    "fixture": "corrections",
    "osl": "corrections",
    "open_short": "corrections",
    "two_x_thru": "corrections",
    "time_gate": "corrections",
    "chain": "corrections",
    "residual": "corrections",
    # -- resonator analysis (issue 4)
    "resonance": "resonators.frequencies",
    "q_factor": "resonators.qfactor",
    "fit": "resonators.fitting",
    "fit_lot": "resonators.fit_lot",
    "FitResult": "resonators.fitting",
    "filter_figures": "parts.filters",
    "component_figures": "parts.filters",
    # -- review, limits, export, report (issue 6)
    "ReviewLog": "review.log",
    "Limits": "review.limits",
    "load_limits": "review.limits",
    "verdict": "review.verdicts",
    "tidy": "outputs.tidy",
    "summary": "outputs.summary",
    "export": "outputs.handover",
    "write_touchstone": "io.writer",
    "report": "outputs.lot_report",
    # -- procedures and batch runs (issue 7)
    "Procedure": "batch.procedure",
    # -- matching (issue 8): kit.match is a module
    "match": "match",
}
#: Public names that are whole modules rather than attributes of one.
_MODULES = {"match"}

__all__ = ["Capture", "CaptureError", "Finding", "__version__", *_EXPORTS]


def __getattr__(name: str) -> Any:
    target = _EXPORTS.get(name)
    if target is None:
        raise AttributeError(f"module 'kit' has no attribute {name!r}")
    modname, _, attr = target.partition(":")
    module = importlib.import_module(f".{modname}", __name__)
    value = module if name in _MODULES else getattr(module, attr or name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_EXPORTS))
