"""The lot report: one self-contained HTML file, from the whole lot down to each part.

``kit.report(out_path, captures, summary=None, review_log=None, limits=None, ...)`` writes
one file, top first:

1. the lot as a whole (:mod:`kit.outputs.lot_overview`): counts by limits verdict, by
   reviewer verdict and by kind of reason, the yield; for every judged quantity its
   histogram against its limits with n, mean, standard deviation, Cp, Cpk and the parts
   beyond each bound; a scatter of two quantities with the limit box; every part's main
   curve against the masks;
2. a compact table of all parts (one row each, units in the headers);
3. a section per part that did not pass or carries a flag (:func:`needs_figure`): its
   picture, the reasons with margins, the review state and history. Passing parts get a
   section only with ``figures="all"``; ``figures="none"`` gives none.

It scales to lots of 10,000 parts: pictures are drawn by one reusable
:class:`kit.outputs.part_figure.PartPainter` (or taken ready-made from ``pictures``), the
overlay from decimated ``traces`` as one line collection, and the table carries no style
beyond a class per verdict cell.

Every piece of text that comes from a user or a file (notes, names, paths, comments,
reasons, titles) goes through :func:`html.escape`; the page carries a
Content-Security-Policy that forbids scripts and any outside resource, so it opens the same
offline and cannot run code.

References
----------
.. [1] WHATWG HTML Living Standard, "Serializing HTML fragments" / character references
   (why ``&``, ``<``, ``>``, ``"`` and ``'`` are escaped); W3C Content Security Policy Level 3.
"""

from __future__ import annotations

import math
import os
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

from kit.capture import Capture
from kit.io.atomic import write_bytes
from kit.io.writer import refuse_input_folder
from kit.outputs.entries import as_list, split_unit
from kit.outputs.lot_overview import (
    badge,
    counts_html,
    default_scatter,
    esc,
    img_tag,
    overlay_html,
    quantities_html,
    scatter_html,
    verdict_of,
)
from kit.outputs.part_figure import (  # noqa: F401 - figure_png, lot_figure: public here too
    FIGURE_CHOICES,
    PALETTE,
    RULE_COLUMNS,
    PartPainter,
    figure_png,
    lot_figure,
    needs_figure,
)
from kit.outputs.summary import summary as lot_summary
from kit.review.verdicts import reason_kinds, split_reasons
from kit.units import column_label, percent, quantity, table, unit_of

__all__ = ["report", "TABLE_COLUMNS", "CSP", "esc", "figure_png", "lot_figure"]

#: Summary columns of the parts table (those present), in this order; judged quantities
#: that are not among them follow.
TABLE_COLUMNS = ("fs_hz", "fp_hz", "k_eff", "qm", "c0_f", "r1_ohm", "l1_h", "c1_f")
CSP = ("default-src 'none'; img-src data:; style-src 'unsafe-inline'; "
       "base-uri 'none'; form-action 'none'")
STYLE = f"""
body{{font-family:system-ui,sans-serif;margin:1.5em;color:#222;max-width:78em}}
table{{border-collapse:collapse;margin:.5em 0}}td,th{{border:1px solid #bbb;padding:1px 5px;
font-size:88%;text-align:left;vertical-align:top}}th{{background:#eee}}td.num,.parts td{{
text-align:right}}.parts td:nth-child(2),.parts td:nth-child(3),.parts td:last-child{{
text-align:left}}caption{{font-weight:bold;text-align:left}}
.v-pass{{color:{PALETTE['bluish green']};font-weight:bold}}
.v-fail{{color:{PALETTE['vermilion']};font-weight:bold}}
.v-incomplete{{color:#9a6a00;font-weight:bold}}.v-none{{color:#666}}
.mono{{font-family:monospace;font-size:85%}}.note{{font-size:85%;color:#444}}
.cols{{display:flex;flex-wrap:wrap;gap:1em;align-items:flex-start}}figure{{margin:.3em}}
figcaption{{font-size:80%;color:#444;max-width:40em}}
section{{border-top:2px solid #ccc;margin-top:1.2em}}img{{max-width:100%}}
"""


def _num_cols(summary, limits) -> list[str]:
    cols = [c for c in TABLE_COLUMNS if c in summary.columns]
    for q in (limits.quantities if limits is not None else ()):
        if q.name in summary.columns and q.name not in cols:
            cols.append(q.name)
    return cols


def _parts_table(summary, limits, anchors: dict[int, str]) -> str:
    """All parts, one row each: headers "label [prefixed unit]" and cells written by
    :func:`kit.units.table` (frequencies to 7 significant digits, the rest to 4)."""
    import pandas as pd

    cols = _num_cols(summary, limits)
    numbers = pd.DataFrame({c: pd.to_numeric(summary[c], errors="coerce").astype(float)
                            for c in cols}, index=range(len(summary)))
    digits = {c: 7 if unit_of(c) == "Hz" else 4 for c in cols}
    shown = table(numbers, digits=digits)
    heads = list(shown.columns)
    texts = [list(shown[h]) for h in heads]
    n = len(summary)
    names = summary["capture"] if "capture" in summary.columns else [""] * n
    verdicts = summary["verdict"] if "verdict" in summary.columns else [None] * n
    reasons = summary["verdict_reasons"] if "verdict_reasons" in summary.columns else [""] * n
    review = summary["review_verdict"] if "review_verdict" in summary.columns else None
    status = summary["status"] if "status" in summary.columns else [""] * n
    head = ("<tr><th>#</th><th>part</th><th>verdict</th>"
            + ("<th>reviewer</th>" if review is not None else "")
            + "".join(f"<th>{esc(h)}</th>" for h in heads) + "<th>why</th></tr>")
    rows = []
    for i in range(n):
        name = esc(names[i])
        if i in anchors:
            name = f'<a href="#{anchors[i]}">{name}</a>'
        v = verdict_of(verdicts[i])
        why = "; ".join(reason_kinds(reasons[i])) if v in ("fail", "incomplete") else ""
        if status[i] == "error":
            why = "could not be read" + (f"; {why}" if why else "")
        cells = "".join(f"<td>{esc(t[i])}</td>" for t in texts)
        rv = f"<td>{esc(review[i])}</td>" if review is not None else ""
        rows.append(f"<tr><td>{i + 1}</td><td>{name}</td><td class=v-{v}>{v}</td>{rv}"
                    f"{cells}<td>{esc(why)}</td></tr>")
    return (f"<h2>All parts ({n:,})</h2><table class=parts>{head}" + "\n".join(rows)
            + "</table>")


def _margins(row: dict) -> str:
    """The margin of every check of a part: in the check's unit and relative to the bound."""
    out = []
    for key, value in row.items():
        if "_margin" not in key or key.endswith("_margin_rel"):
            continue
        stem, suffix = split_unit(key)
        check = stem.removesuffix("_margin")
        rel = row.get(f"{check}_margin_rel")
        v = float(value) if isinstance(value, (int, float)) else math.nan
        r = float(rel) if isinstance(rel, (int, float)) else math.nan
        cls = "" if not math.isfinite(v) else (" class=v-pass" if v >= 0 else " class=v-fail")
        label = column_label(check + suffix)[0]
        out.append(f"<tr><td>{esc(label)}</td><td{cls}>"
                   f"{esc(quantity(v, unit_of(key)) if math.isfinite(v) else 'not computed')}</td>"
                   f"<td>{'' if not math.isfinite(r) else esc(percent(r, signed=True))}</td></tr>")
    if not out:
        return ""
    return ("<table><tr><th>check</th><th>margin (positive inside)</th><th>relative</th></tr>"
            + "".join(out) + "</table>")


def _history(events) -> str:
    if events is None or len(events) == 0:
        return "<p>No review events.</p>"
    cols = [c for c in ("utc", "author", "kind", "value", "text") if c in events.columns]
    head = "".join(f"<th>{esc(c)}</th>" for c in cols)
    body = "".join("<tr>" + "".join(f"<td>{esc(r[c])}</td>" for c in cols) + "</tr>"
                   for r in events[cols].to_dict("records"))
    return f"<table><tr>{head}</tr>{body}</table>"


def _section(i: int, row: dict, anchor: str, picture: bytes | None, history: Any,
             with_review: bool) -> str:
    name = row.get("capture") or f"part {i + 1}"
    v = verdict_of(row.get("verdict"))
    sec = [f'<section id="{anchor}"><h3>{esc(name)} {badge(v)}</h3>',
           f"<p class=mono>{esc(row.get('path'))}<br>sha256 {esc(row.get('sha256'))}</p>"]
    if row.get("status") == "error":
        sec.append(f"<p class=v-fail>Could not be read: {esc(row.get('error'))}</p>")
    if picture is not None:
        sec.append(img_tag(picture, str(name)))
    reasons = split_reasons(row.get("verdict_reasons"))
    if reasons:
        sec.append("<p>Limits verdict: " + badge(v) + "</p><ul>"
                   + "".join(f"<li>{esc(r)}</li>" for r in reasons) + "</ul>")
    sec.append(_margins(row))
    for key, label in (("fit_flags", "Fit flags"), ("resonance_flags", "Reading flags"),
                       ("corrections", "Corrections"), ("warnings", "Import warnings")):
        text = row.get(key)
        if isinstance(text, str) and text:
            sec.append(f"<p>{label}: {esc(text)}</p>")
    if row.get("fit_ok") is False:
        sec.append("<p class=v-fail>The fit did not succeed.</p>")
    if with_review:
        state = [f"{k}: {esc(row.get(c))}" for c, k in (
            ("review_verdict", "reviewer verdict"), ("review_tags", "tags"),
            ("retest_requested", "re-test requested")) if row.get(c) not in (None, "", False)]
        sec += ["<h4>Review</h4>", "<p>" + "; ".join(state) + "</p>" if state else "",
                _history(history)]
    sec.append("</section>")
    return "\n".join(sec)


def _figures_choice(figures: Any) -> str:
    if figures is True:  # the former boolean: a figure per part
        return "all"
    if figures is False:
        return "none"
    if figures not in FIGURE_CHOICES:
        raise ValueError(f"figures must be one of {', '.join(FIGURE_CHOICES)}, got {figures!r}")
    return figures


def _clean(row: dict) -> dict:
    return {k: (None if isinstance(v, float) and math.isnan(v) else v) for k, v in row.items()}


def report(out_path: str | os.PathLike, captures: Any, summary: Any = None,
           review_log: Any = None, limits: Any = None, title: str | None = None,
           figures: str = "flagged", pictures: dict | None = None, traces: dict | None = None,
           scatter: tuple[str, str] | None = None) -> Path:
    """Write the lot report as one self-contained HTML file (atomically).

    Parameters
    ----------
    out_path : str or Path
        The ``.html`` file; not in a folder of input captures.
    captures : Capture, iterable, or a :func:`kit.load_folder` table
        May be empty when ``summary`` (and ``pictures``/``traces``) are given.
    summary : pandas.DataFrame, optional
        A :func:`kit.summary` table; built from the captures (with ``limits`` and
        ``review_log``) when absent.
    review_log : kit.ReviewLog, path or ``postgresql://`` URL, optional
        Its state and each shown part's history.
    limits : kit.Limits or path, optional
        The judged quantities (distributions, capability, scatter) and masks (overlay,
        pictures); also used for the summary when it is built here.
    title : str, optional
        Default: "Lot report" and the captures' folder name.
    figures : {"flagged", "all", "none"}
        Which parts get a section with a picture (:func:`needs_figure`): "flagged"
        (default) those that did not pass or carry a flag, "all" every part, "none" no
        part. ``True`` and ``False`` (the former switch) mean "all" and "none".
    pictures : dict, optional
        sha256 -> PNG bytes already drawn (e.g. by batch workers); used instead of drawing.
    traces : dict, optional
        sha256 -> (f [Hz], y) decimated main curves for the overlay
        (:meth:`PartPainter.trace`); taken from the captures when absent.
    scatter : (str, str), optional
        Summary columns of the scatter; default the first two limited quantities.

    Returns
    -------
    Path
    """
    from kit._version import __version__
    from kit.review.limits import Limits, load_limits
    from kit.review.log import as_review_log

    figures = _figures_choice(figures)
    review_log = as_review_log(review_log)
    out = Path(out_path)
    caps = as_list(captures)
    real = [c for c in caps if isinstance(c, Capture)]
    refuse_input_folder(out, real, "the report")
    if limits is not None and not isinstance(limits, Limits):
        limits = load_limits(limits)
    if summary is None:
        summary = lot_summary(caps, limits=limits, review_log=review_log)
    summary = summary.reset_index(drop=True)
    if title is None:
        folders = sorted({c.path.parent.name for c in real if c.path is not None})
        title = "Lot report" + (f": {', '.join(folders)}" if folders else "")
    by_sha = {c.sha256: c for c in real}
    pictures = dict(pictures or {})
    if traces is None:
        traces = {c.sha256: PartPainter.trace(c) for c in real}
    rule = [c for c in RULE_COLUMNS if c in summary.columns]
    shown = [i for i, r in enumerate(summary[rule].to_dict("records"))
             if needs_figure(r, figures)]
    rows = {i: _clean(summary.iloc[i].to_dict()) for i in shown}
    anchors = {i: f"part-{i + 1}" for i in shown}

    parts = [f"<h1>{esc(title)}</h1>",
             f"<p>Created {esc(datetime.now(timezone.utc).isoformat(timespec='seconds'))} by "
             f"sweepbook {esc(__version__)}; {len(summary):,} part(s); sections for "
             f"{len(shown):,} part(s) (figures = {esc(figures)}).</p>"]
    if limits is not None:
        parts.append(f"<p>Limits: {esc(limits.name or '(unnamed)')} from "
                     f"<span class=mono>{esc(limits.source)}</span></p>")
    parts.append('<div id="overview">')
    parts.append(counts_html(summary))
    parts.append(quantities_html(summary, limits))
    parts.append(scatter_html(summary, limits, scatter or default_scatter(limits)))
    parts.append(overlay_html(summary, traces, limits))
    parts.append("</div>")
    parts.append(_parts_table(summary, limits, anchors))
    if shown:
        parts.append(f"<h2>Parts in detail ({len(shown):,})</h2>")
    history = (None if review_log is None or not shown
               else dict(tuple(review_log.events().groupby("sha256", sort=False))))
    painter = None
    for i in shown:
        row = rows[i]
        sha = row.get("sha256")
        picture = pictures.get(sha)
        cap = by_sha.get(sha)
        if picture is None and cap is not None:
            painter = painter or PartPainter()
            res = {k: row.get(k) for k in ("fs_hz", "fp_hz") if row.get(k) is not None}
            picture = painter.png(cap, limits, resonance=res)
        parts.append(_section(i, row, anchors[i], picture,
                              None if history is None else history.get(sha),
                              review_log is not None))
    doc = ("<!DOCTYPE html>\n<html lang=en><head><meta charset=utf-8>"
           f'<meta http-equiv="Content-Security-Policy" content="{CSP}">'
           f"<title>{esc(title)}</title><style>{STYLE}</style></head><body>\n"
           + "\n".join(p for p in parts if p) + "\n</body></html>\n")
    out.parent.mkdir(parents=True, exist_ok=True)
    write_bytes(out, doc.encode("utf-8"))
    return out

