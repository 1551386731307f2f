"""Review log, SQLite file only: schema migrations, foreign files, location, identity.

What both back ends guarantee (append-only, concurrency, crash safety, idempotent writes) is
checked on both in tests/test_review_contract.py. SQLite facts relied on here: "PRAGMA
user_version" (pragma.html) holds the schema version; "ALTER TABLE ... ADD COLUMN" and
triggers are transactional (lang_altertable.html, lang_transaction.html).
"""

from __future__ import annotations

import os
import sqlite3
import uuid

import numpy as np
import pytest
import skrf

from kit.capture import from_network
from kit.review.log import MIGRATIONS, SCHEMA_VERSION, ReviewLog, ReviewLogError, capture_identity, migrate


def _cap(seed: int = 0, name: str = "disc-01"):
    rng = np.random.default_rng(seed)
    f = skrf.Frequency(1, 2, 5, unit="MHz")
    s = (rng.normal(size=5) + 1j * rng.normal(size=5)).reshape(5, 1, 1) * 0.1
    return from_network(skrf.Network(frequency=f, s=s, z0=50, name=name))


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


def test_reopen_after_fork_like_pid_change(tmp_path, monkeypatch):
    """A log used in a new process id opens its own connection."""
    log = ReviewLog(tmp_path / "r.sqlite")
    first = log._connect()
    monkeypatch.setattr(os, "getpid", lambda: -1)
    assert log._connect() is not first
    log.add(_cap(), "note", text="x")
    assert len(log) == 1


def _version_1_file(path, notes):
    """A review log as the kit wrote it at schema version 1 (no uuid column)."""
    con = sqlite3.connect(path, isolation_level=None)
    MIGRATIONS[0](con)
    con.execute("PRAGMA user_version = 1")
    for i, text in enumerate(notes):
        con.execute("INSERT INTO events (utc, capture, sha256, path, kind, value, value_num, "
                    "text, author, kit_version) VALUES (?,?,?,?,?,?,?,?,?,?)",
                    (f"2026-01-01T00:00:0{i}.000000+00:00", "c", "abc", None, "note", None, None,
                     text, "old", "0.0.9"))
    con.close()


def test_version_1_file_migrates_with_stable_uuids(tmp_path):
    """A file of schema version 1 opens at the current version: every old event gets a
    name-based UUID (RFC 9562 version 5), the same in every copy of the file, and the
    append-only triggers are back in force after the migration."""
    a, b = tmp_path / "a.sqlite", tmp_path / "b.sqlite"
    for p in (a, b):
        _version_1_file(p, ["first", "second"])
    ev_a, ev_b = ReviewLog(a).events(), ReviewLog(b).events()
    assert ReviewLog(a).schema_version == SCHEMA_VERSION == 2
    assert list(ev_a["text"]) == ["first", "second"]
    assert [uuid.UUID(u).version for u in ev_a["uuid"]] == [5, 5]
    assert list(ev_a["uuid"]) == list(ev_b["uuid"]) and ev_a["uuid"].is_unique
    con = sqlite3.connect(a)
    with pytest.raises(sqlite3.DatabaseError, match="append-only"):
        con.execute("UPDATE events SET text = 'changed'")
    with pytest.raises(sqlite3.DatabaseError, match="uuid"):
        con.execute("INSERT INTO events (utc, sha256, kind, author, kit_version) "
                    "VALUES ('t', 's', 'note', 'x', 'y')")
    con.close()
