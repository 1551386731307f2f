"""The review log's contract, checked on BOTH back ends: the SQLite file and a real PostgreSQL.

Every test takes ``new_target`` (tests/conftest.py), parametrized over "sqlite" (a file path)
and "postgresql" (a URL of a fresh database on the throw-away server of tests/pg_server.py),
so each guarantee is tested on both. The guarantees rest on the databases' own documented
behaviour; the tests check that the kit uses it correctly:

* atomic transactions - SQLite documentation "Atomic Commit In SQLite"; PostgreSQL 15
  documentation "Transactions" (an uncommitted transaction leaves no trace);
* idempotent insert by uuid - SQLite "UPSERT" (lang_upsert.html), PostgreSQL 15 "INSERT ...
  ON CONFLICT";
* refusal of UPDATE/DELETE - SQLite "CREATE TRIGGER" (RAISE(ABORT)); PostgreSQL 15 "CREATE
  TRIGGER", "PL/pgSQL RAISE" and "Privileges" (a role without UPDATE/DELETE privilege is
  refused with SQLSTATE 42501 insufficient_privilege).
"""

from __future__ import annotations

import html
import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
import uuid
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import skrf

import kit
from kit.review.log import ReviewLog, ReviewLogError, capture_identity

ROOT = Path(__file__).resolve().parents[1]


def _cap(seed: int = 0, name: str = "disc-01"):
    from kit.capture import from_network

    rng = np.random.default_rng(seed)
    f = skrf.Frequency(1, 2, 5, unit="MHz")
    s = (rng.normal(size=5) + 1j * rng.normal(size=5)).reshape(5, 1, 1) * 0.1
    return from_network(skrf.Network(frequency=f, s=s, z0=50, name=name))


def _raw(target: str, statement: str, admin: bool = False, request=None) -> None:
    """Run one statement on the log's database outside the kit (sqlite3 or psycopg)."""
    if target.startswith("postgresql://"):
        import psycopg

        if admin:
            pg = request.getfixturevalue("pg_server")
            conninfo = pg.admin_dsn(target.rsplit("/", 1)[1])
        else:
            conninfo = target
        with psycopg.connect(conninfo, autocommit=True) as conn:
            conn.execute(statement)
    else:
        con = sqlite3.connect(target)
        try:
            con.execute(statement.replace("review_events", "events"))
            con.commit()
        finally:
            con.close()


def test_add_and_events_roundtrip(new_target):
    """Events come back in order with author, UTC time, kit version, uuid and the capture's key."""
    log = ReviewLog(new_target())
    c = _cap()
    i1 = log.add(c, "note", text="chipped edge", author="t.ibarra")
    i2 = log.add(c, "verdict", value="reject", author="t.ibarra")
    i3 = log.add(c, "marker", value=1.5e6, text="spur")
    ev = log.events()
    assert list(ev["event_id"]) == [i1, i2, i3]
    assert list(ev["kind"]) == ["note", "verdict", "marker"]
    assert ev.loc[0, "text"] == "chipped edge" and ev.loc[1, "value"] == "reject"
    assert ev.loc[2, "value_num"] == 1.5e6
    assert ev.loc[0, "sha256"] == capture_identity(c)["sha256"]
    assert ev.loc[0, "utc"].endswith("+00:00") and list(ev["utc"]) == sorted(ev["utc"])
    assert set(ev["kit_version"]) == {kit.__version__}
    assert ev.loc[2, "author"]  # OS user (or "unknown"), never empty
    assert all(uuid.UUID(u).version == 4 for u in ev["uuid"])  # RFC 9562 random UUIDs
    assert len(log.events(c)) == 3 and len(log.events({"sha256": "other"})) == 0


def test_latest_verdict_wins_history_stays(new_target):
    """state() shows the latest verdict; events() keeps the earlier ones."""
    log = ReviewLog(new_target())
    a, b = _cap(0, "a"), _cap(1, "b")
    log.add(a, "verdict", value="reject", author="x")
    log.add(a, "verdict", value="accept", author="y", text="re-measured, fine")
    log.add(b, "verdict", value="accept", author="x")
    log.add(b, "retest", text="connector loose")
    log.add(b, "tag", value="cracked")
    st = log.state().set_index("capture")
    assert st.loc["a", "verdict"] == "accept" and st.loc["a", "verdict_author"] == "y"
    assert not st.loc["a", "retest_requested"]
    assert st.loc["b", "verdict"] == "accept" and st.loc["b", "retest_requested"]
    assert st.loc["b", "tags"] == "cracked" and st.loc["b", "events"] == 3
    assert len(log.events(a)) == 2


def test_bad_events_refused_and_batch_all_or_nothing(new_target):
    """Unknown kinds, verdict values and marker frequencies are refused; a bad event inside
    add_many stores none of the batch."""
    log = ReviewLog(new_target())
    c = _cap()
    with pytest.raises(ReviewLogError, match="kind"):
        log.add(c, "comment", text="x")
    with pytest.raises(ReviewLogError, match="accept, reject, retest"):
        log.add(c, "verdict", value="ok")
    with pytest.raises(ReviewLogError, match="hertz"):
        log.add(c, "marker", value="near fs")
    with pytest.raises(ReviewLogError):
        log.add_many([{"capture": c, "kind": "note", "text": "a"},
                      {"capture": c, "kind": "verdict", "value": "maybe"}])
    assert len(log) == 0


def test_same_uuid_stored_once(new_target):
    """A batch written again with the same uuids (a retry) is stored once, same ids back."""
    log = ReviewLog(new_target())
    batch = [{"capture": {"sha256": f"s{i}"}, "kind": "note", "text": f"n{i}",
              "uuid": uuid.uuid4()} for i in range(30)]
    first = log.add_many(batch)
    again = log.add_many(batch)
    assert again == first and len(log) == 30
    assert log.add(**batch[0]) == first[0] and len(log) == 30
    assert log.events()["uuid"].is_unique
    with pytest.raises(ReviewLogError, match="uuid"):
        log.add({"sha256": "x"}, "note", text="y", uuid="not-a-uuid")


def test_update_and_delete_refused_by_the_database(new_target, request):
    """UPDATE and DELETE on the events are refused by the database itself. On the server the
    kit's role is refused by privileges (PostgreSQL "Privileges": only SELECT and INSERT were
    granted) and even the owner is refused by the append-only trigger."""
    target = new_target()
    log = ReviewLog(target)
    log.add(_cap(), "note", text="keep me")
    log.close()
    if target.startswith("postgresql://"):
        import psycopg

        for stmt in ("UPDATE review_events SET text = 'changed'", "DELETE FROM review_events",
                     "TRUNCATE review_events"):
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                _raw(target, stmt)
            with pytest.raises(psycopg.errors.RaiseException, match="append-only"):
                _raw(target, stmt, admin=True, request=request)
    else:
        for stmt in ("UPDATE review_events SET text = 'changed'", "DELETE FROM review_events"):
            with pytest.raises(sqlite3.DatabaseError, match="append-only"):
                _raw(target, stmt)
    ev = ReviewLog(target).events()
    assert list(ev["text"]) == ["keep me"]


def test_schema_version_and_newer_refused(new_target, request):
    """The schema version is recorded; a log of a newer kit is refused with a message."""
    target = new_target()
    log = ReviewLog(target)
    if target.startswith("postgresql://"):
        from kit.review.server import SCHEMA_VERSION
        assert log.schema_version == SCHEMA_VERSION
        _raw(target, f"UPDATE review_meta SET value = '{SCHEMA_VERSION + 1}' "
             "WHERE key = 'schema_version'", admin=True, request=request)
    else:
        from kit.review.log import SCHEMA_VERSION
        assert log.schema_version == SCHEMA_VERSION
        log.close()
        _raw(target, f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    log.close()
    with pytest.raises(ReviewLogError, match="newer"):
        ReviewLog(target)


_WRITER = textwrap.dedent("""
    import sys
    sys.path.insert(0, {root!r})
    from kit.review.log import ReviewLog
    log = ReviewLog({target!r})
    who = sys.argv[1]
    print("ready", flush=True)
    sys.stdin.readline()          # start together
    for i in range(500):
        log.add({{"sha256": "s" + str(i % 7), "capture": "c" + str(i % 7)}}, "note",
                text=who + "-" + str(i), author=who)
    print("done", flush=True)
""")


@pytest.mark.slow
def test_eight_writers_500_events_each(new_target):
    """Eight processes writing 500 events each at the same time: all 4000 kept, none twice
    (the check of issue 15)."""
    target = new_target()
    ReviewLog(target).close()
    code = _WRITER.format(root=str(ROOT), target=target)
    whos = [f"p{k}" for k in range(8)]
    procs = [subprocess.Popen([sys.executable, "-c", code, who], stdin=subprocess.PIPE,
                              stdout=subprocess.PIPE, text=True) for who in whos]
    try:
        for p in procs:
            assert p.stdout.readline().strip() == "ready"
        for p in procs:
            p.stdin.write("go\n")
            p.stdin.flush()
        for p in procs:
            out, _ = p.communicate(timeout=600)
            assert p.returncode == 0 and "done" in out
    finally:
        for p in procs:
            if p.poll() is None:
                p.kill()
                p.wait()
    ev = ReviewLog(target).events()
    assert len(ev) == 4000
    assert ev["uuid"].is_unique and ev["event_id"].is_unique
    for who in whos:
        assert sorted(ev.loc[ev["author"] == who, "text"]) == sorted(f"{who}-{i}" for i in range(500))


_KILLED = textwrap.dedent("""
    import sys, time
    sys.path.insert(0, {root!r})
    from kit.review.log import ReviewLog
    log = ReviewLog({target!r})
    for i in range(20):
        eid = log.add({{"sha256": "abc", "capture": "c"}}, "note", text="committed-" + str(i))
        print("committed", eid, flush=True)
    def stall(self, conn):        # every row of the batch is written, not committed
        print("inside", flush=True)
        time.sleep(120)
    type(log._store)._commit = stall
    log.add_many({{"capture": {{"sha256": "abc"}}, "kind": "note", "text": "pending-" + str(i)}}
                 for i in range(50))
""")


def test_writer_killed_mid_batch(new_target):
    """A writer killed by SIGKILL inside a batch: every committed event is there, none of the
    batch; the log stays consistent and writable."""
    target = new_target()
    code = _KILLED.format(root=str(ROOT), target=target)
    p = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, text=True)
    committed = []
    try:
        while True:
            line = p.stdout.readline()
            assert line, "writer ended early"
            if line.startswith("committed"):
                committed.append(int(line.split()[1]))
            elif line.strip() == "inside":
                break
        os.kill(p.pid, signal.SIGKILL)
    finally:
        p.wait(timeout=30)
        p.stdout.close()
    assert p.returncode == -signal.SIGKILL
    log = ReviewLog(target)
    assert log.check() == "ok"
    ev = log.events()
    assert list(ev["event_id"]) == committed
    assert list(ev["text"]) == [f"committed-{i}" for i in range(20)]
    log.add({"sha256": "abc"}, "note", text="after")
    assert len(log) == 21


def test_note_with_markup_escaped_in_lot_report(new_target, lot_capture, tmp_path):
    """A note with markup, read back from the log given as a path or URL string, appears
    escaped in the lot report (WHATWG HTML: '<' must be written as a character reference)."""
    target = new_target()
    _, cap = lot_capture
    evil = '<script>alert("x")</script><img src=x onerror=alert(1)>'
    ReviewLog(target).add(cap, "note", text=evil, author="<b>eve</b>")
    out = kit.report(tmp_path / "out" / "lot.html", [cap], review_log=target)  # a note: shown
    doc = out.read_text(encoding="utf-8")
    assert evil not in doc and "<b>eve</b>" not in doc
    assert html.escape(evil, quote=True) in doc and "&lt;b&gt;eve&lt;/b&gt;" in doc
    summ = kit.summary([cap], review_log=target)
    assert summ.loc[0, "review_last_note"] == evil


def test_state_orders_by_utc_not_arrival(new_target):
    """Events copied in late (older UTC time) do not override a newer verdict: the latest
    verdict by UTC time wins, whatever the order of arrival."""
    log = ReviewLog(new_target())
    log.add({"sha256": "p1", "capture": "p1"}, "verdict", value="accept", author="now")
    old = ("2020-01-01T00:00:00.000000+00:00", "p1", "p1", None, "verdict", "reject", None,
           None, "earlier", "0.0.1", str(uuid.uuid4()))
    assert log.import_rows([old]) == 1 and log.import_rows([old]) == 0
    st = log.state()
    assert st.loc[0, "verdict"] == "accept" and st.loc[0, "verdict_author"] == "now"
    assert list(log.events()["author"]) == ["now", "earlier"]  # arrival order kept


def test_empty_log_state(new_target):
    """An empty log has an empty state with the documented columns."""
    from kit.review.events import STATE_COLUMNS
    st = ReviewLog(new_target()).state()
    assert len(st) == 0 and list(st.columns) == STATE_COLUMNS
    assert isinstance(st, pd.DataFrame)
