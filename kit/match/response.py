"""Predicted response of a matched element: reflection, return loss, VSWR, power delivered.

The response is computed from the load itself (a measured capture, or numbers), seen
through the matching circuit from a source of resistance R0.

References
----------
.. [1] Methods sheet (shared/reference/methods.md) section 8.3: |Gamma|, VSWR, return loss,
   mismatch loss.
.. [2] ECSS glossary, "return loss" (https://ecss.nl/item/?glossary_id=1168): 10 log(Pi/Pr),
   positive when the reflection is smaller than the incident wave.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from kit.match.circuit import MatchDesign, input_impedance, load_grid, load_z
from kit.network.reflection import (  # noqa: F401
    gamma_from_vswr,
    gamma_from_z,
    mismatch_loss_db,
    return_loss_db,
    vswr,
)
from kit.results import Result
from kit.units import percent, quantity, scale_for


def ladder_waves(design: MatchDesign | None, z_load, f_hz, v_source=1.0, r_source_ohm=50.0,
                 q_inductor=None, q_capacitor=None):
    """Voltage and current at every part for a source ``v_source`` (open circuit) behind R0.

    Returns
    -------
    z_in : ndarray
        Input impedance [ohm].
    nodes : list of (V, I) arrays
        At the circuit input, then after each part (the last is at the load).
    per_part : list of dict
        For each part: ``v`` (voltage across it), ``i`` (current through it) and ``p_loss``
        (power it dissipates), each an array over frequency; a transformer gives its
        primary values and ``v2``, ``i2`` for the secondary.

    References
    ----------
    .. [1] Chain matrix relations, Pozar, *Microwave Engineering*, 4th ed., ch. 4 (from
       memory for the chapter); RMS phasors, P = Re(V I*).
    """
    f = np.atleast_1d(np.asarray(f_hz, dtype=float))
    parts = () if design is None else design.parts
    zl = np.asarray(z_load, dtype=complex) * np.ones(f.shape)
    mats = [p.abcd(f, q_inductor, q_capacitor) for p in parts]
    total = np.broadcast_to(np.eye(2, dtype=complex), (f.size, 2, 2)).copy()
    for m in mats:
        total = total @ m
    z_in = input_impedance(total, zl)
    i = v_source / (r_source_ohm + z_in)
    v = z_in * i
    nodes = [(v, i)]
    per_part = []
    for p, m in zip(parts, mats):
        a, b, c, d = m[:, 0, 0], m[:, 0, 1], m[:, 1, 0], m[:, 1, 1]
        det = a * d - b * c
        v2 = (d * v - b * i) / det
        i2 = (-c * v + a * i) / det
        if p.kind == "T":
            per_part.append({"v": v, "i": i, "v2": v2, "i2": i2, "p_loss": np.zeros(f.shape)})
        elif p.placement == "series":
            zp = p.impedance(f, q_inductor, q_capacitor)
            per_part.append({"v": i * zp, "i": i, "p_loss": np.abs(i) ** 2 * zp.real})
        else:
            zp = p.impedance(f, q_inductor, q_capacitor)
            yp = 1.0 / zp
            per_part.append({"v": v, "i": v * yp, "p_loss": np.abs(v) ** 2 * yp.real})
        v, i = v2, i2
        nodes.append((v, i))
    return z_in, nodes, per_part


@dataclass(frozen=True, eq=False)
class Bandwidth(Result):
    """Band where the return loss meets a level, around the best-matched point.

    Attributes
    ----------
    rl_db : float
        Required return loss [dB].
    f_lo_hz, f_hi_hz : float
        Band edges [Hz], interpolated linearly in dB between grid points (NaN if not found).
    f_best_hz : float
        Frequency of the best return loss [Hz].
    width_hz : float
        f_hi − f_lo [Hz].
    fractional : float
        width / sqrt(f_lo f_hi) [1].
    found : bool
        False when no point meets the level.
    message : str
        What was found, or why nothing could be computed; says when an edge is the end of
        the grid (the true band may be wider).
    """

    rl_db: float
    f_lo_hz: float
    f_hi_hz: float
    f_best_hz: float
    width_hz: float
    fractional: float
    found: bool
    message: str

    _ROWS = (
        ("rl_db", "required return loss", "dB"),
        ("f_lo_hz", "lower edge", "Hz"),
        ("f_hi_hz", "upper edge", "Hz"),
        ("f_best_hz", "best match at", "Hz"),
        ("width_hz", "width", "Hz"),
        ("fractional", "fractional width", ""),
    )

    @property
    def ok(self) -> bool:
        """True when a band meeting the level was found."""
        return bool(self.found)

    @property
    def reason(self) -> str:
        """Why no band was found ("" when found)."""
        return "" if self.found else self.message

    @property
    def heading(self) -> str:
        return f"Bandwidth at {self.rl_db:g} dB return loss"

    def __str__(self) -> str:
        return self.message


def bandwidth(f_hz, rl_db_values, rl_db: float = 10.0) -> Bandwidth:
    """Contiguous band around the best return loss where RL >= ``rl_db``.

    Parameters
    ----------
    f_hz : array_like
        Frequencies [Hz], increasing.
    rl_db_values : array_like
        Return loss at each frequency [dB].
    rl_db : float
        Required return loss [dB].

    References
    ----------
    .. [1] Bandwidth at a return-loss level (common practice, no source).
    """
    f = np.asarray(f_hz, dtype=float)
    r = np.asarray(rl_db_values, dtype=float)
    ok = np.isfinite(r)
    nan = float("nan")
    if not np.any(ok):
        return Bandwidth(rl_db, nan, nan, nan, nan, nan, False,
                         "return loss could not be computed at any point")
    k = int(np.nanargmax(np.where(ok, r, -np.inf)))
    if r[k] < rl_db:
        return Bandwidth(rl_db, nan, nan, f[k], nan, nan, False,
                         f"no point reaches {rl_db:g} dB return loss (best {r[k]:.2f} dB at "
                         f"{quantity(f[k], 'Hz', digits=6)})")
    lo = k
    while lo > 0 and ok[lo - 1] and r[lo - 1] >= rl_db:
        lo -= 1
    hi = k
    while hi < len(f) - 1 and ok[hi + 1] and r[hi + 1] >= rl_db:
        hi += 1
    notes = []

    def edge(i_in, i_out):
        if i_out < 0 or i_out >= len(f) or not ok[i_out]:
            notes.append("an edge is the end of the data; the band may be wider")
            return f[i_in]
        t = (rl_db - r[i_in]) / (r[i_out] - r[i_in])
        return f[i_in] + t * (f[i_out] - f[i_in])

    f_lo, f_hi = edge(lo, lo - 1), edge(hi, hi + 1)
    width = f_hi - f_lo
    frac = width / np.sqrt(f_lo * f_hi) if f_lo > 0 else nan
    msg = (f"RL ≥ {rl_db:g} dB from {quantity(f_lo, 'Hz', digits=6)} to "
           f"{quantity(f_hi, 'Hz', digits=6)} (width {quantity(width, 'Hz')}, {percent(frac)})"
           + ("; " + notes[0] if notes else ""))
    return Bandwidth(rl_db, f_lo, f_hi, f[k], width, frac, True, msg)


@dataclass(frozen=True, eq=False)
class MatchResponse(Result):
    """Response of a load through a matching circuit (or directly) from a source R0.

    Attributes
    ----------
    f_hz : ndarray
        Frequencies [Hz].
    z_load : ndarray
        Load (element) impedance [ohm].
    z_in : ndarray
        Impedance seen by the source [ohm].
    gamma : ndarray
        Input reflection coefficient in R0 [1].
    delivered : ndarray
        Power delivered to the element as a fraction of the source's available power
        (transducer gain) [1]; equals 1 − |Γ|² for lossless parts.
    r_source_ohm : float
        R0 [ohm].
    design : MatchDesign or None
        None for the unmatched element.
    q_inductor, q_capacitor : float or None
        Part Q used (None: lossless).
    """

    f_hz: np.ndarray
    z_load: np.ndarray
    z_in: np.ndarray
    gamma: np.ndarray
    delivered: np.ndarray
    r_source_ohm: float
    design: MatchDesign | None
    q_inductor: float | None = None
    q_capacitor: float | None = None

    _ROWS = (("r_source_ohm", "source resistance", "Ω"), ("best_rl_db", "best return loss", "dB"),
             ("f_best_hz", "best match at", "Hz"), ("q_inductor", "inductor Q", ""),
             ("q_capacitor", "capacitor Q", ""))

    def __post_init__(self):
        for k in ("f_hz", "delivered"):
            object.__setattr__(self, k, np.asarray(getattr(self, k), dtype=float))
        for k in ("z_load", "z_in", "gamma"):
            object.__setattr__(self, k, np.asarray(getattr(self, k), dtype=complex))
        for k in ("q_inductor", "q_capacitor"):  # None (lossless) is kept: it is not missing
            v = getattr(self, k)
            object.__setattr__(self, k, None if v is None else float(v))

    @property
    def ok(self) -> bool:
        """True when the reflection could be computed at some frequency."""
        return bool(np.any(np.isfinite(self.gamma)))

    @property
    def reason(self) -> str:
        """Why ``ok`` is False ("" when ok)."""
        return "" if self.ok else "the reflection is not finite at any frequency"

    @property
    def heading(self) -> str:
        what = "unmatched element" if self.design is None else self.design.title or self.design.kind
        return f"MatchResponse: {what} ({self.f_hz.size} points)"

    @property
    def best_rl_db(self) -> float:
        """Best return loss over the frequencies [dB] (NaN when none could be computed)."""
        rl = self.return_loss_db
        return float(np.nanmax(rl)) if np.any(np.isfinite(rl)) else float("nan")

    @property
    def f_best_hz(self) -> float:
        """Frequency of the best return loss [Hz]."""
        rl = self.return_loss_db
        ok = np.isfinite(rl)
        return float(self.f_hz[np.nanargmax(np.where(ok, rl, -np.inf))]) if ok.any() else np.nan

    def view_rows(self) -> list[tuple[str, str]]:
        """The rows of ``_ROWS`` (lossless parts read "lossless") and the 10 dB band."""
        rows = [(k, "lossless" if v == "not found" and "Q" in k else v)
                for k, v in super().view_rows()]
        return rows + [("band at 10 dB return loss", self.bandwidth(10.0).message)]

    @classmethod
    def from_dict(cls, d: dict) -> "MatchResponse":
        """The response back from :meth:`to_dict` (the design too)."""
        design = d.get("design")
        out = super().from_dict({**d, "design": None})
        if design is not None:
            out = dataclasses.replace(out, design=MatchDesign.from_dict(design))
        return out

    def plot(self, ax=None):
        """Return loss over frequency [dB]; returns the axes."""
        import matplotlib.pyplot as plt

        if ax is None:
            _, ax = plt.subplots(figsize=(7, 4))
        factor, unit = scale_for(self.f_hz, "Hz")
        label = "unmatched" if self.design is None else (self.design.title or self.design.kind)
        ax.plot(self.f_hz * factor, self.return_loss_db, "-", label=label)
        ax.set_xlabel(f"frequency [{unit}]")
        ax.set_ylabel("return loss [dB]")
        ax.set_title(f"return loss from {self.r_source_ohm:g} Ω", fontsize="small")
        ax.legend(loc="best", fontsize="x-small")
        return ax

    @property
    def return_loss_db(self) -> np.ndarray:
        """Return loss [dB]."""
        return return_loss_db(self.gamma)

    @property
    def vswr(self) -> np.ndarray:
        """VSWR [1]."""
        return vswr(self.gamma)

    @property
    def mismatch_loss_db(self) -> np.ndarray:
        """Mismatch loss [dB]."""
        return mismatch_loss_db(self.gamma)

    @property
    def delivered_db(self) -> np.ndarray:
        """Power delivered to the element relative to the available power [dB]."""
        with np.errstate(divide="ignore"):
            return 10.0 * np.log10(self.delivered)

    @property
    def parts_loss_db(self) -> np.ndarray:
        """Power lost in the parts, 10 log10((1 − |Γ|²)/delivered) [dB] (0 when lossless)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return 10.0 * np.log10((1.0 - np.abs(self.gamma) ** 2) / self.delivered)

    def bandwidth(self, rl_db: float = 10.0) -> Bandwidth:
        """Band around the best match where the return loss is at least ``rl_db``."""
        return bandwidth(self.f_hz, self.return_loss_db, rl_db)

    def network(self):
        """The matched element as a one-port scikit-rf Network referenced to R0."""
        import skrf

        freq = skrf.Frequency.from_f(self.f_hz, unit="Hz")
        return skrf.Network(frequency=freq, s=self.gamma.reshape(-1, 1, 1),
                            z0=self.r_source_ohm,
                            name="matched" if self.design is not None else "unmatched")

    def to_frame(self):
        """Table, one row per frequency (pandas DataFrame)."""
        import pandas as pd

        return pd.DataFrame({
            "f_hz": self.f_hz, "z_in_re_ohm": self.z_in.real, "z_in_im_ohm": self.z_in.imag,
            "gamma_mag": np.abs(self.gamma), "return_loss_db": self.return_loss_db,
            "vswr": self.vswr, "mismatch_loss_db": self.mismatch_loss_db,
            "delivered": self.delivered, "parts_loss_db": self.parts_loss_db,
        })


def response(design: MatchDesign | None, load, f_hz=None, *, r_source_ohm: float | None = None,
             q_inductor: float | None = None, q_capacitor: float | None = None) -> MatchResponse:
    """Predicted response of ``load`` seen through ``design`` from a source R0.

    Parameters
    ----------
    design : MatchDesign or None
        The matching circuit; None for the element connected directly.
    load : Capture, skrf.Network, complex, array_like or callable
        The element; a capture is used on its own (corrected) impedance.
    f_hz : array_like, optional
        Frequencies [Hz]; default: the capture's grid, else the design's default grid.
    r_source_ohm : float, optional
        R0 [ohm]; default: the design's, else 50.
    q_inductor, q_capacitor : float, optional
        Quality factor of the inductors / capacitors (constant over frequency; series loss
        resistance X/Q). None: lossless parts.

    Returns
    -------
    MatchResponse

    References
    ----------
    .. [1] Methods sheet section 8.3 (Gamma, RL, VSWR, ML). Power delivered: Re(V I*) at
       the element over the available power V_s^2/(4 R0) of the source (common practice,
       no source).
    """
    if f_hz is None:
        f_hz = load_grid(load)
        if f_hz is None:
            if design is None:
                raise ValueError("give f_hz: the load is not a capture")
            f_hz = design._default_grid()
    f = np.atleast_1d(np.asarray(f_hz, dtype=float))
    r0 = float(r_source_ohm if r_source_ohm is not None
               else (design.r_source_ohm if design is not None else 50.0))
    zl = load_z(load, f)
    z_in, nodes, _ = ladder_waves(design, zl, f, 1.0, r0, q_inductor, q_capacitor)
    v_l, i_l = nodes[-1]
    p_avail = 1.0 / (4.0 * r0)
    delivered = np.real(v_l * np.conj(i_l)) / p_avail
    return MatchResponse(f, zl, z_in, gamma_from_z(z_in, r0), delivered, r0, design,
                         q_inductor, q_capacitor)
