"""The review event model shared by every back end of the review log.

What an event is (kinds, columns, validation, the capture's key), the error the log raises,
and the state view computed from a table of events: the same for the SQLite file
(:mod:`kit.review.log`) and the PostgreSQL server (:mod:`kit.review.server`), so that both give
identical tables.

References
----------
.. [1] RFC 9562, "Universally Unique IDentifiers (UUIDs)": version 4 (random) for new events.
.. [2] ISO 8601 date and time with an explicit ``+00:00`` offset: text that sorts in time order.
"""

from __future__ import annotations

import getpass
import hashlib
import math
import os
import threading
import uuid as uuidlib
from datetime import datetime, timedelta, timezone
from pathlib import Path
from typing import Any

from kit.io.writer import kit_version

KINDS: tuple[str, ...] = ("note", "marker", "verdict", "retest", "tag")
VERDICTS: tuple[str, ...] = ("accept", "reject", "retest")
#: Longest text kept in one event (characters); longer text is refused, not cut.
MAX_TEXT = 20000
#: URL schemes that select the PostgreSQL back end.
SERVER_SCHEMES = ("postgresql://", "postgres://")

#: Columns of :meth:`ReviewLog.events`; every column but ``event_id`` travels with an event
#: from one log to another (``event_id`` is the order of arrival in one store).
EVENT_COLUMNS = ["event_id", "utc", "capture", "sha256", "path", "kind", "value",
                 "value_num", "text", "author", "kit_version", "uuid"]
ROW_COLUMNS = EVENT_COLUMNS[1:]


class ReviewLogError(ValueError):
    """The review log cannot be used (names the file or server and what to do)."""


def current_user() -> str:
    """The OS user name, or ``"unknown"`` when the system cannot tell."""
    try:
        name = getpass.getuser()
    except (OSError, KeyError, ImportError):
        return "unknown"
    return name or "unknown"


_clock = threading.Lock()
_last_utc: list[datetime] = []


def utc_now() -> str:
    """The current UTC time, ISO 8601 with microseconds and an explicit ``+00:00``.

    Strictly increasing within a process (a repeated clock reading moves on by 1 us), so the
    events one process writes keep their order when a log is sorted by time.
    """
    now = datetime.now(timezone.utc)
    with _clock:
        if _last_utc and now <= _last_utc[0]:
            now = _last_utc[0] + timedelta(microseconds=1)
        _last_utc[:] = [now]
    return now.isoformat(timespec="microseconds")


def is_server_url(target: Any) -> bool:
    """True for a ``postgresql://`` (or ``postgres://``) URL, which selects the server."""
    return isinstance(target, str) and target.strip().lower().startswith(SERVER_SCHEMES)


# --------------------------------------------------------------------------- identity
def capture_identity(capture: Any) -> dict[str, Any]:
    """``capture``, ``sha256`` and ``path`` of a Capture, a path to a file, or a dict.

    A capture made in memory (no file) is keyed by a hash of its frequency grid and
    S-parameters, prefixed ``"mem:"``.
    """
    if isinstance(capture, dict):
        sha = capture.get("sha256")
        if not sha:
            raise ReviewLogError("a capture given as a dict needs a 'sha256' entry")
        path = capture.get("path")
        name = capture.get("capture") or (Path(path).stem if path else sha[:12])
        return {"capture": str(name), "sha256": str(sha),
                "path": None if path is None else str(path)}
    if isinstance(capture, (str, os.PathLike)):
        p = Path(capture)
        try:
            sha = hashlib.sha256(p.read_bytes()).hexdigest()
        except OSError as exc:
            raise ReviewLogError(f"{p}: cannot read the capture to key the review event: "
                                 f"{exc.strerror or exc}") from None
        return {"capture": p.stem, "sha256": sha, "path": str(p)}
    sha = getattr(capture, "sha256", None)
    path = getattr(capture, "path", None)
    name = getattr(capture, "name", None)
    if sha is None:
        net = getattr(capture, "network", None)
        if net is None:
            raise ReviewLogError(f"cannot identify {type(capture).__name__!r} as a capture; "
                                 "give a kit Capture, a file path or a dict with 'sha256'")
        h = hashlib.sha256()
        h.update(net.frequency.f.tobytes())
        h.update(net.s.tobytes())
        sha = "mem:" + h.hexdigest()
    return {"capture": str(name) if name is not None else sha[:12], "sha256": str(sha),
            "path": None if path is None else str(path)}


def event_row(capture: Any, kind: str, text: str | None, value: Any, author: str | None,
              event_uuid: Any = None) -> tuple:
    """One validated event as a tuple of :data:`ROW_COLUMNS` (new UTC time, and a new
    random uuid unless one is given); refuses bad input with :class:`ReviewLogError`."""
    if kind not in KINDS:
        raise ReviewLogError(f"event kind {kind!r} is not one of {', '.join(KINDS)}")
    ident = capture_identity(capture)
    if text is not None:
        if not isinstance(text, str):
            raise ReviewLogError(f"event text must be a string, got {type(text).__name__}")
        if len(text) > MAX_TEXT:
            raise ReviewLogError(f"event text has {len(text)} characters; the limit is "
                                 f"{MAX_TEXT}; attach long material as a file instead")
    value_num = None
    if kind == "verdict":
        if value not in VERDICTS:
            raise ReviewLogError(f"a verdict value must be one of {', '.join(VERDICTS)}, "
                                 f"got {value!r}")
    elif kind == "marker":
        try:
            value_num = float(value)
        except (TypeError, ValueError):
            raise ReviewLogError(f"a marker needs its frequency in hertz as value, got "
                                 f"{value!r}") from None
        if not math.isfinite(value_num):
            raise ReviewLogError(f"a marker frequency must be finite, got {value!r}")
        value = repr(value_num)
    elif kind == "tag" and not (isinstance(value, str) and value.strip()):
        if isinstance(text, str) and text.strip():
            value, text = text.strip(), None
        else:
            raise ReviewLogError("a tag needs a non-empty value, e.g. value='cracked'")
    if value is not None and not isinstance(value, str):
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            value_num = float(value)
        value = str(value)
    who = author if author else current_user()
    try:
        key = str(uuidlib.UUID(str(event_uuid))) if event_uuid is not None else str(uuidlib.uuid4())
    except ValueError:
        raise ReviewLogError(f"an event uuid must be a UUID, got {event_uuid!r}") from None
    return (utc_now(), ident["capture"], ident["sha256"], ident["path"], kind, value,
            value_num, text, str(who), kit_version(), key)


STATE_COLUMNS = ["capture", "sha256", "path", "verdict", "verdict_author", "verdict_utc",
                 "verdict_text", "retest_requested", "tags", "notes", "last_note", "markers",
                 "events", "last_utc"]


def select_sql(table: str, mark: str, sha256: str | None) -> tuple[str, tuple]:
    """The parameterised query of the events (of one capture), in order of arrival.

    ``table`` is the back end's events table, ``mark`` its driver's parameter mark.
    """
    where = "" if sha256 is None else f" WHERE sha256 = {mark}"
    return (f"SELECT {', '.join(EVENT_COLUMNS)} FROM {table}{where} ORDER BY event_id",
            () if sha256 is None else (sha256,))


def state_of(ev):
    """The state table of :meth:`ReviewLog.state` from an events table (any back end)."""
    import pandas as pd

    if len(ev) == 0:
        return pd.DataFrame(columns=STATE_COLUMNS)
    ev = ev.sort_values(["utc", "uuid"], kind="stable").reset_index(drop=True)
    ev["pos"] = range(len(ev))
    by = ev.groupby("sha256", sort=False)
    last = by.tail(1).set_index("sha256")
    order = ev.drop_duplicates("sha256")["sha256"]
    out = pd.DataFrame({"sha256": order.to_numpy()}).set_index("sha256", drop=False)
    out["capture"] = last["capture"]
    out["path"] = last["path"]
    out["last_utc"] = last["utc"]
    out["events"] = by.size()
    is_v = ev["kind"] == "verdict"
    v = ev[is_v].groupby("sha256").tail(1).set_index("sha256")
    for col, src in (("verdict", "value"), ("verdict_author", "author"),
                     ("verdict_utc", "utc"), ("verdict_text", "text")):
        out[col] = v[src].reindex(out.index).astype(object)
    decided = ev[is_v & ev["value"].isin(["accept", "reject"])].groupby("sha256")["pos"].max()
    asks = ev[(ev["kind"] == "retest") | (is_v & (ev["value"] == "retest"))]
    newer = asks["pos"].to_numpy() > decided.reindex(asks["sha256"]).fillna(-1).to_numpy()
    out["retest_requested"] = out.index.isin(asks.loc[newer, "sha256"])
    tags = ev.loc[ev["kind"] == "tag"].dropna(subset=["value"]).groupby("sha256")["value"]
    out["tags"] = tags.agg(lambda t: "; ".join(sorted(set(t)))).reindex(out.index).fillna("")
    notes = ev[ev["kind"] == "note"].groupby("sha256")
    out["notes"] = notes.size().reindex(out.index).fillna(0).astype(int)
    out["last_note"] = notes.tail(1).set_index("sha256")["text"].reindex(out.index).astype(object)
    out["markers"] = (ev[ev["kind"] == "marker"].groupby("sha256").size()
                      .reindex(out.index).fillna(0).astype(int))
    out = out[STATE_COLUMNS].reset_index(drop=True)
    return out.astype(object).where(out.notna(), None).astype(
        {"retest_requested": bool, "notes": int, "markers": int, "events": int})
