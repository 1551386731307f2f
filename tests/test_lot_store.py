"""The whole-lot result store (kit.batch.lot_store), figures drawn in the workers, and the
parsed-capture cache reading each file once (kit.io.cache)."""

from __future__ import annotations

import json

import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kit.batch import engine as batch
from kit.batch.cli import main
from kit.batch.engine import run
from kit.batch.lot_store import Deferred, LotStoreWarning, lot_key
from kit.io.cache import CaptureCache
from kit.outputs import part_figure

#: PNG signature: W3C Portable Network Graphics (PNG) Specification, 2nd ed. (ISO/IEC
#: 15948:2003), section 5.2 "PNG signature".
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def plain(results: list) -> str:
    return json.dumps(results, sort_keys=True, default=lambda o: o.to_dict())


@pytest.fixture
def lot(batch_lot):
    """The shared small lot of tests/conftest.py (``batch_lot``)."""
    return batch_lot


def test_rerun_hits_the_lot_store_with_an_identical_result(lot, tmp_path):
    """A second run over the unchanged folder analyses nothing (stats say so), gives the
    same summary (pandas.testing.assert_frame_equal), fits, pictures and traces, writes the
    same sweeps files without loading a capture, and loads the captures on first access."""
    root, d, proc = lot
    cache = tmp_path / "cache"
    first = run(proc, d, workers=1, cache_dir=cache)
    assert first.stats["lot_store"] == "miss" and first.stats["miss"] == 4
    first.write(tmp_path / "out1")
    again = run(proc, d, workers=1, cache_dir=cache)
    assert again.stats["lot_store"] == "hit" and again.stats["lot_key"] == first.stats["lot_key"]
    assert again.stats["hit"] == again.stats["miss"] == again.stats["results_reused"] == 0
    pd.testing.assert_frame_equal(first.summary, again.summary)
    assert plain(again.fits) == plain(first.fits)  # NaN-aware: compared as JSON text
    assert plain(again.resonances) == plain(first.resonances)
    assert again.pictures == first.pictures and again.pictures
    assert sorted(again.traces) == sorted(first.traces)
    for k, (f, y) in first.traces.items():
        assert (again.traces[k][0] == f).all() and (again.traces[k][1] == y).all()
    assert isinstance(again.captures, Deferred) and len(again.captures) == 5
    out2 = again.write(tmp_path / "out2", report=False)
    assert not again.captures.loaded  # the outputs came from the record
    for name in ("sweeps.parquet", "sweeps.csv", "summary.parquet", "summary.csv"):
        assert (out2 / name).read_bytes() == (tmp_path / "out1" / name).read_bytes(), name
    p1, p2 = (json.loads((p / "provenance.json").read_text()) for p in (tmp_path / "out1", out2))
    assert p1["inputs"] == p2["inputs"] and p1["refused"] == p2["refused"]
    assert p1["tables"] == p2["tables"] and p2["settings"]["run"]["lot_store"] == "hit"
    # first access: the captures as the first run had them, the bad file as its error
    assert [getattr(c, "name", None) for c in again.captures] == \
        [getattr(c, "name", None) for c in first.captures]
    assert (again.corrected[0].s == first.corrected[0].s).all()
    assert str(again.captures[-1]) == str(first.captures[-1])
    lean = run(proc, d, workers=1, cache_dir=cache, keep_captures=False)
    assert lean.stats["lot_store"] == "hit" and lean.corrected == []
    assert [str(c) for c in lean.captures] == [str(first.captures[-1])]
    pd.testing.assert_frame_equal(first.summary, lean.summary)


def test_the_report_gets_the_workers_pictures_and_no_capture_on_a_hit(lot, tmp_path,
                                                                     monkeypatch):
    """write() hands the report (the agreed signature, stubbed here) the pictures and traces
    of the run; after a lot-store hit it hands no capture unless pictures are missing."""
    import kit.outputs.lot_report as lot_report

    calls = []

    def agreed(out_path, captures, summary=None, review_log=None, limits=None, title=None,
               figures="flagged", pictures=None, traces=None):
        calls.append({"captures": list(captures), "figures": figures, "pictures": pictures,
                      "traces": traces})
        out_path.write_text("stub report")
        return out_path

    monkeypatch.setattr(lot_report, "report", agreed)
    root, d, proc = lot
    cache = tmp_path / "cache"
    first = run(proc, d, workers=1, cache_dir=cache)
    first.write(tmp_path / "o1")
    assert calls[-1]["pictures"] == first.pictures and calls[-1]["traces"] is first.traces
    again = run(proc, d, workers=1, cache_dir=cache)
    again.write(tmp_path / "o2")
    assert calls[-1]["captures"] == [] and calls[-1]["pictures"] == first.pictures
    assert not again.captures.loaded
    again.write(tmp_path / "o3", figures="none")
    assert calls[-1]["captures"] == [] and calls[-1]["figures"] == "none"
    again.write(tmp_path / "o4", figures="all")  # passing parts were not drawn: captures given
    assert [c.name for c in calls[-1]["captures"]] == ["pzd7-01", "pzd7-02", "pzd7-04", "pzd7-07"]


def test_command_line_rerun_writes_the_same_outputs(lot, tmp_path, capsys):
    """`sweepbook run` twice with one cache: the second is a lot-store hit, same files."""
    root, d, proc = lot
    args = ["run", str(proc), str(d), "--workers", "1", "--cache", str(tmp_path / "c")]
    assert main(args + ["--out", str(tmp_path / "a")]) == 1  # the truncated file
    assert main(args + ["--out", str(tmp_path / "b")]) == 1
    assert "engine: lot store" in capsys.readouterr().out
    for name in ("sweeps.parquet", "summary.csv"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()
    assert (tmp_path / "b" / "report.html").stat().st_size > 0


def test_changed_bytes_procedure_or_figures_setting_miss(lot, tmp_path):
    """One changed byte in one file, another procedure, or another figures setting: a miss."""
    root, d, proc = lot
    cache = tmp_path / "cache"
    base = run(proc, d, workers=1, cache_dir=cache)
    assert run(proc, d, workers=1, cache_dir=cache).stats["lot_store"] == "hit"
    assert run(proc, d, workers=1, cache_dir=cache, figures="all").stats["lot_store"] == "miss"
    p = d / "pzd7-02.s1p"
    p.write_text(p.read_text().replace("! Operator: demo bench 3", "! Operator: demo bench 4"))
    changed = run(proc, d, workers=1, cache_dir=cache)
    assert changed.stats["lot_store"] == "miss" and changed.stats["miss"] == 1
    proc.write_text(proc.read_text().replace("min = 0.3", "min = 0.31"))
    assert run(proc, d, workers=1, cache_dir=cache).stats["lot_store"] == "miss"
    assert run(proc, d, workers=1, use_cache=False).stats["lot_store"] is None
    assert base.stats["lot_store"] == "miss"


@pytest.mark.parametrize("damage", ["flip", "truncate", "garbage"])
def test_a_damaged_record_is_ignored_with_a_warning_and_rebuilt(lot, tmp_path, damage):
    """A flipped byte, a truncated file or a foreign record.json: warned, ignored, rebuilt."""
    root, d, proc = lot
    cache = tmp_path / "cache"
    first = run(proc, d, workers=1, cache_dir=cache)
    rec = cache / "lots" / first.stats["lot_key"]
    if damage == "flip":
        p = rec / "summary.parquet"
        raw = bytearray(p.read_bytes())
        raw[len(raw) // 2] ^= 0xFF
        p.write_bytes(bytes(raw))
    elif damage == "truncate":
        p = rec / "figures.npz"
        p.write_bytes(p.read_bytes()[:100])
    else:
        (rec / "record.json").write_text('{"body": {"key": "x"}, "sum": "0"}')
    with pytest.warns(LotStoreWarning, match="damaged"):
        second = run(proc, d, workers=1, cache_dir=cache)
    assert second.stats["lot_store"] == "rebuilt"
    pd.testing.assert_frame_equal(first.summary, second.summary)
    assert run(proc, d, workers=1, cache_dir=cache).stats["lot_store"] == "hit"


def test_damaged_stored_outputs_are_made_again(lot, tmp_path):
    """A stored sweeps file that lost its tail (size) or had a byte changed (SHA-256 while
    copying) is warned about; the export is made from the captures, identical, and kept."""
    root, d, proc = lot
    cache = tmp_path / "cache"
    run(proc, d, workers=1, cache_dir=cache).write(tmp_path / "out1")
    key = run(proc, d, workers=1, cache_dir=cache).stats["lot_key"]
    stored = cache / "lots" / key / "export"
    for k, how in enumerate(("truncate", "flip")):
        p = stored / "sweeps.csv"
        raw = bytearray(p.read_bytes())
        if how == "truncate":
            raw = raw[:-10]
        else:
            raw[len(raw) // 2] ^= 0x01
        p.unlink()  # a hard link to the first export: damage the record's copy only
        p.write_bytes(bytes(raw))
        again = run(proc, d, workers=1, cache_dir=cache)
        with pytest.warns(LotStoreWarning, match="damaged"):
            out = again.write(tmp_path / f"out{k + 2}")
        assert again.captures.loaded
        for name in ("sweeps.csv", "sweeps.parquet"):
            assert (out / name).read_bytes() == (tmp_path / "out1" / name).read_bytes()
        assert (stored / "export.json").is_file()
    assert not [p for p in (cache / "lots").rglob(".*")]  # no temporary folder left


def test_pictures_are_drawn_in_the_workers_for_parts_not_passed(lot, tmp_path):
    """With two worker processes and the default figures setting, the pictures (PNG by its
    signature) are those of the parts that did not pass (04 and 07 fail fs or k_eff per the
    demo's truth.json defects) or carry a flag; none is drawn in this process; "all" and
    "none" as named."""
    root, d, proc = lot
    old = batch.CHUNK
    batch.CHUNK = 2
    part_figure._PAINTERS.clear()
    try:
        res = run(proc, d, workers=2, use_cache=False)
    finally:
        batch.CHUNK = old
    assert res.stats["engine"].endswith("local processes") and not part_figure._PAINTERS
    s = res.summary
    flagged = set(s.loc[(s["status"] == "ok") & (s["verdict"] != "pass"), "sha256"])
    assert set(s.loc[s["capture"].isin(["pzd7-04", "pzd7-07"]), "sha256"]) == flagged
    # the one rule (kit.outputs.part_figure.needs_figure) picks the parts; the parts that
    # did not pass are among them, and so are only parts that did not pass or carry a flag
    from kit.outputs.part_figure import needs_figure

    chosen = {r["sha256"] for r in s.to_dict("records")
              if r["status"] == "ok" and needs_figure(r, "flagged")}
    assert set(res.pictures) == chosen and flagged <= chosen
    assert all(png.startswith(PNG_SIGNATURE) for png in res.pictures.values())
    assert set(res.traces) == set(s.loc[s["status"] == "ok", "sha256"])
    f, y = next(iter(res.traces.values()))
    assert len(f) == len(y) < 1601 and (f[1:] >= f[:-1]).all()  # decimated, in order
    every = run(proc, d, workers=1, use_cache=False, figures="all")
    assert set(every.pictures) == set(res.traces)
    assert run(proc, d, workers=1, use_cache=False, figures="none").pictures == {}
    with pytest.raises(ValueError, match="figures="):
        run(proc, d, workers=1, use_cache=False, figures="some")


def test_the_cache_reads_each_file_once(lot, tmp_path, monkeypatch):
    """A miss and a hit of the parsed-capture cache read the file's bytes once each."""
    import kit.io.preflight as preflight
    import kit.io.touchstone as touchstone

    root, d, proc = lot
    reads = []
    real = preflight.read_bytes

    def counting(path):
        reads.append(path)
        return real(path)

    monkeypatch.setattr(preflight, "read_bytes", counting)
    monkeypatch.setattr(touchstone, "read_bytes", counting)
    cache = CaptureCache(tmp_path / "cc")
    cap, status = cache.load(d / "pzd7-01.s1p")
    assert status == "miss" and len(reads) == 1
    assert cap.sha256 == touchstone.load(d / "pzd7-01.s1p").sha256
    assert cache.load(d / "pzd7-01.s1p")[1] == "hit" and len(reads) == 3


@settings(max_examples=40, deadline=None)
@given(st.lists(st.text(min_size=1, max_size=8), min_size=1, max_size=4, unique=True),
       st.integers(min_value=0, max_value=4))
def test_every_part_of_the_key_changes_it(paths, which):
    """Paths, contents, procedure, figures setting and schema each change the key."""
    shas = [f"{i:064x}" for i in range(len(paths))]
    base = lot_key(paths, shas, "p" * 64, "flagged", 3)
    other = [
        lambda: lot_key(paths[::-1] if len(paths) > 1 else [paths[0] + "x"], shas, "p" * 64,
                        "flagged", 3),
        lambda: lot_key(paths, [shas[0][:-1] + "f"] + shas[1:], "p" * 64, "flagged", 3),
        lambda: lot_key(paths, shas, "q" * 64, "flagged", 3),
        lambda: lot_key(paths, shas, "p" * 64, "all", 3),
        lambda: lot_key(paths, shas, "p" * 64, "flagged", 4),
    ][which]()
    assert other != base and base == lot_key(list(paths), list(shas), "p" * 64, "flagged", 3)


def test_another_figures_setting_reuses_the_stored_fits(lot, tmp_path):
    """The figures setting decides only which parts are pictured: a run under another one
    misses the lot store (its outputs differ) but reuses every stored fit, and draws the
    pictures the first run did not need."""
    root, d, proc = lot
    cache = tmp_path / "cache"
    first = run(proc, d, workers=1, cache_dir=cache, figures="none")
    assert first.pictures == {} and first.stats["results_reused"] == 0
    again = run(proc, d, workers=1, cache_dir=cache, figures="all")
    ok = int((again.summary["status"] == "ok").sum())
    assert again.stats["lot_store"] == "miss" and again.stats["results_reused"] == ok
    assert len(again.pictures) == ok
    assert all(p.startswith(PNG_SIGNATURE) for p in again.pictures.values())
    pd.testing.assert_frame_equal(again.summary, first.summary)


def test_the_lot_key_reads_inputs_as_every_reader_does(tmp_path):
    """file_sha256 reads through kit.io.preflight.read_bytes: the SHA-256 of the bytes
    (FIPS 180-4; checked against hashlib on the same bytes), and an unreadable input is that
    reader's CaptureError naming the file, which leaves the lot store out of the run."""
    from kit.batch.lot_store import file_sha256
    from kit.capture import CaptureError

    f = tmp_path / "a.s1p"
    f.write_bytes(b"abc")
    # FIPS 180-2, appendix B.1: SHA-256("abc")
    assert file_sha256(f) == ("ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015"
                              "ad")
    with pytest.raises(CaptureError, match="file not found") as err:
        file_sha256(tmp_path / "gone.s1p")
    assert "gone.s1p" in str(err.value)
    with pytest.raises(CaptureError, match="is a folder"):
        file_sha256(tmp_path)
    assert batch._lot_lookup(str(tmp_path / "cache"), [str(tmp_path / "gone.s1p")], "d",
                             "flagged") == {}
