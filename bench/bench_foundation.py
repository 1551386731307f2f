"""Foundation benchmarks: ratios measured in one run (the machines are shared and noisy).

1. One-port impedance: kit.impedance (element-wise closed form) against scikit-rf's general
   ``Network.z`` on 100,001 points.
2. Import: kit.load (line scan + scikit-rf's Touchstone reader) against ``skrf.Network(path)``
   on a 1601-point one-port file.

Run: ``python bench/bench_foundation.py`` (or ``make bench``).
"""

from __future__ import annotations

import sys
import tempfile
import timeit
from pathlib import Path

import numpy as np
import skrf

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import kit  # noqa: E402
from kit.capture import from_network  # noqa: E402


def best(fn, number: int, repeat: int = 7) -> float:
    """Best time per call [s] over `repeat` runs of `number` calls."""
    return min(timeit.repeat(fn, number=number, repeat=repeat)) / number


def bench_impedance(points: int = 100_001) -> float:
    f = skrf.Frequency(1, 100, points, unit="MHz")
    rng = np.random.default_rng(1)
    s = (0.5 * (rng.random(points) + 1j * rng.random(points))).reshape(-1, 1, 1)
    ntwk = skrf.Network(frequency=f, s=s, z0=50)
    cap = from_network(ntwk)
    np.testing.assert_allclose(kit.impedance(cap), ntwk.z[:, 0, 0], rtol=1e-9)
    t_kit = best(lambda: kit.impedance(cap), number=20)
    t_skrf = best(lambda: ntwk.z, number=3)
    print(f"one-port impedance, {points:,} points: kit {t_kit * 1e3:.2f} ms, "
          f"scikit-rf Network.z {t_skrf * 1e3:.2f} ms, ratio {t_skrf / t_kit:.0f}x faster")
    return t_skrf / t_kit


def bench_load(points: int = 1601) -> float:
    with tempfile.TemporaryDirectory() as tmp:
        p = Path(tmp) / "bench.s1p"
        f = np.linspace(1e6, 3e6, points)
        s = 0.3 * np.exp(1j * f / 1e5)
        p.write_text("# Hz S RI R 50\n" + "".join(f"{a:.1f} {b.real:.9e} {b.imag:.9e}\n"
                                                  for a, b in zip(f, s)))
        t_kit = best(lambda: kit.load(p), number=5)
        t_skrf = best(lambda: skrf.Network(str(p)), number=5)
    print(f"load, {points} points: kit.load {t_kit * 1e3:.2f} ms, skrf.Network(path) "
          f"{t_skrf * 1e3:.2f} ms, ratio kit/skrf {t_kit / t_skrf:.2f} (kit also checks the file)")
    return t_kit / t_skrf


if __name__ == "__main__":
    bench_impedance()
    bench_load()
