"""Batch-run benchmarks (issue 13: production lots). Ratios measured in one run.

Makes N distinct captures of 1601 points (demo lot elements, each with its own comment line
so that every file has its own bytes and hash), then, with an OSL + BVD fit + limits
procedure and the ``sweepbook run`` command (``kit.batch.cli.main``), two workers, each
measurement with its own empty cache folder so that no run helps another:

a. the whole run with the report and the default figures against the same with
   ``--no-report`` (goal: at most 1.3x);
b. the re-run over the unchanged folder, end to end (the lot store), against the first
   run (goal: at least 20x faster);
c. the analysis (``kit.batch.run``, figures included, no cache) on two workers against one
   (goal: at least 1.8x), each in a fresh interpreter as a command runs it, measured twice,
   alternately, and the faster kept; also once in this process, where the one worker runs
   warm and the two start cold (a worker's first capture imports scipy.signal, scipy.optimize
   and sets up the correction chain: about 2 s);

then the hashing of the inputs, the bare parse, the memory of N captures, and the time
projected for 1,000,000 captures on 64 Dask workers.

Run: ``python bench/bench_batch.py [N]`` (default 1000; 200 gives a quick look);
``python bench/bench_batch.py N --parallel`` measures only (c) and the machine's ceiling.
"""

from __future__ import annotations

import contextlib
import gc
import hashlib
import io
import os
import shutil
import subprocess
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import kit  # noqa: E402
from kit.batch.cli import main as cli  # noqa: E402
from kit.batch.engine import run  # noqa: E402
from kit.batch.procedure import Procedure  # noqa: E402

PROCEDURE = """
[[correction]]
kind = "osl"
open = "{std}/open.s1p"
short = "{std}/short.s1p"
load = "{std}/load.s1p"
[fit]
model = "bvd"
span_hz = [1.6e6, 2.4e6]
[limits]
fs_hz = {{ min = 1.8e6, max = 1.9e6 }}
"""


def make_lot(folder: Path, n: int) -> list[Path]:
    """``n`` files, copies of the demo lot's elements, each with its own first line."""
    src = sorted((ROOT / "demo_data" / "lot").glob("pzd7-*.s1p"))
    texts = [p.read_text() for p in src]
    folder.mkdir(parents=True, exist_ok=True)
    out = []
    for i in range(n):
        p = folder / f"bench-{i:05d}.s1p"
        p.write_text(f"! bench copy {i}\n" + texts[i % len(texts)])
        out.append(p)
    return out


def procedure(folder: Path) -> Path:
    """The procedure file (OSL with the demo standards, BVD fit, an fs limit)."""
    p = folder / "procedure.toml"
    p.write_text(PROCEDURE.format(std=(ROOT / "demo_data" / "standards").as_posix()))
    return p


def timed(fn):
    t = time.perf_counter()
    out = fn()
    return time.perf_counter() - t, out


def sweepbook(*args: str) -> float:
    """Seconds for one ``sweepbook run`` (its one-line report kept off the screen)."""
    with contextlib.redirect_stdout(io.StringIO()):
        t, code = timed(lambda: cli(["run", *map(str, args)]))
    if code not in (0, 1):
        raise SystemExit(f"sweepbook run failed with exit code {code}")
    return t


def cold_run(proc: Path, lot: Path, workers: int) -> float:
    """Seconds for ``kit.batch.run`` in a fresh interpreter, as a command would run it: the
    imports, the worker start and the first capture's set-up are paid on both sides."""
    code = ("import sys; from kit.batch.engine import run\n"
            "if __name__ == '__main__':\n"
            f"    run(sys.argv[1], sys.argv[2], workers={workers}, use_cache=False, progress=False)")
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    t = time.perf_counter()
    subprocess.run([sys.executable, "-c", code, str(proc), str(lot)], check=True, env=env)
    return time.perf_counter() - t


def _spin(seed: int) -> float:
    """A CPU job with no input or output: small QR factorisations and a Python loop."""
    import numpy as np

    a = np.random.default_rng(seed).standard_normal((1601, 4))
    s = 0.0
    for _ in range(12000):
        _q, r = np.linalg.qr(a)
        s += float(np.abs(r).sum()) + sum(float(x) for x in range(200))
    return s


def machine_ceiling() -> tuple[float, float, float]:
    """The machine's own two-process speed-up, measured now on a job that shares nothing:
    (one process [s], two processes [s], ratio). Virtual CPUs that share a host rarely give
    2x; the batch's ratio (c) is read against this ceiling."""
    from concurrent.futures import ProcessPoolExecutor

    from kit.io.pool import one_blas_thread

    one_blas_thread()
    t1, _ = timed(lambda: [_spin(i) for i in range(4)])
    with ProcessPoolExecutor(2, initializer=one_blas_thread) as ex:
        list(ex.map(_spin, [99, 98]))  # workers started and warm
        t2, _ = timed(lambda: list(ex.map(_spin, range(4))))
    return t1, t2, t1 / t2


def parallel_only(n: int) -> None:
    """Only (c) and the machine's ceiling: ``python bench/bench_batch.py N --parallel``."""
    tmp = Path(tempfile.mkdtemp(prefix="sweepbook-bench-"))
    try:
        make_lot(tmp / "lot", n)
        proc = procedure(tmp)
        c1, c2, ceiling = machine_ceiling()
        ones = [cold_run(proc, tmp / "lot", 1)]
        twos = [cold_run(proc, tmp / "lot", 2)]
        ones.append(cold_run(proc, tmp / "lot", 1))
        twos.append(cold_run(proc, tmp / "lot", 2))
        c1b, c2b, ceiling_b = machine_ceiling()
        ratio = min(ones) / min(twos)
        print(f"{n} captures; machine ceiling (a job sharing nothing, 1 against 2 processes): "
              f"{c1:.2f}/{c2:.2f} s = {ceiling:.2f}x before, {c1b:.2f}/{c2b:.2f} s = "
              f"{ceiling_b:.2f}x after")
        print(f"  c. analysis, fresh interpreters, best of 2: 1 worker {min(ones):.2f} s, 2 workers "
              f"{min(twos):.2f} s: {ratio:.2f}x (goal >= 1.8); "
              f"{ratio / max(ceiling, ceiling_b):.0%} of the machine's ceiling")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def main(n: int = 1000) -> None:
    tmp = Path(tempfile.mkdtemp(prefix="sweepbook-bench-"))
    try:
        lot = tmp / "lot"
        files = make_lot(lot, n)
        proc = procedure(tmp)
        # warm-up: imports, the fork server, the chain and the first fit are not measured
        make_lot(tmp / "warm", 40)
        sweepbook(proc, tmp / "warm", "--out", tmp / "warm-out", "--workers", 2,
                  "--cache", tmp / "warm-cache")
        common = ("--workers", 2)
        t_report = sweepbook(proc, lot, "--out", tmp / "out-a", *common, "--cache", tmp / "cache-a")
        t_bare = sweepbook(proc, lot, "--out", tmp / "out-b", *common, "--cache", tmp / "cache-b",
                           "--no-report")
        t_again = sweepbook(proc, lot, "--out", tmp / "out-c", *common, "--cache", tmp / "cache-a")
        same = all((tmp / "out-a" / f).read_bytes() == (tmp / "out-c" / f).read_bytes()
                   for f in ("sweeps.parquet", "summary.parquet"))
        p = Procedure.from_file(proc)
        c1, c2, ceiling = machine_ceiling()
        # c: each in a fresh interpreter (a command's start-up on both sides), alternated
        # twice, the best of each kept (other work on a shared machine only slows a run down)
        ones, twos = [], []
        for _ in range(2):
            ones.append(cold_run(proc, lot, 1))
            twos.append(cold_run(proc, lot, 2))
        t_one, t_two = min(ones), min(twos)
        # and in this process, where one worker runs warm (imports and set-up already done)
        # and the two workers start cold: the lower bound of the ratio
        w_one, r1 = timed(lambda: run(p, lot, workers=1, use_cache=False))
        w_two, r2 = timed(lambda: run(p, lot, workers=2, use_cache=False))
        assert r1.summary[["capture", "fs_hz"]].equals(r2.summary[["capture", "fs_hz"]])
        # the report's own cost: report.html from the analysed lot, best of 2
        from kit.batch.engine import _write_report

        t_html = min(timed(lambda: _write_report(r2, tmp / "report.html", r2.summary, None,
                                                 "flagged"))[0] for _ in range(2))
        t_hash, _ = timed(lambda: [hashlib.sha256(f.read_bytes()).hexdigest() for f in files])
        t_parse, _ = timed(lambda: [kit.load(f) for f in files])
        size = sum(f.stat().st_size for f in (tmp / "out-a").iterdir())
        load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")

        print(f"{n} captures of 1601 points, OSL + BVD fit + limits, `sweepbook run`, 2 workers "
              f"(load average {load:.1f} on {os.cpu_count()} CPUs at the end)")
        print(f"  a. with the report (default figures: {len(r2.pictures)} pictures, "
              f"{len(r2.traces)} traces): {t_report:.2f} s; --no-report: {t_bare:.2f} s; "
              f"ratio {t_report / t_bare:.2f}x (goal <= 1.3); report.html alone "
              f"{t_html:.2f} s, that is {(t_bare + t_html) / t_bare:.2f}x of the --no-report run")
        print(f"  b. re-run over the unchanged folder: {t_again:.2f} s against {t_report:.2f} s: "
              f"{t_report / t_again:.1f}x faster (goal >= 20); same files: {same}; "
              f"outputs {size / 1e6:.0f} MB")
        print(f"  c. analysis (kit.batch.run, figures, no cache), each in a fresh interpreter, "
              f"best of 2: 1 worker {t_one:.2f} s, 2 workers {t_two:.2f} s: "
              f"{t_one / t_two:.2f}x (goal >= 1.8); in this process (1 worker warm, 2 workers "
              f"started cold): {w_one:.2f} s against {w_two:.2f} s, {w_one / w_two:.2f}x; the "
              f"machine's own ceiling (a job sharing nothing, 1 against 2 processes): "
              f"{c1:.2f}/{c2:.2f} s = {ceiling:.2f}x, so the batch reaches "
              f"{t_one / t_two / ceiling:.0%} of it")
        print(f"  hashing the {n} inputs (hashlib, each read in one go): {t_hash * 1e3:.0f} ms "
              f"({t_hash / n * 1e6:.0f} us each); bare parse (kit.load): {t_parse:.2f} s "
              f"({t_parse / n * 1e3:.1f} ms each)")
        per = t_one / n  # one worker's seconds per capture, analysis and figures
        eff = min(1.0, t_one / t_two / 2)  # the two-worker efficiency, assumed on 64
        proj = 1e6 * per / (64 * eff)
        print(f"  projection, 1,000,000 captures on 64 Dask workers as fast as these cores "
              f"(--summary-only, efficiency {eff:.2f} as measured on 2): "
              f"{1e6 * per / 3600:.1f} core-hours, about {proj / 60:.0f} min, plus floors that "
              f"do not shrink with workers (reading ~100 GB of text, 62,500 tasks)")
        gc.collect()
        tracemalloc.start()
        caps = [kit.load(f) for f in files]
        current, _peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        numbers = sum(c.f_hz.nbytes + c.s.nbytes for c in caps)
        print(f"  memory of {n} captures in one process: {current / 1e6:.1f} MB for "
              f"{numbers / 1e6:.1f} MB of frequencies and S-parameters: ratio "
              f"{current / numbers:.2f}")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    size = int(next((a for a in sys.argv[1:] if a.isdigit()), 1000))
    parallel_only(size) if "--parallel" in sys.argv else main(size)
