"""The lot at a glance on matplotlib axes: two quantities against their limit box, one histogram.

The drawing of the lot overview cell (:mod:`kit.ui.overview`), on arrays only: values in
SI units (one per part), verdicts as words, bounds as numbers (NaN where a limit has
none). :func:`plot_lot_scatter` and :func:`plot_lot_histogram` make their artists once and
return them in a small object; :func:`update_lot_scatter` and :func:`update_lot_histogram`
change those artists' data in place when another quantity is chosen (no new artists, no
cleared axes), so that an ipympl canvas only repaints.

Colours are the Okabe-Ito palette, chosen to stay distinguishable with the common forms of
colour-vision deficiency [1]_ (:data:`kit.outputs.part_figure.PALETTE`); a verdict is also
told by its marker shape and its word in the legend (:data:`VERDICT_STYLE`), never by
colour alone. The verdict order and the reading of the verdict column are those of the lot
report (:mod:`kit.outputs.lot_overview`), and the capability figures are those of
:func:`kit.review.capability.capability` [2]_.

References
----------
.. [1] M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and
   presentations that are friendly to colorblind people", J*Fly, 2002/2008.
.. [2] NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6 "What is Process
   Capability?".
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from kit.outputs.lot_overview import VERDICT_ORDER, histogram_edges, verdict_of
from kit.outputs.part_figure import PALETTE, VERDICT_STYLE
from kit.units import column_label, quantity, scale_for

__all__ = ["numeric_columns", "column_values", "verdicts_of", "bounds_of", "axis_label",
           "histogram_edges", "padded_range", "nearest_point", "capability_text",
           "ScatterArtists", "HistogramArtists", "plot_lot_scatter", "update_lot_scatter",
           "plot_lot_histogram", "update_lot_histogram", "mark_part"]

#: Colour of the limit lines (black: apart from every verdict colour).
LIMIT_COLOUR = PALETTE["black"]
#: Line style of the lower and of the upper bound.
LIMIT_STYLES = ("--", "-")
#: How far from a marker's centre a click still picks it [pixel].
PICK_RADIUS_PX = 5.0
#: Marker area of each verdict in the scatter [pt²] (fails and doubts a little larger).
_SIZES = {"pass": 30.0, "none": 30.0, "incomplete": 42.0, "fail": 42.0}
_NAN2 = (math.nan, math.nan)
NEWLINE = "\n"


# ---------------------------------------------------------------------- data
def numeric_columns(summary) -> list[str]:
    """The summary columns that can be drawn: numbers (not booleans) with a finite value.

    Text columns (names, hashes, flags, verdicts) and true/false columns (``fit_ok``)
    are left out, and so is a numeric column without a single finite value.
    """
    import pandas as pd

    out = []
    for name in summary.columns:
        col = summary[name]
        if pd.api.types.is_bool_dtype(col) or not pd.api.types.is_numeric_dtype(col):
            continue
        if np.isfinite(col.to_numpy(dtype=float)).any():
            out.append(str(name))
    return out


def column_values(summary, name: str) -> np.ndarray:
    """One summary column as floats (NaN where missing or not a number); the frame is not
    modified."""
    import pandas as pd

    return pd.to_numeric(summary[name], errors="coerce").to_numpy(dtype=float)


def verdicts_of(summary) -> np.ndarray:
    """Each row's limits verdict as one of :data:`VERDICT_ORDER` ("none" without limits)."""
    col = summary["verdict"] if "verdict" in summary.columns else [None] * len(summary)
    return np.array([verdict_of(v) for v in col], dtype=object)


def bounds_of(limits, name: str) -> tuple[float, float]:
    """(lower, upper) of a quantity in a :class:`kit.review.limits.Limits` [unit of the
    quantity]; NaN for a bound the limits do not give (and for no limits at all)."""
    for q in (() if limits is None else limits.quantities):
        if q.name == name:
            return (math.nan if q.min is None else float(q.min),
                    math.nan if q.max is None else float(q.max))
    return _NAN2


def axis_label(name: str, values, bounds=_NAN2) -> tuple[str, float]:
    """Axis text and scale factor of a column: ``("fs [MHz]", 1e-6)`` for ``fs_hz``.

    The label and unit come from :func:`kit.units.column_label`, the SI prefix from the
    largest magnitude among the values and bounds (:func:`kit.units.scale_for`); the factor
    turns SI values into the prefixed unit.
    """
    label, unit = column_label(name)
    both = np.concatenate([np.asarray(values, float).ravel(), np.asarray(bounds, float)])
    k, shown = scale_for(both, unit)
    return (f"{label} [{shown}]" if shown else label), k


def padded_range(values, bounds=_NAN2, pad: float = 0.06) -> tuple[float, float]:
    """(low, high) covering the finite values and bounds with ``pad`` of the span each side."""
    v = np.concatenate([np.asarray(values, float).ravel(), np.asarray(bounds, float)])
    v = v[np.isfinite(v)]
    if v.size == 0:
        return 0.0, 1.0
    lo, hi = float(v.min()), float(v.max())
    d = (hi - lo) * pad or (abs(lo) * pad or 1.0)
    return lo - d, hi + d


def nearest_point(xy_px: np.ndarray, x_px: float, y_px: float,
                  radius_px: float = math.inf) -> int | None:
    """Index of the row of ``xy_px`` (n, 2) [pixel] nearest to (x_px, y_px), rows with NaN
    left out; None when none lies within ``radius_px``. Ties go to the lower index."""
    d2 = (xy_px[:, 0] - x_px) ** 2 + (xy_px[:, 1] - y_px) ** 2
    d2 = np.where(np.isfinite(d2), d2, np.inf)
    if d2.size == 0 or not np.isfinite(d2.min()) or d2.min() > radius_px ** 2:
        return None
    return int(np.argmin(d2))


def capability_text(cap, sep: str = " ") -> str:
    """A :class:`kit.review.capability.Capability` in words: n, Cp and Cpk, the parts beyond
    the bounds, then (after ``sep``) why an index is missing.

    Cp = (USL - LSL) / (6 s) and Cpk = min(USL - mean, mean - LSL) / (3 s), s the sample
    standard deviation (NIST/SEMATECH e-Handbook of Statistical Methods, 6.1.6).
    """
    head = f"n = {cap.n}"
    parts = [f"{k} = {quantity(v, '', digits=3)}" for k, v in (("Cp", cap.cp), ("Cpk", cap.cpk))
             if math.isfinite(v)]
    if parts:
        head += " · " + " · ".join(parts)
    beyond = [f"{n} {w}" for n, w in ((cap.n_below, "below"), (cap.n_above, "above")) if n]
    if beyond:
        head += " · " + ", ".join(beyond)
    return head + (f"{sep}({cap.reason})" if cap.reason else "")


# ---------------------------------------------------------------------- scatter
@dataclass
class ScatterArtists:
    """The artists of :func:`plot_lot_scatter`, for :func:`update_lot_scatter`.

    Attributes
    ----------
    ax : matplotlib.axes.Axes
    groups : dict
        Verdict -> its ``PathCollection`` (one marker shape and colour each).
    limits : dict
        ``"x_lo"``, ``"x_hi"``, ``"y_lo"``, ``"y_hi"`` -> ``Line2D`` (hidden without that bound):
        together the limit box.
    legend : matplotlib.legend.Legend
        Above the axes, never over the data.
    xy : numpy.ndarray
        (n, 2) positions as drawn (prefixed units), NaN for a part without both values.
    scale : (float, float)
        Factors from SI values to the drawn units.
    highlight : matplotlib.lines.Line2D
        Ring around the part last opened (:func:`mark_part`).
    """

    ax: Any
    groups: dict
    limits: dict
    legend: Any
    highlight: Any
    verdicts: np.ndarray
    xy: np.ndarray = field(default_factory=lambda: np.empty((0, 2)))
    scale: tuple[float, float] = (1.0, 1.0)

    def positions_px(self) -> np.ndarray:
        """(n, 2) display positions [pixel, origin bottom left] of every part."""
        return self.ax.transData.transform(self.xy)


def plot_lot_scatter(ax, x, y, verdicts, x_name: str, y_name: str, x_bounds=_NAN2,
                     y_bounds=_NAN2) -> ScatterArtists:
    """Each part at (x, y), coloured and shaped by its verdict, inside its limit box.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    x, y : array_like of float
        One value per part [SI unit of ``x_name``, ``y_name``]; NaN parts are not drawn.
    verdicts : array_like of str
        One of :data:`kit.outputs.lot_overview.VERDICT_ORDER` per part.
    x_name, y_name : str
        Summary column names (labels and units by the suffix rule).
    x_bounds, y_bounds : (float, float)
        (lower, upper) [SI unit]; NaN where there is no bound.

    Returns
    -------
    ScatterArtists
        Pickable collections (``pickradius`` :data:`PICK_RADIUS_PX`); update them with
        :func:`update_lot_scatter`.
    """
    from matplotlib.lines import Line2D

    v = np.asarray(verdicts, dtype=object)
    groups = {}
    for verdict in VERDICT_ORDER:  # fails last: on top
        colour, marker, _ = VERDICT_STYLE[verdict]
        groups[verdict] = ax.scatter([], [], s=_SIZES[verdict], c=colour, marker=marker,
                                     edgecolors=PALETTE["black"], linewidths=0.4, alpha=0.9,
                                     zorder=3, picker=True, pickradius=PICK_RADIUS_PX,
                                     label=verdict)
    lines = {}
    for axis, make in (("x", ax.axvline), ("y", ax.axhline)):
        for side, style in zip(("lo", "hi"), LIMIT_STYLES):
            lines[f"{axis}_{side}"] = make(0.0, color=LIMIT_COLOUR, ls=style, lw=1.1, zorder=2,
                                           label=f"{'lower' if side == 'lo' else 'upper'} bound")
    (ring,) = ax.plot([], [], ls="none", marker="o", ms=13, mfc="none",
                      mec=PALETTE["reddish purple"], mew=2.0, zorder=4, label="opened")
    handles = [groups[k] for k in VERDICT_ORDER] + [
        Line2D([], [], color=LIMIT_COLOUR, ls=s, label=w) for s, w in
        zip(LIMIT_STYLES, ("lower bound", "upper bound"))]
    legend = ax.legend(handles=handles, loc="lower left", bbox_to_anchor=(0.0, 1.01),
                       ncols=3, fontsize=7, frameon=False, borderaxespad=0.0)
    ax.grid(True, alpha=0.3)
    ax.tick_params(labelsize=8)
    art = ScatterArtists(ax=ax, groups=groups, limits=lines, legend=legend, highlight=ring,
                         verdicts=v)
    update_lot_scatter(art, x, y, x_name, y_name, x_bounds, y_bounds)
    return art


def _set_bound(line, value: float, vertical: bool) -> None:
    ok = math.isfinite(value)
    (line.set_xdata if vertical else line.set_ydata)([value, value] if ok else [0.0, 0.0])
    line.set_visible(ok)


def update_lot_scatter(art: ScatterArtists, x, y, x_name: str, y_name: str, x_bounds=_NAN2,
                       y_bounds=_NAN2) -> ScatterArtists:
    """Move the parts, limit lines, labels and ranges of a scatter to other quantities.

    Changes the existing artists in place (``set_offsets``, ``set_xdata``); the verdicts
    stay those the scatter was made with. Returns ``art``.
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    if x.shape != y.shape or x.shape != art.verdicts.shape:
        raise ValueError(f"scatter of {x_name} against {y_name}: {x.size} x values, {y.size} "
                         f"y values and {art.verdicts.size} verdicts; give one of each per part")
    xl, kx = axis_label(x_name, x, x_bounds)
    yl, ky = axis_label(y_name, y, y_bounds)
    art.scale = (kx, ky)
    art.xy = np.column_stack([x * kx, y * ky])
    shown = np.isfinite(art.xy).all(axis=1)
    texts = art.legend.get_texts()
    for i, (verdict, coll) in enumerate(art.groups.items()):
        sel = shown & (art.verdicts == verdict)
        coll.set_offsets(art.xy[sel] if sel.any() else np.empty((0, 2)))
        coll.set_visible(bool(sel.any()))
        texts[i].set_text(f"{verdict} ({int(sel.sum())})")
    for key, b, k in (("x_lo", x_bounds[0], kx), ("x_hi", x_bounds[1], kx),
                      ("y_lo", y_bounds[0], ky), ("y_hi", y_bounds[1], ky)):
        _set_bound(art.limits[key], b * k, key.startswith("x"))
    art.ax.set_xlim(*padded_range(art.xy[shown, 0], np.asarray(x_bounds) * kx))
    art.ax.set_ylim(*padded_range(art.xy[shown, 1], np.asarray(y_bounds) * ky))
    art.ax.set_xlabel(xl, fontsize=9)
    art.ax.set_ylabel(yl, fontsize=9)
    mark_part(art, None)
    return art


def mark_part(art: ScatterArtists, index: int | None) -> None:
    """Ring the part at row ``index`` (None, or a part without both values: no ring)."""
    if index is None or not np.isfinite(art.xy[index]).all():
        art.highlight.set_data([], [])
    else:
        art.highlight.set_data([art.xy[index, 0]], [art.xy[index, 1]])


# ---------------------------------------------------------------------- histogram
@dataclass
class HistogramArtists:
    """The artists of :func:`plot_lot_histogram`: ``bars`` (a ``StepPatch``), ``limits``
    (``"lo"``, ``"hi"`` -> ``Line2D``), ``title`` (the Cp/Cpk line) and ``scale``."""

    ax: Any
    bars: Any
    limits: dict
    title: Any
    scale: float = 1.0
    edges: np.ndarray = field(default_factory=lambda: np.empty(0))
    counts: np.ndarray = field(default_factory=lambda: np.empty(0))


def plot_lot_histogram(ax, values, name: str, bounds=_NAN2, cap=None) -> HistogramArtists:
    """Histogram of one quantity over the parts, its bounds as lines, Cp/Cpk above it.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    values : array_like of float
        One per part [SI unit of ``name``]; NaN values are left out.
    name : str
        Summary column (label and unit by the suffix rule).
    bounds : (float, float)
        (lower, upper) [SI unit]; NaN where there is none.
    cap : kit.review.capability.Capability, optional
        Its :func:`capability_text` is the title; no title without it.

    Returns
    -------
    HistogramArtists
        Update it with :func:`update_lot_histogram`.
    """
    bars = ax.stairs([0.0], [0.0, 1.0], fill=True, color=PALETTE["blue"], alpha=0.85, zorder=2)
    lines = {side: ax.axvline(0.0, color=LIMIT_COLOUR, ls=style, lw=1.3, zorder=3)
             for side, style in zip(("lo", "hi"), LIMIT_STYLES)}
    title = ax.set_title("", fontsize=8, loc="left")
    ax.set_ylabel("parts", fontsize=9)
    ax.grid(True, alpha=0.3)
    ax.tick_params(labelsize=8)
    art = HistogramArtists(ax=ax, bars=bars, limits=lines, title=title)
    update_lot_histogram(art, values, name, bounds, cap)
    return art


def update_lot_histogram(art: HistogramArtists, values, name: str, bounds=_NAN2,
                         cap=None) -> HistogramArtists:
    """Show another quantity in a histogram made by :func:`plot_lot_histogram` (in place)."""
    v = np.asarray(values, float)
    label, k = axis_label(name, v, bounds)
    x = v[np.isfinite(v)] * k
    edges = histogram_edges(x)
    counts, edges = np.histogram(x, bins=edges)
    art.scale, art.edges, art.counts = k, edges, counts
    art.bars.set_data(counts.astype(float), edges)
    b = np.asarray(bounds, float) * k
    for side, value in zip(("lo", "hi"), b):
        _set_bound(art.limits[side], value, True)
    art.ax.set_xlim(*padded_range(edges, b, pad=0.03))
    art.ax.set_ylim(0.0, max(int(counts.max()) if counts.size else 0, 1) * 1.1)
    art.ax.set_xlabel(label, fontsize=9)
    stem = label.split(" [")[0]
    art.title.set_text("" if cap is None else f"{stem}: {capability_text(cap, sep=NEWLINE)}")
    return art
