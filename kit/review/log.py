"""The review log: who looked at which capture, what they saw and what they decided.

A :class:`ReviewLog` is an append-only table of events in one SQLite file (standard
library ``sqlite3``), by default ``review.sqlite`` beside the captures. Each event is
keyed by the capture's SHA-256 (the evidence) and its path (where it was found), and
carries the author, a UTC timestamp (ISO 8601) and the kit version. Nothing is ever
updated or deleted: the current state of a capture is a view over its events, in which
the latest verdict wins and the history stays.

Safety for several writers: the file is in write-ahead-log mode (readers never block
the writer), every write is one ``BEGIN IMMEDIATE`` transaction, and a busy timeout lets
a second writer wait instead of failing. A writer killed mid-transaction leaves no trace
of that transaction; every committed event survives (SQLite's atomic commit).

References
----------
.. [1] SQLite documentation, "Write-Ahead Logging" (wal.html), "Atomic Commit In SQLite"
   (atomiccommit.html), "PRAGMA user_version" and "PRAGMA busy_timeout" (pragma.html).
"""

from __future__ import annotations

import getpass
import hashlib
import math
import os
import sqlite3
from collections.abc import Iterable
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

KINDS: tuple[str, ...] = ("note", "marker", "verdict", "retest", "tag")
VERDICTS: tuple[str, ...] = ("accept", "reject", "retest")
DEFAULT_NAME = "review.sqlite"
#: Current schema version, stored in ``PRAGMA user_version``.
SCHEMA_VERSION = 1
#: Longest text kept in one event (characters); longer text is refused, not cut.
MAX_TEXT = 20000
#: How long a writer waits for another one [s].
BUSY_TIMEOUT_S = 30.0

EVENT_COLUMNS = ["event_id", "utc", "capture", "sha256", "path", "kind", "value",
                 "value_num", "text", "author", "kit_version"]


class ReviewLogError(ValueError):
    """The review log cannot be used (names the file and what to do)."""


def _kit_version() -> str:
    from kit import __version__

    return __version__


def current_user() -> str:
    """The OS user name, or ``"unknown"`` when the system cannot tell."""
    try:
        name = getpass.getuser()
    except (OSError, KeyError, ImportError):
        return "unknown"
    return name or "unknown"


def utc_now() -> str:
    """The current UTC time, ISO 8601 with microseconds and an explicit ``+00:00``."""
    return datetime.now(timezone.utc).isoformat(timespec="microseconds")


# --------------------------------------------------------------------------- schema
def _migrate_0_to_1(conn: sqlite3.Connection) -> None:
    conn.execute(
        """CREATE TABLE IF NOT EXISTS events (
            event_id INTEGER PRIMARY KEY AUTOINCREMENT,
            utc TEXT NOT NULL,
            capture TEXT,
            sha256 TEXT NOT NULL,
            path TEXT,
            kind TEXT NOT NULL CHECK (kind IN ('note','marker','verdict','retest','tag')),
            value TEXT,
            value_num REAL,
            text TEXT,
            author TEXT NOT NULL,
            kit_version TEXT NOT NULL
        )""")
    conn.execute("CREATE INDEX IF NOT EXISTS events_sha256 ON events (sha256)")
    conn.execute("CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT)")
    conn.execute("INSERT OR REPLACE INTO meta VALUES ('format', 'sweepbook-review-log')")
    conn.execute("INSERT OR IGNORE INTO meta VALUES ('created_utc', ?)", (utc_now(),))
    # append-only: the database itself refuses to change or remove an event
    conn.execute("""CREATE TRIGGER IF NOT EXISTS events_no_update BEFORE UPDATE ON events
                    BEGIN SELECT RAISE(ABORT, 'the review log is append-only'); END""")
    conn.execute("""CREATE TRIGGER IF NOT EXISTS events_no_delete BEFORE DELETE ON events
                    BEGIN SELECT RAISE(ABORT, 'the review log is append-only'); END""")


#: ``MIGRATIONS[v]`` brings a schema from version ``v`` to ``v + 1``. To change the schema,
#: append a function and raise SCHEMA_VERSION; never edit a released step.
MIGRATIONS = [_migrate_0_to_1]


def migrate(conn: sqlite3.Connection, path: str = "<memory>") -> int:
    """Bring the schema of an open log up to :data:`SCHEMA_VERSION`; returns the version.

    Each step runs in its own transaction together with the new ``user_version``, so an
    interrupted migration leaves the previous version intact.
    """
    version = conn.execute("PRAGMA user_version").fetchone()[0]
    if version > SCHEMA_VERSION:
        raise ReviewLogError(
            f"{path}: the review log has schema version {version}, newer than this kit "
            f"understands ({SCHEMA_VERSION}); update sweepbook to open it")
    while version < SCHEMA_VERSION:
        conn.execute("BEGIN IMMEDIATE")
        try:
            # re-read inside the write lock: another process may have migrated meanwhile
            version = conn.execute("PRAGMA user_version").fetchone()[0]
            if version < SCHEMA_VERSION:
                MIGRATIONS[version](conn)
                version += 1
                conn.execute(f"PRAGMA user_version = {int(version)}")
            conn.execute("COMMIT")
        except BaseException:
            conn.execute("ROLLBACK")
            raise
    return version


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


# --------------------------------------------------------------------------- the log
class ReviewLog:
    """Append-only review events of a lot, in one SQLite file.

    Parameters
    ----------
    path : str or Path
        The SQLite file. Created (with its folder's permission) on first use. Use
        :meth:`for_folder` for the default ``review.sqlite`` beside the captures.

    Examples
    --------
    >>> log = ReviewLog.for_folder("demo_data/lot")          # doctest: +SKIP
    >>> log.add(cap, "verdict", value="accept", author="r.okafor")  # doctest: +SKIP
    >>> log.state()                                          # doctest: +SKIP
    """

    def __init__(self, path: str | os.PathLike) -> None:
        self.path = Path(path)
        if self.path.is_dir():
            raise ReviewLogError(f"{self.path}: is a folder; give a file, or use "
                                 f"ReviewLog.for_folder({str(self.path)!r})")
        self._conn: sqlite3.Connection | None = None
        self._pid: int | None = None
        self._connect()  # open at once so a bad file is reported here

    # ---- location
    @staticmethod
    def default_path(folder: str | os.PathLike) -> Path:
        """Where the log of the captures in ``folder`` lives: ``folder/review.sqlite``."""
        return Path(folder) / DEFAULT_NAME

    @classmethod
    def for_folder(cls, folder: str | os.PathLike, name: str = DEFAULT_NAME) -> "ReviewLog":
        """The review log beside the captures in ``folder`` (file name configurable)."""
        folder = Path(folder)
        if not folder.is_dir():
            raise ReviewLogError(f"{folder}: not a folder of captures")
        return cls(folder / name)

    # ---- connection
    def _connect(self) -> sqlite3.Connection:
        # a connection must not cross a fork: reopen in a child process
        if self._conn is not None and self._pid == os.getpid():
            return self._conn
        try:
            conn = sqlite3.connect(str(self.path), timeout=BUSY_TIMEOUT_S,
                                   isolation_level=None, check_same_thread=False)
            # SQLite's busy_timeout pragma takes milliseconds (sqlite.org, pragma.html)
            conn.execute(f"PRAGMA busy_timeout = {round(BUSY_TIMEOUT_S * 1000)}")
            mode = conn.execute("PRAGMA journal_mode = WAL").fetchone()[0]
            conn.execute("PRAGMA synchronous = FULL")
            migrate(conn, str(self.path))
        except sqlite3.DatabaseError as exc:
            raise ReviewLogError(f"{self.path}: cannot open the review log ({exc}); if the file "
                                 "is not a sweepbook review log, choose another name") from None
        if str(mode).lower() != "wal":
            conn.close()
            raise ReviewLogError(f"{self.path}: the file system refused write-ahead logging "
                                 f"(journal mode {mode!r}); keep the log on a local disk")
        fmt = conn.execute("SELECT value FROM meta WHERE key = 'format'").fetchone()
        if not fmt or fmt[0] != "sweepbook-review-log":
            conn.close()
            raise ReviewLogError(f"{self.path}: this SQLite file is not a sweepbook review log")
        self._conn, self._pid = conn, os.getpid()
        return conn

    def close(self) -> None:
        """Close the connection (the log reopens on the next use)."""
        if self._conn is not None and self._pid == os.getpid():
            self._conn.close()
        self._conn = None

    def __enter__(self) -> "ReviewLog":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"ReviewLog({str(self.path)!r})"

    @property
    def schema_version(self) -> int:
        """The schema version of the open file."""
        return int(self._connect().execute("PRAGMA user_version").fetchone()[0])

    # ---- writing
    def _row(self, capture: Any, kind: str, text: str | None, value: Any,
             author: str | None) -> tuple:
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
        return (utc_now(), ident["capture"], ident["sha256"], ident["path"], kind, value,
                value_num, text, str(who), _kit_version())

    _INSERT = ("INSERT INTO events (utc, capture, sha256, path, kind, value, value_num, text, "
               "author, kit_version) VALUES (?,?,?,?,?,?,?,?,?,?)")

    def add(self, capture: Any, kind: str, text: str | None = None, value: Any = None,
            author: str | None = None) -> int:
        """Append one event; returns its id.

        Parameters
        ----------
        capture : Capture, path or dict
            The capture the event is about (keyed by its SHA-256 and path).
        kind : {"note", "marker", "verdict", "retest", "tag"}
            What the event records.
        text : str, optional
            Free text (a note, a marker label, the reason of a verdict or retest request).
        value : optional
            A verdict: "accept", "reject" or "retest"; a marker: its frequency [Hz]; a tag:
            the tag word; otherwise free.
        author : str, optional
            Who; defaults to the OS user.
        """
        row = self._row(capture, kind, text, value, author)
        return self._write([row])[0]

    def add_many(self, events: Iterable[dict[str, Any]]) -> list[int]:
        """Append several events in ONE transaction: all of them are kept, or none.

        ``events`` yields dicts with the keyword arguments of :meth:`add`.
        """
        return self._write(self._row(e["capture"], e["kind"], e.get("text"), e.get("value"),
                                     e.get("author")) for e in events)

    def _write(self, rows: Iterable[tuple]) -> list[int]:
        conn = self._connect()
        ids: list[int] = []
        conn.execute("BEGIN IMMEDIATE")
        try:
            for row in rows:
                ids.append(int(conn.execute(self._INSERT, row).lastrowid))
            conn.execute("COMMIT")
        except BaseException:
            if conn.in_transaction:
                conn.execute("ROLLBACK")
            raise
        return ids

    # ---- reading
    def events(self, capture: Any = None):
        """All events (or those of one capture) as a DataFrame, oldest first.

        Columns: event_id, utc, capture, sha256, path, kind, value, value_num, text,
        author, kit_version.
        """
        import pandas as pd

        conn = self._connect()
        sql = f"SELECT {', '.join(EVENT_COLUMNS)} FROM events"
        args: tuple = ()
        if capture is not None:
            sql += " WHERE sha256 = ?"
            args = (capture_identity(capture)["sha256"],)
        rows = conn.execute(sql + " ORDER BY event_id", args).fetchall()
        return pd.DataFrame(rows, columns=EVENT_COLUMNS)

    def state(self):
        """The current review state, one row per capture (a view over the events).

        The latest verdict wins (by order of writing, not by clock); the history stays in
        :meth:`events`. Columns: capture, sha256, path, verdict, verdict_author,
        verdict_utc, verdict_text, retest_requested (a retest request or a "retest" verdict
        newer than the last accept/reject), tags (sorted, "; "-joined), notes (count),
        last_note, markers (count), events (count), last_utc.
        """
        import pandas as pd

        ev = self.events()
        cols = ["capture", "sha256", "path", "verdict", "verdict_author", "verdict_utc",
                "verdict_text", "retest_requested", "tags", "notes", "last_note", "markers",
                "events", "last_utc"]
        rows = []
        for sha, g in ev.groupby("sha256", sort=False):
            last = g.iloc[-1]
            v = g[g["kind"] == "verdict"]
            vrow = v.iloc[-1] if len(v) else None
            decided = v[v["value"].isin(["accept", "reject"])]
            last_decision = decided["event_id"].max() if len(decided) else -1
            retest = bool(((g["kind"] == "retest") | ((g["kind"] == "verdict")
                                                      & (g["value"] == "retest")))
                          [g["event_id"] > last_decision].any())
            notes = g[g["kind"] == "note"]
            tags = sorted(set(g.loc[g["kind"] == "tag", "value"].dropna()))
            rows.append({
                "capture": last["capture"], "sha256": sha, "path": last["path"],
                "verdict": None if vrow is None else vrow["value"],
                "verdict_author": None if vrow is None else vrow["author"],
                "verdict_utc": None if vrow is None else vrow["utc"],
                "verdict_text": None if vrow is None else vrow["text"],
                "retest_requested": retest,
                "tags": "; ".join(tags),
                "notes": int(len(notes)),
                "last_note": notes.iloc[-1]["text"] if len(notes) else None,
                "markers": int((g["kind"] == "marker").sum()),
                "events": int(len(g)),
                "last_utc": last["utc"],
            })
        return pd.DataFrame(rows, columns=cols)

    def __len__(self) -> int:
        return int(self._connect().execute("SELECT COUNT(*) FROM events").fetchone()[0])

    def check(self) -> str:
        """SQLite's own integrity check: ``"ok"`` or the problems found."""
        rows = self._connect().execute("PRAGMA integrity_check").fetchall()
        return "; ".join(str(r[0]) for r in rows)
