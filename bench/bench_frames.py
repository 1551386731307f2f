"""Encoding of an ipympl frame: kit.ui.frames.png_rgba against matplotlib's Pillow path.

A lot browser figure (936 x 396 pixels) is drawn once; then a trace moves and the
difference frame (changed pixels, the rest transparent) is encoded both ways, alternately,
in one run. Prints the median time of each and their ratio, and the frame sizes.

Run: ``PYTHONPATH=$PWD .venv/bin/python bench/bench_frames.py [--repeat 200]``
"""

from __future__ import annotations

import argparse
import io
import time
import zlib
from unittest import mock

import numpy as np


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=200)
    args = ap.parse_args()

    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from PIL import Image

    from kit.ui import frames
    from kit.ui.frames import png_rgba

    fig = Figure(figsize=(10.4, 4.4), dpi=90)
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    f = np.linspace(1.6e6, 2.3e6, 1601)
    (line,) = ax.plot(f, np.abs(np.sin(f / 1e5)) + 1)
    ax.set_yscale("log")
    fig.canvas.draw()
    before = np.asarray(fig.canvas.buffer_rgba()).view(np.uint32).squeeze(2).copy()
    line.set_ydata(np.abs(np.cos(f / 1e5)) + 1)
    fig.canvas.draw()
    after = np.asarray(fig.canvas.buffer_rgba()).view(np.uint32).squeeze(2)
    diff = np.where(after != before, after, 0).view(np.uint8).reshape((*after.shape, 4))

    def pillow() -> bytes:
        with io.BytesIO() as png:
            Image.fromarray(diff).save(png, format="png")
            return png.getvalue()

    def ours() -> bytes:
        return png_rgba(diff)

    def ours_zlib() -> bytes:
        with mock.patch.object(frames, "_deflate", zlib):
            return png_rgba(diff)

    runs = (("pillow", pillow), ("png_rgba", ours), ("png_rgba, zlib", ours_zlib))
    times = {name: [] for name, _ in runs}
    sizes = {name: len(fn()) for name, fn in runs}
    for _ in range(args.repeat):
        for name, fn in runs:
            t = time.perf_counter()
            fn()
            times[name].append(time.perf_counter() - t)
    med = {k: 1e3 * float(np.median(v)) for k, v in times.items()}
    print(f"difference frame {diff.shape[1]} x {diff.shape[0]} px, "
          f"{int((diff[..., 3] > 0).sum())} changed pixels, {args.repeat} runs each")
    for k in med:
        print(f"  {k:15s} median {med[k]:6.2f} ms, {sizes[k]:7d} bytes")
    print(f"  png_rgba ({frames._deflate.__name__}) against Pillow: "
          f"{med['pillow'] / med['png_rgba']:.1f}x faster; with zlib: "
          f"{med['pillow'] / med['png_rgba, zlib']:.1f}x faster")


if __name__ == "__main__":
    main()
