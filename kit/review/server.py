"""The review log on a PostgreSQL server that a team shares (``ReviewLog("postgresql://...")``).

Same events, same API and same guarantees as the SQLite file (:mod:`kit.review.log`), for
many reviewers on many machines:

* **Append-only, enforced by the server.** A trigger refuses UPDATE, DELETE and TRUNCATE on
  the events table for every role, the owner included; the role the kit writes with gets
  only SELECT and INSERT (:func:`init_server` ``writer=``), so the server refuses the rest
  before any trigger runs [1]_ [2]_.
* **Idempotent writes.** Every event carries a UUID made by the client; the insert is
  ``ON CONFLICT (uuid) DO NOTHING`` [3]_, so a batch written again after a lost connection
  (or copied again by :mod:`kit.review.sync`) is stored once. A batch is one transaction: a
  writer killed in the middle leaves nothing of it [4]_.
* **Faults.** A dropped connection is reopened and the batch sent again (same UUIDs); a
  server that stays away gives a :class:`kit.review.log.ReviewLogError` naming the server
  and what to do. Nothing committed is lost: it is on the server.
* **No secrets.** The password comes from ``PGPASSWORD`` or the password file
  (``~/.pgpass``, ``PGPASSFILE``) [5]_; a URL that holds one is refused, and the URL is shown
  or stored only through :func:`safe_url`. Every statement is parameterised; other URL
  parameters (``sslmode``, ``connect_timeout``...) pass through to libpq unchanged.
* **Schema versions** in ``review_meta``; :data:`MIGRATIONS` run under an advisory lock, by
  a role allowed to create tables (the owner: ``sweepbook review init URL``).

The driver is psycopg 3, the optional extra ``pip install 'sweepbook[team]'``.

References
----------
.. [1] PostgreSQL 15 documentation, "CREATE TRIGGER" and "Trigger Functions" (PL/pgSQL,
   ``RAISE EXCEPTION`` aborts the statement and its transaction).
.. [2] PostgreSQL 15 documentation, "Privileges" (ddl-priv) and "GRANT".
.. [3] PostgreSQL 15 documentation, "INSERT", section "ON CONFLICT Clause".
.. [4] PostgreSQL 15 documentation, "Transactions" (tutorial-transactions): a transaction
   that is not committed leaves no trace.
.. [5] PostgreSQL 15 documentation, "libpq - Connection Strings" (connection URIs,
   ``sslmode``), "Environment Variables" (``PGPASSWORD``) and "The Password File".
"""

from __future__ import annotations

import os
import time
import uuid as uuidlib
from datetime import datetime, timezone
from typing import Any
from urllib.parse import parse_qsl, urlencode, urlsplit, urlunsplit

from kit.review.events import ROW_COLUMNS, ReviewLogError, select_sql

#: Current schema version on the server, stored in ``review_meta``.
SCHEMA_VERSION = 1
FORMAT = "sweepbook-review-log"
EVENTS = "review_events"
#: How often a write or read is tried again after the connection dropped.
RETRIES = 2
#: Seconds libpq waits for the server to answer a connection (unless the URL says otherwise).
CONNECT_TIMEOUT_S = 10
#: Key of the advisory lock that serialises migrations (any constant; "sweepbook" in hex).
_LOCK_KEY = 0x7377656570626F6F
_EXTRA = "pip install 'sweepbook[team]'"


class ServerUnreachable(ReviewLogError):
    """The server did not answer (down, unreachable, or the connection dropped)."""


def _psycopg():
    try:
        import psycopg
    except ImportError:
        raise ReviewLogError("a postgresql:// review log needs the PostgreSQL driver psycopg 3: "
                             f"{_EXTRA}") from None
    return psycopg


def safe_url(url: str) -> str:
    """The URL without its password (in the user part or a ``password=`` parameter)."""
    parts = urlsplit(url.strip())
    host = parts.hostname or ""
    if ":" in host:  # an IPv6 address keeps its brackets
        host = f"[{host}]"
    netloc = host + (f":{parts.port}" if parts.port else "")
    if parts.username:
        netloc = f"{parts.username}@{netloc}"
    query = urlencode([(k, v) for k, v in parse_qsl(parts.query, keep_blank_values=True)
                       if k.lower() != "password"])
    return urlunsplit((parts.scheme, netloc, parts.path, query, ""))


def _has_password(url: str) -> bool:
    parts = urlsplit(url.strip())
    return bool(parts.password) or any(k.lower() == "password" for k, _ in parse_qsl(parts.query))


# --------------------------------------------------------------------------- schema
_APPEND_ONLY = """
CREATE OR REPLACE FUNCTION review_events_append_only() RETURNS trigger
LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'the review log is append-only: % on review_events refused', TG_OP;
END
$$"""


def _migrate_0_to_1(cur: Any) -> None:
    cur.execute("CREATE TABLE review_meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)")
    cur.execute("""CREATE TABLE review_events (
        event_id BIGINT GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
        uuid UUID NOT NULL UNIQUE,
        utc TIMESTAMPTZ NOT NULL,
        capture TEXT,
        sha256 TEXT NOT NULL,
        path TEXT,
        kind TEXT NOT NULL CHECK (kind IN ('note','marker','verdict','retest','tag')),
        value TEXT,
        value_num DOUBLE PRECISION,
        text TEXT,
        author TEXT NOT NULL,
        kit_version TEXT NOT NULL)""")
    cur.execute("CREATE INDEX review_events_sha256 ON review_events (sha256)")
    cur.execute(_APPEND_ONLY)
    cur.execute("""CREATE TRIGGER review_events_no_change BEFORE UPDATE OR DELETE ON review_events
                   FOR EACH ROW EXECUTE FUNCTION review_events_append_only()""")
    cur.execute("""CREATE TRIGGER review_events_no_truncate BEFORE TRUNCATE ON review_events
                   FOR EACH STATEMENT EXECUTE FUNCTION review_events_append_only()""")
    cur.execute("INSERT INTO review_meta VALUES ('format', %s), ('created_utc', %s)",
                (FORMAT, datetime.now(timezone.utc).isoformat(timespec="seconds")))


#: ``MIGRATIONS[v]`` brings the server's schema from version ``v`` to ``v + 1``; append a step
#: and raise SCHEMA_VERSION to change it, never edit a released one.
MIGRATIONS = [_migrate_0_to_1]


def _version(cur: Any) -> int:
    cur.execute("SELECT to_regclass('review_meta') IS NOT NULL")
    if not cur.fetchone()[0]:
        return 0
    cur.execute("SELECT key, value FROM review_meta WHERE key IN ('format', 'schema_version')")
    meta = dict(cur.fetchall())
    if meta.get("format") != FORMAT:
        raise ReviewLogError("the table review_meta of this database is not a sweepbook review "
                             "log; use another database")
    return int(meta.get("schema_version", 0))


def migrate(conn: Any, where: str) -> int:
    """Bring the server's schema up to :data:`SCHEMA_VERSION` (needs the right to create
    tables); returns the version. All steps run in one transaction under an advisory lock."""
    psycopg = _psycopg()
    with conn.cursor() as cur:
        version = _version(cur)
        _refuse_newer(version, where)
        if version == SCHEMA_VERSION:
            return version
        try:
            with conn.transaction():
                cur.execute("SELECT pg_advisory_xact_lock(%s)", (_LOCK_KEY,))
                version = _version(cur)  # another client may have migrated meanwhile
                _refuse_newer(version, where)
                while version < SCHEMA_VERSION:
                    MIGRATIONS[version](cur)
                    version += 1
                cur.execute("INSERT INTO review_meta VALUES ('schema_version', %s) ON CONFLICT "
                            "(key) DO UPDATE SET value = EXCLUDED.value", (str(version),))
        except psycopg.errors.InsufficientPrivilege:
            raise ReviewLogError(
                f"{where}: this database has no sweepbook review log of schema version "
                f"{SCHEMA_VERSION} (it has {version}) and this role may not create it; the "
                "database owner runs `sweepbook review init URL --writer ROLE` once") from None
    return version


def _refuse_newer(version: int, where: str) -> None:
    if version > SCHEMA_VERSION:
        raise ReviewLogError(f"{where}: the review log has schema version {version}, newer than "
                             f"this kit understands ({SCHEMA_VERSION}); update sweepbook")


def init_server(url: str, writer: str | None = None) -> int:
    """Create (or migrate) the review log in the database of ``url``, as its owner.

    Parameters
    ----------
    url : str
        ``postgresql://owner@host:port/dbname``; the password from the environment.
    writer : str, optional
        The role the kit's users write with: it gets SELECT and INSERT on the events and
        SELECT on the meta table, nothing else (so the server refuses its UPDATE/DELETE).

    Returns
    -------
    int
        The schema version.
    """
    psycopg = _psycopg()
    from psycopg import sql

    log = ServerStore(url)
    conn = log.connect()
    try:
        if writer:
            with conn.transaction(), conn.cursor() as cur:
                role = sql.Identifier(writer)
                cur.execute(sql.SQL("GRANT SELECT, INSERT ON review_events TO {}").format(role))
                cur.execute(sql.SQL("GRANT SELECT ON review_meta TO {}").format(role))
                cur.execute(sql.SQL("REVOKE UPDATE, DELETE, TRUNCATE ON review_events FROM {}")
                            .format(role))
    except psycopg.Error as exc:
        raise ReviewLogError(f"{log.location}: cannot grant the writer role {writer!r}: "
                             f"{_first_line(exc)}") from None
    finally:
        log.close()
    return SCHEMA_VERSION


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip()
    return text.splitlines()[0] if text else type(exc).__name__


# --------------------------------------------------------------------------- the log
class ServerStore:
    """The PostgreSQL back end of :class:`kit.ReviewLog` (made by ``kit.ReviewLog(url)``);
    the same methods as :class:`kit.review.log.SQLiteStore`.

    Parameters
    ----------
    url : str
        ``postgresql://user@host:port/dbname``, optionally with libpq parameters such as
        ``?sslmode=verify-full``. No password: it comes from ``PGPASSWORD`` or the password
        file. The schema is created on first use when the role may create tables;
        otherwise the owner creates it with :func:`init_server`.
    """

    def __init__(self, url: str) -> None:  # noqa: D107 - documented on the class
        url = str(url).strip()
        self.url = safe_url(url)
        if _has_password(url):
            raise ReviewLogError(f"{self.url}: the URL holds a password; give it in PGPASSWORD "
                                 "or the PostgreSQL password file (~/.pgpass), never in the URL")
        self._dsn = url
        self._conn = None
        self._pid = None

    @property
    def location(self) -> str:
        """The URL without password."""
        return self.url

    def _unreachable(self, exc: BaseException) -> ReviewLogError:
        return ServerUnreachable(
            f"{self.url}: cannot reach the review log server ({_first_line(exc)}). Check that "
            "the server runs and that the URL, user and password (PGPASSWORD or ~/.pgpass) are "
            "right, then write again: events already stored stay on the server, and events "
            "written again are stored once (by uuid)")

    def connect(self) -> Any:
        if self._conn is not None and self._pid == os.getpid() and not self._conn.closed:
            return self._conn
        psycopg = _psycopg()
        try:
            conn = psycopg.connect(self._dsn, autocommit=True, application_name="sweepbook",
                                   **({} if "connect_timeout" in self._dsn
                                      else {"connect_timeout": CONNECT_TIMEOUT_S}))
        except psycopg.OperationalError as exc:
            raise self._unreachable(exc) from None
        except psycopg.ProgrammingError as exc:
            raise ReviewLogError(f"{self.url}: not a usable PostgreSQL URL ({_first_line(exc)})"
                                 ) from None
        try:
            conn.execute("SET TIME ZONE 'UTC'")
            migrate(conn, self.url)
        except BaseException:
            conn.close()
            raise
        self._conn, self._pid = conn, os.getpid()
        return conn

    def __del__(self) -> None:
        # close quietly: a log dropped without close() must not leave an open connection
        try:
            self.close()
        except Exception:  # noqa: BLE001 - interpreter shutdown, broken connection
            pass

    def _run(self, work):
        """``work(conn)`` with reconnection: tried again while the connection drops."""
        psycopg = _psycopg()
        for attempt in range(RETRIES + 1):
            try:
                conn = self.connect()
            except ServerUnreachable:
                if attempt == RETRIES:
                    raise
                time.sleep(0.5 * (attempt + 1))
                continue
            try:
                return work(conn)
            except psycopg.OperationalError as exc:
                if not (conn.closed or conn.broken):
                    raise ReviewLogError(f"{self.url}: {_first_line(exc)}") from None
                self.close()
                if attempt == RETRIES:
                    raise self._unreachable(exc) from None
                time.sleep(0.5 * (attempt + 1))
            except psycopg.Error as exc:
                raise ReviewLogError(f"{self.url}: the server refused: {_first_line(exc)}"
                                     ) from None

    @property
    def schema_version(self) -> int:
        """The schema version on the server."""
        def work(conn):
            with conn.cursor() as cur:
                return _version(cur)
        return int(self._run(work))

    # ---- writing
    _INSERT = (f"INSERT INTO {EVENTS} ({', '.join(ROW_COLUMNS)}) VALUES "
               f"({', '.join(['%s'] * len(ROW_COLUMNS))}) ON CONFLICT (uuid) DO NOTHING")

    def _commit(self, conn: Any) -> None:
        conn.commit()

    def write(self, rows: list[tuple]) -> list[int]:
        """Store ``rows`` in one transaction (sent again, same uuids, if the connection drops);
        an event whose uuid is stored already is skipped. Returns the ids in row order."""
        params = [(*r[:-1], uuidlib.UUID(str(r[-1]))) for r in rows]
        params = [(datetime.fromisoformat(p[0]), *p[1:]) for p in params]
        keys = [p[-1] for p in params]

        def work(conn):
            conn.autocommit = False
            try:
                with conn.cursor() as cur:
                    cur.executemany(self._INSERT, params)
                    cur.execute(f"SELECT uuid, event_id FROM {EVENTS} WHERE uuid = ANY(%s)",
                                (keys,))
                    ids = dict(cur.fetchall())
                self._commit(conn)
            except BaseException:
                if not (conn.closed or conn.broken):
                    conn.rollback()
                raise
            finally:
                if not (conn.closed or conn.broken):
                    conn.autocommit = True
            return [int(ids[k]) for k in keys]

        return self._run(work) if params else []

    # ---- reading
    def close(self) -> None:
        """Close the connection (the store reconnects on the next use)."""
        if self._conn is not None and self._pid == os.getpid():
            self._conn.close()
        self._conn = None

    def _fetch(self, sql: str, args: tuple = ()) -> list[tuple]:
        """All rows of one parameterised query (reconnecting when the connection dropped)."""
        def work(conn):
            with conn.cursor() as cur:
                cur.execute(sql, args)
                return cur.fetchall()
        return self._run(work)

    def select(self, sha256: str | None = None) -> list[tuple]:
        """Rows of :data:`kit.review.events.EVENT_COLUMNS` (UTC time and uuid as text)."""
        return [(r[0], r[1].astimezone(timezone.utc).isoformat(timespec="microseconds"),
                 *r[2:-1], str(r[-1])) for r in self._fetch(*select_sql(EVENTS, "%s", sha256))]

    def uuids(self) -> set[str]:
        """The uuids of every stored event."""
        return {str(r[0]) for r in self._fetch(f"SELECT uuid FROM {EVENTS}")}

    def count(self) -> int:
        return int(self._fetch(f"SELECT COUNT(*) FROM {EVENTS}")[0][0])

    def check(self) -> str:
        """``"ok"`` when the schema is current and every uuid is stored once."""
        twice = int(self._fetch(f"SELECT COUNT(*) - COUNT(DISTINCT uuid) FROM {EVENTS}")[0][0])
        problems = []
        if self.schema_version != SCHEMA_VERSION:
            problems.append(f"schema version {self.schema_version}, expected {SCHEMA_VERSION}")
        if twice:
            problems.append(f"{twice} event(s) stored twice")
        return "; ".join(problems) or "ok"
