"""PLACEHOLDER until the report helper's part figures land (issue 13): same signatures, least code.

``PartPainter`` keeps one matplotlib Figure per process (Agg canvas, no layout engine) and
draws a part's main curve into it; ``needs_figure`` is the rule for which parts get one.
"""

from __future__ import annotations

import io
import warnings
from typing import Any

import numpy as np


def needs_figure(row: dict, figures: str) -> bool:
    """Whether a summary row's part gets a picture: "all", "none", or "flagged" (not passed)."""
    if figures in ("all", "none"):
        return figures == "all"
    return row.get("status") != "ok" or row.get("verdict") not in (None, "pass")


class PartPainter:
    """One reusable figure per process: PNG of a capture's main curve, and a decimated trace."""

    def __init__(self) -> None:
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        self.fig = Figure(figsize=(6.4, 2.8), dpi=80)
        FigureCanvasAgg(self.fig)
        self.ax = self.fig.add_axes((0.1, 0.18, 0.87, 0.75))

    def _curve(self, capture: Any) -> tuple[np.ndarray, np.ndarray]:
        from kit.network.coerce import sweep
        from kit.network.reflection import db20

        with warnings.catch_warnings(), np.errstate(all="ignore"):
            warnings.simplefilter("ignore")
            if capture.ports == 1:
                return capture.f_hz, np.abs(sweep(capture, what="a part figure").z_ohm)
            return capture.f_hz, db20(capture.s[:, 1, 0])

    def png(self, capture: Any, limits: Any = None, fit: Any = None, resonance: Any = None) -> bytes:
        """PNG bytes of |Z| [Ω] (one-port) or |S21| [dB] against frequency [Hz]."""
        f, y = self._curve(capture)
        self.ax.clear()
        (self.ax.semilogy if capture.ports == 1 else self.ax.plot)(f, y, lw=1.0)
        buf = io.BytesIO()
        self.fig.savefig(buf, format="png")
        return buf.getvalue()

    def trace(self, capture: Any, n: int = 256) -> tuple[np.ndarray, np.ndarray]:
        """The main curve at about ``n`` evenly spaced points."""
        f, y = self._curve(capture)
        idx = np.unique(np.linspace(0, len(f) - 1, min(n, len(f))).round().astype(int))
        return np.asarray(f, float)[idx], np.asarray(y, float)[idx]
