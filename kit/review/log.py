"""The review log: who looked at which capture, what they saw and what they decided.

A :class:`ReviewLog` is an append-only table of events. Each event is keyed by the capture's
SHA-256 (the evidence) and its path (where it was found), and carries a UUID made by the
client, the author, a UTC timestamp (ISO 8601) and the kit version. Nothing is ever updated or
deleted: the current state of a capture is a view over its events, in which the latest verdict
by UTC time wins and the history stays.

Two back ends share this API (``ReviewLog(path_or_url)`` picks one):

* a path: one SQLite file (standard library ``sqlite3``), by default ``review.sqlite``
  beside the captures - this module;
* a URL ``postgresql://user@host:port/dbname``: a PostgreSQL server a team shares -
  :mod:`kit.review.server` (optional extra ``sweepbook[team]``).

Events move between the two with :mod:`kit.review.sync`; the client-made UUID makes every
copy and every retried write idempotent (an event is stored once, whatever the retries).

Safety for several writers on SQLite: the file is in write-ahead-log mode (readers never
block the writer), every write is one ``BEGIN IMMEDIATE`` transaction, and a busy timeout
lets a second writer wait instead of failing. A writer killed mid-transaction leaves no
trace of that transaction; every committed event survives (SQLite's atomic commit).

References
----------
.. [1] SQLite documentation, "Write-Ahead Logging" (wal.html), "Atomic Commit In SQLite"
   (atomiccommit.html), "PRAGMA user_version" and "PRAGMA busy_timeout" (pragma.html),
   "UPSERT" (lang_upsert.html: ``ON CONFLICT (uuid) DO NOTHING``), "ALTER TABLE"
   (lang_altertable.html) and "CREATE TRIGGER" (lang_createtrigger.html: ``RAISE(ABORT)``).
.. [2] RFC 9562, "Universally Unique IDentifiers (UUIDs)": version 4 (random) for new
   events, version 5 (name-based) for events written before UUIDs were stored.
"""

from __future__ import annotations

import getpass
import hashlib
import math
import os
import sqlite3
import threading
import uuid as uuidlib
from collections.abc import Iterable, Sequence
from datetime import datetime, timedelta, timezone
from pathlib import Path
from typing import Any

KINDS: tuple[str, ...] = ("note", "marker", "verdict", "retest", "tag")
VERDICTS: tuple[str, ...] = ("accept", "reject", "retest")
DEFAULT_NAME = "review.sqlite"
#: Current schema version of the SQLite file, stored in ``PRAGMA user_version``.
SCHEMA_VERSION = 2
#: Longest text kept in one event (characters); longer text is refused, not cut.
MAX_TEXT = 20000
#: How long a writer waits for another one [s].
BUSY_TIMEOUT_S = 30.0
#: URL schemes that select the PostgreSQL back end.
SERVER_SCHEMES = ("postgresql://", "postgres://")

#: Columns of :meth:`ReviewLog.events`; every column but ``event_id`` travels with an event
#: from one log to another (``event_id`` is the order of arrival in one store).
EVENT_COLUMNS = ["event_id", "utc", "capture", "sha256", "path", "kind", "value",
                 "value_num", "text", "author", "kit_version", "uuid"]
ROW_COLUMNS = EVENT_COLUMNS[1:]
#: Name space of the name-based UUIDs given to events stored before schema version 2.
LEGACY_NAMESPACE = uuidlib.UUID("0f5d3a52-8e8c-4c8e-9a43-6f1f0c1d2b7e")


class ReviewLogError(ValueError):
    """The review log cannot be used (names the file or server and what to do)."""


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


def legacy_uuid(row: Sequence[Any]) -> str:
    """The name-based UUID of an event stored without one (same event, same UUID)."""
    return str(uuidlib.uuid5(LEGACY_NAMESPACE, "\x1f".join("" if v is None else str(v)
                                                            for v in row)))


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


_NO_UPDATE = """CREATE TRIGGER IF NOT EXISTS events_no_update BEFORE UPDATE ON events
                BEGIN SELECT RAISE(ABORT, 'the review log is append-only'); END"""


def _migrate_1_to_2(conn: sqlite3.Connection) -> None:
    # every event gets a UUID: the key that makes copies between logs and retried writes
    # idempotent. Events written before have a name-based one (the same in every copy of the
    # file); the update trigger is lifted for this one step inside its transaction.
    conn.execute("DROP TRIGGER IF EXISTS events_no_update")
    conn.execute("ALTER TABLE events ADD COLUMN uuid TEXT")
    old = conn.execute(f"SELECT event_id, {', '.join(ROW_COLUMNS[:-1])} FROM events").fetchall()
    for row in old:
        conn.execute("UPDATE events SET uuid = ? WHERE event_id = ?", (legacy_uuid(row[1:]), row[0]))
    conn.execute("CREATE UNIQUE INDEX IF NOT EXISTS events_uuid ON events (uuid)")
    conn.execute("""CREATE TRIGGER IF NOT EXISTS events_need_uuid BEFORE INSERT ON events
                    WHEN NEW.uuid IS NULL
                    BEGIN SELECT RAISE(ABORT, 'a review event needs its uuid'); END""")
    conn.execute(_NO_UPDATE)


#: ``MIGRATIONS[v]`` brings a schema from version ``v`` to ``v + 1``. To change the schema,
#: append a function and raise SCHEMA_VERSION; never edit a released step.
MIGRATIONS = [_migrate_0_to_1, _migrate_1_to_2]


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
    if 0 < version < SCHEMA_VERSION:
        _check_format(conn, path)
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


def _check_format(conn: sqlite3.Connection, path: str) -> None:
    try:
        fmt = conn.execute("SELECT value FROM meta WHERE key = 'format'").fetchone()
    except sqlite3.DatabaseError:
        fmt = None
    if not fmt or fmt[0] != "sweepbook-review-log":
        raise ReviewLogError(f"{path}: this SQLite file is not a sweepbook review log")


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
    """Append-only review events of a lot, in one SQLite file or on a PostgreSQL server.

    Parameters
    ----------
    target : str or Path
        A path: the SQLite file, created (with its folder's permission) on first use; use
        :meth:`for_folder` for the default ``review.sqlite`` beside the captures. A URL
        ``postgresql://user@host:port/dbname[?sslmode=...]``: the team's server
        (:class:`kit.review.server.ServerReviewLog`); the password comes from ``PGPASSWORD``
        or the PostgreSQL password file, never from the URL.

    Examples
    --------
    >>> log = ReviewLog.for_folder("demo_data/lot")          # doctest: +SKIP
    >>> log.add(cap, "verdict", value="accept", author="r.okafor")  # doctest: +SKIP
    >>> log.state()                                          # doctest: +SKIP
    """

    def __new__(cls, target: Any = None, *args: Any, **kwargs: Any) -> "ReviewLog":
        if cls is ReviewLog and is_server_url(target):
            from kit.review.server import ServerReviewLog

            return super().__new__(ServerReviewLog)
        return super().__new__(cls)

    def __init__(self, path: str | os.PathLike) -> None:
        self.path = Path(path)
        if self.path.is_dir():
            raise ReviewLogError(f"{self.path}: is a folder; give a file, or use "
                                 f"ReviewLog.for_folder({str(self.path)!r})")
        self._conn: Any = None
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

    @property
    def location(self) -> str:
        """Where the log lives, safe to print or store: the file, or the URL without password."""
        return str(self.path)

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
            _check_format(conn, str(self.path))
        except sqlite3.DatabaseError as exc:
            raise ReviewLogError(f"{self.path}: cannot open the review log ({exc}); if the file "
                                 "is not a sweepbook review log, choose another name") from None
        if str(mode).lower() != "wal":
            conn.close()
            raise ReviewLogError(f"{self.path}: the file system refused write-ahead logging "
                                 f"(journal mode {mode!r}); keep the log on a local disk")
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
        return f"{type(self).__name__}({self.location!r})"

    @property
    def schema_version(self) -> int:
        """The schema version of the open file."""
        return int(self._connect().execute("PRAGMA user_version").fetchone()[0])

    # ---- writing
    def _row(self, capture: Any, kind: str, text: str | None, value: Any,
             author: str | None, event_uuid: Any = None) -> tuple:
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
                value_num, text, str(who), _kit_version(), key)

    def add(self, capture: Any, kind: str, text: str | None = None, value: Any = None,
            author: str | None = None, uuid: Any = None) -> int:
        """Append one event; returns its id (its order of arrival in this log).

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
        uuid : str or uuid.UUID, optional
            The event's key; a new random one by default. Writing an event again with the
            same uuid stores nothing new and returns the id of the stored one.
        """
        row = self._row(capture, kind, text, value, author, uuid)
        return self._write([row])[0]

    def add_many(self, events: Iterable[dict[str, Any]]) -> list[int]:
        """Append several events in ONE transaction: all of them are kept, or none.

        ``events`` yields dicts with the keyword arguments of :meth:`add`.
        """
        return self._write([self._row(e["capture"], e["kind"], e.get("text"), e.get("value"),
                                      e.get("author"), e.get("uuid")) for e in events])

    def import_rows(self, rows: Iterable[Sequence[Any]]) -> int:
        """Store events copied from another log, as they are (columns :data:`ROW_COLUMNS`).

        An event whose uuid is already here is skipped. Returns how many were new.
        """
        have = self.uuids()
        new = [tuple(r) for r in rows if str(r[-1]) not in have]
        for k in range(0, len(new), 2000):  # each batch is atomic; a rerun completes the rest
            self._write(new[k:k + 2000])
        return len(new)

    _INSERT = (f"INSERT INTO events ({', '.join(ROW_COLUMNS)}) VALUES "
               f"({', '.join('?' * len(ROW_COLUMNS))}) ON CONFLICT (uuid) DO NOTHING")

    def _commit(self, conn: Any) -> None:
        conn.execute("COMMIT")

    def _write(self, rows: list[tuple]) -> list[int]:
        conn = self._connect()
        ids: list[int] = []
        conn.execute("BEGIN IMMEDIATE")
        try:
            for row in rows:
                cur = conn.execute(self._INSERT, row)
                if cur.rowcount == 1:
                    ids.append(int(cur.lastrowid))
                else:  # already stored: the id it has
                    ids.append(int(conn.execute("SELECT event_id FROM events WHERE uuid = ?",
                                                (row[-1],)).fetchone()[0]))
            self._commit(conn)
        except BaseException:
            if conn.in_transaction:
                conn.execute("ROLLBACK")
            raise
        return ids

    # ---- reading (back-end part)
    _TABLE, _MARK = "events", "?"  # the events table and the parameter mark of the driver

    def _select_sql(self, sha256: str | None) -> tuple[str, tuple]:
        """The parameterised query of the events (of one capture), in order of arrival."""
        where = "" if sha256 is None else f" WHERE sha256 = {self._MARK}"
        return (f"SELECT {', '.join(EVENT_COLUMNS)} FROM {self._TABLE}{where} ORDER BY event_id",
                () if sha256 is None else (sha256,))

    def _select(self, sha256: str | None = None) -> list[tuple]:
        return self._connect().execute(*self._select_sql(sha256)).fetchall()

    def uuids(self) -> set[str]:
        """The uuids of every stored event."""
        return {r[0] for r in self._connect().execute("SELECT uuid FROM events")}

    def __len__(self) -> int:
        return int(self._connect().execute("SELECT COUNT(*) FROM events").fetchone()[0])

    def check(self) -> str:
        """SQLite's own integrity check: ``"ok"`` or the problems found."""
        rows = self._connect().execute("PRAGMA integrity_check").fetchall()
        return "; ".join(str(r[0]) for r in rows)

    # ---- reading (shared)
    def rows(self) -> list[tuple]:
        """Every event as a tuple of :data:`ROW_COLUMNS` (what a copy to another log needs)."""
        return [tuple(r[1:]) for r in self._select()]

    def events(self, capture: Any = None):
        """All events (or those of one capture) as a DataFrame, in order of arrival.

        Columns: event_id, utc, capture, sha256, path, kind, value, value_num, text,
        author, kit_version, uuid.
        """
        import pandas as pd

        sha = None if capture is None else capture_identity(capture)["sha256"]
        return pd.DataFrame(self._select(sha), columns=EVENT_COLUMNS)

    def state(self):
        """The current review state, one row per capture (a view over the events).

        The latest verdict by UTC time wins (ties broken by uuid, so every copy of a log
        agrees); the history stays in :meth:`events`. Columns: capture, sha256, path,
        verdict, verdict_author, verdict_utc, verdict_text, retest_requested (a retest
        request or a "retest" verdict newer than the last accept/reject), tags (sorted,
        "; "-joined), notes (count), last_note, markers (count), events (count), last_utc.
        """
        return state_of(self.events())


STATE_COLUMNS = ["capture", "sha256", "path", "verdict", "verdict_author", "verdict_utc",
                 "verdict_text", "retest_requested", "tags", "notes", "last_note", "markers",
                 "events", "last_utc"]


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


def as_review_log(log: Any) -> ReviewLog | None:
    """A :class:`ReviewLog` from a log, a path or a URL (None stays None)."""
    if log is None or isinstance(log, ReviewLog):
        return log
    if isinstance(log, (str, os.PathLike)):
        return ReviewLog(log)
    raise ReviewLogError(f"review_log must be a kit.ReviewLog, a path or a postgresql:// URL, "
                         f"got {type(log).__name__}")
