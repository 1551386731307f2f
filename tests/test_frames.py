"""kit.ui.frames: the PNG frames of an ipympl canvas, written by hand for speed.

Reference for correctness: Pillow's PNG decoder (an independent implementation of the
W3C PNG specification) must read back exactly the pixels written, and the frames must
decode to the same pixels as matplotlib's own ``get_diff_image`` of the same canvas.
"""

from __future__ import annotations

import io

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from kit.ui.frames import faster_frames, png_rgba

Image = pytest.importorskip("PIL.Image")


def _decode(data: bytes) -> np.ndarray:
    with Image.open(io.BytesIO(data)) as im:
        assert im.mode == "RGBA"
        return np.asarray(im).copy()


@settings(max_examples=60, deadline=None)
@given(arrays(np.uint8, st.tuples(st.integers(1, 40), st.integers(1, 40), st.just(4))),
       st.integers(0, 9))
def test_png_rgba_round_trips_through_pillow(pixels, level):
    """Any RGBA image at any zlib level decodes (Pillow) to the same pixels."""
    assert np.array_equal(_decode(png_rgba(pixels, level)), pixels)


@settings(max_examples=30, deadline=None)
@given(arrays(np.uint8, st.tuples(st.integers(1, 30), st.integers(1, 30), st.just(4))))
def test_png_rgba_with_plain_zlib_round_trips(pixels):
    """The zlib fallback (no ISA-L installed) writes a PNG Pillow reads back exactly."""
    import zlib
    from unittest import mock

    from kit.ui import frames

    with mock.patch.object(frames, "_deflate", zlib):
        assert np.array_equal(_decode(png_rgba(pixels)), pixels)


def test_png_rgba_refuses_other_arrays():
    with pytest.raises(ValueError, match="uint8"):
        png_rgba(np.zeros((4, 4, 3), np.uint8))
    with pytest.raises(ValueError, match="uint8"):
        png_rgba(np.zeros((4, 4, 4), float))


def test_canvas_frames_decode_like_matplotlibs_own():
    """Full frame, a difference frame, then a frame with translucent pixels (sent whole):
    the pixels sent equal those of matplotlib's get_diff_image (Pillow encoder) for the
    same canvas state, and the image modes match."""
    pytest.importorskip("ipympl")
    import matplotlib.pyplot as plt

    old = plt.get_backend()
    plt.switch_backend("module://ipympl.backend_nbagg")
    try:
        frames = {}
        for fast in (False, True):
            with plt.ioff():
                fig, ax = plt.subplots(figsize=(3, 2), dpi=50)
            c = fig.canvas
            if fast:
                assert faster_frames(c)
            sent = []

            class Page:  # stands for the browser's end of the connection
                def send_binary(self, data):
                    sent.append((data, c._current_image_mode))

                def send_json(self, content):
                    pass

            c.manager.web_sockets = [Page()]
            (line,) = ax.plot([0, 1], [0, 1])
            c.draw()
            line.set_ydata([1, 0])
            c.draw()
            fig.patch.set_alpha(0.5)  # translucent pixels: a difference frame cannot show them
            c.draw()
            assert c.get_diff_image() is None  # nothing new to send
            (first, mode1), (second, mode2), (third, mode3) = sent
            assert mode3 == "full"
            frames[fast] = (_decode(first), mode1, _decode(second), mode2, _decode(third))
            plt.close(fig)
        slow, fast = frames[False], frames[True]
        assert slow[1] == fast[1] == "full" and slow[3] == fast[3] == "diff"
        assert all(np.array_equal(slow[i], fast[i]) for i in (0, 2, 4))
    finally:
        plt.switch_backend(old)


def test_other_canvases_are_left_alone():
    from matplotlib.figure import Figure

    fig = Figure()
    assert not faster_frames(fig.canvas)
