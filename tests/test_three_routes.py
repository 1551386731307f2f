"""One procedure, three routes: Python (kit.batch.run), the procedure panel, the command line.

The procedure is the one notebook 07 builds for the demo lot (open/short/load correction
with the demo standards, a Butterworth-Van Dyke fit over the thickness mode, limits on fs,
k_eff and Qm). All three routes call the same engine, so the verdicts, their reasons and
the judged numbers must be the same, bit for bit: the same code runs the same arithmetic on
the same bytes in the same order (one worker, in the process of each route), and the
command line's summary.parquet stores float64 without rounding (Apache Parquet's DOUBLE is
IEEE 754 binary64). Any difference would mean a route computes something of its own.

The outside check is the comparison between the routes themselves, and for the verdicts
the demo lot's recorded truth (demo_data/truth.json: which elements were made faulty).

Cancelling is tested on a larger lot (the demo files copied under new names, 208
captures): the run stops with kit.io.pool.Cancelled and nothing is written.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import threading
import time
from pathlib import Path

import pandas as pd
import pytest

pytest.importorskip("ipywidgets")

from kit.batch import engine  # noqa: E402
from kit.batch.procedure import Procedure  # noqa: E402
from kit.io.pool import Cancelled  # noqa: E402
from kit.ui.procedure_panel import procedure_panel  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
#: Columns that carry the judgement: the verdict and its reasons in words.
VERDICT_COLUMNS = ["capture", "status", "verdict", "verdict_reasons"]
#: Numbers the verdict rests on (judged quantities, their margins) and the fitted model.
NUMBER_COLUMNS = ["fs_hz", "fp_hz", "k_eff", "qm", "c0_f", "r1_ohm", "l1_h", "c1_f",
                  "fs_margin_hz", "fs_margin_rel", "k_eff_margin", "k_eff_margin_rel",
                  "qm_margin", "qm_margin_rel"]
LIMITS = {"fs_hz": {"min": 1.80e6, "max": 1.90e6}, "k_eff": {"min": 0.40}, "qm": {"min": 50}}


@pytest.fixture(scope="module")
def work(demo_dir, tmp_path_factory):
    """A folder with the standards copied beside the procedure file (as notebook 07 does)."""
    folder = tmp_path_factory.mktemp("routes")
    shutil.copytree(demo_dir / "standards", folder / "standards")
    proc = Procedure.from_dict({
        "name": "pzd7 incoming check",
        "import": {"method": "reflection", "name_pattern": "{lot}-{serial}"},
        "correction": [{"kind": "osl", "open": "standards/open.s1p",
                        "short": "standards/short.s1p", "load": "standards/load.s1p",
                        "load_ohms": 50.0}],
        "fit": {"model": "bvd", "span_hz": [1.6e6, 2.3e6], "modes": 1},
        "limits": LIMITS,
    }, base_dir=folder)
    proc.to_file(folder / "proc.toml")
    return folder


@pytest.fixture(scope="module")
def direct(work, demo_dir):
    """Route (a): the procedure file run from Python, one worker, no cache."""
    return engine.run(work / "proc.toml", demo_dir / "lot", workers=1, use_cache=False,
                      progress=False)


def judged(summary: pd.DataFrame) -> tuple[list, pd.DataFrame]:
    """The verdict columns as plain values, and the judged numbers as a float64 frame."""
    words = summary[VERDICT_COLUMNS].astype(object).values.tolist()
    numbers = summary[NUMBER_COLUMNS].astype("float64").reset_index(drop=True)
    return words, numbers


def test_python_panel_and_command_line_give_the_same_verdicts(work, direct, demo_dir, tmp_path):
    """Verdicts and reasons equal as text, judged numbers equal exactly (see the module
    notes for why exact)."""
    lot = demo_dir / "lot"
    # (b) the panel, as a user drives it: load the file, press Run, wait for the thread
    panel = procedure_panel(lot, display=False, standards=work, path=str(work / "proc.toml"),
                            use_cache=False)
    panel.load_button.click()
    assert panel.message.kind in ("", "note"), panel.message.last
    panel.run_button.click()
    assert panel.wait(timeout=600) and panel.job.state == "done", panel.message.last
    # (c) the command line, in a process of its own, on this checkout of the kit
    out = tmp_path / "out"
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(
        [str(ROOT), *filter(None, [os.environ.get("PYTHONPATH")])])}
    done = subprocess.run([sys.executable, "-m", "kit", "run", str(work / "proc.toml"), str(lot),
                           "--out", str(out), "--workers", "1", "--no-cache"],
                          capture_output=True, text=True, timeout=600, env=env, cwd=tmp_path)
    assert done.returncode == (1 if direct.stats["errors"] else 0), done.stderr
    cli = pd.read_parquet(out / "summary.parquet")

    words_a, numbers_a = judged(direct.summary)
    for other in (panel.result.summary, cli):
        words, numbers = judged(other)
        assert words == words_a
        pd.testing.assert_frame_equal(numbers, numbers_a, check_exact=True)
    # the CSV (what a spreadsheet user opens) tells the same verdicts
    csv = pd.read_csv(out / "summary.csv")
    assert csv["verdict"].tolist() == direct.summary["verdict"].tolist()


def test_the_verdicts_match_the_demo_lot_truth(direct, demo_dir):
    """The faulty elements recorded when the demo lot was invented fail; the check resistor
    fails (it has no resonance in the limits); every good element passes."""
    import json

    truth = json.loads((demo_dir / "truth.json").read_text())
    verdict = dict(zip(direct.summary["capture"], direct.summary["verdict"]))
    assert verdict.pop("check_resistor") == "fail"
    faulty = {name for name, rec in truth["elements"].items() if rec.get("defect")}
    assert faulty, "truth.json names no faulty element: the check would be empty"
    assert {n for n, v in verdict.items() if v == "fail"} == faulty


# --------------------------------------------------------------------- cancelling a large lot
@pytest.fixture(scope="module")
def large_lot(demo_dir, tmp_path_factory):
    """208 captures: the 13 demo files, 16 times under new lot names."""
    folder = tmp_path_factory.mktemp("large") / "lot"
    folder.mkdir()
    for k in range(16):
        for src in sorted((demo_dir / "lot").glob("*.s1p")):
            name = src.name.replace("pzd7-", f"pzd{k + 10}-").replace(
                "check_resistor", f"check_resistor{k:02d}")
            shutil.copy(src, folder / name)
    return folder


def test_cancel_stops_a_python_run_in_workers(work, large_lot):
    """Set once the first chunk is back: kit.batch.run raises Cancelled well before the end
    and returns nothing."""
    stop = threading.Event()
    seen = []

    def progress(done, total):
        seen.append((done, total))
        if done >= engine.CHUNK:
            stop.set()

    with pytest.raises(Cancelled) as info:
        engine.run(work / "proc.toml", large_lot, workers=2, use_cache=False, progress=False,
                   on_progress=progress, cancel=stop)
    assert info.value.total == 208 and engine.CHUNK <= info.value.done < 208
    assert seen[0] == (0, 208) and seen[-1][0] == info.value.done


def test_cancel_in_the_panel_leaves_no_output(work, large_lot, tmp_path):
    """The panel runs the large lot with two worker processes from its background thread;
    once a chunk is back the user presses Cancel: no result, no output folder, a note."""
    panel = procedure_panel(large_lot, display=False, standards=work,
                            path=str(work / "proc.toml"), use_cache=False)
    panel.load_button.click()
    panel.workers.value = 2
    panel.out.value = str(tmp_path / "out")
    panel.run_button.click()
    deadline = time.monotonic() + 300
    while panel.job.progress.value < engine.CHUNK and panel.job.running:
        assert time.monotonic() < deadline, "no chunk came back from the workers"
        time.sleep(0.05)
    assert panel.job.running, panel.message.last  # workers report back to the thread
    panel.job.cancel_button.click()
    assert panel.wait(timeout=120)
    assert panel.job.state == "cancelled" and panel.result is None
    assert panel.message.kind == "note" and "of 208 capture(s)" in panel.message.last
    assert not (tmp_path / "out").exists()
