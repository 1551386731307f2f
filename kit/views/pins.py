"""Pins: points of interest stuck into a trace, their readings, drawing them; limit lines.

A pin marks one measured point of a trace (the data are not interpolated). It is drawn as
an open dot on the point with a numbered head held off the curve by a needle (a leader
line); heads of close pins are moved apart so that they never overlap
(:func:`draw_pins`). Its reading (frequency, Z, Y, Γ, VSWR, return loss) is not drawn over
the data: it goes into a table beside the figure (:func:`pins_table`,
:func:`reading_text`). :func:`find_pin` searches a point, :func:`pin_reading` reads it.
The word and its look are the kit's own (docs/nomenclature.md, "Pins").
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any, Iterable

import numpy as np

from kit.units import complex_quantity, quantity, table
from kit.views.data import LIMIT_COLOR, PIN_COLOR, Trace, return_loss_db, vswr

#: Pin searches offered by :func:`find_pin`.
PIN_SEARCHES: dict[str, str] = {
    "min_z": "minimum |Z|",
    "max_z": "maximum |Z|",
    "zero_phase": "phase of Z crosses zero",
    "max_g": "maximum conductance G",
    "max_s": "maximum |S| (S11 or S21)",
    "nearest": "nearest to a frequency",
}


def _span_mask(f: np.ndarray, span_hz) -> np.ndarray:
    if span_hz is None:
        return np.ones(f.shape, bool)
    lo, hi = sorted(float(v) for v in span_hz)
    return (f >= lo) & (f <= hi)


def find_pin(t: Trace, kind: str, f_hz: float | None = None, span_hz=None) -> int:
    """Index of a point of interest on a trace.

    Parameters
    ----------
    t : Trace
        The trace searched.
    kind : {"min_z", "max_z", "zero_phase", "max_g", "max_s", "nearest"}
        What to look for (see :data:`PIN_SEARCHES`). "zero_phase" returns the first point,
        in the span, next to a sign change of the phase of Z, on the side with the smaller
        absolute phase.
    f_hz : float, optional
        Target frequency [Hz] for "nearest".
    span_hz : (float, float), optional
        Search only within this frequency window [Hz].

    Returns
    -------
    int
        Index into ``t.f_hz``.

    Raises
    ------
    ValueError
        Unknown kind, missing ``f_hz``, an empty span, or no zero crossing found; the
        message says what to change.
    """
    if kind not in PIN_SEARCHES:
        raise ValueError(f"unknown pin search {kind!r}; choose one of {', '.join(PIN_SEARCHES)}")
    f = np.asarray(t.f_hz, float)
    mask = _span_mask(f, span_hz) & np.isfinite(t.z)
    idx = np.flatnonzero(mask)
    if idx.size == 0:
        raise ValueError(f"no valid point in the span {span_hz} Hz of {t.label!r}; widen the span")
    if kind == "nearest":
        if f_hz is None or not math.isfinite(float(f_hz)):
            raise ValueError("give a frequency for the 'nearest' pin")
        return int(idx[np.argmin(np.abs(f[idx] - float(f_hz)))])
    if kind == "min_z":
        return int(idx[np.argmin(np.abs(t.z[idx]))])
    if kind == "max_z":
        return int(idx[np.argmax(np.abs(t.z[idx]))])
    if kind == "max_s":
        return int(idx[np.nanargmax(np.abs(t.s[idx]))])
    if kind == "max_g":
        g = t.y.real[idx]
        return int(idx[np.nanargmax(g)])
    ph = np.angle(t.z[idx])
    sign = np.sign(ph)
    flips = np.flatnonzero((sign[:-1] * sign[1:] < 0) & (np.abs(ph[:-1] - ph[1:]) < np.pi)
                           | (sign[:-1] == 0))
    if flips.size == 0:
        raise ValueError(f"the phase of Z of {t.label!r} does not cross zero in the span "
                         f"{span_hz} Hz; widen the span or choose another search")
    k = int(flips[0])
    k = k if abs(ph[k]) <= abs(ph[k + 1]) else k + 1
    return int(idx[k])


def pin_reading(t: Trace, index: int, name: str = "1") -> dict[str, Any]:
    """Reading of one point of a trace: frequency, Z, Y, Gamma, VSWR, return loss.

    Parameters
    ----------
    t : Trace
    index : int
        Point index (from :func:`find_pin`).
    name : str
        Pin name (the number on its head).

    Returns
    -------
    dict
        ``pin``, ``trace``, ``index``, ``f_hz`` [Hz], ``z_ohm`` (complex) [ohm],
        ``r_ohm``, ``x_ohm``, ``z_mag_ohm``, ``z_phase_deg`` [deg], ``y_siemens`` (complex)
        [S], ``g_siemens``, ``b_siemens``, ``gamma`` (complex) [1], ``gamma_mag``, ``gamma_deg`` [deg],
        ``vswr`` [1], ``return_loss_db`` [dB], ``z0_ohm``.

    References
    ----------
    .. [1] VSWR and return loss: methods sheet section 8.3; Y = 1/Z by definition.
    """
    i = int(index)
    if not -t.points <= i < t.points:
        raise IndexError(f"pin index {i} is outside the trace {t.label!r} ({t.points} points)")
    z = complex(t.z[i])
    y = complex(t.y[i])
    g = complex(t.gamma[i])
    return {
        "pin": name, "trace": t.label, "index": i % t.points, "f_hz": float(t.f_hz[i]),
        "z_ohm": z, "r_ohm": z.real, "x_ohm": z.imag, "z_mag_ohm": abs(z),
        "z_phase_deg": math.degrees(math.atan2(z.imag, z.real)),
        "y_siemens": y, "g_siemens": y.real, "b_siemens": y.imag,
        "gamma": g, "gamma_mag": abs(g), "gamma_deg": math.degrees(math.atan2(g.imag, g.real)),
        "vswr": float(vswr(np.array([g]))[0]), "return_loss_db": float(return_loss_db(np.array([g]))[0]),
        "z0_ohm": t.z0_ohm,
    }


def reading_text(r: dict[str, Any]) -> str:
    """Multi-line text of a reading, every quantity with its unit (:func:`kit.units.quantity`)."""
    return "\n".join([
        f"pin {r['pin']}  {r['trace']}  {quantity(r['f_hz'], 'Hz', digits=7)}",
        f"Z = {complex_quantity(r['z_ohm'], 'Ω')}",
        f"|Z| = {quantity(r['z_mag_ohm'], 'Ω')}, {quantity(r['z_phase_deg'], '°')}",
        f"Y = {complex_quantity(r['y_siemens'], 'S')}",
        f"Γ = {quantity(r['gamma_mag'], '')} ∠ {quantity(r['gamma_deg'], '°')}",
        f"VSWR = {quantity(r['vswr'], '')}",
    ])


#: Offsets of a pin's head from its point [typographic points], tried in turn until the
#: head overlaps no head drawn before it: above, higher, below, then to the sides.
HEAD_OFFSETS: tuple[tuple[float, float], ...] = tuple(
    (dx, dy) for dy in (16, 30, 44, 58, -22, -36, -50) for dx in (0, 14, -14, 28, -28))


_HEAD_PAD = 0.25  # padding of the head's circle [fraction of the font size]


def _head_box(head, renderer, margin_px: float = 1.5):
    """Display box of a head's circle: the text's own box (not the needle), grown as
    matplotlib's "circle" box style grows it (radius max(w, h)/2 + pad), plus a margin."""
    from matplotlib.text import Text
    from matplotlib.transforms import Bbox

    box = Text.get_window_extent(head, renderer)
    pad = _HEAD_PAD * head.get_fontsize() * head.figure.dpi / 72.0
    r = max(box.width, box.height) / 2.0 + pad + margin_px
    cx, cy = (box.x0 + box.x1) / 2.0, (box.y0 + box.y1) / 2.0
    return Bbox([[cx - r, cy - r], [cx + r, cy + r]])


def draw_pins(ax, pins, **kw) -> list[Any]:
    """Pins at data points, their numbered heads kept apart.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    pins : iterable of (x, y, name)
        Points in data coordinates and the text of each head ("1", "2", ...).
    **kw
        Line properties of the dot and the needle (default colour :data:`PIN_COLOR`).

    Returns
    -------
    list of matplotlib artists
        Per pin its dot and its head (an annotation whose arrow is the needle).

    Notes
    -----
    Heads are placed one after the other in display space: each takes the first offset of
    :data:`HEAD_OFFSETS` at which its bounding box meets none of the heads already placed
    and stays inside the axes (a greedy search, common practice for label placement, no
    source); failing that the first free offset, and when none is free the last. The
    figure's renderer measures each head once; the box at another offset is the same box
    moved by that offset. Draw with the axes limits already set.
    """
    return update_pins(ax, [], pins, **kw)


def _new_pin(ax, color: str, **kw) -> list[Any]:
    """A dot and a head (annotation with a needle) to be placed by :func:`update_pins`."""
    (dot,) = ax.plot([], [], marker="o", ms=5, mfc="white", mew=1.3, ls="none", zorder=5,
                     color=color, **kw)
    head = ax.annotate(
        "", (0.0, 0.0), xytext=HEAD_OFFSETS[0], textcoords="offset points",
        fontsize=7.5, color="white", ha="center", va="center", zorder=4.5,
        bbox={"boxstyle": f"circle,pad={_HEAD_PAD}", "fc": color, "ec": color},
        # no clipping of the needle at the head or the dot: both are drawn over its ends
        arrowprops={"arrowstyle": "-", "color": color, "lw": 0.9, "patchA": None,
                    "shrinkA": 0, "shrinkB": 0})
    return [dot, head]


def update_pins(ax, artists, pins, spare: list | None = None, **kw) -> list[Any]:
    """Move existing pin artists to new pins; make or remove artists only for a change in
    their number (:func:`draw_pins` places the heads the same way).

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    artists : list of matplotlib artists
        [dot, head, dot, head, ...] from an earlier call (or []), all on ``ax``.
    pins : iterable of (x, y, name)
    spare : list, optional
        Hidden pin artists on ``ax`` kept for reuse: artists no longer needed are hidden
        and put here instead of being removed, and new pins take theirs from here first
        (making a pin's artists costs more than moving them).
    **kw
        Line properties of new dots (default colour :data:`PIN_COLOR`).

    Returns
    -------
    list of matplotlib artists
        [dot, head] per pin, reusing the given ones.
    """
    color = kw.pop("color", PIN_COLOR)
    pins = list(pins)
    arts = list(artists)
    while len(arts) > 2 * len(pins):
        a = arts.pop()
        if spare is None:
            a.remove()
        else:
            a.set_visible(False)
            spare.append(a)
    while len(arts) < 2 * len(pins):
        if spare and len(spare) >= 2 and spare[-1].axes is ax:
            pair = [spare.pop(), spare.pop()]  # put away head first: back as (dot, head)
            for a in pair:
                a.set_visible(True)
            arts += pair
        else:
            arts += _new_pin(ax, color, **kw)
    if not pins:
        return arts
    canvas = ax.figure.canvas
    renderer = (canvas.get_renderer() if hasattr(canvas, "get_renderer")
                else ax.figure._get_renderer())  # a bare Figure: matplotlib's own renderer
    ax.get_xlim(), ax.get_ylim()  # settle the view limits (autoscale) before measuring
    frame = ax.get_window_extent(renderer)
    scale = ax.figure.dpi / 72.0  # typographic points to pixels
    placed: list[Any] = []
    x0, y0 = HEAD_OFFSETS[0]
    for k, (x, y, name) in enumerate(pins):
        dot, head = arts[2 * k], arts[2 * k + 1]
        dot.set_data([x], [y])
        head.xy = (x, y)
        head.set_text(str(name))
        head.set_position(HEAD_OFFSETS[0])
        first = _head_box(head, renderer)
        free = chosen = None
        for offset in HEAD_OFFSETS:
            box = first.translated((offset[0] - x0) * scale, (offset[1] - y0) * scale)
            if any(box.overlaps(b) for b in placed):
                continue
            free = free or (offset, box)
            if frame.contains(box.x0, box.y0) and frame.contains(box.x1, box.y1):
                chosen = (offset, box)  # free and inside the axes
                break
        if chosen is None:
            last = HEAD_OFFSETS[-1]
            chosen = free or (last, first.translated((last[0] - x0) * scale,
                                                     (last[1] - y0) * scale))
        head.set_position(chosen[0])
        placed.append(chosen[1])
    return arts


def draw_pin(ax, x: float, y: float, name: str = "1", **kw) -> list[Any]:
    """One pin at (x, y) in data coordinates (:func:`draw_pins`); returns [dot, head]."""
    return draw_pins(ax, [(x, y, name)], **kw)


#: Columns of :func:`pins_table` (units in the names, by the suffix rule).
PIN_COLUMNS = ["pin", "trace", "f_hz", "r_ohm", "x_ohm", "z_mag_ohm", "z_phase_deg",
               "g_siemens", "b_siemens", "gamma_mag", "gamma_deg", "vswr", "return_loss_db",
               "z0_ohm"]

#: Headers of the shown table (:func:`pins_display`) where the column name does not read.
PIN_LABELS = {"r_ohm": "R", "x_ohm": "X", "z_mag_ohm": "|Z|", "z_phase_deg": "∠Z",
              "g_siemens": "G", "b_siemens": "B", "gamma_mag": "|Γ|", "gamma_deg": "∠Γ",
              "vswr": "VSWR", "return_loss_db": "return loss", "z0_ohm": "Z0", "f_hz": "f"}


def pins_table(readings: Iterable[dict[str, Any]]):
    """Readings as a pandas DataFrame, one row per pin, units in the column names (the
    numbers in SI units, as written to CSV)."""
    import pandas as pd

    return pd.DataFrame([{c: r[c] for c in PIN_COLUMNS} for r in readings],
                        columns=PIN_COLUMNS)


def pins_display(frame):
    """The table for reading: headers with units ("f [MHz]", "|Z| [Ω]"), numbers with SI
    prefixes (:func:`kit.units.table`), the frequency to seven significant digits."""
    return table(frame, digits={"f_hz": 7}, labels=PIN_LABELS)


def write_pins_csv(frame, path: str | Path) -> Path:
    """Write a pins table to CSV atomically (temporary file, then rename)."""
    from kit.io.atomic import write_text

    return write_text(Path(path), frame.to_csv(index=False, float_format="%.10g"))


def plot_limits(ax, segments, label: str | None = "limit", **kw) -> list[Any]:
    """Draw limit lines: each segment ``(f_lo_hz, f_hi_hz, value, side)``.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        A rectangular chart with frequency [Hz] on x.
    segments : iterable of tuple
        ``(f_lo_hz, f_hi_hz, value)`` or ``(f_lo_hz, f_hi_hz, value, side)`` with side
        "upper" (value must not be exceeded) or "lower"; the value in the chart's unit.
    label : str, optional
        Legend text for the first segment.

    Returns
    -------
    list of matplotlib artists
        A line per segment plus short ticks on the forbidden side.
    """
    arts: list[Any] = []
    kw.setdefault("color", LIMIT_COLOR)
    kw.setdefault("lw", 1.6)
    for k, seg in enumerate(segments):
        f0, f1, v = float(seg[0]), float(seg[1]), float(seg[2])
        side = seg[3] if len(seg) > 3 else "upper"
        if side not in ("upper", "lower"):
            raise ValueError(f"limit side must be 'upper' or 'lower', got {side!r}")
        arts += ax.plot([f0, f1], [v, v], ls=(0, (6, 3)), label=label if k == 0 else None,
                        zorder=4, **kw)
        marker = "v" if side == "upper" else "^"
        xs = np.linspace(f0, f1, 7)[1:-1]
        arts += ax.plot(xs, np.full(xs.shape, v), ls="none", marker=marker, ms=4,
                        color=kw["color"], zorder=4)
    return arts
