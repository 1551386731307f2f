"""The sweepbook command and the weight of `import kit`."""

from __future__ import annotations

import re
import shutil
import subprocess
import sys

import pytest

from kit.batch.cli import main

GOOD = "# Hz S RI R 50\n1e6 0.1 0\n2e6 0.2 0\n"


def test_check_exit_codes(tmp_path, capsys):
    """`sweepbook check` prints one line per finding and exits 1 when any file has an error."""
    (tmp_path / "a.s1p").write_text(GOOD)
    assert main(["check", str(tmp_path / "a.s1p")]) == 0
    (tmp_path / "b.s1p").write_text("# Hz S RI R 50\n1e6 0.1\n")
    assert main(["check", str(tmp_path)]) == 1
    out = capsys.readouterr().out
    assert "b.s1p:2: error:" in out and "a.s1p: ok" in out


def test_python_m_kit_is_the_same_entry_point():
    """`python -m kit --version` answers like the console script."""
    out = subprocess.run([sys.executable, "-m", "kit", "--version"], capture_output=True, text=True,
                         check=True).stdout
    assert out.startswith("sweepbook ")


def test_import_kit_is_light():
    """`import kit` does not import scipy.optimize, matplotlib, ipywidgets or scikit-rf."""
    code = ("import sys, kit; heavy = [m for m in ('scipy.optimize', 'matplotlib', 'ipywidgets', "
            "'skrf', 'pandas') if m in sys.modules]; print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_public_names_stay_functions_after_every_module_is_imported():
    """No public name is shadowed by a submodule of the same name (import binds submodules on kit)."""
    code = ("import importlib, pkgutil, types, kit\n"
            "for m in pkgutil.walk_packages(kit.__path__, 'kit.'):\n"
            "    if not m.name.startswith(('kit.ui', 'kit.__main__', 'kit.batch.demo')):\n"
            "        importlib.import_module(m.name)\n"
            "bad = [n for n in kit._EXPORTS if n not in kit._MODULES\n"
            "       and isinstance(getattr(kit, n), types.ModuleType)]\n"
            "print(','.join(bad))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


# ---------------------------------------------------------------------- procedures and runs
PROC = """
[import]
name_pattern = "{lot}-{serial}"
[fit]
model = "bvd"
span_hz = [1.6e6, 2.4e6]
[limits]
fs_hz = { min = 1.8e6, max = 1.9e6 }
k_eff = { min = 0.4 }
"""


@pytest.fixture
def figures_seen(monkeypatch):
    """Records the ``figures=`` the command gives to kit.batch.engine.run and
    BatchResult.write. Those parameters come with the store branch of issue 13; where they
    are not there yet, the wrapper drops the keyword before calling the real function."""
    import inspect

    from kit.batch import engine

    seen = {}
    real_run, real_write = engine.run, engine.BatchResult.write

    def run(*args, figures="flagged", **kw):
        seen["run"] = figures
        if "figures" in inspect.signature(real_run).parameters:
            kw["figures"] = figures
        return real_run(*args, **kw)

    def write(self, *args, figures="flagged", **kw):
        seen["write"] = figures
        if "figures" in inspect.signature(real_write).parameters:
            kw["figures"] = figures
        return real_write(self, *args, **kw)

    monkeypatch.setattr(engine, "run", run)
    monkeypatch.setattr(engine.BatchResult, "write", write)
    return seen


@pytest.fixture
def small_lot(tmp_path, demo_dir):
    """Three parts of the demo lot (01 good, 04 cracked, 07 de-poled: demo_data/README.md)."""
    d = tmp_path / "lot"
    d.mkdir()
    for n in ("01", "04", "07"):
        shutil.copy(demo_dir / "lot" / f"pzd7-{n}.s1p", d)
    proc = tmp_path / "proc.toml"
    proc.write_text(PROC)
    return d, proc


def test_check_procedure_lists_every_problem_and_exits_2(tmp_path, small_lot, capsys):
    """`sweepbook check-procedure` prints each problem with file, line and fix (a misspelt key
    with its nearest valid key) and exits 2; a clean procedure exits 0."""
    d, proc = small_lot
    assert main(["check-procedure", str(proc), str(d)]) == 0
    assert "ok (spans checked against the inputs)" in capsys.readouterr().out
    bad = tmp_path / "bad.toml"
    bad.write_text(PROC.replace("model =", "modle =").replace("[1.6e6, 2.4e6]", "[1.6, 2.4]")
                   + "[[correction]]\nkind = \"osl\"\nopen = \"o.s1p\"\nshort = \"s.s1p\"\n"
                   "load = \"l.s1p\"\n")
    assert main(["check-procedure", str(bad), str(d)]) == 2
    out = capsys.readouterr().out.splitlines()
    assert len(out) == 5  # misspelt key, span in MHz, three missing standards
    assert out[0] == (f"{bad}:5: error: [fit] has an unknown key 'modle' "
                      "(fix: did you mean 'model'?)")
    assert f"{bad}:6: error: [fit] span_hz = [1.6, 2.4]" in out[1]
    assert all("does not exist" in line for line in out[2:])


def test_run_refuses_an_invalid_procedure_before_reading_captures(tmp_path, small_lot, capsys,
                                                                  monkeypatch):
    """`sweepbook run` validates first: every problem on standard error, exit code 2, and the
    engine is never started."""
    from kit.batch import engine

    d, proc = small_lot
    proc.write_text(PROC.replace("modes", "x").replace("k_eff", "k_ef").replace(
        "span_hz = [1.6e6, 2.4e6]", "span_hz = [1.6e6, 2.4e6]\nmode = 1"))

    def never(*a, **k):
        raise AssertionError("the run started")

    monkeypatch.setattr(engine, "run", never)
    assert main(["run", str(proc), str(d), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert "did you mean 'modes'?" in err and "did you mean 'k_eff'?" in err
    assert "2 problem(s); nothing was run; exit code 2" in err
    assert not (tmp_path / "out").exists()


def test_out_inside_an_input_folder_is_refused(tmp_path, small_lot, capsys, monkeypatch):
    """An output folder that is an input folder, or inside one, is refused with exit code 2
    before the run (raw captures' folders are never written to)."""
    from kit.batch import engine

    d, proc = small_lot
    monkeypatch.setattr(engine, "run", lambda *a, **k: pytest.fail("the run started"))
    for out in (d, d / "results", d / "a" / "b"):
        assert main(["run", str(proc), str(d), "--out", str(out)]) == 2
        assert "is inside the input folder" in capsys.readouterr().err
    one = str(d / "pzd7-01.s1p")
    assert main(["run", str(proc), one, "--out", str(d)]) == 2
    assert "is the folder of the input" in capsys.readouterr().err
    assert sorted(p.name for p in d.iterdir()) == ["pzd7-01.s1p", "pzd7-04.s1p", "pzd7-07.s1p"]


def test_run_table_of_parts_that_did_not_pass_and_figures(tmp_path, small_lot, capsys,
                                                          figures_seen):
    """A run ends with the parts that did not pass and why (the cracked 04 and the de-poled 07
    of demo_data/README.md fail fs and k_eff), exits 0 when every capture was analysed, and
    hands --figures to the run and the write."""
    d, proc = small_lot
    out = tmp_path / "out"
    assert main(["run", str(proc), str(d), "--out", str(out), "--workers", "1", "--no-cache",
                 "--figures", "all"]) == 0
    said = capsys.readouterr().out
    table = said[said.index("parts that did not pass:"):].splitlines()[1:]
    assert table[0].split() == ["capture", "verdict", "first", "reason"]
    assert [r.split()[:2] for r in table[1:]] == [["pzd7-04", "fail"], ["pzd7-07", "fail"]]
    assert "series resonance" in table[1] or "fs = " in table[1]
    assert figures_seen == {"run": "all", "write": "all"}


def test_all_error_run_exits_3(tmp_path, capsys, figures_seen):
    """A run in which every capture is an error row exits 3 (some: 1, as before)."""
    d = tmp_path / "lot"
    d.mkdir()
    for n in ("98", "99"):
        (d / f"pzd7-{n}.s1p").write_text("# Hz S RI R 50\n1e6 0.1\n")  # truncated record
    proc = tmp_path / "proc.toml"
    proc.write_text(PROC)
    assert main(["run", str(proc), str(d), "--out", str(tmp_path / "out"), "--workers", "1",
                 "--no-cache"]) == 3
    io = capsys.readouterr()
    assert "not one capture was analysed; exit code 3" in io.err
    assert "pzd7-98  error" in io.out and figures_seen["run"] == "flagged"


def test_not_passed_table_is_capped():
    """At most SHOWN_PARTS parts are listed, then how many more are in summary.csv."""
    import pandas as pd

    from kit.batch.cli import SHOWN_PARTS, not_passed

    rows = [{"capture": f"p{i:02d}", "status": "ok", "error": "", "verdict": "fail",
             "verdict_reasons": f"reason {i}; second"} for i in range(SHOWN_PARTS + 5)]
    rows.append({"capture": "good", "status": "ok", "error": "", "verdict": "pass",
                 "verdict_reasons": ""})
    lines = not_passed(pd.DataFrame(rows))
    assert len(lines) == 1 + SHOWN_PARTS + 1 and lines[-1] == "5 more in summary.csv"
    assert lines[1].split() == ["p00", "fail", "reason", "0"]
    assert not_passed(pd.DataFrame(rows[-1:])) == []


def test_python_export_refuses_a_folder_inside_an_input_folder(tmp_path, small_lot):
    """The same rule from Python (kit.io.writer.refuse_input_folder, used by kit.export and
    the report): any depth inside a folder of input captures is refused."""
    from kit.io.touchstone import load
    from kit.io.writer import ExportError, refuse_input_folder

    d, _ = small_lot
    cap = load(d / "pzd7-01.s1p")
    for target in (d / "report.html", d / "a" / "b" / "report.html"):
        with pytest.raises(ExportError, match="holds input captures"):
            refuse_input_folder(target, [cap], "the report")
    refuse_input_folder(tmp_path / "elsewhere" / "report.html", [cap], "the report")


def test_run_reads_the_procedure_and_builds_its_corrections_once(tmp_path, small_lot, demo_dir,
                                                                 capsys, monkeypatch):
    """`sweepbook run` hands what the validator read and built to the run: the procedure file
    is parsed once, each correction (an open/short/load on the demo standards,
    demo_data/README.md) built once, the input folder listed once; exit code and output as
    before (common practice, no source: work done once is done right once)."""
    import tomllib

    from kit.batch import engine
    from kit.batch.procedure import Procedure
    from kit.io import folder

    d, proc = small_lot
    std = demo_dir / "standards"
    proc.write_text(PROC + f'\n[[correction]]\nkind = "osl"\nopen = "{std / "open.s1p"}"\n'
                    f'short = "{std / "short.s1p"}"\nload = "{std / "load.s1p"}"\n')
    text = proc.read_text()
    seen = {"parsed": 0, "built": 0, "listed": 0}
    real_loads, real_build = tomllib.loads, Procedure.build_correction
    real_list = folder.touchstone_files

    def loads(s, *a, **k):
        seen["parsed"] += s == text
        return real_loads(s, *a, **k)

    def build(self, i, c):
        seen["built"] += 1
        return real_build(self, i, c)

    def listed(p, *a, **k):
        seen["listed"] += 1
        return real_list(p, *a, **k)

    monkeypatch.setattr(tomllib, "loads", loads)
    monkeypatch.setattr(Procedure, "build_correction", build)
    monkeypatch.setattr(folder, "touchstone_files", listed)
    monkeypatch.setattr(engine, "_CHAINS", {})  # no chain of an earlier test
    assert main(["run", str(proc), str(d), "--out", str(tmp_path / "out"), "--workers", "1",
                 "--no-cache", "--no-report"]) == 0
    assert "3 capture(s), 0 error row(s)" in capsys.readouterr().out
    assert seen == {"parsed": 1, "built": 1, "listed": 1}


@pytest.mark.parametrize("workers, whole_group", [(1, False), (2, True)])
def test_ctrl_c_stops_a_run_with_nothing_half_written(tmp_path, demo_dir, workers, whole_group):
    """SIGINT (what Ctrl-C sends, POSIX signal.h) to `python -m kit run` during the analysis
    stops it after the captures in hand with exit code 130 (128 + SIGINT, as shells report
    it: common practice, no source), clear lines and no traceback; --out is not created and
    no temporary export folder is left beside it. With workers, the signal goes to the whole
    process group, as a terminal sends it: the workers leave it to the parent."""
    import os
    import signal
    import time

    if os.name != "posix":
        pytest.skip("SIGINT to a child process is POSIX")
    lot = tmp_path / "lot"
    lot.mkdir()
    for k in range(40):  # long enough to be interrupted in the middle of the analysis
        data = (demo_dir / "lot" / "pzd7-01.s1p").read_bytes()
        (lot / f"pzd7-{k:03d}.s1p").write_bytes(data + f"! copy {k}\n".encode())  # distinct
    proc = tmp_path / "proc.toml"
    proc.write_text(PROC)
    cache, out = tmp_path / "cache", tmp_path / "out"
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    child = subprocess.Popen([sys.executable, "-m", "kit", "run", str(proc), str(lot), "--out",
                              str(out), "--workers", str(workers), "--cache", str(cache)],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env,
                             start_new_session=whole_group)
    try:
        deadline = time.monotonic() + 120
        while not any(p.is_file() for p in cache.rglob("*.npz")):  # the analysis has begun
            assert child.poll() is None and time.monotonic() < deadline, child.communicate()
            time.sleep(0.05)
        if whole_group:
            os.killpg(child.pid, signal.SIGINT)
        else:
            child.send_signal(signal.SIGINT)
        _, err = child.communicate(timeout=120)
    finally:
        if child.poll() is None:
            child.kill()
    assert child.returncode == 130, err
    assert "Traceback" not in err
    said = err.strip().splitlines()
    assert said[0] == ("sweepbook run: stopping after the captures in hand (Ctrl-C again: at "
                       "once)")
    assert re.fullmatch(r"sweepbook run: interrupted after (\d+) of 40 capture\(s\); nothing "
                        rf"was written to {re.escape(str(out))}; run the same command again to "
                        r"finish; exit code 130", said[-1]), said
    assert not out.exists() and sorted(p.name for p in tmp_path.iterdir()) == [
        "cache", "lot", "proc.toml"]
