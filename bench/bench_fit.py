"""Benchmark of the BVD fit: evaluations per fit, median time per fit, ratio to one evaluation.

Run:  .venv/bin/python bench/bench_fit.py [--lot 1000] [--points 1601] [--seed 1]

For a lot of noisy 1601-point S11 captures of mixed families (32 kHz forks at the matched
reference, MHz ceramics and GHz thin films in 50 ohm, noise 1e-4..3e-3 on S11; the generator
of tests/test_fit_coverage.py), fitted with the defaults of ``kit.fit``, it prints, measured
in this one run:

* the number of model+Jacobian evaluations per fit: median (target <= 30), 95th percentile
  and its ratio to the median (target <= 3), maximum, per family,
* the median and mean time per fit,
* the ratios fit time / one model evaluation and fit time / one model+Jacobian evaluation,
* the share of fits that ended ok and the median residual / noise.

No timing is asserted anywhere; the numbers depend on the machine and its load.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np


def make_lot(n: int, points: int, seed: int):
    """Noisy captures (capture, truth, family) of the three families in turn."""
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
    from test_fit_coverage import FAMILIES, synthetic_capture

    rng = np.random.default_rng(seed)
    lot = []
    for i in range(n):
        fam = FAMILIES[i % len(FAMILIES)]
        cap, p, _sigma, _z0 = synthetic_capture(rng, fam, points)
        lot.append((cap, p, fam))
    return lot


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--lot", type=int, default=1000, help="captures in the lot (default 1000)")
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
        kit.fit(lot[0][0])  # warm-up (imports)
        times, evals, oks, ratios, fams = [], [], 0, [], []
        for cap, _, fam in lot:
            calls[0] = 0
            t0 = time.perf_counter()
            r = kit.fit(cap, keep_data=False)
            times.append(time.perf_counter() - t0)
            evals.append(calls[0])
            oks += bool(r.ok)
            ratios.append(r.residual_to_noise)
            fams.append(fam)
    finally:
        models.Model.z_and_jac = original

    from kit.resonators import registry

    m = registry.get_model("bvd")
    from kit.network.coerce import sweep

    p = lot[0][1]
    f = sweep(lot[0][0], method="reflection", port=1, z0_ohm=None, what="bench").f_hz
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
    ev = np.asarray(evals)
    med_ev, p95_ev = float(np.median(ev)), float(np.percentile(ev, 95))
    print(f"BVD fits of {len(lot)} captures x {args.points} points (mixed families)")
    print(f"  model+Jacobian evaluations per fit: median {med_ev:.0f} (target <= 30), "
          f"95th percentile {p95_ev:.0f} = {p95_ev / med_ev:.2f} x median (target <= 3), "
          f"max {ev.max()}")
    fams = np.asarray(fams)
    for fam in dict.fromkeys(fams):
        e = ev[fams == fam]
        print(f"    {fam}: median {np.median(e):.0f}, 95th percentile {np.percentile(e, 95):.0f}")
    print(f"  median time per fit: {med * 1e3:.2f} ms (mean {np.mean(times) * 1e3:.2f} ms)")
    print(f"  one model evaluation: {t_z * 1e6:.1f} us; with Jacobian: {t_zj * 1e6:.1f} us")
    print(f"  ratio fit / model evaluation: {med / t_z:.0f}")
    print(f"  ratio fit / model+Jacobian evaluation: {med / t_zj:.1f}")
    print(f"  fits ok: {oks}/{len(lot)}; residual / noise: median {np.nanmedian(ratios):.3f}, "
          f"max {np.nanmax(ratios):.3f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
