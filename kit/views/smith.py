"""Reflection-plane views: Smith chart grids and traces, polar plot, admittance circle.

Stateless: each function draws on a matplotlib axes it is given and returns its artists.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from kit.outputs.decimate import columns_of, minmax_indices, window
from kit.units import eng, tick_text, to_unit
from kit.views.data import GRID_Y, GRID_Z, Trace, style_kw, trace

#: Normalised resistance / reactance values of the grid (our choice of circles).
GRID_VALUES: tuple[float, ...] = (0.2, 0.5, 1.0, 2.0, 5.0)
_T = np.tan(np.linspace(-np.pi / 2 + 1e-3, np.pi / 2 - 1e-3, 361))
_S = np.concatenate([np.linspace(0.0, 1.0, 60), 1.0 / np.linspace(1.0, 1e-3, 120)[1:]])


def _w(z: np.ndarray) -> np.ndarray:
    """Normalised impedance to reflection coefficient, (z - 1)/(z + 1)."""
    return (z - 1.0) / (z + 1.0)


def smith_grid(ax, z0_ohm: float = 50.0, kind: str = "z", values=GRID_VALUES,
               label: bool = True) -> list[Any]:
    """Draw a Smith chart grid on ``ax``, labelled with the reference impedance.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Target axes (made square, without the rectangular frame).
    z0_ohm : float
        Reference impedance [ohm]; circle labels are in ohm (r * Z0) and in mS for the
        admittance grid (g / Z0).
    kind : {"z", "y", "both"}
        Impedance grid (constant R and X), admittance grid (constant G and B), or both.
    values : sequence of float
        Normalised values of the circles.
    label : bool
        Write circle values and a "Z0 = ... Ω" caption.

    Returns
    -------
    list of matplotlib artists

    References
    ----------
    .. [1] P. H. Smith, "Transmission line calculator", *Electronics*, vol. 12, pp. 29-31,
       Jan. 1939 (from memory); circles are the images of the lines Re z = r and
       Im z = x under Gamma = (z - 1)/(z + 1) (methods sheet section 0).
    """
    if kind not in ("z", "y", "both"):
        raise ValueError(f"kind must be 'z', 'y' or 'both', got {kind!r}")
    arts: list[Any] = []
    th = np.linspace(0, 2 * np.pi, 361)
    arts += ax.plot(np.cos(th), np.sin(th), color="#4a4a4a", lw=1.0, zorder=1)
    arts += ax.plot([-1, 1], [0, 0], color="#8a8a8a", lw=0.7, zorder=1)
    for grid, sign, col in (("z", 1.0, GRID_Z), ("y", -1.0, GRID_Y)):
        if kind not in (grid, "both"):
            continue
        for v in values:
            g = sign * _w(v + 1j * _T)  # constant resistance (conductance) circle
            arts += ax.plot(g.real, g.imag, color=col, lw=0.8, zorder=1)
            for x in (v, -v):  # constant reactance (susceptance) arcs
                g = sign * _w(_S + 1j * x)
                arts += ax.plot(g.real, g.imag, color=col, lw=0.8, zorder=1)
            if label:
                if grid == "z":
                    p = _w(v + 0j)
                    ohms = tick_text(v * z0_ohm, "Ω")  # grid value; the caption names Ω
                    arts.append(ax.text(p.real, 0.015, ohms, fontsize=7,
                                        color="#6b5f50", rotation=90, ha="right", va="bottom"))
                    q = _w(1j * v)
                    arts.append(ax.text(1.06 * q.real, 1.06 * q.imag, f"+j{ohms}",
                                        fontsize=7, color="#6b5f50", ha="center", va="center"))
                    arts.append(ax.text(1.06 * q.real, -1.06 * q.imag, f"−j{ohms}",
                                        fontsize=7, color="#6b5f50", ha="center", va="center"))
                else:
                    p = -_w(v + 0j)
                    arts.append(ax.text(p.real, -0.015, eng(v / z0_ohm, "S"),
                                        fontsize=7, color="#3f7f88", rotation=90, ha="left",
                                        va="top"))
    if label:
        what = {"z": "impedance grid [Ω]", "y": "admittance grid",
                "both": "Z grid [Ω], Y grid"}[kind]
        arts.append(ax.text(0.0, -1.16, f"Z0 = {eng(z0_ohm, 'Ω')} · {what}", ha="center",
                            va="top", fontsize=8, color="#333333"))
    ax.set_aspect("equal")
    ax.set_xlim(-1.12, 1.12)
    ax.set_ylim(-1.22, 1.12)
    ax.set_axis_off()
    return arts


def _gamma_of(obj):
    """(gamma, label) from a bare array or anything :func:`trace` accepts."""
    if isinstance(obj, (np.ndarray, list)):
        return np.asarray(obj, dtype=complex), None
    t = trace(obj)
    return t.gamma, t.label


def smith_xy(gamma: np.ndarray, columns: int) -> tuple[np.ndarray, np.ndarray]:
    """Display coordinates of a reflection curve, decimated (min/max of Re and Im)."""
    g = np.asarray(gamma, dtype=complex)
    idx = minmax_indices(columns, g.real, g.imag)
    return g.real[idx].copy(), g.imag[idx].copy()


def plot_smith(ax, gamma_or_capture, label: str | None = None, i: int = 0,
               columns: int | None = None, **kw) -> list[Any]:
    """Draw a reflection-coefficient trace on a Smith chart (draw the grid first).

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    gamma_or_capture : array of complex, Trace, Capture or skrf.Network
        Gamma [1], or anything :func:`kit.views.data.trace` accepts.
    label : str, optional
        Legend text.
    i : int
        Palette index of the colour.
    columns : int, optional
        Pixel columns for decimation; default the axes width.

    Returns
    -------
    list of matplotlib.lines.Line2D
    """
    g, name = _gamma_of(gamma_or_capture)
    cols = columns or columns_of(ax)
    x, y = smith_xy(g, cols)
    style_kw(kw, i)
    kw.setdefault("lw", 1.4)
    return ax.plot(x, y, label=label or name, zorder=3, **kw)


def plot_polar(ax, gamma_or_capture, label: str | None = None, i: int = 0,
               columns: int | None = None, **kw) -> list[Any]:
    """Draw |Gamma| against its angle on a polar axes (``subplot_kw={"projection": "polar"}``).

    Returns
    -------
    list of matplotlib.lines.Line2D
    """
    g, name = _gamma_of(gamma_or_capture)
    style_kw(kw, i)
    arts = ax.plot(*_polar(*smith_xy(g, columns or columns_of(ax))), label=label or name, **kw)
    fit_polar_radius(ax, np.abs(g))
    ax.set_title("reflection coefficient, |Γ| [1] against angle [°]", fontsize=9)
    return arts


def fit_polar_radius(ax, *radii) -> None:
    """Radius range of a polar axes: 0 to the largest finite radius given, at least 1 (|Γ| = 1)."""
    top = [float(np.nanmax(r, initial=1.0)) for r in map(np.asarray, radii) if r.size]
    ax.set_rlim(0, max([1.0, *top]))


def plot_admittance_circle(ax, y_or_capture, f_hz=None, span_hz=None, label: str | None = None,
                           i: int = 0, columns: int | None = None, **kw) -> list[Any]:
    """Draw B against G near a resonance: the admittance circle.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    y_or_capture : array of complex, Trace, Capture or skrf.Network
        Admittance [S] (then give ``f_hz`` to use ``span_hz``), or a capture.
    f_hz : array_like, optional
        Frequencies [Hz] of a bare admittance array.
    span_hz : (float, float), optional
        Frequency window [Hz] to draw (the resonance region).

    Returns
    -------
    list of matplotlib.lines.Line2D

    References
    ----------
    .. [1] IEEE Std 177-1966 admittance-circle method, as summarised in the methods sheet
       section 2.3 (from memory for the clause): near fs the motional admittance traces a
       circle of diameter 1/R1.
    """
    if isinstance(y_or_capture, (np.ndarray, list)):
        y, f, name = np.asarray(y_or_capture, complex), f_hz, None
    else:
        t = trace(y_or_capture)
        y, f, name = t.y, t.f_hz, t.label
    if span_hz is not None and f is not None:
        f = np.asarray(f, float)
        y = y[(f >= span_hz[0]) & (f <= span_hz[1])]
    style_kw(kw, i)
    arts = ax.plot(*smith_xy(to_unit(y, "mS"), columns or columns_of(ax)), label=label or name,
                   **kw)
    style_admittance_circle(ax)
    ax.set_aspect("equal", adjustable="datalim")
    return arts


def style_admittance_circle(ax) -> None:
    """Axis labels (G and B in mS) and grid of an admittance-circle view."""
    ax.set_xlabel("conductance G [mS]")
    ax.set_ylabel("susceptance B [mS]")
    ax.grid(True, color="#e4e0da", lw=0.6)


def _polar(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(angle [rad], magnitude) of the points x + jy, as a polar axes draws them."""
    g = np.asarray(x) + 1j * np.asarray(y)
    return np.angle(g), np.abs(g)


#: Reflection-plane views a widget may offer: "smith" (with any grid), "polar", "circle".
PLANE_KINDS: tuple[str, ...] = ("smith", "polar", "circle")


def plane_xy(t: Trace, kind: str, columns: int, span_hz=None) -> tuple[np.ndarray, np.ndarray]:
    """Display coordinates of a trace in a reflection-plane view, decimated, as new arrays.

    Parameters
    ----------
    t : Trace
    kind : str
        "smith" (or "smith:z", "smith:y", "smith:both"): (Re Gamma, Im Gamma) [1];
        "polar": (angle of Gamma [rad], abs Gamma [1]); "circle": (G, B) [mS].
    columns : int
        Pixel columns for decimation.
    span_hz : (float, float), optional
        Frequency window [Hz] (one point of margin either side).
    """
    base = kind.split(":")[0]
    if base not in PLANE_KINDS:
        raise ValueError(f"unknown plane view {kind!r}; choose one of {', '.join(PLANE_KINDS)}")
    sl = window(t.f_hz, *(span_hz if span_hz is not None else (None, None)))
    if base == "circle":
        return smith_xy(to_unit(t.y[sl], "mS"), columns)
    x, y = smith_xy(t.gamma[sl], columns)
    return _polar(x, y) if base == "polar" else (x, y)


def plane_point(readout: dict, kind: str) -> tuple[float, float]:
    """Where a pin (a reading of :func:`kit.views.pin_reading`) sits in a plane view.

    Same coordinates as :func:`plane_xy`: Gamma for "smith", (angle, magnitude) for
    "polar", (G, B) [mS] for "circle".
    """
    base = kind.split(":")[0]
    if base == "circle":
        y = to_unit(complex(readout["y_siemens"]), "mS")
        return y.real, y.imag
    g = complex(readout["gamma"])
    return (float(np.angle(g)), abs(g)) if base == "polar" else (g.real, g.imag)
