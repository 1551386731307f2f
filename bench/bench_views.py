"""Redraw cost of a view after an interaction, relative to drawing the empty chart grid.

For 1601 and 100,001 point sweeps: the |Z| chart and the Smith chart are drawn once; an
"interaction" then gives the line a new span (update_line / smith_xy + set_data) and the
figure is rendered again. The ratio redraw / empty-grid draw is printed (goal: at most 1.5).
Without decimation (all points drawn) the ratio is printed too, for comparison.
Run: .venv/bin/python bench/bench_views.py
"""

from __future__ import annotations

import time

import matplotlib

matplotlib.use("Agg")
import numpy as np  # noqa: E402
from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

import kit.views as kv  # noqa: E402


def _bvd(n: int):
    fs, l1, r1, c0 = 1.1e6, 1e-3, 10.0, 1e-9
    c1 = 1 / ((2 * np.pi * fs) ** 2 * l1)
    f = np.linspace(0.9 * fs, 1.2 * fs, n)
    w = 2 * np.pi * f
    z = 1 / (1 / (r1 + 1j * w * l1 + 1 / (1j * w * c1)) + 1j * w * c0)
    z *= 1 + 0.01 * np.random.default_rng(1).standard_normal(n)  # measurement-like noise
    return kv.trace((f, z), label=f"{n} pts")


def _best(fn, repeat=7) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    for n in (1601, 100_001):
        t = _bvd(n)
        fig = Figure(figsize=(10, 4), dpi=90)
        FigureCanvasAgg(fig)  # a real renderer (a bare Figure's canvas draws nothing)
        ax_s, ax_z = fig.subplots(1, 2)
        kv.smith_grid(ax_s)
        kv.style_chart(ax_z, "z_mag")
        ax_z.set_xlim(t.f_hz[0], t.f_hz[-1])
        ax_z.set_ylim(1, 1e4)
        empty = _best(lambda: fig.canvas.draw())
        (lz,) = kv.plot_chart(ax_z, t, "z_mag")
        (ls,) = kv.plot_smith(ax_s, t)
        spans = [(t.f_hz[0], t.f_hz[-1]), (1.05e6, 1.15e6)]
        k = [0]

        def interact(decimate=True):
            k[0] += 1
            span = spans[k[0] % 2]
            if decimate:
                kv.update_line(lz, t, "z_mag", span_hz=span)
                sl = kv_window(t.f_hz, span)
                ls.set_data(*kv.smith_xy(t.gamma[sl], kv.columns_of(ax_s)))
            else:
                sl = kv_window(t.f_hz, span)
                lz.set_data(t.f_hz[sl], np.abs(t.z[sl]))
                ls.set_data(t.gamma.real[sl], t.gamma.imag[sl])
            ax_z.set_xlim(*span)
            fig.canvas.draw()

        redraw = _best(interact)
        full = _best(lambda: interact(False))
        print(f"{n:>7} points: empty grid {1e3 * empty:6.1f} ms, redraw after interaction "
              f"{1e3 * redraw:6.1f} ms -> ratio {redraw / empty:4.2f} (goal <= 1.5); "
              f"without decimation ratio {full / empty:4.2f}")


def kv_window(f, span):
    from kit.outputs.decimate import window

    return window(f, *span)


if __name__ == "__main__":
    main()
