"""Markers: finding points of interest on a trace, their readout, drawing them; limit lines.

A Smith chart has no frequency axis, so a marker's readout (frequency, Z, Y, Gamma, VSWR)
carries the meaning. :func:`find_marker` returns an index into the trace (the data are not
interpolated); :func:`marker_readout` computes the readout dict; :func:`draw_marker` and
:func:`draw_readout` draw them.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any, Iterable

import numpy as np

from kit.units import eng, to_unit
from kit.views.data import LIMIT_COLOR, MARKER_COLOR, Trace, return_loss_db, vswr

#: Marker searches offered by :func:`find_marker`.
MARKER_KINDS: dict[str, str] = {
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


def find_marker(t: Trace, kind: str, f_hz: float | None = None, span_hz=None) -> int:
    """Index of a point of interest on a trace.

    Parameters
    ----------
    t : Trace
        The trace searched.
    kind : {"min_z", "max_z", "zero_phase", "max_g", "max_s", "nearest"}
        What to look for (see :data:`MARKER_KINDS`). "zero_phase" returns the first point,
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
    if kind not in MARKER_KINDS:
        raise ValueError(f"unknown marker search {kind!r}; choose one of {', '.join(MARKER_KINDS)}")
    f = np.asarray(t.f_hz, float)
    mask = _span_mask(f, span_hz) & np.isfinite(t.z)
    idx = np.flatnonzero(mask)
    if idx.size == 0:
        raise ValueError(f"no valid point in the span {span_hz} Hz of {t.label!r}; widen the span")
    if kind == "nearest":
        if f_hz is None or not math.isfinite(float(f_hz)):
            raise ValueError("give a frequency in Hz for the 'nearest' marker")
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


def marker_readout(t: Trace, index: int, name: str = "M1") -> dict[str, Any]:
    """Readout of one point of a trace: frequency, Z, Y, Gamma, VSWR, return loss.

    Parameters
    ----------
    t : Trace
    index : int
        Point index (from :func:`find_marker`).
    name : str
        Marker name.

    Returns
    -------
    dict
        ``marker``, ``trace``, ``index``, ``f_hz`` [Hz], ``z_ohm`` (complex) [ohm],
        ``r_ohm``, ``x_ohm``, ``z_mag_ohm``, ``z_phase_deg`` [deg], ``y_siemens`` (complex)
        [S], ``g_siemens``, ``b_siemens``, ``gamma`` (complex) [1], ``gamma_mag``, ``gamma_deg`` [deg],
        ``vswr`` [1], ``return_loss_db`` [dB], ``z0_ohm``.

    References
    ----------
    .. [1] VSWR and return loss: methods sheet section 8.3; Y = 1/Z by definition.
    """
    i = int(index)
    if not -t.points <= i < t.points:
        raise IndexError(f"marker index {i} is outside the trace {t.label!r} ({t.points} points)")
    z = complex(t.z[i])
    y = complex(t.y[i])
    g = complex(t.gamma[i])
    return {
        "marker": name, "trace": t.label, "index": i % t.points, "f_hz": float(t.f_hz[i]),
        "z_ohm": z, "r_ohm": z.real, "x_ohm": z.imag, "z_mag_ohm": abs(z),
        "z_phase_deg": math.degrees(math.atan2(z.imag, z.real)),
        "y_siemens": y, "g_siemens": y.real, "b_siemens": y.imag,
        "gamma": g, "gamma_mag": abs(g), "gamma_deg": math.degrees(math.atan2(g.imag, g.real)),
        "vswr": float(vswr(np.array([g]))[0]), "return_loss_db": float(return_loss_db(np.array([g]))[0]),
        "z0_ohm": t.z0_ohm,
    }


def _cplx(v: complex, unit: str, digits: int = 4) -> str:
    sign = "+" if v.imag >= 0 else "−"
    return f"{v.real:.{digits}g} {sign} j{abs(v.imag):.{digits}g} {unit}"


def readout_text(r: dict[str, Any]) -> str:
    """Multi-line text of a readout, every quantity with its unit."""
    return "\n".join([
        f"{r['marker']}  {eng(r['f_hz'], 'Hz', 7)}",
        f"Z = {_cplx(r['z_ohm'], 'Ω')}",
        f"|Z| = {eng(r['z_mag_ohm'], 'Ω', 4)}, {r['z_phase_deg']:.2f}°",
        f"Y = {_cplx(to_unit(r['y_siemens'], 'mS'), 'mS')}",
        f"Γ = {r['gamma_mag']:.4f} ∠ {r['gamma_deg']:.2f}°",
        f"VSWR = {r['vswr']:.3f}",
    ])


def draw_marker(ax, x: float, y: float, text: str = "M1", **kw) -> list[Any]:
    """A marker symbol with its name at (x, y) in data coordinates; returns the artists."""
    kw.setdefault("color", MARKER_COLOR)
    (dot,) = ax.plot([x], [y], marker="D", ms=6, mfc="white", mew=1.4, ls="none", zorder=5, **kw)
    label = ax.annotate(text, (x, y), xytext=(5, 6), textcoords="offset points", fontsize=8,
                        color=kw["color"], zorder=5)
    return [dot, label]


def draw_readout(ax, r: dict[str, Any], loc: tuple[float, float] = (0.02, 0.98)) -> Any:
    """The readout text in a box in the axes corner; returns the Text artist."""
    return ax.text(*loc, readout_text(r), transform=ax.transAxes, ha="left", va="top",
                   fontsize=8, family="monospace", zorder=6,
                   bbox={"boxstyle": "round,pad=0.35", "fc": "#fbfaf7", "ec": "#b9b2a6"})


def markers_table(readouts: Iterable[dict[str, Any]]):
    """Readouts as a pandas DataFrame, one row per marker, units in the column names."""
    import pandas as pd

    cols = ["marker", "trace", "f_hz", "r_ohm", "x_ohm", "z_mag_ohm", "z_phase_deg",
            "g_siemens", "b_siemens", "gamma_mag", "gamma_deg", "vswr", "return_loss_db", "z0_ohm"]
    return pd.DataFrame([{c: r[c] for c in cols} for r in readouts], columns=cols)


def write_markers_csv(table, path: str | Path) -> Path:
    """Write a markers table to CSV atomically (temporary file, then rename)."""
    from kit.io.atomic import write_text

    return write_text(Path(path), table.to_csv(index=False, float_format="%.10g"))


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
