"""What the views draw: a trace (frequency, impedance, reflection) and the derived quantities.

No matplotlib here. :func:`trace` turns a capture into a :class:`Trace`; the functions
below derive the quantities a chart shows (VSWR, return loss, group delay...). The
registry :data:`CHARTS` maps a chart name to its quantity, axis label (with unit) and
scale, so that widgets can offer a choice of charts without knowing any formula.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from kit.network.coerce import name_of, sweep
from kit.network.reflection import db20, gamma_from_z, return_loss_db, vswr
from kit.outputs.part_figure import PALETTE as OKABE_ITO

#: Trace colours, in order of use: six of the eight colours of the Okabe-Ito palette
#: (M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and
#: presentations that are friendly to colorblind people", J*FLY, 2008; the hex values as
#: kept in :data:`kit.outputs.part_figure.PALETTE`). Black is left to pins and yellow
#: is too faint on white for a thin line.
PALETTE: tuple[str, ...] = tuple(OKABE_ITO[c] for c in (
    "blue", "vermilion", "bluish green", "reddish purple", "orange", "sky blue"))
#: Dash patterns crossed with the colours (matplotlib ``linestyle`` values): solid, dashed,
#: dotted, dash-dot, long dash. ``len(PALETTE) * len(DASHES)`` traces (30) look different.
DASHES: tuple[Any, ...] = ("-", (0, (5, 2)), (0, (1, 1.6)), (0, (6, 2, 1.5, 2)), (0, (11, 3)))
#: Colours of the Smith chart grids, limit lines and pins.
GRID_Z = "#c9bfb1"
GRID_Y = "#9fc6cc"
LIMIT_COLOR = "#b02e26"
PIN_COLOR = "#1d1d1d"


def color(i: int) -> str:
    """The colour of the i-th trace (:func:`style`)."""
    return style(i)[0]


def style(i: int) -> tuple[str, Any]:
    """(colour, line style) of the i-th trace: the colours of :data:`PALETTE` first, each
    dash pattern of :data:`DASHES` in turn once the colours are used up, so that the first
    ``len(PALETTE) * len(DASHES)`` traces (30) all differ; then the cycle repeats.

    References
    ----------
    .. [1] Colour crossed with dash pattern to tell many lines apart without relying on
       colour alone: common practice, no source.
    """
    i = int(i) % (len(PALETTE) * len(DASHES))
    return PALETTE[i % len(PALETTE)], DASHES[i // len(PALETTE)]


def style_kw(kw: dict, i: int) -> dict:
    """Give line keyword arguments the colour and dash pattern of the i-th trace
    (:func:`style`) where the caller set none; returns ``kw``."""
    c, ls = style(i)
    kw.setdefault("color", c)
    if "ls" not in kw and "linestyle" not in kw:
        kw["ls"] = ls
    return kw


def group_delay_s(f_hz: np.ndarray, s: np.ndarray) -> np.ndarray:
    r"""Group delay of a transfer or reflection coefficient [s].

    .. math:: \tau_g = -\frac{d\varphi}{d\omega}, \quad \omega = 2\pi f

    with the phase unwrapped and the derivative taken by central differences (one-sided
    at the ends).

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, sec. 3.x on group
       velocity and dispersion (from memory for the section); scikit-rf 2.2.0
       ``Network.group_delay`` computes the same central-difference form.
    """
    f = np.asarray(f_hz, dtype=float)
    phi = np.unwrap(np.angle(np.asarray(s, dtype=complex)))
    if f.size < 2:
        return np.full(f.shape, np.nan)
    return -np.gradient(phi, 2.0 * np.pi * f)


def reciprocal(x) -> np.ndarray:
    """1/x elementwise, NaN where x is 0 (Y = 1/Z and back; no warning) [1/unit of x].

    References
    ----------
    .. [1] Y = 1/Z by definition of admittance (common practice, no source).
    """
    x = np.asarray(x, dtype=complex)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(x == 0, np.nan + 0j, 1.0 / np.where(x == 0, 1.0, x))


@dataclass(frozen=True, eq=False)
class Trace:
    """One curve to draw: a device's impedance and reflection over frequency.

    Attributes
    ----------
    f_hz : numpy.ndarray
        Frequencies [Hz].
    z : numpy.ndarray of complex
        Device impedance [ohm].
    gamma : numpy.ndarray of complex
        Reflection coefficient of the device in ``z0_ohm`` [1] (S11 itself for a
        reflection capture).
    s : numpy.ndarray of complex
        The measured S-parameter behind the trace (S11 for reflection, S21 for the
        through methods) [1].
    z0_ohm : float
        Reference impedance [ohm].
    label : str
        Name shown in legends and tables.
    """

    f_hz: np.ndarray
    z: np.ndarray
    gamma: np.ndarray
    s: np.ndarray
    z0_ohm: float = 50.0
    label: str = ""

    @property
    def y(self) -> np.ndarray:
        """Admittance [S] (NaN where Z is 0)."""
        return reciprocal(self.z)

    @property
    def points(self) -> int:
        """Number of frequency points."""
        return int(self.f_hz.size)


def trace(obj: Any, method: str = "reflection", port: int = 1, label: str | None = None,
          z0_ohm: float | None = None) -> Trace:
    """A :class:`Trace` from a Capture, a scikit-rf Network, a Trace, or ``(f_hz, z)``.

    Parameters
    ----------
    obj : Capture, skrf.Network, Trace or tuple (f_hz, z)
        The data. A tuple is read as frequencies [Hz] and impedances [ohm].
    method : {"reflection", "series-through", "shunt-through"}
        How the device impedance follows from the capture (see :func:`kit.impedance`).
    port : int
        1-based port for the reflection method.
    label : str, optional
        Legend name; default the capture's name.
    z0_ohm : float, optional
        Reference impedance [ohm]; default the capture's own at the port used
        (:func:`kit.network.coerce.sweep`), else 50 for arrays. Given for a capture, Gamma
        is re-referred to it.

    Returns
    -------
    Trace
        New arrays; the capture is not modified.
    """
    if isinstance(obj, Trace):
        return obj if label is None else Trace(obj.f_hz, obj.z, obj.gamma, obj.s, obj.z0_ohm, label)
    arrays = isinstance(obj, tuple)
    sw = sweep(obj, method=method, port=port, z0_ohm=z0_ohm if arrays else None, what="trace")
    z0 = sw.z0_ohm if z0_ohm is None else float(z0_ohm)
    if sw.from_arrays:
        g = gamma_from_z(sw.z_ohm, z0)
        return Trace(sw.f_hz, sw.z_ohm, g, g, z0, label or "trace")
    if method == "reflection":
        s = np.array(sw.network.s[:, port - 1, port - 1])
        gamma = s if z0_ohm is None else gamma_from_z(sw.z_ohm, z0)
    else:
        s = np.array(sw.network.s[:, 1, 0])
        gamma = gamma_from_z(sw.z_ohm, z0)
    name = label if label is not None else name_of(obj, "trace")
    return Trace(np.array(sw.f_hz), sw.z_ohm, gamma, s, z0, name)


@dataclass(frozen=True)
class Chart:
    """How a rectangular chart shows a trace: quantity (in SI units), its unit ("1" for a
    ratio; the axis writes it with the prefix of the visible range), y scale."""

    name: str
    title: str
    unit: str
    quantity: Callable[[Trace], np.ndarray]
    yscale: str = "linear"

    @property
    def ylabel(self) -> str:
        """Axis label with the unit before any prefix, e.g. "|Z| [Ω]"."""
        return f"{self.title} [{self.unit}]"


def _phase_deg(t: Trace) -> np.ndarray:
    return np.degrees(np.angle(t.z))


#: Rectangular charts by name. ``quantity(trace)`` returns the real values drawn.
CHARTS: dict[str, Chart] = {c.name: c for c in (
    Chart("z_mag", "|Z|", "Ω", lambda t: np.abs(t.z), "log"),
    Chart("z_phase", "phase of Z", "°", _phase_deg),
    Chart("r", "R", "Ω", lambda t: t.z.real),
    Chart("x", "X", "Ω", lambda t: t.z.imag),
    Chart("g", "G", "S", lambda t: t.y.real),
    Chart("b", "B", "S", lambda t: t.y.imag),
    Chart("s_db", "|S|", "dB", lambda t: db20(t.s)),
    Chart("return_loss", "return loss", "dB", lambda t: return_loss_db(t.gamma)),
    Chart("vswr", "VSWR", "1", lambda t: vswr(t.gamma), "log"),
    Chart("group_delay", "group delay", "s",
          lambda t: group_delay_s(t.f_hz, t.s)),
)}
