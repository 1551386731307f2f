"""Corrections benchmark: ratios measured in one run (the machines are shared and noisy).

1. Correcting N one-port captures of 1601 points with an OSL + cable chain, against parsing
   the same N files with kit.load. The aim is a ratio below 1 (correcting is cheaper than
   reading).
2. The same chain against scikit-rf doing the work per capture (``OnePort.apply_cal`` after
   cascading the inverse cable), which is what the kit avoids by computing the error terms
   once per correction object.

Run: ``python bench/bench_corrections.py`` (N = 200) or ``python bench/bench_corrections.py
--n 1000``.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import skrf

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import kit  # noqa: E402

POINTS = 1601


def make_files(folder: Path, n: int) -> tuple[list[Path], list[skrf.Network]]:
    """N noisy one-port captures and three standards behind a cable + fixture, as files."""
    f = skrf.Frequency(1e6, 3e6, POINTS, "Hz")
    m = skrf.media.DefinedGammaZ0(f, z0=50)
    cab = kit.cable(1.5, 0.66, 50.0, 0.12, 10e6)
    line = skrf.media.DefinedGammaZ0(f, z0=50, gamma=cab.gamma(f.f)).line(1.5, "m")
    box = line ** m.inductor(15e-9) ** m.shunt_capacitor(3e-12)
    rng = np.random.default_rng(7)
    stds = [box ** m.open(), box ** m.short(), box ** m.match()]
    for name, ntwk in zip(("open", "short", "load"), stds):
        ntwk.write_touchstone(str(folder / name))
    paths = []
    for i in range(n):
        dut = m.resistor(10 + 90 * rng.random()) ** m.shunt_capacitor(2e-9) ** m.short()
        meas = box ** dut
        meas.s = meas.s + 1e-4 * (rng.standard_normal(meas.s.shape)
                                  + 1j * rng.standard_normal(meas.s.shape))
        meas.write_touchstone(str(folder / f"part-{i:04d}"))
        paths.append(folder / f"part-{i:04d}.s1p")
    return paths, stds


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=200, help="number of captures (default 200)")
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        paths, _ = make_files(folder, args.n)
        t0 = time.perf_counter()
        caps = [kit.load(p) for p in paths]
        t_parse = time.perf_counter() - t0

        # the standards were measured through the cable; a realistic chain removes the
        # cable first, then compensates with the standards referred to the fixture
        cab = kit.cable(1.5, 0.66, 50.0, 0.12, 10e6)
        stds_at_fixture = [cab(kit.load(folder / f"{k}.s1p")) for k in ("open", "short",
                                                                         "load")]
        chain = kit.chain(cab, kit.osl(*stds_at_fixture))
        chain(caps[0])  # error terms computed once, here
        t0 = time.perf_counter()
        out = [chain(c) for c in caps]
        t_corr = time.perf_counter() - t0

        # scikit-rf per capture: inverse cable cascade, then OnePort.apply_cal
        f = caps[0].network.frequency
        line = skrf.media.DefinedGammaZ0(f, z0=50, gamma=cab.gamma(f.f)).line(1.5, "m")
        cal = skrf.calibration.OnePort(measured=[s.network for s in stds_at_fixture],
                                       ideals=[skrf.media.DefinedGammaZ0(f, z0=50).open(),
                                               skrf.media.DefinedGammaZ0(f, z0=50).short(),
                                               skrf.media.DefinedGammaZ0(f, z0=50).match()])
        cal.run()
        m = max(20, args.n // 10)
        t0 = time.perf_counter()
        ref = [cal.apply_cal(line.inv ** c.network) for c in caps[:m]]
        t_skrf = (time.perf_counter() - t0) * args.n / m
        err = max(np.abs(o.s - r.s).max() for o, r in zip(out[:m], ref))

    n = args.n
    print(f"{n} captures x {POINTS} points")
    print(f"  parse (kit.load):                 {t_parse:8.3f} s  ({t_parse / n * 1e3:.2f} ms each)")
    print(f"  correct (cable + OSL chain):      {t_corr:8.3f} s  ({t_corr / n * 1e3:.2f} ms each)")
    print(f"  scikit-rf per capture (est.):     {t_skrf:8.3f} s  (from {m} captures)")
    print(f"  ratio correct / parse:            {t_corr / t_parse:8.3f}  (aim: below 1)")
    print(f"  ratio correct / scikit-rf:        {t_corr / t_skrf:8.3f}")
    print(f"  max |S| difference kit vs scikit-rf: {err:.2e}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
