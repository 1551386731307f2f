"""Voltage and current stress on the element and each matching part at a given drive power.

Assumed drive (stated in every result): a sinusoidal source modelled as an ideal voltage
source in series with R0 (50 ohm unless given), whose **available power** is the drive power
P, i.e. its open-circuit RMS voltage is Vs = 2 sqrt(P R0) and it would deliver P into a
matched R0 load. The power actually reaching the element is P (1 − |Γ|²) less the losses
in the parts. Values are RMS in steady state; the peak of a sine is sqrt(2) times the RMS.
Parts are linear (no core saturation, no self-heating drift).

At resonance the element voltage can be hundreds of volts at modest power; see the
cautions in :mod:`kit.match`.

References
----------
.. [1] Available power of a source Vs behind R0: Vs^2/(4 R0) (maximum power transfer;
   Pozar, *Microwave Engineering*, 4th ed., ch. 2, from memory for the section).
.. [2] Chain matrix relations, Pozar, 4th ed., ch. 4 (from memory for the section).
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field

import numpy as np

from kit._text import html_rows
from kit.match.circuit import MatchDesign, load_z
from kit.match.response import gamma_from_z, ladder_waves
from kit.results import Result
from kit.units import eng, quantity, scale_for


def assumption_text(drive_w: float, r_source_ohm: float) -> str:
    """The drive assumption in words, with numbers."""
    vs = 2.0 * np.sqrt(drive_w * r_source_ohm)
    return (f"source: ideal sine voltage source behind {quantity(r_source_ohm, 'Ω')} with "
            f"available power {quantity(drive_w, 'W')} (open-circuit {quantity(vs, 'V')} RMS; it "
            f"would deliver {quantity(drive_w, 'W')} into a matched {quantity(r_source_ohm, 'Ω')} "
            "load). RMS values; peak = 1.414 x RMS. "
            "Linear parts; steady state.")


@dataclass(frozen=True)
class PartStress(Result):
    """Stress on one item, at the frequency where its voltage is largest.

    Attributes
    ----------
    name : str
        ``"element"`` or the part name (``"T1 primary"``/``"T1 secondary"`` for a
        transformer).
    what : str
        Description.
    v_rms_v : float
        Largest RMS voltage across it over the frequencies given [V].
    i_rms_a : float
        Largest RMS current through it [A].
    power_w : float
        Largest power dissipated in it (for the element: delivered to it) [W].
    f_at_v_hz : float
        Frequency of the largest voltage [Hz].
    f_at_i_hz : float
        Frequency of the largest current [Hz].
    """

    name: str
    what: str
    v_rms_v: float
    i_rms_a: float
    power_w: float
    f_at_v_hz: float
    f_at_i_hz: float

    _ROWS = (("v_rms_v", "largest voltage (RMS)", "V"), ("v_peak_v", "largest voltage (peak)", "V"),
             ("i_rms_a", "largest current (RMS)", "A"), ("power_w", "largest power", "W"),
             ("f_at_v_hz", "largest voltage at", "Hz"), ("f_at_i_hz", "largest current at", "Hz"))

    @property
    def heading(self) -> str:
        return f"Stress on {self.name} ({self.what})"

    #: a design, stress table or part row is always computed (bad input raises instead)
    ok = True
    reason = ""

    @property
    def v_peak_v(self) -> float:
        """Peak voltage of the sine [V]."""
        return float(np.sqrt(2.0) * self.v_rms_v)


@dataclass(frozen=True, eq=False)
class StressReport(Result):
    """Stress table at one drive power, with the assumption it rests on.

    Attributes
    ----------
    rows : tuple of PartStress
        The element first, then the parts from the source.
    drive_w : float
        Available power of the source [W].
    r_source_ohm : float
        R0 [ohm].
    f_hz : ndarray
        Frequencies evaluated [Hz].
    delivered_w : ndarray
        Power into the element at each frequency [W].
    gamma : ndarray
        Input reflection [1].
    assumptions : str
        The drive model in words.
    """

    rows: tuple[PartStress, ...]
    drive_w: float
    r_source_ohm: float
    f_hz: np.ndarray
    delivered_w: np.ndarray
    gamma: np.ndarray
    assumptions: str
    waves: dict = field(default_factory=dict, repr=False)

    _ROWS = (("drive_w", "available drive power", "W"), ("r_source_ohm", "source resistance", "Ω"))

    @property
    def heading(self) -> str:
        return f"StressReport at {eng(self.drive_w, 'W')} available drive"

    #: a design, stress table or part row is always computed (bad input raises instead)
    ok = True
    reason = ""

    def view_rows(self) -> list[tuple[str, str]]:
        """Drive and source, then per item its largest RMS voltage, current and power."""
        return Result.view_rows(self) + [
            (r.name, f"{eng(r.v_rms_v, 'V')} RMS ({eng(r.v_peak_v, 'V')} peak), "
                     f"{eng(r.i_rms_a, 'A')} RMS, {eng(r.power_w, 'W')} at {eng(r.f_at_v_hz, 'Hz')}")
            for r in self.rows]

    def report(self) -> str:
        """Text view: drive, one line per item, the assumption (:meth:`summary`: a table)."""
        return "\n".join([self.heading] + [f"  {k}: {v}" for k, v in self.view_rows()]
                         + [f"  {self.assumptions}"])

    def _repr_html_(self) -> str:
        return (f"<div><b>{html.escape(self.heading)}</b><table>{html_rows(self.view_rows())}"
                f"</table><div>{html.escape(self.assumptions)}</div></div>")

    @classmethod
    def from_dict(cls, d: dict) -> "StressReport":
        """The report back from :meth:`to_dict` (rows, arrays and waves)."""
        def arr(v):
            if isinstance(v, dict) and set(v) == {"re", "im"}:
                return np.asarray(v["re"], float) + 1j * np.asarray(v["im"], float)
            return np.asarray(v, dtype=float)

        return cls(rows=tuple(PartStress.from_dict(r) for r in d["rows"]),
                   drive_w=float(d["drive_w"]), r_source_ohm=float(d["r_source_ohm"]),
                   f_hz=arr(d["f_hz"]), delivered_w=arr(d["delivered_w"]), gamma=arr(d["gamma"]),
                   assumptions=d["assumptions"],
                   waves={k: arr(v) for k, v in d.get("waves", {}).items()})

    def plot(self, ax=None):
        """Power delivered to the element over frequency [W]; returns the axes."""
        import matplotlib.pyplot as plt

        if ax is None:
            _, ax = plt.subplots(figsize=(7, 4))
        factor, unit = scale_for(self.f_hz, "Hz")
        ax.plot(self.f_hz * factor, self.delivered_w, "-", label="delivered to the element")
        ax.set_xlabel(f"frequency [{unit}]")
        ax.set_ylabel("power [W]")
        ax.set_title(self.heading, fontsize="small")
        ax.legend(loc="best", fontsize="x-small")
        return ax

    def row(self, name: str) -> PartStress:
        """The row called ``name``."""
        for r in self.rows:
            if r.name == name:
                return r
        raise KeyError(f"no row {name!r}; rows: {[r.name for r in self.rows]}")

    def to_frame(self):
        """pandas DataFrame, one row per item."""
        import pandas as pd

        return pd.DataFrame([{**r.__dict__, "v_peak_v": r.v_peak_v} for r in self.rows])

    def summary(self) -> str:
        """Plain text table with the assumption, every cell with its unit
        (:func:`kit.units.quantity`)."""
        lines = [f"stress at {quantity(self.drive_w, 'W')} available drive",
                 f"{'item':<14} {'V rms':>11} {'V peak':>11} {'I rms':>11} {'P':>11}  at f"]
        for r in self.rows:
            lines.append(f"{r.name:<14} {quantity(r.v_rms_v, 'V'):>11} "
                         f"{quantity(r.v_peak_v, 'V'):>11} {quantity(r.i_rms_a, 'A'):>11} "
                         f"{quantity(r.power_w, 'W'):>11}  {quantity(r.f_at_v_hz, 'Hz')}")
        lines.append(self.assumptions)
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.summary()


def _row(name, what, v, i, p, f):
    kv, ki = int(np.nanargmax(np.abs(v))), int(np.nanargmax(np.abs(i)))
    return PartStress(name, what, float(np.abs(v[kv])), float(np.abs(i[ki])),
                      float(np.nanmax(p)), float(f[kv]), float(f[ki]))


def stress(design: MatchDesign | None, load, f_hz, drive_w: float, *,
           r_source_ohm: float | None = None, q_inductor: float | None = None,
           q_capacitor: float | None = None) -> StressReport:
    """RMS voltage and current of the element and of each part at a drive power.

    Parameters
    ----------
    design : MatchDesign or None
        Matching circuit (None: the element driven directly).
    load : Capture, skrf.Network, complex, array_like or callable
        The element.
    f_hz : float or array_like
        Drive frequency, or frequencies over which the worst case is taken [Hz].
    drive_w : float
        Available power of the source [W] (see the module docstring for the model).
    r_source_ohm : float, optional
        R0 [ohm]; default: the design's, else 50.
    q_inductor, q_capacitor : float, optional
        Part Q (None: lossless).

    Returns
    -------
    StressReport

    References
    ----------
    .. [1] Available power Vs^2/(4 R0) (Pozar, 4th ed., ch. 2, from memory for the section);
       currents and voltages along the ladder from its chain matrices.
    """
    p = float(drive_w)
    if not (np.isfinite(p) and p >= 0):
        raise ValueError(f"drive power must be finite and >= 0 W, got {drive_w!r}")
    r0 = float(r_source_ohm if r_source_ohm is not None
               else (design.r_source_ohm if design is not None else 50.0))
    f = np.atleast_1d(np.asarray(f_hz, dtype=float))
    zl = load_z(load, f)
    vs = 2.0 * np.sqrt(p * r0)
    z_in, nodes, per_part = ladder_waves(design, zl, f, vs, r0, q_inductor, q_capacitor)
    v_l, i_l = nodes[-1]
    p_l = np.real(v_l * np.conj(i_l))
    rows = [_row("element", "the transducer", v_l, i_l, p_l, f)]
    parts = () if design is None else design.parts
    for part, w in zip(parts, per_part):
        if part.kind == "T":
            rows.append(_row(f"{part.name} primary", part.label(), w["v"], w["i"], w["p_loss"], f))
            rows.append(_row(f"{part.name} secondary", part.label(), w["v2"], w["i2"],
                             w["p_loss"], f))
        else:
            rows.append(_row(part.name, part.label(), w["v"], w["i"], w["p_loss"], f))
    return StressReport(tuple(rows), p, r0, f, p_l, gamma_from_z(z_in, r0),
                        assumption_text(p, r0),
                        waves={"v_element": v_l, "i_element": i_l})
