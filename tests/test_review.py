"""Review log: append-only events, state view, concurrency and crash safety.

The guarantees checked here are SQLite's own (documentation "Atomic Commit In SQLite" and
"Write-Ahead Logging"); the tests check that the log uses them correctly.
"""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import skrf

from kit.capture import from_network
from kit.review.log import SCHEMA_VERSION, ReviewLog, ReviewLogError, capture_identity, migrate

ROOT = Path(__file__).resolve().parents[1]


def _cap(seed: int = 0, name: str = "disc-01"):
    rng = np.random.default_rng(seed)
    f = skrf.Frequency(1, 2, 5, unit="MHz")
    s = (rng.normal(size=5) + 1j * rng.normal(size=5)).reshape(5, 1, 1) * 0.1
    return from_network(skrf.Network(frequency=f, s=s, z0=50, name=name))


def test_add_and_events_roundtrip(tmp_path):
    """Events come back in order with author, UTC time, kit version and the capture's key."""
    log = ReviewLog(tmp_path / "r.sqlite")
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
    assert ev.loc[0, "utc"].endswith("+00:00")
    import kit
    assert set(ev["kit_version"]) == {kit.__version__}
    assert ev.loc[2, "author"]  # OS user (or "unknown"), never empty


def test_latest_verdict_wins_history_stays(tmp_path):
    """state() shows the latest verdict; events() keeps the earlier ones."""
    log = ReviewLog(tmp_path / "r.sqlite")
    a, b = _cap(0, "a"), _cap(1, "b")
    log.add(a, "verdict", value="reject", author="x")
    log.add(a, "verdict", value="accept", author="y", text="re-measured, fine")
    log.add(b, "retest", text="connector loose")
    log.add(b, "tag", value="cracked")
    st = log.state().set_index("capture")
    assert st.loc["a", "verdict"] == "accept" and st.loc["a", "verdict_author"] == "y"
    assert not st.loc["a", "retest_requested"]
    assert pd.isna(st.loc["b", "verdict"]) and st.loc["b", "retest_requested"]
    assert st.loc["b", "tags"] == "cracked"
    assert len(log.events(a)) == 2


def test_bad_events_refused(tmp_path):
    """Unknown kinds, verdict values and non-numeric marker frequencies are refused."""
    log = ReviewLog(tmp_path / "r.sqlite")
    c = _cap()
    with pytest.raises(ReviewLogError, match="kind"):
        log.add(c, "comment", text="x")
    with pytest.raises(ReviewLogError, match="accept, reject, retest"):
        log.add(c, "verdict", value="ok")
    with pytest.raises(ReviewLogError, match="hertz"):
        log.add(c, "marker", value="near fs")
    assert len(log) == 0


def test_append_only_enforced_by_database(tmp_path):
    """Even a direct SQL UPDATE or DELETE on the file is refused."""
    p = tmp_path / "r.sqlite"
    log = ReviewLog(p)
    log.add(_cap(), "note", text="keep me")
    log.close()
    con = sqlite3.connect(p)
    with pytest.raises(sqlite3.DatabaseError, match="append-only"):
        con.execute("UPDATE events SET text = 'changed'")
    with pytest.raises(sqlite3.DatabaseError, match="append-only"):
        con.execute("DELETE FROM events")
    con.close()
    assert ReviewLog(p).events().loc[0, "text"] == "keep me"


def test_schema_version_and_newer_file_refused(tmp_path):
    """The schema version is recorded; a file from a newer kit is refused with a message."""
    p = tmp_path / "r.sqlite"
    log = ReviewLog(p)
    assert log.schema_version == SCHEMA_VERSION
    log.close()
    con = sqlite3.connect(p)
    con.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    con.close()
    with pytest.raises(ReviewLogError, match="newer"):
        ReviewLog(p)


def test_migration_is_idempotent():
    """Migrating an already current schema changes nothing."""
    con = sqlite3.connect(":memory:", isolation_level=None)
    assert migrate(con) == SCHEMA_VERSION
    assert migrate(con) == SCHEMA_VERSION


def test_foreign_sqlite_refused(tmp_path):
    """An unrelated SQLite file is not taken for a review log."""
    p = tmp_path / "other.sqlite"
    con = sqlite3.connect(p)
    con.execute("CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT)")
    con.execute("PRAGMA user_version = 1")
    con.commit()
    con.close()
    with pytest.raises(ReviewLogError, match="not a sweepbook review log"):
        ReviewLog(p)


def test_default_location_beside_captures(tmp_path):
    """for_folder puts review.sqlite in the captures' folder."""
    log = ReviewLog.for_folder(tmp_path)
    assert log.path == tmp_path / "review.sqlite" == ReviewLog.default_path(tmp_path)


def test_identity_of_file_path(tmp_path):
    """A path is keyed by the SHA-256 of the file's bytes."""
    import hashlib
    p = tmp_path / "x.s1p"
    p.write_bytes(b"# Hz S RI R 50\n1 0 0\n")
    ident = capture_identity(p)
    assert ident["sha256"] == hashlib.sha256(p.read_bytes()).hexdigest()


_WRITER = textwrap.dedent("""
    import sys
    sys.path.insert(0, {root!r})
    from kit.review.log import ReviewLog
    log = ReviewLog({db!r})
    who = sys.argv[1]
    print("ready", flush=True)
    sys.stdin.readline()          # start together
    for i in range(500):
        log.add({{"sha256": "s" + str(i % 7), "capture": "c" + str(i % 7)}}, "note",
                text=who + "-" + str(i), author=who)
    print("done", flush=True)
""")


def test_two_processes_500_events_each(tmp_path):
    """Two processes writing 500 events each at the same time: all 1000 are kept."""
    db = tmp_path / "r.sqlite"
    ReviewLog(db).close()
    code = _WRITER.format(root=str(ROOT), db=str(db))
    procs = [subprocess.Popen([sys.executable, "-c", code, who], stdin=subprocess.PIPE,
                              stdout=subprocess.PIPE, text=True) for who in ("p1", "p2")]
    for p in procs:
        assert p.stdout.readline().strip() == "ready"
    for p in procs:
        p.stdin.write("go\n")
        p.stdin.flush()
    for p in procs:
        out, _ = p.communicate(timeout=300)
        assert p.returncode == 0 and "done" in out
        p.stdout.close()
    ev = ReviewLog(db).events()
    assert len(ev) == 1000
    for who in ("p1", "p2"):
        texts = set(ev.loc[ev["author"] == who, "text"])
        assert texts == {f"{who}-{i}" for i in range(500)}
    assert ev["event_id"].is_unique


_KILLED = textwrap.dedent("""
    import sys, time
    sys.path.insert(0, {root!r})
    from kit.review.log import ReviewLog
    log = ReviewLog({db!r})
    for i in range(20):
        eid = log.add({{"sha256": "abc", "capture": "c"}}, "note", text="committed-" + str(i))
        print("committed", eid, flush=True)
    def pending():
        for i in range(50):
            yield {{"capture": {{"sha256": "abc"}}, "kind": "note", "text": "pending-" + str(i)}}
        print("inside", flush=True)   # the transaction holds 50 uncommitted rows
        time.sleep(120)
    log.add_many(pending())
""")


def test_writer_killed_mid_transaction(tmp_path):
    """A writer killed by SIGKILL inside a transaction: the log opens, consistent, with every
    committed event and none of the uncommitted ones."""
    db = tmp_path / "r.sqlite"
    code = _KILLED.format(root=str(ROOT), db=str(db))
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
    log = ReviewLog(db)
    assert log.check() == "ok"
    ev = log.events()
    assert list(ev["event_id"]) == committed
    assert list(ev["text"]) == [f"committed-{i}" for i in range(20)]
    # the log is writable again (no stale lock left behind)
    log.add({"sha256": "abc"}, "note", text="after")
    assert len(log) == 21


def test_add_many_is_all_or_nothing(tmp_path):
    """A bad event inside add_many rolls the whole batch back."""
    log = ReviewLog(tmp_path / "r.sqlite")
    c = _cap()
    with pytest.raises(ReviewLogError):
        log.add_many([{"capture": c, "kind": "note", "text": "a"},
                      {"capture": c, "kind": "verdict", "value": "maybe"}])
    assert len(log) == 0


def test_reopen_after_fork_like_pid_change(tmp_path, monkeypatch):
    """A log used in a new process id opens its own connection."""
    log = ReviewLog(tmp_path / "r.sqlite")
    first = log._connect()
    monkeypatch.setattr(os, "getpid", lambda: -1)
    assert log._connect() is not first
    log.add(_cap(), "note", text="x")
    assert len(log) == 1
