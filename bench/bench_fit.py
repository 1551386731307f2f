"""Benchmark of the BVD fit: evaluations per fit, median time per fit, ratio to one evaluation.

Run:  .venv/bin/python bench/bench_fit.py [--lot 1000] [--points 1601] [--seed 1]

For a lot of noisy 1601-point BVD captures (random parameters around a 1 MHz ceramic) it
prints, measured in this one run:

* the number of model+Jacobian evaluations per fit (median and maximum; target <= 30),
* the median time per fit,
* the ratios fit time / one model evaluation and fit time / one model+Jacobian evaluation,
* the share of fits that ended ok.

No timing is asserted anywhere; the numbers depend on the machine and its load.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np


def make_lot(n: int, points: int, seed: int):
    """Noisy BVD captures (f, z, truth) with random parameters (0.3 % relative noise)."""
    from kit.resonators.registry import get_model

    model = get_model("bvd")
    rng = np.random.default_rng(seed)
    lot = []
    for _ in range(n):
        fs = 1e6 * np.exp(rng.uniform(-0.3, 0.3))
        c0 = 1e-9 * np.exp(rng.uniform(-0.5, 0.5))
        k2 = rng.uniform(0.08, 0.25)
        c1 = c0 * k2 / (1 - k2)
        q = np.exp(rng.uniform(np.log(50), np.log(500)))
        w = 2 * np.pi * fs
        p = {"C0": c0, "R1": 1 / (w * q * c1), "L1": 1 / (w * w * c1), "C1": c1}
        fp = fs * np.sqrt(1 + c1 / c0)
        f = np.linspace(0.85 * fs, 1.15 * fp, points)
        z = model.z(f, p) * (1 + 3e-3 * (rng.standard_normal(points)
                                         + 1j * rng.standard_normal(points)) / np.sqrt(2))
        lot.append((f, z, p))
    return lot


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--lot", type=int, default=200, help="captures in the lot (default 200)")
    ap.add_argument("--points", type=int, default=1601, help="points per capture")
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args(argv)

    import kit
    from kit.resonators import models

    lot = make_lot(args.lot, args.points, args.seed)
    calls = [0]
    original = models.Model.z_and_jac

    def counting(self, f_hz, params):
        calls[0] += 1
        return original(self, f_hz, params)

    models.Model.z_and_jac = counting
    try:
        kit.fit(lot[0][0], z=lot[0][1])  # warm-up (imports)
        times, evals, oks = [], [], 0
        for f, z, _ in lot:
            calls[0] = 0
            t0 = time.perf_counter()
            r = kit.fit(f, z=z, keep_data=False)
            times.append(time.perf_counter() - t0)
            evals.append(calls[0])
            oks += bool(r.ok)
    finally:
        models.Model.z_and_jac = original

    from kit.resonators import registry

    m = registry.get_model("bvd")
    f, _, p = lot[0]
    reps = 200
    t0 = time.perf_counter()
    for _ in range(reps):
        m.z(f, p)
    t_z = (time.perf_counter() - t0) / reps
    t0 = time.perf_counter()
    for _ in range(reps):
        m.z_and_jac(f, p)
    t_zj = (time.perf_counter() - t0) / reps

    med = statistics.median(times)
    print(f"BVD fits of {len(lot)} captures x {args.points} points")
    print(f"  model+Jacobian evaluations per fit: median {statistics.median(evals):.0f}, "
          f"max {max(evals)} (target <= 30)")
    print(f"  median time per fit: {med * 1e3:.2f} ms (mean {np.mean(times) * 1e3:.2f} ms)")
    print(f"  one model evaluation: {t_z * 1e6:.1f} us; with Jacobian: {t_zj * 1e6:.1f} us")
    print(f"  ratio fit / model evaluation: {med / t_z:.0f}")
    print(f"  ratio fit / model+Jacobian evaluation: {med / t_zj:.1f}")
    print(f"  fits ok: {oks}/{len(lot)}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
