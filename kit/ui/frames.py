"""Faster frames for an ipympl canvas: the changed pixels as a PNG written in one zlib call.

An ipympl canvas sends every update to the page as a PNG of the whole figure, in which the
pixels that did not change are transparent (matplotlib's ``get_diff_image``). Matplotlib
writes that PNG with Pillow at its default compression, which costs 10-20 ms for a lot
browser figure (936 x 396 pixels) even when only a few traces moved: Pillow tries a filter
per row and compresses at zlib level 6. :func:`png_rgba` writes the same pixels with no
row filter, deflated at level 1 in one call, by Intel's ISA-L library (the ``isal``
package; zlib when it is missing). Written by hand because no library on our list offers
an RGBA PNG writer with these settings; measured about 4x faster than Pillow with zlib and
about 20x with ISA-L in ``bench/bench_frames.py``. The picture is the same pixel for pixel
(tested by decoding it again with Pillow).

:func:`faster_frames` installs the encoder on one canvas. It leaves matplotlib's logic of
which frame to send (whole or difference, the transparency rule) exactly as it is and only
replaces the encoding; canvases that are not ipympl's are left alone.

References
----------
.. [1] W3C, *Portable Network Graphics (PNG) Specification*, 2nd ed. (ISO/IEC 15948:2003),
   sections 5 (datastream: signature, IHDR, IDAT, IEND chunks with CRC-32), 9 (filter
   type 0, "None") and 10 (zlib deflate compression).
.. [2] P. Deutsch, J-L. Gailly, "ZLIB Compressed Data Format Specification version 3.3",
   RFC 1950, 1996.
"""

from __future__ import annotations

import struct
import zlib

import numpy as np

try:  # Intel ISA-L's deflate: about 5x faster than zlib at level 1 (bench/bench_frames.py)
    from isal import isal_zlib as _deflate
except ImportError:  # pragma: no cover - the same stream, from zlib
    _deflate = zlib

#: zlib level of the frames: 1 is the fastest that still compresses (a diff frame is
#: mostly transparent zeros).
LEVEL = 1
_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def _chunk(tag: bytes, data: bytes) -> bytes:
    """One PNG chunk: length, type, data, CRC-32 of type and data (PNG spec. section 5.3)."""
    return (struct.pack(">I", len(data)) + tag + data
            + struct.pack(">I", zlib.crc32(tag + data) & 0xFFFFFFFF))


def png_rgba(pixels: np.ndarray, level: int = LEVEL) -> bytes:
    """An 8-bit RGBA image as PNG bytes, every row with filter type 0, deflated at ``level``.

    Parameters
    ----------
    pixels : numpy.ndarray
        ``(height, width, 4)`` array of ``uint8`` (red, green, blue, alpha).
    level : int
        Deflate level, 0 (stored) to 9 for zlib; ISA-L offers 0 to 3 (higher asks get 3).

    Returns
    -------
    bytes
        A complete PNG datastream (signature, IHDR, one IDAT, IEND).

    References
    ----------
    .. [1] W3C PNG Specification, 2nd ed.: IHDR fields (section 11.2.2: width, height,
       bit depth 8, colour type 6 = truecolour with alpha, compression 0, filter 0,
       interlace 0), filter type byte per scanline (section 9.2).
    """
    a = np.asarray(pixels)
    if a.ndim != 3 or a.shape[2] != 4 or a.dtype != np.uint8:
        raise ValueError(f"png_rgba takes a (height, width, 4) uint8 array, not {a.dtype} "
                         f"{a.shape}")
    h, w = a.shape[:2]
    raw = np.empty((h, 4 * w + 1), np.uint8)
    raw[:, 0] = 0  # filter type 0 ("None") on every scanline
    raw[:, 1:] = a.reshape(h, 4 * w)
    header = struct.pack(">IIBBBBB", w, h, 8, 6, 0, 0, 0)
    return (_SIGNATURE + _chunk(b"IHDR", header)
            + _chunk(b"IDAT", _deflate.compress(raw, min(level, 3) if _deflate
                                                 is not zlib else level))
            + _chunk(b"IEND", b""))


def _diff_image(canvas):
    """Matplotlib's ``FigureCanvasWebAggCore.get_diff_image`` (3.8-3.10) with the PNG
    written by :func:`png_rgba`: the same choice of a whole or a difference frame."""
    if not canvas._png_is_old:
        return None
    renderer = canvas.get_renderer()
    pixels = np.asarray(renderer.buffer_rgba())
    buff = pixels.view(np.uint32).squeeze(2)
    # alpha below 255 anywhere? On the little-endian RGBA words alpha is the top byte, so
    # one comparison of whole words does it (matplotlib tests the strided alpha bytes)
    opaque = 0xFF000000 if np.little_endian else 0x000000FF
    translucent = (buff < opaque).any() if np.little_endian else ((buff & opaque) != opaque).any()
    if canvas._force_full or buff.shape != canvas._last_buff.shape or translucent:
        canvas.set_image_mode("full")
        output = buff
    else:
        canvas.set_image_mode("diff")
        output = np.where(buff != canvas._last_buff, buff, 0)
    canvas._last_buff = buff.copy()
    canvas._force_full = False
    canvas._png_is_old = False
    return png_rgba(output.view(np.uint8).reshape((*output.shape, 4)))


def faster_frames(canvas) -> bool:
    """Let an ipympl canvas encode its frames with :func:`png_rgba`; True if installed.

    Only canvases with matplotlib's web-canvas frame state (``_png_is_old``, ``_last_buff``,
    ``_force_full``, ``set_image_mode``) are changed; any other canvas is left alone.
    """
    needed = ("_png_is_old", "_last_buff", "_force_full", "set_image_mode", "get_diff_image")
    if not all(hasattr(canvas, n) for n in needed):
        return False
    canvas.get_diff_image = _diff_image.__get__(canvas)
    return True


__all__ = ["LEVEL", "faster_frames", "png_rgba"]
