"""Limits drawn on axes: mask bounds as lines, frequency bounds as vertical lines.

Reached through :meth:`kit.Limits.draw` or directly; it reads a :class:`kit.Limits` by its
attributes and does not import its module (no import cycle).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from kit.units import unit_of

__all__ = ["draw_limits"]


def draw_limits(ax, limits: Any, curve: str = "z_mag_ohm", f_scale: float = 1.0,
                quantities: bool = True, **style: Any) -> list:
    """Draw the limits of ``curve`` on matplotlib axes whose x axis is frequency.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        x in hertz divided by ``f_scale`` (e.g. ``f_scale=1e6`` for an axis in MHz: the
        inverse of the factor :func:`kit.units.scale_for` gives).
    limits : kit.Limits
        (Not imported here: :meth:`kit.Limits.draw` calls this function.)
    curve : str
        Masks on this curve are drawn as lines (lower and upper bounds).
    f_scale : float
        Hertz per unit of the x axis (dimensionless factor).
    quantities : bool
        Also mark bounds of frequency quantities (names ending ``_hz``) as vertical dashed
        lines.
    **style
        Passed to matplotlib's ``plot`` (``color`` also to the vertical lines).

    Returns
    -------
    list of matplotlib artists
    """
    artists = []
    colour = style.pop("color", "tab:red")
    for m in limits.masks:
        if m.curve != curve:
            continue
        f = np.array([m.f_min_hz, m.f_max_hz])
        for which, ls in (("lower", "--"), ("upper", "-")):
            b = m.bound(which, f)
            if b is None:
                continue
            (line,) = ax.plot(f / f_scale, b, ls, color=colour, lw=1.5, alpha=0.8,
                              label=f"{m.name} {which}", **style)
            artists.append(line)
    if quantities:
        for q in limits.quantities:
            if unit_of(q.name) != "Hz":
                continue
            bounds = [b for b in (q.min, q.max) if b is not None]
            for k, b in enumerate(bounds):
                label = f"{q.shown} limit" if k == 0 else "_nolegend_"
                artists.append(ax.axvline(b / f_scale, color=colour, ls=":", lw=1.0,
                                          alpha=0.7, label=label))
    return artists
