"""Views: stateless drawing functions on matplotlib axes.

Every function takes the axes to draw on, draws, labels the axes with units and returns
the artists it made, so that a widget can later update them (``line.set_data`` then
``canvas.draw_idle``) instead of drawing again. Long sweeps are decimated for display
(min/max per pixel column, :mod:`kit.outputs.decimate`); the data are never altered.

This module gathers the whole drawing API:

* rectangular charts: :func:`plot_chart` (any chart of :data:`CHARTS` by name),
  :func:`plot_z_mag_phase`, :func:`plot_r_x`, :func:`plot_g_b`, :func:`plot_s_db`,
  :func:`plot_return_loss`, :func:`plot_vswr`, :func:`plot_group_delay`, :func:`overlay`;
* reflection plane (:mod:`kit.views.smith`): :func:`smith_grid`, :func:`plot_smith`,
  :func:`plot_polar`, :func:`plot_admittance_circle`;
* pins and limits (:mod:`kit.views.pins`): :func:`find_pin`, :func:`pin_reading`,
  :func:`reading_text`, :func:`draw_pins`, :func:`draw_pin`, :func:`pins_table`,
  :func:`pins_display`, :func:`write_pins_csv`, :func:`plot_limits`;
* fits: :func:`plot_fit` (the model curve of a fit result);
* data (:mod:`kit.views.data`): :func:`trace`, :class:`Trace`, :data:`PALETTE` (fixed
  display units come from :func:`kit.units.to_unit` / :func:`kit.units.from_unit`);
* reflection-plane coordinates for widgets that update lines: :func:`plane_xy`,
  :func:`plane_point`.

Example
-------
>>> import kit, kit.views as kv                                  # doctest: +SKIP
>>> t = kv.trace(kit.load("demo_data/lot/pzd7-01.s1p"))           # doctest: +SKIP
>>> fig, ax = plt.subplots(); kv.plot_chart(ax, t, "z_mag")       # doctest: +SKIP
"""

from __future__ import annotations

import math
from typing import Any, Iterable

import numpy as np

from kit.network.reflection import db20, gamma_from_z, return_loss_db, vswr
from kit.outputs.decimate import columns_of, minmax_indices, window
from kit.units import UNPREFIXED, quantity, scale_for, tick_text
from kit.views.data import (
    CHARTS,
    DASHES,
    PALETTE,
    Trace,
    color,
    group_delay_s,
    reciprocal,
    style,
    style_kw,
    trace,
)
from kit.views.pins import (
    PIN_SEARCHES,
    draw_pin,
    draw_pins,
    find_pin,
    pin_reading,
    pins_display,
    pins_table,
    plot_limits,
    reading_text,
    update_pins,
    write_pins_csv,
)
from kit.views.smith import (
    fit_polar_radius,
    plane_point,
    plane_xy,
    plot_admittance_circle,
    plot_polar,
    plot_smith,
    smith_grid,
    smith_xy,
    style_admittance_circle,
)

__all__ = [
    "CHARTS", "color", "columns_of", "DASHES", "held_limits", "legend_outside", "LEGEND_MAX", "style",
    "update_pins", "db20", "draw_pin", "draw_pins", "find_pin",
    "fit_polar_radius", "frame_return_loss", "frequency_axis", "gamma_from_z",
    "group_delay_s", "PIN_SEARCHES", "pin_reading", "pins_display", "pins_table", "overlay",
    "PALETTE", "plane_point", "plane_xy", "plot_admittance_circle", "plot_chart", "plot_fit",
    "plot_g_b", "plot_group_delay", "plot_limits", "plot_polar", "plot_r_x", "plot_return_loss",
    "plot_s_db", "plot_smith", "plot_vswr", "plot_z_mag_phase", "reading_text",
    "return_loss_db", "smith_grid", "smith_xy", "style_admittance_circle", "style_chart",
    "trace", "Trace", "update_line", "vswr", "write_pins_csv", "xy_for_display",
]


def _prefixed_formatter(unit: str, name: str):
    """A tick formatter that writes the ticks in the SI prefix of the visible range and puts
    that prefixed unit into the axis label ("frequency [MHz]" over "1.8  2.0  2.2")."""
    from matplotlib.ticker import ScalarFormatter

    class PrefixedFormatter(ScalarFormatter):
        def __init__(self) -> None:
            super().__init__(useOffset=False)
            self.factor, self.shown = 1.0, unit

        def set_locs(self, locs) -> None:
            lo, hi = self.axis.get_view_interval()
            self.factor, self.shown = scale_for([lo, hi], unit)
            super().set_locs(np.asarray(locs, float) * self.factor)
            self.locs = locs
            self.axis.set_label_text(f"{name} [{self.shown}]")

        def __call__(self, x, pos=None) -> str:
            return super().__call__(x * self.factor, pos)

        def format_data_short(self, value) -> str:  # the cursor read-out of ipympl
            return quantity(value, unit, digits=7)

    return PrefixedFormatter()


def _log_formatter(unit: str, minor: bool):
    """Log-axis tick labels as plain numbers with an SI prefix ("20", "100", "1k", "10k"),
    the unit being in the axis label, in place of matplotlib's mathtext powers of ten
    ("$10^{3}$", "$9.5\\times10^{1}$"): easier to read, and drawn as plain text (a
    mathtext label costs several times a plain one to lay out and draw). Which ticks carry
    a label is matplotlib's rule (:class:`matplotlib.ticker.LogFormatter`)."""
    from matplotlib.ticker import LogFormatter

    class PrefixedLogFormatter(LogFormatter):
        step = None  # tick spacing when the view spans less than a decade

        def set_locs(self, locs=None) -> None:
            super().set_locs(locs)
            lo, hi = sorted(self.axis.get_view_interval())
            inside = np.sort(np.asarray([] if locs is None else locs, float))
            inside = inside[(inside >= lo) & (inside <= hi)]
            gaps = np.diff(inside)
            self.step = (float(gaps.min()) if lo > 0 and hi / lo < 10.0 and gaps.size
                         and gaps.min() > 0 else None)

        def _num_to_string(self, x, vmin, vmax) -> str:
            # less than a decade: one prefix for the view, decimals that tell ticks apart
            if not self.step:
                return tick_text(x, unit, 3)
            factor, shown = scale_for([vmax], unit)
            prefix = shown[:len(shown) - len(unit)] if unit else ""
            step = self.step * factor
            decimals = max(0, -math.floor(math.log10(step) + 1e-9))
            while decimals < 9 and abs(step * 10 ** decimals
                                       - round(step * 10 ** decimals)) > 1e-6:
                decimals += 1  # 0.0025 needs four decimals, not three
            return f"{x * factor:.{decimals}f}{prefix}"

        def format_data_short(self, value) -> str:  # the cursor read-out of ipympl
            return quantity(value, unit, digits=5)

    return PrefixedLogFormatter(labelOnlyBase=not minor)


def frequency_axis(ax) -> None:
    """Frequency on the x axis (data in Hz): ticks in the SI prefix of the visible span and
    the axis label naming that unit ("frequency [MHz]"), kept in step on zoom."""
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_formatter(_prefixed_formatter("Hz", "frequency"))
    if ax.get_xscale() == "linear":
        ax.xaxis.set_major_locator(MaxNLocator(nbins=6))
    lo, hi = ax.get_xlim()
    ax.set_xlabel(f"frequency [{scale_for([lo, hi], 'Hz')[1]}]")
    ax.grid(True, which="major", color="#e4e0da", lw=0.6)


def xy_for_display(f_hz: np.ndarray, values: np.ndarray, columns: int,
                   span_hz=None) -> tuple[np.ndarray, np.ndarray]:
    """Decimated (frequency, value) copies for drawing, restricted to a span if given.

    Parameters
    ----------
    f_hz : array_like
        Sorted frequencies [Hz].
    values : array_like of float
        The quantity drawn.
    columns : int
        Pixel columns of the axes.
    span_hz : (float, float), optional
        Visible frequency window [Hz]; points outside (but one on each side) are dropped
        before decimation, so a zoomed view keeps its full detail.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        New arrays; the inputs are unchanged.
    """
    f = np.asarray(f_hz)
    v = np.asarray(values)
    sl = window(f, *(span_hz if span_hz is not None else (None, None)))
    f, v = f[sl], v[sl]
    shown = sorted(map(float, span_hz)) if span_hz is not None else None
    idx = minmax_indices(columns, v, x=f, x_range=shown) if f.size > 1 else np.arange(f.size)
    return f[idx].copy(), v[idx].copy()


def _line(ax, f, v, columns, span_hz, **kw) -> list[Any]:
    x, y = xy_for_display(f, v, columns or columns_of(ax), span_hz)
    return ax.plot(x, y, **kw)


def plot_chart(ax, t: Any, chart: str = "z_mag", i: int = 0, label: str | None = None,
               columns: int | None = None, span_hz=None, **kw) -> list[Any]:
    """Draw one trace on a rectangular chart chosen by name.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    t : Trace or anything :func:`trace` accepts (Capture, skrf.Network, (f_hz, z))
    chart : str
        A key of :data:`CHARTS`: "z_mag", "z_phase", "r", "x", "g", "b", "s_db",
        "return_loss", "vswr", "group_delay".
    i : int
        Palette index.
    label : str, optional
        Legend text (default the trace label).
    columns : int, optional
        Pixel columns for decimation (default the axes width).
    span_hz : (float, float), optional
        Frequency window [Hz] to draw; sets the x limits.

    Returns
    -------
    list of matplotlib.lines.Line2D
    """
    if chart not in CHARTS:
        raise ValueError(f"unknown chart {chart!r}; choose one of {', '.join(CHARTS)}")
    c = CHARTS[chart]
    t = trace(t)
    style_kw(kw, i)
    kw.setdefault("lw", 1.3)
    arts = _line(ax, t.f_hz, c.quantity(t), columns, span_hz, label=label or t.label, **kw)
    style_chart(ax, chart)
    if span_hz is not None:
        ax.set_xlim(*sorted(span_hz))
    return arts


#: Most traces named in a legend (beyond, the legend would be taller than the chart).
LEGEND_MAX = 24


def held_limits(current, wanted, log: bool = False, fill: float = 0.6) -> tuple[float, float]:
    """Axis limits that stay put while the data still fill them well.

    Flipping through the parts of a lot, an axis that rescales to every capture moves its
    ticks on every step (and costs a redraw of the axis). Here the ``current`` limits stay
    while they hold the ``wanted`` ones (those that fit the data now) and the wanted range
    covers at least ``fill`` of them. When the data reach beyond, the limits grow to the
    union, widened to a round step (a tenth of the range, 1-2-5 series) so that the next
    similar part fits without another change; when the data would use less than ``fill``,
    the axis zooms to ``wanted`` (widened the same way if the data still fill it).

    Parameters
    ----------
    current, wanted : (float, float)
        Limits shown now and limits that fit the data (low, high) [axis unit].
    log : bool
        Compare extents in decades (a logarithmic axis; limits must be positive).
    fill : float
        Smallest share of the shown range the wanted range may cover [1].

    Returns
    -------
    (float, float)
        The limits to show (low, high).

    References
    ----------
    .. [1] Hysteresis in axis rescaling: common practice in live plotting, no source.
    """
    lo, hi = sorted(map(float, wanted))
    c0, c1 = sorted(map(float, current))
    if not all(math.isfinite(v) for v in (lo, hi, c0, c1)) or (log and min(lo, c0) <= 0):
        return lo, hi
    u0, u1 = min(lo, c0), max(hi, c1)
    if (u0, u1) == (c0, c1):
        if hi > lo and _extent(lo, hi, log) >= fill * _extent(c0, c1, log):
            return c0, c1  # the data still fill the shown range: nothing moves
    else:
        n0, n1 = _outward(u0, u1, log)  # growing: to a round step, so the next part fits
        if _extent(lo, hi, log) >= fill * _extent(n0, n1, log):
            return n0, n1
    n0, n1 = _outward(lo, hi, log)
    if hi > lo and _extent(lo, hi, log) >= fill * _extent(n0, n1, log):
        return n0, n1
    return lo, hi


def _extent(lo: float, hi: float, log: bool) -> float:
    return math.log10(hi / lo) if log else hi - lo


def _outward(lo: float, hi: float, log: bool) -> tuple[float, float]:
    """(lo, hi) widened to whole steps of a 1-2-5 series near a tenth of the range (of
    the decades on a log axis); ends already on a step stay."""
    a, b = (math.log10(lo), math.log10(hi)) if log else (lo, hi)
    if not b > a:
        return lo, hi
    raw = (b - a) / 10.0
    mag = 10.0 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1.0, 2.0, 5.0, 10.0) if m * mag >= raw)
    tol = 1e-9 * step
    a2 = a if abs(a / step - round(a / step)) * step <= tol else math.floor(a / step) * step
    b2 = b if abs(b / step - round(b / step)) * step <= tol else math.ceil(b / step) * step
    return (10.0 ** a2, 10.0 ** b2) if log else (a2, b2)


def legend_outside(ax, handles=None, side: str = "right", **kw):
    """A legend outside the axes' data area, so that it covers no curve and no caption.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    handles : list of artists, optional
        Lines to name (default: the labelled lines of ``ax``).
    side : {"right", "below"}
        Right of the axes, top-aligned (one column up to 12 names, two beyond), or under
        the axes, beneath its x label and any caption drawn under the data.
    **kw
        Further :meth:`matplotlib.axes.Axes.legend` arguments.

    Returns
    -------
    matplotlib.legend.Legend or None
        None when there is nothing to name.
    """
    if handles is None:
        handles = [ln for ln in ax.get_lines() if not ln.get_label().startswith("_")]
    handles = list(handles)
    if not handles:
        return None
    kw.setdefault("fontsize", 7 if len(handles) <= 12 else 6)
    kw.setdefault("frameon", False)
    kw.setdefault("handlelength", 2.2)
    if side == "right":
        kw.setdefault("ncols", 1 if len(handles) <= 12 else 2)
        kw.setdefault("loc", "upper left")
        kw.setdefault("bbox_to_anchor", (1.01, 1.0))
        kw.setdefault("borderaxespad", 0.0)
    elif side == "below":
        kw.setdefault("ncols", min(len(handles), 4))
        kw.setdefault("loc", "upper center")
        kw.setdefault("bbox_to_anchor", (0.5, -0.02))
    else:
        raise ValueError(f"side must be 'right' or 'below', got {side!r}")
    kw.setdefault("columnspacing", 1.0)
    return ax.legend(handles=handles, **kw)


def style_chart(ax, chart: str) -> None:
    """Axis labels (with units), scale and grid of a named rectangular chart; the x range
    fits the data without margins (zoomed to the data)."""
    c = CHARTS[chart]
    ax.set_xmargin(0.0)
    frequency_axis(ax)
    ax.set_ylabel(c.ylabel)
    ax.set_yscale(c.yscale)
    name, unit = c.title, "" if c.unit == "1" else c.unit
    if c.yscale == "log":
        ax.yaxis.set_major_formatter(_log_formatter(unit, minor=False))
        ax.yaxis.set_minor_formatter(_log_formatter(unit, minor=True))
    else:
        _prefixed_y(ax, name, unit)


def _prefixed_y(ax, name: str, unit: str) -> None:
    """y ticks and label in the SI prefix of the visible range for a unit that takes one
    (Ω, S, s; quantities are plotted in SI units); other units are left as labelled."""
    if unit and unit not in UNPREFIXED:
        ax.yaxis.set_major_formatter(_prefixed_formatter(unit, name))
        ax.set_ylabel(f"{name} [{scale_for(ax.get_ylim(), unit)[1]}]")


def update_line(line, t: Trace, chart: str, columns: int | None = None, span_hz=None) -> None:
    """Give an existing line the (decimated) data of another trace or span; no redraw."""
    c = CHARTS[chart]
    x, y = xy_for_display(t.f_hz, c.quantity(t), columns or columns_of(line.axes), span_hz)
    line.set_data(x, y)


def overlay(ax, traces: Iterable[Any], chart: str = "z_mag", columns: int | None = None,
            span_hz=None, legend: bool = True, **kw) -> list[Any]:
    """Draw many traces on one rectangular chart, each in its own style (:func:`style`),
    named in a legend right of the axes (:func:`legend_outside`).

    Returns
    -------
    list of matplotlib.lines.Line2D
        One line per trace, in order.
    """
    arts: list[Any] = []
    for i, t in enumerate(traces):
        arts += plot_chart(ax, t, chart, i=i, columns=columns, span_hz=span_hz, **kw)
    if legend and 0 < len(arts) <= LEGEND_MAX:
        legend_outside(ax, arts)
    return arts


def _arr_trace(f_hz, z=None, s=None, gamma=None, label="trace", z0_ohm=50.0) -> Trace:
    f = np.asarray(f_hz, float)
    nan = np.full(f.shape, np.nan + 0j)
    zz = nan if z is None else np.asarray(z, complex)
    gg = gamma_from_z(zz, z0_ohm) if gamma is None and z is not None else (
        nan if gamma is None else np.asarray(gamma, complex))
    ss = gg if s is None else np.asarray(s, complex)
    return Trace(f, zz, gg, ss, z0_ohm, label)


def plot_z_mag_phase(ax_mag, ax_phase, f_hz, z, label: str | None = None, i: int = 0,
                     columns: int | None = None, span_hz=None, **kw) -> list[Any]:
    """|Z| [Ω] on a log scale on ``ax_mag`` and the phase of Z [°] on ``ax_phase``.

    Returns
    -------
    list of matplotlib.lines.Line2D
        [|Z| line, phase line].
    """
    t = _arr_trace(f_hz, z=z, label=label or "Z")
    return (plot_chart(ax_mag, t, "z_mag", i, label, columns, span_hz, **kw)
            + plot_chart(ax_phase, t, "z_phase", i, label, columns, span_hz, **kw))


def _pair(ax, t: Trace, charts: tuple[str, str], names: tuple[str, str],
          label: str | None, columns, span_hz, **kw) -> list[Any]:
    """Two charts of one trace on one axes (solid, dashed), named in a legend; the axis
    label names both ("R, X [Ω]"), in the prefix of the visible range."""
    name = f"{label} " if label else ""
    arts = plot_chart(ax, t, charts[0], 0, f"{name}{names[0]}", columns, span_hz, **kw)
    arts += plot_chart(ax, t, charts[1], 1, f"{name}{names[1]}", columns, span_hz, ls="--", **kw)
    unit = CHARTS[charts[0]].unit
    ax.set_ylabel(f"{', '.join(names)} [{unit}]")
    _prefixed_y(ax, ", ".join(names), unit)
    ax.legend(fontsize=7, frameon=False)
    return arts


def plot_r_x(ax, f_hz, z, label: str | None = None, columns: int | None = None, span_hz=None,
             **kw) -> list[Any]:
    """Resistance R and reactance X [Ω] against frequency on one axes (solid, dashed)."""
    t = _arr_trace(f_hz, z=z, label=label or "Z")
    return _pair(ax, t, ("r", "x"), ("R", "X"), label, columns, span_hz, **kw)


def plot_g_b(ax, f_hz, y, label: str | None = None, columns: int | None = None, span_hz=None,
             **kw) -> list[Any]:
    """Conductance G and susceptance B [S, shown with the prefix of the range] against
    frequency on one axes."""
    t = _arr_trace(f_hz, z=reciprocal(y), label=label or "Y")
    return _pair(ax, t, ("g", "b"), ("G", "B"), label, columns, span_hz, **kw)


def plot_s_db(ax, f_hz, s, label: str | None = None, i: int = 0, columns: int | None = None,
              span_hz=None, **kw) -> list[Any]:
    """|S| in dB against frequency (S11, S21... as given)."""
    t = _arr_trace(f_hz, s=s, gamma=s, label=label or "S")
    return plot_chart(ax, t, "s_db", i, label, columns, span_hz, **kw)


def plot_return_loss(ax, f_hz, gamma, label: str | None = None, i: int = 0,
                     columns: int | None = None, span_hz=None, **kw) -> list[Any]:
    """Return loss [dB] (positive) against frequency."""
    t = _arr_trace(f_hz, gamma=gamma, label=label or "Γ")
    return plot_chart(ax, t, "return_loss", i, label, columns, span_hz, **kw)


def frame_return_loss(ax, level_db: float, band_hz=None, *curves_db, ceiling_db: float = 60.0,
                      default_db: float = 30.0) -> list[Any]:
    """Frame a return-loss chart: the band shaded, a level line, a y range that shows both.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        A chart drawn by :func:`plot_return_loss`.
    level_db : float
        Return-loss level drawn as a dotted line [dB].
    band_hz : (float, float), optional
        Frequency band shaded [Hz].
    *curves_db : array_like
        Return losses drawn [dB]; the y range reaches 3 dB above the best finite one and
        5 dB above the level, from 0 to at most ``ceiling_db`` (``default_db`` when no
        value is finite).

    Returns
    -------
    list of matplotlib artists
    """
    arts: list[Any] = []
    if band_hz is not None:
        arts.append(ax.axvspan(*band_hz, color="#dfe8e6", alpha=0.6, zorder=0))
    arts.append(ax.axhline(level_db, color="#8c8c8c", lw=0.8, ls=":"))
    finite = [np.asarray(c, float)[np.isfinite(c)] for c in curves_db]
    finite = np.concatenate(finite) if finite else np.array([])
    top = float(np.max(finite)) if finite.size else default_db
    ax.set_ylim(0.0, min(max(top + 3.0, level_db + 5.0), ceiling_db))
    return arts


def plot_vswr(ax, f_hz, gamma, label: str | None = None, i: int = 0, columns: int | None = None,
              span_hz=None, **kw) -> list[Any]:
    """VSWR [1] on a log scale against frequency."""
    t = _arr_trace(f_hz, gamma=gamma, label=label or "Γ")
    return plot_chart(ax, t, "vswr", i, label, columns, span_hz, **kw)


def plot_group_delay(ax, f_hz, s, label: str | None = None, i: int = 0,
                     columns: int | None = None, span_hz=None, **kw) -> list[Any]:
    """Group delay [s, shown with the prefix of the range] of an S-parameter against
    frequency."""
    t = _arr_trace(f_hz, s=s, gamma=s, label=label or "S")
    return plot_chart(ax, t, "group_delay", i, label, columns, span_hz, **kw)


def plot_fit(fit, ax_mag=None, ax_phase=None, ax_circle=None, span_hz=None, points: int = 801,
             **kw) -> list[Any]:
    """The model curve of a fit result, dashed, on |Z|, phase and admittance-circle axes.

    The model impedance comes from the result itself (``fit.model_z(f_hz)``, the fitted
    model of :mod:`kit.resonators`); nothing is drawn for a fit without parameters.

    Parameters
    ----------
    fit : kit.resonators.fitting.FitResult
    ax_mag, ax_phase, ax_circle : matplotlib.axes.Axes, optional
        Axes of |Z| [ohm], phase of Z [deg] and B against G [mS]; None skips a view.
    span_hz : (float, float), optional
        Frequencies drawn [Hz]; default the fit's span.
    points : int
        Least number of frequencies of the model curve (more when the fit had more).

    Returns
    -------
    list of matplotlib.lines.Line2D
        Empty when the fit has no parameters (see ``fit.reason``).
    """
    span = span_hz if span_hz is not None else fit.span_hz
    if span is None:
        return []
    f = np.linspace(float(span[0]), float(span[1]), max(int(points), int(fit.n_points)))
    try:
        z = fit.model_z(f)
    except ValueError:
        return []
    t = trace((f, z), label=f"model {fit.model}")
    kw.setdefault("color", "k")
    kw.setdefault("lw", 1.0)
    kw.setdefault("ls", "--")
    arts: list[Any] = []
    for ax, chart in ((ax_mag, "z_mag"), (ax_phase, "z_phase")):
        if ax is not None:
            arts += plot_chart(ax, t, chart, columns=len(f), span_hz=span, **kw)
    if ax_circle is not None:
        arts += plot_admittance_circle(ax_circle, t, columns=len(f), **kw)
    return arts
