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

import os
import sqlite3
import uuid as uuidlib
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

from kit.review.events import (
    EVENT_COLUMNS,
    ROW_COLUMNS,
    ReviewLogError,
    capture_identity,
    event_row,
    is_server_url,
    select_sql,
    state_of,
    utc_now,
)

DEFAULT_NAME = "review.sqlite"
#: Current schema version of the SQLite file, stored in ``PRAGMA user_version``.
SCHEMA_VERSION = 2
#: How long a writer waits for another one [s].
BUSY_TIMEOUT_S = 30.0
#: Name space of the name-based UUIDs given to events stored before schema version 2.
LEGACY_NAMESPACE = uuidlib.UUID("0f5d3a52-8e8c-4c8e-9a43-6f1f0c1d2b7e")


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


# --------------------------------------------------------------------------- SQLite store
class SQLiteStore:
    """The SQLite back end of :class:`ReviewLog`: one file, opened in write-ahead-log mode.

    A store writes and reads rows; :class:`ReviewLog` validates events and builds tables.
    The PostgreSQL store (:class:`kit.review.server.ServerStore`) has the same methods.
    """

    def __init__(self, path: Path) -> None:
        self.path = path
        self._conn: sqlite3.Connection | None = None
        self._pid: int | None = None

    @property
    def location(self) -> str:
        return str(self.path)

    def connect(self) -> sqlite3.Connection:
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
        if self._conn is not None and self._pid == os.getpid():
            self._conn.close()
        self._conn = None

    @property
    def schema_version(self) -> int:
        return int(self.connect().execute("PRAGMA user_version").fetchone()[0])

    _INSERT = (f"INSERT INTO events ({', '.join(ROW_COLUMNS)}) VALUES "
               f"({', '.join('?' * len(ROW_COLUMNS))}) ON CONFLICT (uuid) DO NOTHING")

    def _commit(self, conn: Any) -> None:
        conn.execute("COMMIT")

    def write(self, rows: list[tuple]) -> list[int]:
        """Store ``rows`` (:data:`ROW_COLUMNS`) in one transaction; an event whose uuid is
        stored already is skipped. Returns the event ids, in the order of ``rows``."""
        conn = self.connect()
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

    def select(self, sha256: str | None = None) -> list[tuple]:
        """Rows of :data:`EVENT_COLUMNS`, all or those of one capture, in order of arrival."""
        return self.connect().execute(*select_sql("events", "?", sha256)).fetchall()

    def uuids(self) -> set[str]:
        return {r[0] for r in self.connect().execute("SELECT uuid FROM events")}

    def count(self) -> int:
        return int(self.connect().execute("SELECT COUNT(*) FROM events").fetchone()[0])

    def check(self) -> str:
        rows = self.connect().execute("PRAGMA integrity_check").fetchall()
        return "; ".join(str(r[0]) for r in rows)


# --------------------------------------------------------------------------- the log
class ReviewLog:
    """Append-only review events of a lot, in one SQLite file or on a PostgreSQL server.

    Parameters
    ----------
    path : str or Path
        A path: the SQLite file, created (with its folder's permission) on first use; use
        :meth:`for_folder` for the default ``review.sqlite`` beside the captures. A URL
        ``postgresql://user@host:port/dbname[?sslmode=...]``: the team's server
        (:mod:`kit.review.server`); the password comes from ``PGPASSWORD`` or the PostgreSQL
        password file, never from the URL.

    Attributes
    ----------
    path : Path or None
        The SQLite file (None for a server).
    location : str
        The file, or the server's URL without password: safe to print or store.

    Examples
    --------
    >>> log = ReviewLog.for_folder("demo_data/lot")          # doctest: +SKIP
    >>> log.add(cap, "verdict", value="accept", author="r.okafor")  # doctest: +SKIP
    >>> log.state()                                          # doctest: +SKIP
    """

    def __init__(self, path: str | os.PathLike) -> None:
        if is_server_url(path):
            from kit.review.server import ServerStore

            self.path = None
            self._store: Any = ServerStore(str(path))
        else:
            self.path = Path(path)
            if self.path.is_dir():
                raise ReviewLogError(f"{self.path}: is a folder; give a file, or use "
                                     f"ReviewLog.for_folder({str(self.path)!r})")
            self._store = SQLiteStore(self.path)
        self._connect()  # open at once so a bad file or server is reported here

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
        return self._store.location

    # ---- connection
    def _connect(self) -> Any:
        return self._store.connect()

    def close(self) -> None:
        """Close the connection (the log reopens on the next use)."""
        self._store.close()

    def __enter__(self) -> "ReviewLog":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"ReviewLog({self.location!r})"

    @property
    def schema_version(self) -> int:
        """The schema version of the open file or server."""
        return int(self._store.schema_version)

    # ---- writing
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
        return self._store.write([event_row(capture, kind, text, value, author, uuid)])[0]

    def add_many(self, events: Iterable[dict[str, Any]]) -> list[int]:
        """Append several events in ONE transaction: all of them are kept, or none.

        ``events`` yields dicts with the keyword arguments of :meth:`add`.
        """
        return self._store.write([event_row(e["capture"], e["kind"], e.get("text"),
                                            e.get("value"), e.get("author"), e.get("uuid"))
                                  for e in events])

    def import_rows(self, rows: Iterable[Sequence[Any]]) -> int:
        """Store events copied from another log, as they are (columns :data:`ROW_COLUMNS`).

        An event whose uuid is already here is skipped. Returns how many were new.
        """
        have = self.uuids()
        new = [tuple(r) for r in rows if str(r[-1]) not in have]
        for k in range(0, len(new), 2000):  # each batch is atomic; a rerun completes the rest
            self._store.write(new[k:k + 2000])
        return len(new)

    def uuids(self) -> set[str]:
        """The uuids of every stored event."""
        return self._store.uuids()

    def __len__(self) -> int:
        return self._store.count()

    def check(self) -> str:
        """The store's own consistency check: ``"ok"`` or the problems found."""
        return self._store.check()

    # ---- reading (shared)
    def rows(self) -> list[tuple]:
        """Every event as a tuple of :data:`ROW_COLUMNS` (what a copy to another log needs)."""
        return [tuple(r[1:]) for r in self._store.select()]

    def events(self, capture: Any = None):
        """All events (or those of one capture) as a DataFrame, in order of arrival.

        Columns: event_id, utc, capture, sha256, path, kind, value, value_num, text,
        author, kit_version, uuid.
        """
        import pandas as pd

        sha = None if capture is None else capture_identity(capture)["sha256"]
        return pd.DataFrame(self._store.select(sha), columns=EVENT_COLUMNS)

    def state(self):
        """The current review state, one row per capture (a view over the events).

        The latest verdict by UTC time wins (ties broken by uuid, so every copy of a log
        agrees); the history stays in :meth:`events`. Columns: capture, sha256, path,
        verdict, verdict_author, verdict_utc, verdict_text, retest_requested (a retest
        request or a "retest" verdict newer than the last accept/reject), tags (sorted,
        "; "-joined), notes (count), last_note, markers (count), events (count), last_utc.
        """
        return state_of(self.events())


def as_review_log(log: Any) -> ReviewLog | None:
    """A :class:`ReviewLog` from a log, a path or a URL (None stays None)."""
    if log is None or isinstance(log, ReviewLog):
        return log
    if isinstance(log, (str, os.PathLike)):
        return ReviewLog(log)
    raise ReviewLogError(f"review_log must be a kit.ReviewLog, a path or a postgresql:// URL, "
                         f"got {type(log).__name__}")
