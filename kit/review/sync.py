"""Offline work joins the team: copy review events between a folder's file and the server.

:func:`push` sends the events of a folder's ``review.sqlite`` (or any log) to another log,
:func:`pull` brings them back; both are :func:`copy_events`, which sends only the events whose
UUID the other side does not hold, in atomic batches written with ``ON CONFLICT (uuid) DO
NOTHING``. Any number of round trips, in either order, interrupted or not, leaves the same set
of events on both sides and never one twice. Both events of a conflict (two reviewers judging
one part) are kept; the state view of every log then picks the latest verdict by UTC time, so
both sides show the same verdict.

:func:`status` answers "which parts are still waiting": parts without a verdict, parts whose
latest verdict is retest (or with a newer retest request), and who decided what.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from kit.review.log import ReviewLog, ReviewLogError, as_review_log, is_server_url


@dataclass(frozen=True)
class Copied:
    """What one copy did: ``sent`` events were new to ``target``; ``held`` were there already."""

    source: str
    target: str
    sent: int
    held: int

    def __str__(self) -> str:
        return (f"{self.sent} event(s) copied from {self.source} to {self.target}; "
                f"{self.held} were there already")


def open_log(where: Any, create: bool = True) -> ReviewLog:
    """A log from a URL, a log file, or a folder of captures (its ``review.sqlite``).

    ``create=False`` refuses a file that does not exist yet (nothing to push).
    """
    if isinstance(where, ReviewLog) or is_server_url(where):
        return as_review_log(where)
    p = Path(where)
    if p.is_dir():
        p = ReviewLog.default_path(p)
    if not create and not p.exists():
        raise ReviewLogError(f"{p}: no review log here (nothing to copy); give a folder with a "
                             "review.sqlite or the log file")
    return ReviewLog(p)


def copy_events(source: Any, target: Any) -> Copied:
    """Copy to ``target`` every event of ``source`` it does not hold (by UUID).

    Events keep their UUID, UTC time, author and kit version; the order of arrival in the
    target (``event_id``) is its own.
    """
    src, dst = open_log(source, create=False), open_log(target)
    rows = src.rows()
    sent = dst.import_rows(rows)
    return Copied(src.location, dst.location, sent, len(rows) - sent)


def push(local: Any, url: Any) -> Copied:
    """Send the events of a folder's ``review.sqlite`` (or a log file) to the server."""
    return copy_events(local, url)


def pull(url: Any, local: Any) -> Copied:
    """Bring the server's events into a folder's ``review.sqlite`` (created when absent)."""
    return copy_events(url, local)


STATUS_COLUMNS = ["lot", "capture", "status", "verdict_author", "verdict_utc", "verdict_text",
                  "path", "sha256"]


def lot_of(path: Any) -> str | None:
    """The lot of a capture: the name of the folder that holds its file (None without path)."""
    if path is None or (isinstance(path, float) and path != path):
        return None
    return Path(str(path)).parent.name or None


def status(log: Any, lot: str | None = None):
    """Where the review of a lot stands: one row per part.

    Parameters
    ----------
    log : kit.ReviewLog, path or URL
    lot : str, optional
        Only the parts whose file lies in a folder of this name.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`STATUS_COLUMNS`; ``status`` is ``"waiting"`` (no verdict yet),
        ``"retest"`` (latest verdict retest, or a retest asked after it), ``"accept"`` or
        ``"reject"``. Waiting parts first, then retest, then decided ones.
    """
    import pandas as pd

    st = open_log(log, create=False).state()
    if len(st) == 0:
        return pd.DataFrame(columns=STATUS_COLUMNS)
    st["lot"] = [lot_of(p) for p in st["path"]]
    if lot is not None:
        st = st[st["lot"] == lot]
    st["status"] = [("retest" if r else (v or "waiting"))
                    for v, r in zip(st["verdict"], st["retest_requested"])]
    rank = st["status"].map({"waiting": 0, "retest": 1}).fillna(2)
    st = st.assign(_rank=rank).sort_values(["_rank", "lot", "capture"], kind="stable",
                                           na_position="first")
    return st[STATUS_COLUMNS].reset_index(drop=True)


def status_text(table) -> str:
    """:func:`status` as plain lines for a terminal."""
    if len(table) == 0:
        return "no reviewed parts"
    lines = []
    for name, group in table.groupby("status", sort=False):
        lines.append(f"{name}: {len(group)} part(s)")
        for _, r in group.iterrows():
            who = f" by {r['verdict_author']} at {r['verdict_utc']}" if r["verdict_author"] else ""
            lines.append(f"  {r['lot'] or '-'}/{r['capture']}{who}")
    return "\n".join(lines)
