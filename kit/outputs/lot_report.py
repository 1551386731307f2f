"""The lot report: one self-contained HTML file with everything a reviewer needs.

``kit.report(out_path, captures, summary=None, review_log=None)`` writes a single file:
the lot's verdict counts, the summary table, and per capture a figure (PNG embedded as
base64), the verdict with its reasons, the review state and history, and the import
warnings. It is built from the same tables as the export (:func:`kit.summary`).

Every piece of text that comes from a user or a file (notes, names, paths, comments,
reasons) goes through :func:`html.escape`; the page carries a Content-Security-Policy that
forbids scripts and any outside resource, so it opens the same offline and cannot run code.

References
----------
.. [1] WHATWG HTML Living Standard, "Serializing HTML fragments" / character references
   (why ``&``, ``<``, ``>``, ``"`` and ``'`` are escaped); W3C Content Security Policy Level 3.
"""

from __future__ import annotations

import base64
import html
import io
import math
import os
import warnings
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import numpy as np

from kit.capture import Capture
from kit.io.atomic import write_bytes
from kit.io.writer import refuse_input_folder
from kit.outputs.entries import as_list
from kit.outputs.summary import summary as lot_summary

#: Summary columns shown in the lot table (those present), in this order.
TABLE_COLUMNS = ("capture", "status", "fs_hz", "fp_hz", "k_eff", "qm", "c0_f", "r1_ohm",
                 "fit_ok", "verdict", "review_verdict", "retest_requested", "review_tags")
CSP = ("default-src 'none'; img-src data:; style-src 'unsafe-inline'; "
       "base-uri 'none'; form-action 'none'")
STYLE = """
body{font-family:system-ui,sans-serif;margin:1.5em;color:#222;max-width:70em}
table{border-collapse:collapse;margin:.5em 0}td,th{border:1px solid #bbb;padding:2px 6px;
font-size:90%;text-align:left;vertical-align:top}th{background:#eee}
.pass,.accept{background:#dff0d8}.fail,.reject{background:#f8d7da}
.incomplete,.retest{background:#fff3cd}.mono{font-family:monospace;font-size:85%}
section{border-top:2px solid #ccc;margin-top:1.5em}img{max-width:100%}
"""


def esc(x: Any) -> str:
    """Text for HTML: None and NaN become empty, everything else is escaped."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    return html.escape(str(x), quote=True)


def _cell(col: str, v: Any) -> str:
    if isinstance(v, (float, np.floating)):
        if math.isnan(v):
            return "<td></td>"
        text = f"{v:,.1f}" if col.endswith("_hz") else f"{v:.5g}"
        return f"<td>{esc(text)}</td>"
    cls = f' class="{esc(v)}"' if col in ("verdict", "review_verdict") and v else ""
    return f"<td{cls}>{esc(v)}</td>"


def _table(df, columns) -> str:
    cols = [c for c in columns if c in df.columns]
    head = "".join(f"<th>{esc(c)}</th>" for c in cols)
    body = "".join("<tr>" + "".join(_cell(c, r[c]) for c in cols) + "</tr>"
                   for _, r in df.iterrows())
    return f"<table><tr>{head}</tr>{body}</table>"


def figure_png(capture: Capture, limits: Any = None, dpi: int = 80) -> bytes:
    """PNG of a capture's main curve (see :func:`lot_figure`)."""
    buf = io.BytesIO()
    lot_figure(capture, limits, dpi).savefig(buf, format="png")
    return buf.getvalue()


def lot_figure(capture: Capture, limits: Any = None, dpi: int = 80):
    """Figure of a capture's main curve: |Z| [Ω] for a one-port, |S21| and |S11| [dB] else.

    Frequency in the SI prefix that suits the sweep (:func:`kit.units.scale_for`); |Z| by
    :func:`kit.network.coerce.sweep`, dB by :func:`kit.network.reflection.db20`. Uses
    matplotlib's Agg canvas directly (no pyplot state, no display needed).
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from kit.network.coerce import sweep
    from kit.network.reflection import db20
    from kit.review.drawing import draw_limits
    from kit.units import scale_for

    fig = Figure(figsize=(6.4, 2.8), dpi=dpi, layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    k, f_unit = scale_for(capture.f_hz, "Hz")
    f_axis = capture.f_hz * k
    if capture.ports == 1:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # singular points are NaN and simply not drawn
            z = np.abs(sweep(capture, what="the lot report").z_ohm)
        ax.semilogy(f_axis, z, lw=1.2, label="|Z|")
        ax.set_ylabel("|Z| [Ω]")
        curve = "z_mag_ohm"
    else:
        with np.errstate(divide="ignore"):
            ax.plot(f_axis, db20(capture.s[:, 1, 0]), lw=1.2, label="|S21|")
            ax.plot(f_axis, db20(capture.s[:, 0, 0]), lw=1.0, label="|S11|")
        ax.set_ylabel("[dB]")
        curve = "s21_db"
    if limits is not None:
        draw_limits(ax, limits, curve=curve, f_scale=1.0 / k)
    ax.set_xlabel(f"frequency [{f_unit}]")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=7, loc="best")
    return fig


def _history(events) -> str:
    if events is None or len(events) == 0:
        return "<p>No review events.</p>"
    cols = ["utc", "author", "kind", "value", "text"]
    return _table(events, cols)


def report(out_path: str | os.PathLike, captures: Any, summary: Any = None,
           review_log: Any = None, limits: Any = None, title: str | None = None,
           figures: bool = True) -> Path:
    """Write the lot report as one self-contained HTML file (atomically).

    Parameters
    ----------
    out_path : str or Path
        The ``.html`` file; not in a folder of input captures.
    captures : Capture, iterable, or a :func:`kit.load_folder` table
    summary : pandas.DataFrame, optional
        A :func:`kit.summary` table; built from the captures (with ``limits`` and
        ``review_log``) when absent.
    review_log : kit.ReviewLog, path or ``postgresql://`` URL, optional
        Its state and each capture's history are shown.
    limits : kit.Limits or path, optional
        Used for the summary when it is built here, and drawn on the figures.
    title : str, optional
        Default: "Lot report" and the captures' folder name.
    figures : bool
        Embed a figure per capture (PNG, base64).

    Returns
    -------
    Path
    """
    from kit._version import __version__
    from kit.review.limits import Limits, load_limits
    from kit.review.log import as_review_log

    review_log = as_review_log(review_log)
    out = Path(out_path)
    caps = as_list(captures)
    real = [c for c in caps if isinstance(c, Capture)]
    refuse_input_folder(out, real, "the report")
    if limits is not None and not isinstance(limits, Limits):
        limits = load_limits(limits)
    if summary is None:
        summary = lot_summary(caps, limits=limits, review_log=review_log)
    if title is None:
        folders = sorted({c.path.parent.name for c in real if c.path is not None})
        title = "Lot report" + (f": {', '.join(folders)}" if folders else "")
    by_sha = {}
    if "sha256" in summary.columns:
        by_sha = {r["sha256"]: r for _, r in summary.iterrows() if r.get("sha256")}
    parts = [f"<h1>{esc(title)}</h1>",
             f"<p>Created {esc(datetime.now(timezone.utc).isoformat(timespec='seconds'))} by "
             f"sweepbook {esc(__version__)}; {len(caps)} capture(s).</p>"]
    counts = []
    for col, label in (("verdict", "limits verdict"), ("review_verdict", "reviewer verdict")):
        if col in summary.columns:
            vc = summary[col].fillna("none").value_counts()
            counts.append(f"<li>{esc(label)}: " + ", ".join(
                f'<span class="{esc(k)}">{esc(k)}</span> {int(n)}' for k, n in vc.items())
                + "</li>")
    if counts:
        parts.append("<ul>" + "".join(counts) + "</ul>")
    if limits is not None:
        parts.append(f"<p>Limits: {esc(limits.name or '(unnamed)')} from "
                     f"<span class=mono>{esc(limits.source)}</span></p>")
    parts += ["<h2>Summary</h2>", _table(summary, TABLE_COLUMNS),
              "<details><summary>All summary columns</summary>",
              _table(summary, list(summary.columns)), "</details>"]
    # the review history of the whole lot in one read (one query on a server, not one per part)
    history = (None if review_log is None
               else dict(tuple(review_log.events().groupby("sha256", sort=False))))
    for cap in caps:
        if not isinstance(cap, Capture):
            parts.append(f"<section><h2>{esc(getattr(cap, 'path', None) or 'capture')}</h2>"
                         f"<p class=fail>Refused: {esc(cap)}</p></section>")
            continue
        row = by_sha.get(cap.sha256)
        sec = [f"<section><h2>{esc(cap.name)}</h2>",
               f"<p class=mono>{esc(cap.path)}<br>sha256 {esc(cap.sha256)}</p>"]
        if figures:
            png = base64.b64encode(figure_png(cap, limits)).decode("ascii")
            sec.append(f'<img alt="{esc(cap.name)}" src="data:image/png;base64,{png}">')
        if row is not None and row.get("verdict"):
            v = row["verdict"]
            reasons = str(row.get("verdict_reasons") or "").split("; ")
            sec.append(f'<p>Limits verdict: <b class="{esc(v)}">{esc(v)}</b></p><ul>'
                       + "".join(f"<li>{esc(r)}</li>" for r in reasons if r) + "</ul>")
        if cap.provenance:
            sec.append("<p>Corrections: " + esc("; ".join(
                str(p.get("name") or p.get("kind") or "step") for p in cap.provenance)) + "</p>")
        warn = [f for f in cap.findings if f.severity == "warning"]
        if warn:
            sec.append("<p>Import warnings:</p><ul>" + "".join(f"<li>{esc(w)}</li>" for w in warn)
                       + "</ul>")
        if review_log is not None:
            sec += ["<h3>Review history</h3>", _history(history.get(cap.sha256))]
        sec.append("</section>")
        parts += sec
    doc = ("<!DOCTYPE html>\n<html lang=en><head><meta charset=utf-8>"
           f'<meta http-equiv="Content-Security-Policy" content="{CSP}">'
           f"<title>{esc(title)}</title><style>{STYLE}</style></head><body>\n"
           + "\n".join(parts) + "\n</body></html>\n")
    out.parent.mkdir(parents=True, exist_ok=True)
    write_bytes(out, doc.encode("utf-8"))
    return out
