"""Batch runs (kit.batch.engine, kit.io.cache, `sweepbook run`) on the demo lot."""

from __future__ import annotations

import shutil

import numpy as np
import pandas as pd
import pytest

from kit.batch.cli import main
from kit.batch.engine import run
from kit.batch.procedure import Procedure
from kit.io.cache import CaptureCache

KEY = ["capture", "status", "fs_hz", "fp_hz", "k_eff", "qm", "c0_f", "r1_ohm", "l1_h", "c1_f",
       "c0_stderr_f", "fit_ok", "verdict"]
REQUIRED = ["capture", "path", "sha256", "status", "error", "fs_hz", "fp_hz", "fm_hz", "fn_hz",
            "k_eff", "qm", "c0_f", "r1_ohm", "l1_h", "c1_f", "c0_stderr_f", "r1_stderr_ohm",
            "l1_stderr_h", "c1_stderr_f", "fit_ok", "verdict", "verdict_reasons"]


@pytest.fixture
def lot(batch_lot):
    """The shared small lot of tests/conftest.py (``batch_lot``)."""
    return batch_lot


def test_bad_file_is_an_error_row_and_the_rest_completes(lot):
    """A truncated capture is a row with status 'error'; every other capture is analysed (demo lot)."""
    root, d, proc = lot
    res = run(proc, d, workers=1, use_cache=False)
    s = res.summary
    assert set(REQUIRED) <= set(s.columns)
    assert len(s) == 5
    bad = s[s["capture"] == "pzd7-99"].iloc[0]
    assert bad["status"] == "error" and "truncated" in bad["error"]
    good = s[s["status"] == "ok"]
    assert len(good) == 4 and good["fit_ok"].all()
    # the cracked (04) and de-poled (07) parts fail their limits; 01 and 02 pass
    verdict = dict(zip(good["capture"], good["verdict"]))
    assert verdict == {"pzd7-01": "pass", "pzd7-02": "pass", "pzd7-04": "fail", "pzd7-07": "fail"}
    assert good["c0_stderr_f"].gt(0).all() and good["serial"].tolist() == ["01", "02", "04", "07"]  # file-name fields stay text


def test_summary_only_runs_keep_no_captures(lot):
    """keep_captures=False gives the same summary and holds no capture in memory."""
    root, d, proc = lot
    full = run(proc, d, workers=1, use_cache=False)
    lean = run(proc, d, workers=1, use_cache=False, keep_captures=False)
    pd.testing.assert_frame_equal(full.summary, lean.summary)
    assert all(isinstance(c, Exception) for c in lean.captures) and len(lean.captures) == 1
    assert lean.corrected == []


def test_missing_standard_gives_error_rows_not_a_crash(lot):
    """A missing standard makes every capture an error row naming it; the run still returns."""
    root, d, proc = lot
    (root / "standards" / "short.s1p").unlink()
    s = run(proc, d, workers=1, use_cache=False).summary
    assert (s["status"] == "error").all()
    assert s["error"].str.contains("short standard").sum() == 4


def test_processes_and_dask_give_identical_summaries(lot):
    """Local processes and a Dask LocalCluster with worker processes give the same summary as one process."""
    distributed = pytest.importorskip("dask.distributed")
    root, d, proc = lot
    from kit.batch import engine as batch

    one = run(proc, d, workers=1, use_cache=False).summary
    old = batch.CHUNK
    batch.CHUNK = 2
    try:
        procs = run(proc, d, workers=2, use_cache=False)
        import dask

        # generous start-up timeouts: on a loaded machine the worker processes start slowly
        with dask.config.set({"distributed.comm.timeouts.connect": "120s",
                              "distributed.comm.timeouts.tcp": "120s"}), \
                distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                         dashboard_address=None) as cluster, \
                distributed.Client(cluster, timeout="120s") as client:
            dask_res = run(proc, d, client=client, use_cache=False)
    finally:
        batch.CHUNK = old
    assert procs.stats["engine"].endswith("local processes")
    assert dask_res.stats["engine"].startswith("dask")
    pd.testing.assert_frame_equal(one[KEY], procs.summary[KEY])
    pd.testing.assert_frame_equal(one[KEY], dask_res.summary[KEY])


def test_cache_hits_changed_files_and_damaged_entries(lot, tmp_path):
    """Second run reads from the cache; a changed file is re-parsed; a damaged entry is rebuilt and reported."""
    root, d, proc = lot
    cache = tmp_path / "cache"
    first = run(proc, d, workers=1, cache_dir=cache)
    assert first.stats["miss"] == 4 and first.stats["hit"] == 0
    assert first.stats["lot_store"] == "miss"
    shutil.rmtree(cache / "lots")  # without the whole-lot record: the per-capture entries
    second = run(proc, d, workers=1, cache_dir=cache)
    assert second.stats["hit"] == 4 and second.stats["results_reused"] == 4
    pd.testing.assert_frame_equal(first.summary[KEY], second.summary[KEY])
    # change one file: a miss for that one only
    p = d / "pzd7-01.s1p"
    p.write_text(p.read_text().replace("! Operator: demo bench 3", "! Operator: demo bench 4"))
    third = run(proc, d, workers=1, cache_dir=cache)
    assert third.stats["hit"] == 3 and third.stats["miss"] == 1
    assert third.stats["results_reused"] == 3
    # another procedure (other limits) reuses the parsed captures but not the analysis
    proc.write_text(proc.read_text().replace("span_hz = [1.6e6, 2.4e6]", "span_hz = [1.7e6, 2.3e6]"))
    fourth = run(proc, d, workers=1, cache_dir=cache)
    assert fourth.stats["hit"] == 4 and fourth.stats["results_reused"] == 0
    # damage an entry: rebuilt, reported, results unchanged
    cc = CaptureCache(cache)
    cap, _ = cc.load(d / "pzd7-02.s1p")
    entry = cc.entry(cap.sha256)
    raw = bytearray(entry.read_bytes())
    raw[len(raw) // 2] ^= 0xFF
    entry.write_bytes(bytes(raw))
    cap2, status = CaptureCache(cache).load(d / "pzd7-02.s1p")
    assert status == "rebuilt"
    assert any(f.code == "cache-rebuilt" for f in cap2.findings)
    np.testing.assert_array_equal(cap2.s, cap.s)
    assert CaptureCache(cache).load(d / "pzd7-02.s1p")[1] == "hit"


def test_command_line_run_writes_every_output(lot, tmp_path, capsys):
    """`sweepbook run` writes summary (Parquet, CSV), sweeps, provenance and report even with
    error rows, names them on standard error and exits 1 (a run with failures is not clean)."""
    root, d, proc = lot
    out = tmp_path / "out"
    code = main(["run", str(proc), str(d), "--out", str(out), "--workers", "1",
                 "--cache", str(tmp_path / "c")])
    assert code == 1
    for name in ("summary.parquet", "summary.csv", "sweeps.parquet", "provenance.json", "report.html"):
        assert (out / name).is_file(), name
    s = pd.read_parquet(out / "summary.parquet")
    assert (s["status"] == "error").sum() == 1 and len(s) == 5
    said = capsys.readouterr()
    assert "1 error row" in said.out and "could not be analysed; exit code 1" in said.err
    # a run that cannot proceed (no such procedure, no such input folder) is exit code 2
    assert main(["run", str(tmp_path / "none.toml"), str(d), "--out", str(out)]) == 2
    assert main(["run", str(proc), str(tmp_path / "no-such-folder"), "--out", str(out)]) == 2
    assert "does not exist" in capsys.readouterr().err


def test_procedure_refuses_typos_and_spans_in_mhz(tmp_path):
    """A misspelt key names the nearest known one; a span in MHz is refused with the fix."""
    from kit.batch.procedure import ProcedureError

    with pytest.raises(ProcedureError, match="did you mean 'modes'"):
        Procedure.from_dict({"fit": {"model": "bvd", "mode": 2}})
    with pytest.raises(ProcedureError, match="did you mean 'load'"):
        Procedure.from_dict({"correction": [{"kind": "osl", "open": "o", "short": "s",
                                             "lod": "l"}]})
    with pytest.raises(ProcedureError, match="spans are in hertz"):
        Procedure.from_dict({"resonance": {"span_hz": [1.6, 2.4]}})


def test_procedure_saved_from_python_runs_the_same(lot, tmp_path):
    """A procedure saved with to_file (as the notebook does) runs with an identical summary."""
    root, d, proc = lot
    p = Procedure.from_file(proc)
    saved = p.to_file(tmp_path / "elsewhere" / "saved.toml")
    a = run(p, d, workers=1, use_cache=False).summary
    b = run(saved, d, workers=1, use_cache=False).summary
    pd.testing.assert_frame_equal(a[KEY], b[KEY])


def test_a_failed_step_is_a_failure_record_and_survives_the_cache(lot, tmp_path, monkeypatch):
    """A fit that raises gives a Failure record (step, reason), 'fit failed: ...' in fit_flags
    and fit_ok False; the record is stored in the results cache and read back as the same
    record, so the second (cached) run gives the same summary (no sentinel dicts)."""
    from kit.outputs.entries import Failure
    from kit.resonators import fitting

    def broken(*args, **kwargs):
        raise RuntimeError("solver exploded (simulated)")

    monkeypatch.setattr(fitting, "fit", broken)
    root, d, proc = lot
    first = run(proc, d, workers=1, cache_dir=tmp_path / "cache")
    good = first.summary[first.summary["status"] == "ok"]
    assert len(good) == 4 and not good["fit_ok"].any()
    assert good["fit_flags"].eq("fit failed: RuntimeError: solver exploded (simulated)").all()
    fails = [f for f in first.fits if f is not None]
    assert all(isinstance(f, Failure) and f.step == "fit" and not f.ok for f in fails)
    assert len(fails) == 4 and Failure.from_dict(fails[0].to_dict()) == fails[0]
    whole = run(proc, d, workers=1, cache_dir=tmp_path / "cache")  # the lot record
    assert whole.stats["lot_store"] == "hit" and [f for f in whole.fits if f is not None] == fails
    shutil.rmtree(tmp_path / "cache" / "lots")
    second = run(proc, d, workers=1, cache_dir=tmp_path / "cache")  # the per-capture entries
    assert second.stats["results_reused"] == 4
    assert [f for f in second.fits if f is not None] == fails
    pd.testing.assert_frame_equal(first.summary[KEY], second.summary[KEY])
    pd.testing.assert_frame_equal(first.summary, whole.summary)
    bad = first.summary[first.summary["status"] == "error"].iloc[0]
    assert "truncated" in bad["error"] and isinstance(first.captures[-1], Exception)


def test_batch_judges_the_corrected_capture_like_python(lot, tmp_path, capsys):
    """A mask, the corrections columns and the verdicts of a batch run (Python and command
    line) are those of the corrected capture, as the same steps done by hand give them."""
    import kit
    from kit.io.folder import touchstone_files

    root, d, proc_file = lot
    text = proc_file.read_text() + """
[[limits.mask]]
name = "below fs"
curve = "z_mag_ohm"
f_min_hz = 1.69e6
f_max_hz = 1.71e6
lower = 17.0
"""
    proc_file.write_text(text)
    proc = Procedure.from_file(proc_file)
    batch = run(proc, d, workers=1, use_cache=False).summary.set_index("capture")
    out = tmp_path / "cli"
    assert main(["run", str(proc_file), str(d), "--out", str(out), "--workers", "1",
                 "--no-cache"]) == 1                  # the truncated file is an error row
    cli = pd.read_parquet(out / "summary.parquet").set_index("capture")
    # the same steps by hand: load, the procedure's OSL, fit, resonance, kit.summary
    osl = kit.osl(*(root / "standards" / f"{s}.s1p" for s in ("open", "short", "load")))
    caps = [osl(kit.load(p, name_pattern="{lot}-{serial}")) for p in touchstone_files(d)
            if p.stem != "pzd7-99"]
    fits = [kit.fit(c, model="bvd", span_hz=(1.6e6, 2.4e6), keep_data=False) for c in caps]
    res = [kit.resonance(c, span_hz=(1.6e6, 2.4e6)) for c in caps]
    hand = kit.summary(caps, fits=fits, resonances=res,
                       limits=proc.limits_object()).set_index("capture")
    cols = ["verdict", "mask_below_fs_margin_ohm", "corrections", "correction_state", "fs_hz"]
    for name in hand.index:
        for c in cols:
            assert batch.loc[name, c] == hand.loc[name, c] == cli.loc[name, c], (name, c)
        assert batch.loc[name, "corrections"] == "osl"
        assert batch.loc[name, "correction_state"].startswith("removed by sweepbook: osl")
    # pzd7-01 at 1.7 MHz: raw |Z| about 14.6 ohm, corrected about 19.3 ohm (issue 13): the
    # 17 ohm floor passes on the corrected capture only
    assert batch.loc["pzd7-01", "mask_below_fs_margin_ohm"] > 0
    raw = kit.summary([kit.load(d / "pzd7-01.s1p")], limits=proc.limits_object())
    assert raw["mask_below_fs_margin_ohm"].iloc[0] < 0


def test_dask_reports_progress_and_stops_when_cancelled(lot, monkeypatch):
    """On a Dask client (a LocalCluster of threads, processes=False: the same client API as
    a remote scheduler, dask.distributed documentation) on_progress counts the captures as
    chunks finish, up to all of them, and a set cancel flag stops the run with Cancelled
    after the chunk in hand; nothing is returned."""
    distributed = pytest.importorskip("dask.distributed")
    import threading

    from kit.batch import engine as batch
    from kit.io.pool import Cancelled

    root, d, proc = lot
    monkeypatch.setattr(batch, "CHUNK", 1)
    n = len(list(d.iterdir()))
    seen, stop = [], threading.Event()

    def on_progress(done, total):
        seen.append((done, total))
        stop.set()  # the second run is cancelled from its first report on

    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        res = run(proc, d, client=client, use_cache=False,
                  on_progress=lambda done, total: seen.append((done, total)))
        assert seen == [(k, n) for k in range(1, n + 1)]
        assert len(res.summary) == n and res.stats["engine"].startswith("dask")
        seen.clear()
        with pytest.raises(Cancelled) as err:
            run(proc, d, client=client, use_cache=False, on_progress=on_progress, cancel=stop)
    assert (err.value.done, err.value.total) == (1, n) and seen == [(1, n)]
