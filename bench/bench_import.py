"""Import benchmark: kit.load against scikit-rf's own reader, ratios measured in one run.

kit.load scans a Touchstone file (findings, SHA-256 of the bytes) and builds the network from
the numbers the scan read; ``skrf.Network(path)`` only parses. The aim is a ratio of at most
1.0 (the checks and the hash come at no extra cost over scikit-rf's parse). The two are timed
alternately on the same file (the machines are shared and noisy) and the medians compared.

Files (written by scikit-rf into a temporary folder, full 17-digit numbers):
1601-point one-port (RI), 1601-point two-port (dB/angle, Touchstone 1), 1601-point two-port
(Touchstone 2, RI) and a 100,001-point one-port (RI).

Run: ``python bench/bench_import.py`` (41 loads of each 1601-point file, 7 of the large one)
or ``python bench/bench_import.py --repeat 101``.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np
import skrf

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import kit  # noqa: E402


def make_files(folder: Path) -> list[tuple[str, Path]]:
    """The benchmark's files: (label, path)."""
    rng = np.random.default_rng(3)
    out = []
    for label, ports, points, form, version in (
            ("1-port, 1601 pts, RI", 1, 1601, "ri", "1.0"),
            ("2-port, 1601 pts, dB", 2, 1601, "db", "1.0"),
            ("2-port, 1601 pts, v2 RI", 2, 1601, "ri", "2.0"),
            ("1-port, 100001 pts, RI", 1, 100_001, "ri", "1.0")):
        f = skrf.Frequency(1, 1000, points, unit="mhz")
        s = 0.3 * (rng.standard_normal((points, ports, ports))
                   + 1j * rng.standard_normal((points, ports, ports)))
        name = f"part-{len(out)}"
        ntwk = skrf.Network(frequency=f, s=s, name=name)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ntwk.write_touchstone(str(folder / name), form=form,
                                  **({"version": version} if version != "1.0" else {}))
        path = next(folder.glob(f"{name}.*"))
        out.append((label, path))
    return out


def _once(fn, path) -> float:
    t0 = time.perf_counter()
    fn(path)
    return time.perf_counter() - t0


def _skrf(path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return skrf.Network(str(path))


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=41,
                    help="loads of each 1601-point file (default 41; the large file: 1/6)")
    args = ap.parse_args(argv)
    print(f"{'file':26s} {'kit.load':>11s} {'skrf.Network':>13s} {'ratio':>7s}")
    worst = 0.0
    with tempfile.TemporaryDirectory() as tmp:
        for label, path in make_files(Path(tmp)):
            cap, ref = kit.load(path), _skrf(path)  # warm up; the same numbers (tests check it)
            assert np.array_equal(cap.s, ref.s) and np.array_equal(cap.f_hz, ref.f)
            n = args.repeat if cap.points < 10_000 else max(3, args.repeat // 6)
            t_kit, t_ref = [], []
            for _ in range(n):  # alternate, so a busy moment hits both
                t_kit.append(_once(kit.load, path))
                t_ref.append(_once(_skrf, path))
            a, b = statistics.median(t_kit), statistics.median(t_ref)
            worst = max(worst, a / b)
            print(f"{label:26s} {a * 1e3:9.2f} ms {b * 1e3:11.2f} ms {a / b:6.2f}x"
                  f"   (median of {n}, {path.stat().st_size / 1e6:.2f} MB)")
    print(f"largest ratio kit.load / skrf.Network(path): {worst:.2f}x (aim: at most 1.0x)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
