"""A folder at once (kit.load_folder)."""

from __future__ import annotations

import pytest

import kit
from kit.io import folder as kfolder
from kit.io.folder import capture_of, captures_of

GOOD = "# Hz S RI R 50\n1e6 0.1 0\n2e6 0.2 0\n"


def make(tmp_path, n_good=5):
    for i in range(n_good):
        (tmp_path / f"lotb-{i:02d}.s1p").write_text(GOOD)
    (tmp_path / "lotb-99.s1p").write_text("# Hz S RI R 50\n1e6 0.1\n")  # truncated
    (tmp_path / "notes.txt").write_text("not a capture")
    return tmp_path


def test_one_row_per_file_bad_file_is_an_error_row(tmp_path):
    """Every Touchstone file is a row; a bad one is status 'error' with its message; the rest load."""
    table = kit.load_folder(make(tmp_path), pattern="{lot}-{serial}")
    assert len(table) == 6
    bad = table[table["name"] == "lotb-99"].iloc[0]
    assert bad["status"] == "error" and "truncated" in bad["message"]
    good = table[table["status"] == "ok"]
    assert len(good) == 5 and set(good["lot"]) == {"lotb"} and sorted(good["serial"]) == ["00", "01", "02", "03", "04"]
    assert {"path", "sha256", "ports", "points", "f_start_hz", "f_stop_hz"} <= set(table.columns)
    assert len(captures_of(table)) == 5
    with pytest.raises(kit.CaptureError, match="refused"):
        capture_of(table, bad.name)


def test_parallel_processes_give_the_same_table(tmp_path, monkeypatch):
    """Parsing in worker processes gives the same rows as parsing here."""
    make(tmp_path, n_good=9)
    serial = kit.load_folder(tmp_path, workers=1)
    monkeypatch.setattr(kfolder, "PARALLEL_MIN_FILES", 1)
    par = kit.load_folder(tmp_path, workers=2)
    cols = ["name", "sha256", "status", "points"]
    assert serial[cols].equals(par[cols])
    assert capture_of(par, 0).points == 2


def test_changed_file_is_detected(tmp_path):
    """A capture reached after its file changed (and dropped from memory) is refused, not silently reloaded."""
    make(tmp_path, n_good=1)
    table = kit.load_folder(tmp_path)
    kfolder._LOTS.clear()
    (tmp_path / "lotb-00.s1p").write_text(GOOD.replace("0.2", "0.3"))
    with pytest.raises(kit.CaptureError, match="changed"):
        capture_of(table, 0)


def test_not_a_folder(tmp_path):
    """A path that is not a folder is a CaptureError."""
    with pytest.raises(kit.CaptureError, match="not a folder"):
        kit.load_folder(tmp_path / "missing")
