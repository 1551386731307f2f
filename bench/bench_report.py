"""Lot report benchmarks (issue 13, production lots). Ratios from one run.

1. One part's picture: :class:`kit.outputs.part_figure.PartPainter` (one figure per process,
   artists updated, no layout engine) against the former way, a new constrained-layout
   figure and ``savefig`` per capture (kept below as the baseline), on the demo lot's 12
   captures of 1601 points with a limits mask. Median and best of the per-picture times.
2. The whole report of an invented lot of N parts (default 10,000) made directly with numpy
   (tests/lot_synth.py: no fits), with a picture for every part that did not pass: build
   time and file size.

Run: ``python bench/bench_report.py [N]``.
"""

from __future__ import annotations

import io
import statistics
import sys
import tempfile
import time
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

import numpy as np  # noqa: E402

import kit  # noqa: E402
from kit.outputs.part_figure import PartPainter  # noqa: E402
from kit.review.limits import parse_limits  # noqa: E402

LIMITS = parse_limits("[quantity.fs_hz]\nmin = 1.8e6\nmax = 1.9e6\n[[mask]]\nname = 'z'\n"
                      "curve = 'z_mag_ohm'\nf_min_hz = 1.6e6\nf_max_hz = 2.4e6\nupper = 1e4\n"
                      "lower = 0.5\n")


def old_figure_png(capture, limits=None, dpi=80) -> bytes:
    """The baseline: the report's former per-capture figure (new Figure, constrained layout,
    full curve, legend placed by "best", savefig)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from kit.network.coerce import sweep
    from kit.review.drawing import draw_limits
    from kit.units import scale_for

    fig = Figure(figsize=(6.4, 2.8), dpi=dpi, layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    k, f_unit = scale_for(capture.f_hz, "Hz")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        z = np.abs(sweep(capture, what="bench").z_ohm)
    ax.semilogy(capture.f_hz * k, z, lw=1.2, label="|Z|")
    ax.set_ylabel("|Z| [Ω]")
    if limits is not None:
        draw_limits(ax, limits, curve="z_mag_ohm", f_scale=1.0 / k)
    ax.set_xlabel(f"frequency [{f_unit}]")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=7, loc="best")
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    return buf.getvalue()


def per_picture(fn, caps, rounds=3) -> list[float]:
    out = []
    for _ in range(rounds):
        for c in caps:
            t = time.perf_counter()
            fn(c)
            out.append(time.perf_counter() - t)
    return out


def main(n: int = 10_000) -> None:
    caps = [kit.load(p) for p in sorted((ROOT / "demo_data" / "lot").glob("pzd7-*.s1p"))]
    painter = PartPainter()
    painter.png(caps[0], LIMITS)  # warm-up: imports, fonts, the limit lines
    old_figure_png(caps[0], LIMITS)
    t_new = per_picture(lambda c: painter.png(c, LIMITS), caps)
    t_old = per_picture(lambda c: old_figure_png(c, LIMITS), caps)
    med_new, med_old = statistics.median(t_new), statistics.median(t_old)
    print(f"one part's picture ({len(caps)} demo captures of {caps[0].points} points, "
          f"{len(t_new)} pictures each way)")
    print(f"  former figure per capture: median {med_old * 1e3:.1f} ms, best "
          f"{min(t_old) * 1e3:.1f} ms")
    print(f"  PartPainter.png:           median {med_new * 1e3:.1f} ms, best "
          f"{min(t_new) * 1e3:.1f} ms")
    print(f"  ratio former / PartPainter: median {med_old / med_new:.1f}x, best "
          f"{min(t_old) / min(t_new):.1f}x")
    print(f"  PNG size: former {len(old_figure_png(caps[0], LIMITS)) / 1e3:.1f} kB, "
          f"PartPainter {len(painter.png(caps[0], LIMITS)) / 1e3:.1f} kB")

    from lot_synth import one_port, synthetic_lot

    from kit.outputs.lot_report import report

    t = time.perf_counter()
    summ, traces, limits = synthetic_lot(n)
    t_synth = time.perf_counter() - t
    bad = summ.loc[summ["verdict"] != "pass", "sha256"].tolist()
    t = time.perf_counter()
    cap = one_port({"C0": 1e-9, "R1": 0.5, "L1": 3.63e-5, "C1": 0.204e-9}, "syn")
    pictures = {sha: painter.png(cap, limits) for sha in bad}
    t_pics = time.perf_counter() - t
    with tempfile.TemporaryDirectory() as tmp:
        t = time.perf_counter()
        out = report(Path(tmp) / "lot.html", [], summary=summ, limits=limits, traces=traces,
                     pictures=pictures)
        t_report = time.perf_counter() - t
        size = out.stat().st_size
    print(f"\nreport of an invented lot of {n:,} parts ({len(bad):,} did not pass; "
          f"lot made in {t_synth:.1f} s with numpy, not measured)")
    print(f"  {len(bad):,} pictures by PartPainter: {t_pics:.1f} s "
          f"({t_pics / max(len(bad), 1) * 1e3:.1f} ms each; in a batch run the workers draw "
          "them)")
    print(f"  report from summary + traces + pictures: {t_report:.1f} s, {size / 1e6:.1f} MB")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 10_000)
