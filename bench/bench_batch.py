"""Batch-run benchmarks (issue: procedures and batch runs). Ratios from one run.

Makes N distinct captures of 1601 points (demo lot elements, each with its own comment line
so that every file has its own hash), then measures with an OSL + BVD fit procedure:

1. bare parse time (kit.load of every file, one process);
2. first run in one process and on 2 worker processes (parallel efficiency);
3. the analysis cost over the bare parse (first run, one process, minus parse);
4. a re-run with the cache (parsed captures and results reused) against the first run;
5. memory of N captures held in one process against the size of their numbers.

Run: ``python bench/bench_batch.py [N]`` (default 1000; 200 gives a quick look).
"""

from __future__ import annotations

import gc
import shutil
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import kit  # noqa: E402
from kit.batch.engine import run  # noqa: E402
from kit.batch.procedure import Procedure  # noqa: E402


def make_lot(folder: Path, n: int) -> list[Path]:
    src = sorted((ROOT / "demo_data" / "lot").glob("pzd7-*.s1p"))
    texts = [p.read_text() for p in src]
    out = []
    for i in range(n):
        p = folder / f"bench-{i:05d}.s1p"
        p.write_text(f"! bench copy {i}\n" + texts[i % len(texts)])
        out.append(p)
    return out


def procedure(folder: Path) -> Procedure:
    std = ROOT / "demo_data" / "standards"
    return Procedure.from_dict({
        "import": {"method": "reflection"},
        "correction": [{"kind": "osl", "open": str(std / "open.s1p"), "short": str(std / "short.s1p"),
                        "load": str(std / "load.s1p")}],
        "fit": {"model": "bvd", "span_hz": [1.6e6, 2.4e6]},
        "limits": {"fs_hz": {"min": 1.8e6, "max": 1.9e6}},
    }, base_dir=folder)


def timed(fn):
    t = time.perf_counter()
    out = fn()
    return time.perf_counter() - t, out


def main(n: int = 1000) -> None:
    tmp = Path(tempfile.mkdtemp(prefix="sweepbook-bench-"))
    try:
        files = make_lot(tmp, n)
        proc = procedure(tmp)
        # warm-up: imports, the correction chain and the first fit are not what is measured
        warm = tmp / "warm"
        warm.mkdir()
        make_lot(warm, 4)
        run(proc, warm, workers=1, use_cache=False)
        shutil.rmtree(warm)
        t_parse, _ = timed(lambda: [kit.load(p) for p in files])
        t_one, r1 = timed(lambda: run(proc, tmp, workers=1, use_cache=False))
        t_two, r2 = timed(lambda: run(proc, tmp, workers=2, use_cache=False))
        cache = tmp / "cache"
        t_first, _ = timed(lambda: run(proc, tmp, workers=2, cache_dir=cache))
        t_again, r3 = timed(lambda: run(proc, tmp, workers=2, cache_dir=cache))
        assert r1.summary[["capture", "fs_hz"]].equals(r2.summary[["capture", "fs_hz"]])
        print(f"{n} captures of 1601 points, OSL + BVD fit + limits")
        print(f"  bare parse (kit.load, 1 process): {t_parse:.2f} s ({t_parse / n * 1e3:.1f} ms each)")
        print(f"  first run, 1 process: {t_one:.2f} s; 2 processes: {t_two:.2f} s; "
              f"speed-up {t_one / t_two:.2f}x (target >= 1.8)")
        print(f"  analysis over bare parse (1 process): +{(t_one - t_parse) / t_parse * 100:.0f} % "
              f"(target <= 50 %)")
        print(f"  first run with an empty cache: {t_first:.2f} s; re-run from the cache: "
              f"{t_again:.2f} s; ratio {t_first / t_again:.1f}x (target >= 20); "
              f"parsed reused {r3.stats['hit']}, results reused {r3.stats['results_reused']}")
        gc.collect()
        tracemalloc.start()
        caps = [kit.load(p) for p in files]
        current, _peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        numbers = sum(c.f_hz.nbytes + c.s.nbytes for c in caps)
        numbers_z0 = numbers + sum(c.z0.nbytes for c in caps)
        print(f"  memory of {n} captures in one process: {current / 1e6:.1f} MB for "
              f"{numbers / 1e6:.1f} MB of frequencies and S-parameters: ratio "
              f"{current / numbers:.2f} (target <= 1.5); with the per-point reference "
              f"impedances {numbers_z0 / 1e6:.1f} MB, ratio {current / numbers_z0:.2f}")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1000)
