"""The server back end only: lost connections, a server that goes away, credentials, URLs.

Behaviour of PostgreSQL relied on (PostgreSQL 15 documentation): ``pg_terminate_backend``
ends a session as a lost connection would ("System Administration Functions"); ``pg_ctl stop
-m immediate`` stops the server without a clean shutdown and the next start recovers every
committed transaction from the write-ahead log ("pg_ctl", "Reliability and the Write-Ahead
Log"); libpq reads the password from ``PGPASSWORD`` or the password file and passes URL
parameters such as ``sslmode`` through ("libpq - Connection Strings", "The Password File").
What the contract of both back ends guarantees is in tests/test_review_contract.py.
"""

from __future__ import annotations

import json
import sys
import uuid

import pytest

import kit
from kit.review.log import ReviewLog, ReviewLogError


@pytest.fixture
def url(pg_server):
    return pg_server.url(pg_server.new_database())


def _terminate(pg_server, url):
    with pg_server.admin() as conn:
        n = conn.execute("SELECT count(pg_terminate_backend(pid)) FROM pg_stat_activity "
                         "WHERE datname = %s AND application_name = 'sweepbook'",
                         (url.rsplit("/", 1)[1],)).fetchone()[0]
    return n


def test_dropped_connection_reopened_and_retry_stored_once(pg_server, url):
    """The server drops the kit's connection between writes: the next write reconnects and
    succeeds, and the batch sent again with the same uuids is stored once."""
    log = ReviewLog(url)
    batch = [{"capture": {"sha256": f"s{i}"}, "kind": "note", "text": f"n{i}",
              "uuid": uuid.uuid4()} for i in range(10)]
    first = log.add_many(batch)
    assert _terminate(pg_server, url) == 1
    assert log.add_many(batch) == first  # reconnected; nothing stored twice
    assert _terminate(pg_server, url) == 1
    log.add({"sha256": "s0"}, "verdict", value="accept")
    assert len(log) == 11 and log.check() == "ok"


def test_lost_commit_acknowledgement_retried_once(url, monkeypatch):
    """The connection drops right after the server committed, before the kit heard it: the
    kit sends the batch again (same uuids) and it is stored once, with the same ids."""
    import psycopg

    log = ReviewLog(url)
    real = type(log._store)._commit
    calls = []

    def commit_then_drop(self, conn):
        real(self, conn)
        calls.append(1)
        if len(calls) == 1:
            conn.close()
            raise psycopg.OperationalError("server closed the connection unexpectedly")

    monkeypatch.setattr(type(log._store), "_commit", commit_then_drop)
    ids = log.add_many([{"capture": {"sha256": "a"}, "kind": "note", "text": str(i)}
                        for i in range(5)])
    assert len(calls) == 2 and len(log) == 5
    assert list(log.events()["event_id"]) == ids


def test_server_goes_away_clear_error_nothing_lost(pg_server, tmp_path, monkeypatch):
    """A server stopped without a clean shutdown: the kit's error names the server (without
    password) and what to do; after the restart every committed event is there."""
    from pg_server import TempPostgres

    own = TempPostgres(pg_server.bindir).start()
    try:
        monkeypatch.setenv("PGPASSFILE", str(own.passfile))
        target = own.url(own.new_database(), query="connect_timeout=3")
        log = ReviewLog(target)
        ids = log.add_many([{"capture": {"sha256": "a"}, "kind": "note", "text": str(i)}
                            for i in range(25)])
        own.crash()
        with pytest.raises(ReviewLogError) as err:
            log.add({"sha256": "a"}, "verdict", value="accept")
        msg = str(err.value)
        assert f"127.0.0.1:{own.port}" in msg and "cannot reach" in msg
        assert "check that the server runs" in msg.lower() and own.password not in msg
        own.restart()
        assert list(log.events()["event_id"]) == ids  # reconnects; every committed event
        log.add({"sha256": "a"}, "verdict", value="accept")
        assert len(log) == 26
        log.close()
    finally:
        own.stop()


def test_password_never_in_url_or_messages(pg_server, url, monkeypatch):
    """A URL with a password is refused (the message does not repeat it); PGPASSWORD works
    without a password file; a wrong password gives a clear error without the password."""
    from kit.review.server import safe_url

    secret = "s3cr3t-in-url"
    with pytest.raises(ReviewLogError, match="PGPASSWORD") as err:
        ReviewLog(url.replace("kit_writer@", f"kit_writer:{secret}@"))
    assert secret not in str(err.value)
    with pytest.raises(ReviewLogError):
        ReviewLog(url + f"?password={secret}")
    assert safe_url(f"postgresql://u:{secret}@h:5/db?sslmode=require&password={secret}") == \
        "postgresql://u@h:5/db?sslmode=require"
    monkeypatch.setenv("PGPASSFILE", "/nonexistent/pgpass")
    monkeypatch.setenv("PGPASSWORD", pg_server.password)
    log = ReviewLog(url)
    log.add({"sha256": "a"}, "note", text="via PGPASSWORD")
    assert pg_server.password not in repr(log) and log.location == url
    log.close()
    monkeypatch.setenv("PGPASSWORD", "wrong-password")
    with pytest.raises(ReviewLogError, match="password") as err:
        ReviewLog(url)
    assert "wrong-password" not in str(err.value)


def test_sslmode_passes_through(url):
    """``sslmode`` reaches libpq: ``disable`` connects to this server (no TLS), ``require``
    is refused by libpq because the server offers no TLS."""
    ReviewLog(url + "?sslmode=disable").close()
    with pytest.raises(ReviewLogError, match="(?i)ssl"):
        ReviewLog(url + "?sslmode=require&connect_timeout=3")


def test_without_psycopg_the_message_names_the_extra(monkeypatch):
    """Without the driver, a URL gives a message naming the optional extra."""
    monkeypatch.setitem(sys.modules, "psycopg", None)
    with pytest.raises(ReviewLogError, match=r"sweepbook\[team\]"):
        ReviewLog("postgresql://someone@127.0.0.1:1/db")


def test_writer_cannot_create_the_schema(pg_server):
    """The kit's role on a database without a review log: a clear message naming the one
    command the owner runs; the owner's `sweepbook review init` then makes it usable."""
    from kit.batch.cli import main

    name = pg_server.new_database(init=False)
    with pytest.raises(ReviewLogError, match="sweepbook review init"):
        ReviewLog(pg_server.url(name))
    admin_url = f"postgresql://sweepbook_admin@/{name}?host={pg_server.sock}&port={pg_server.port}"
    assert main(["review", "init", admin_url, "--writer", "kit_writer"]) == 0
    log = ReviewLog(pg_server.url(name))
    log.add({"sha256": "a"}, "note", text="now writable")
    assert len(log) == 1


def test_export_records_the_url_without_password(pg_server, url, lot_capture, tmp_path):
    """provenance.json names the server log by its URL (no password) and the export holds
    its events."""
    _, cap = lot_capture
    ReviewLog(url).add(cap, "verdict", value="accept", author="q.lead")
    out = kit.export(tmp_path / "out", [cap], review_log=url)
    text = (out / "provenance.json").read_text()
    assert json.loads(text)["review_log"] == url and pg_server.password not in text
    import pandas as pd
    assert list(pd.read_csv(out / "events.csv")["author"]) == ["q.lead"]
