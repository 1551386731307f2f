"""The lot as a whole: counts, yield, distributions with capability, scatter and overlay.

The top of the lot report (:func:`kit.report`). Everything here is computed from the
summary table (and the decimated main curves for the overlay), never from the captures,
so it works for a lot whose captures are no longer in memory. Figures are matplotlib on
the Agg canvas with their axes at a fixed position (no layout engine); the overlay draws
every curve of the lot as one :class:`~matplotlib.collections.LineCollection`, which is
what keeps 10,000 curves to a second or so.

Colours are the Okabe-Ito palette (:data:`kit.outputs.part_figure.PALETTE`); a verdict is
also told by its marker shape and its word.

References
----------
.. [1] NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6 "What is Process
   Capability?" (Cp, Cpk; :mod:`kit.review.capability`).
.. [2] M. Okabe and K. Ito, "Color Universal Design (CUD)", J*Fly, 2002/2008.
"""

from __future__ import annotations

import base64
import html
import math
from collections import Counter
from typing import Any

import numpy as np

from kit.outputs.part_figure import AXES_RECT, PALETTE, VERDICT_STYLE, encode_png
from kit.review.capability import capability
from kit.review.verdicts import reason_kinds
from kit.units import column_label, eng, percent, quantity, scale_for, unit_of

__all__ = ["VERDICT_ORDER", "verdict_of", "counts_html", "quantities_html", "scatter_html",
           "overlay_html", "img_tag", "esc"]

#: Verdicts in the order they are counted and drawn (fails drawn last, on top).
VERDICT_ORDER = ("pass", "incomplete", "none", "fail")


def esc(x: Any) -> str:
    """Text for HTML: None and NaN become empty, everything else is escaped."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    return html.escape(str(x), quote=True)


def img_tag(png: bytes, alt: str) -> str:
    """An ``<img>`` with the PNG embedded as a base64 data URI (``alt`` escaped)."""
    data = base64.b64encode(png).decode("ascii")
    return f'<img alt="{esc(alt)}" src="data:image/png;base64,{data}">'


def verdict_of(v: Any) -> str:
    """A row's limits verdict as one of :data:`VERDICT_ORDER` ("none" when not judged)."""
    return v if isinstance(v, str) and v in VERDICT_STYLE else "none"


def badge(v: str) -> str:
    """Verdict as symbol and word in a span of its class (colour is never the only cue)."""
    v = verdict_of(v)
    return f'<span class="v-{v}">{VERDICT_STYLE[v][2]} {v}</span>'


def _figure(size_in=(4.2, 2.4), dpi=80, rect=(0.15, 0.2, 0.8, 0.7)):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=size_in, dpi=dpi)
    FigureCanvasAgg(fig)
    ax = fig.add_axes(rect)
    ax.grid(True, alpha=0.3)
    ax.tick_params(labelsize=7)
    return fig, ax


def _column(summary, name: str) -> np.ndarray:
    import pandas as pd

    if name not in summary.columns:
        return np.full(len(summary), np.nan)
    return pd.to_numeric(summary[name], errors="coerce").to_numpy(dtype=float)


def _axis_label(text: str, unit: str) -> str:
    """"fs [MHz]": a quantity's label and its prefixed unit."""
    return f"{text} [{unit}]" if unit else text


# ---------------------------------------------------------------------- counts
def counts_html(summary) -> str:
    """Counts by limits verdict, reviewer verdict and kind of reason, and the yield."""
    n = len(summary)
    verdicts = [verdict_of(v) for v in summary.get("verdict", [None] * n)]
    vc = Counter(verdicts)
    passed = vc.get("pass", 0)
    out = ["<h2>The lot</h2>"]
    share = f" ({percent(passed / n, digits=3)})" if n else ""
    out.append(f"<p class=yield>Yield: <b>{passed:,}</b> of {n:,} part(s) passed their "
               f"limits{share}. Yield = parts whose limits verdict is pass / all parts "
               "(parts that failed to load count as not passed).</p>")
    rows = "".join(f"<tr><td>{badge(v)}</td><td class=num>{vc[v]:,}</td></tr>"
                   for v in VERDICT_ORDER if vc.get(v))
    out.append('<div class=cols><table class=counts><caption>Limits verdict</caption>'
               f"<tr><th>verdict</th><th>parts</th></tr>{rows}</table>")
    if "status" in summary.columns:
        errors = int((summary["status"].fillna("") == "error").sum())
        if errors:
            out.append(f"<p><span class=v-fail>✗ {errors:,} input(s) could not be "
                       "read</span> (status error).</p>")
    if "review_verdict" in summary.columns:
        rc = summary["review_verdict"].fillna("none").value_counts()
        body = "".join(f"<tr><td>{esc(k)}</td><td class=num>{int(c):,}</td></tr>"
                       for k, c in rc.items())
        out.append("<table class=counts><caption>Reviewer verdict</caption>"
                   f"<tr><th>verdict</th><th>parts</th></tr>{body}</table>")
    kinds: Counter = Counter()
    if "verdict_reasons" in summary.columns:
        for v, text in zip(verdicts, summary["verdict_reasons"]):
            if v in ("fail", "incomplete"):
                kinds.update(reason_kinds(text))
    if kinds:
        body = "".join(f"<tr><td>{esc(k)}</td><td class=num>{c:,}</td></tr>"
                       for k, c in kinds.most_common())
        out.append("<table class=counts><caption>Why parts did not pass</caption>"
                   f"<tr><th>reason</th><th>parts</th></tr>{body}</table>")
    out.append("</div>")
    return "\n".join(out)


# ---------------------------------------------------------------------- distributions
def histogram_edges(x: np.ndarray, most: int = 80) -> np.ndarray:
    """Bin edges for finite values ``x``: numpy's "auto" rule, at most ``most`` bins (the
    one rule of the report's and the overview cell's histograms); one bin of width 1 around a single value."""
    if x.size == 0:
        return np.array([0.0, 1.0])
    if x.min() == x.max():
        return np.array([x.min() - 0.5, x.max() + 0.5])
    edges = np.histogram_bin_edges(x, bins="auto")
    return edges if edges.size <= most + 1 else np.linspace(x.min(), x.max(), most + 1)


def _histogram_png(values: np.ndarray, q, dpi: int = 80) -> bytes:
    unit = unit_of(q.name)
    bounds = [b for b in (q.min, q.max) if b is not None]
    k, shown = scale_for(np.concatenate([values, bounds]), unit)
    fig, ax = _figure(dpi=dpi)
    x = values * k
    if x.size:
        edges = histogram_edges(x)
        counts, edges = np.histogram(x, bins=edges)
        ax.stairs(counts, edges, fill=True, color=PALETTE["blue"], alpha=0.85)
        ax.set_xlim(min(edges[0], *(b * k for b in bounds)), max(edges[-1], *(b * k for b in bounds)))
        ax.set_ylim(0, max(int(counts.max()), 1) * 1.08)
    for b, ls in zip((q.min, q.max), ("--", "-")):
        if b is not None:
            ax.axvline(b * k, color=PALETTE["vermilion"], ls=ls, lw=1.5)
    ax.set_xlabel(_axis_label(q.shown, shown), fontsize=8)
    ax.set_ylabel("parts", fontsize=8)
    return encode_png(fig)


def quantities_html(summary, limits, dpi: int = 80) -> str:
    """Per limited quantity: its histogram against its bounds, and n, mean, std, Cp, Cpk
    and the parts beyond each bound (:func:`kit.review.capability.capability`)."""
    if limits is None or not limits.quantities:
        return ""
    head = ("<tr><th>quantity</th><th>lower</th><th>upper</th><th>n</th><th>mean</th>"
            "<th>std</th><th>Cp</th><th>Cpk</th><th>below lower</th><th>above upper</th>"
            "<th>note</th></tr>")
    rows, pics = [], []
    for q in limits.quantities:
        values = _column(summary, q.name)
        cap = capability(values, q.min, q.max, name=q.name)
        unit = unit_of(q.name)
        finite = values[np.isfinite(values)]

        def num(v):
            return "" if v is None or not math.isfinite(v) else quantity(v, "", digits=3)

        rows.append(
            f"<tr><td>{esc(q.shown)}</td><td>{esc(eng(q.min, unit) if q.min is not None else '')}"
            f"</td><td>{esc(eng(q.max, unit) if q.max is not None else '')}</td>"
            f"<td class=num>{cap.n:,}</td><td>{esc(eng(cap.mean, unit, 6))}</td>"
            f"<td>{esc(eng(cap.std, unit))}</td><td class=num>{num(cap.cp)}</td>"
            f"<td class=num>{num(cap.cpk)}</td><td class=num>{cap.n_below:,}</td>"
            f"<td class=num>{cap.n_above:,}</td><td>{esc(cap.reason)}</td></tr>")
        pics.append(f"<figure>{img_tag(_histogram_png(finite, q, dpi), q.shown)}"
                    f"<figcaption>{esc(q.shown)}: {cap.n:,} value(s); dashed line lower "
                    "bound, solid line upper bound</figcaption></figure>")
    note = ("<p class=note>Cp = (upper - lower) / (6 s), Cpk = min(upper - mean, mean - lower) "
            "/ (3 s), s the sample standard deviation (NIST/SEMATECH e-Handbook of Statistical "
            "Methods, 6.1.6). They assume a stable, roughly normal process; with a one-sided "
            "limit only Cpk is given.</p>")
    return ("<h2>Judged quantities</h2>" + f"<table class=caps>{head}{''.join(rows)}</table>"
            + note + "<div class=cols>" + "".join(pics) + "</div>")


# ---------------------------------------------------------------------- scatter
def default_scatter(limits) -> tuple[str, str] | None:
    """The first two limited quantities, or None when there are fewer."""
    if limits is None or len(limits.quantities) < 2:
        return None
    return limits.quantities[0].name, limits.quantities[1].name


def scatter_html(summary, limits, pair: tuple[str, str] | None, dpi: int = 80) -> str:
    """Scatter of two quantities coloured and shaped by verdict, with their limit box."""
    if pair is None:
        return ""
    xn, yn = pair
    xs, ys = _column(summary, xn), _column(summary, yn)
    qs = {q.name: q for q in limits.quantities} if limits is not None else {}
    kx, ux = scale_for(xs, unit_of(xn))
    ky, uy = scale_for(ys, unit_of(yn))
    fig, ax = _figure(size_in=(6.4, 4.0), dpi=dpi, rect=(0.12, 0.13, 0.84, 0.8))
    verdicts = np.array([verdict_of(v) for v in summary.get("verdict", [None] * len(xs))])
    for v in VERDICT_ORDER:
        sel = verdicts == v
        if sel.any():
            colour, marker, _ = VERDICT_STYLE[v]
            ax.scatter(xs[sel] * kx, ys[sel] * ky, s=9 if v == "pass" else 16, c=colour,
                       marker=marker, linewidths=0, alpha=0.7, label=f"{v} ({int(sel.sum()):,})")
    for name, k, line in ((xn, kx, ax.axvline), (yn, ky, ax.axhline)):
        q = qs.get(name)
        for b in (() if q is None else (q.min, q.max)):
            if b is not None:
                line(b * k, color=PALETTE["vermilion"], ls="--", lw=1.2)
    xl, yl = column_label(xn)[0], column_label(yn)[0]
    ax.set_xlabel(_axis_label(xl, ux), fontsize=8)
    ax.set_ylabel(_axis_label(yl, uy), fontsize=8)
    ax.legend(fontsize=7, loc="upper right", markerscale=1.5)
    return (f"<h2>{esc(xl)} against {esc(yl)}</h2>"
            f"<figure>{img_tag(encode_png(fig), f'{xl} against {yl}')}<figcaption>Each part "
            "by its limits verdict (colour and marker shape); dashed lines: the limits."
            "</figcaption></figure>")


# ---------------------------------------------------------------------- overlay
def _curve_of(ports: Any, y: np.ndarray) -> str:
    try:
        p = float(ports)
    except (TypeError, ValueError):
        p = math.nan
    if math.isfinite(p):
        return "z_mag_ohm" if p == 1 else "s21_db"
    fin = y[np.isfinite(y)]
    return "z_mag_ohm" if fin.size and fin.min() > 0 else "s21_db"


def _log10(y: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(y > 0, np.log10(np.where(y > 0, y, 1.0)), np.nan)


def overlay_png(traces: list, verdicts: list[str], curve: str, limits, dpi: int = 80) -> bytes:
    """Every trace as one LineCollection (coloured by verdict, fails on top) with masks.

    |Z| is drawn as log10 |Z| on a linear axis with ticks labelled in ohms: the same
    picture as a log axis, without matplotlib's per-path log transform (a third of the
    time for 10,000 curves).
    """
    from matplotlib.collections import LineCollection
    from matplotlib.colors import to_rgba
    from matplotlib.lines import Line2D
    from matplotlib.ticker import EngFormatter, FuncFormatter, MaxNLocator

    fig, ax = _figure(size_in=(8.0, 3.6), dpi=dpi, rect=AXES_RECT)
    f_all = np.concatenate([t[0] for t in traces]) if traces else np.empty(0)
    k, f_unit = scale_for(f_all, "Hz")
    log = curve == "z_mag_ohm"
    rank = {v: i for i, v in enumerate(VERDICT_ORDER)}
    order = sorted(range(len(traces)), key=lambda i: rank[verdicts[i]])
    # each verdict's curves as transparent as their number asks (about 30 overlaps to full)
    colours = {v: to_rgba(VERDICT_STYLE[v][0],
                          max(0.03, min(0.6, 30.0 / max(verdicts.count(v), 1))))
               for v in VERDICT_ORDER}
    ys = [_log10(np.asarray(t[1], float)) if log else np.asarray(t[1], float) for t in traces]
    segs = [np.column_stack((traces[i][0] * k, ys[i])) for i in order]
    lc = LineCollection(segs, colors=[colours[verdicts[i]] for i in order], linewidths=0.6)
    ax.add_collection(lc, autolim=False)
    y_all = np.concatenate(ys) if ys else np.empty(0)
    y_all = y_all[np.isfinite(y_all) & (True if log else (y_all > -300))]
    if limits is not None:
        from kit.review.drawing import draw_limits

        for a in draw_limits(ax, limits, curve=curve, f_scale=1.0 / k,
                             color=PALETTE["black"]):
            if len(a.get_xdata()) == 2 and a.get_transform() is ax.transData:
                yb = np.asarray(a.get_ydata(), float)
                yb = _log10(yb) if log else yb
                a.set_ydata(yb)
                y_all = np.concatenate([y_all, yb[np.isfinite(yb)]])
    if f_all.size:
        ax.set_xlim(np.nanmin(f_all) * k, np.nanmax(f_all) * k)
    if y_all.size:
        lo, hi = float(y_all.min()), float(y_all.max())
        pad = 0.05 * (hi - lo) or (0.2 if log else 1.0)
        ax.set_ylim(lo - pad, hi + pad)
    if log:
        eng_fmt = EngFormatter(sep="")
        ax.yaxis.set_major_locator(MaxNLocator(nbins=8, steps=[1, 2, 5, 10]))
        ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _pos: eng_fmt(10.0 ** v)))
    present = [v for v in VERDICT_ORDER if v in set(verdicts)]
    handles = [Line2D([], [], color=VERDICT_STYLE[v][0], marker=VERDICT_STYLE[v][1], lw=1,
                      label=f"{v} ({verdicts.count(v):,})") for v in present]
    ax.legend(handles=handles + [h for h in ax.lines if not h.get_label().startswith("_")],
              fontsize=7, loc="lower left", ncols=2)
    ax.set_xlabel(f"frequency [{f_unit}]", fontsize=8)
    ax.set_ylabel("|Z| [Ω] (log scale)" if log else "|S21| [dB]", fontsize=8)
    return encode_png(fig)


def overlay_html(summary, traces: dict | None, limits, dpi: int = 80) -> str:
    """The overlay of every part's main curve against the masks, one figure per curve kind."""
    if not traces:
        return ""
    groups: dict[str, tuple[list, list]] = {}
    sha = summary["sha256"] if "sha256" in summary.columns else [None] * len(summary)
    ports = summary["ports"] if "ports" in summary.columns else [None] * len(summary)
    verdicts = summary.get("verdict", [None] * len(summary))
    for s, p, v in zip(sha, ports, verdicts):
        t = traces.get(s) if isinstance(s, str) else None
        if t is None:
            continue
        f, y = np.asarray(t[0], float), np.asarray(t[1], float)
        g = groups.setdefault(_curve_of(p, y), ([], []))
        g[0].append((f, y))
        g[1].append(verdict_of(v))
    out = []
    for curve, (tr, vs) in groups.items():
        what = "|Z|" if curve == "z_mag_ohm" else "|S21|"
        out.append(f"<figure>{img_tag(overlay_png(tr, vs, curve, limits, dpi), what)}"
                   f"<figcaption>{what} of {len(tr):,} part(s), decimated for display (the "
                   "extremes of each column kept), coloured by limits verdict; black lines: "
                   "the masks.</figcaption></figure>")
    return "<h2>All curves</h2>" + "".join(out) if out else ""
