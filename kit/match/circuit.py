"""Matching circuits as ladders of parts, their ABCD matrices and the load they drive.

A matching circuit is held as a ladder of :class:`Part` objects ordered from the source
(port 1) to the load (port 2). Each part is a series impedance, a shunt admittance or an
ideal transformer. The chain (ABCD) matrix of the ladder gives the input impedance with the
load attached, and walking the ladder from the source gives the voltage and current at
every part (used by :mod:`kit.match.stress`).

References
----------
.. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, Table 4.2 (ABCD matrices
   of a series impedance, a shunt admittance and an ideal transformer; table number from
   memory).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from kit.capture import Capture, CaptureError
from kit.network.coerce import is_network, network_of, sweep
from kit.results import Result, plain
from kit.units import eng, quantity

PART_KINDS = ("L", "C", "T")
PLACEMENTS = ("series", "shunt", "transformer")
UNITS = {"L": "H", "C": "F", "T": "Np/Ns"}


@dataclass(frozen=True)
class Part:
    """One part of a matching ladder.

    Attributes
    ----------
    name : str
        Label in part lists, for example ``"L1"``.
    kind : {"L", "C", "T"}
        Inductor, capacitor or ideal transformer.
    placement : {"series", "shunt", "transformer"}
        Where it sits in the ladder ("transformer" for kind "T").
    value : float
        Inductance [H], capacitance [F] or turns ratio Np/Ns (primary toward the source) [1].
    turns : tuple of int or None
        Whole turns (Np, Ns) of a transformer, where chosen.
    """

    name: str
    kind: str
    placement: str
    value: float
    turns: tuple[int, int] | None = None

    def __post_init__(self) -> None:
        if self.kind not in PART_KINDS:
            raise ValueError(f"part kind must be one of {PART_KINDS}, got {self.kind!r}")
        if self.placement not in PLACEMENTS:
            raise ValueError(f"placement must be one of {PLACEMENTS}, got {self.placement!r}")
        if (self.kind == "T") != (self.placement == "transformer"):
            raise ValueError("a transformer part has kind 'T' and placement 'transformer'")
        if not (np.isfinite(self.value) and self.value > 0):
            raise ValueError(f"part {self.name}: value must be finite and > 0, got {self.value!r}")

    def impedance(self, f_hz, q_inductor: float | None = None,
                  q_capacitor: float | None = None) -> np.ndarray:
        r"""Impedance of an L or C part [ohm], with a constant-Q series loss where given.

        An inductor with quality factor Q is taken as jωL in series with R = ωL/Q; a
        capacitor as 1/(jωC) in series with R = 1/(ωCQ). Q is assumed constant over
        frequency (common practice, no source).

        References
        ----------
        .. [1] Q = X/R of a reactive part, Pozar, *Microwave Engineering*, 4th ed., ch. 6
           (from memory for the chapter).
        """
        w = 2.0 * np.pi * np.asarray(f_hz, dtype=float)
        if self.kind == "L":
            x = w * self.value
            r = 0.0 if not q_inductor else x / q_inductor
            return r + 1j * x
        if self.kind == "C":
            with np.errstate(divide="ignore"):
                x = -1.0 / (w * self.value)
            r = 0.0 if not q_capacitor else -x / q_capacitor
            return r + 1j * x
        raise ValueError("a transformer has no impedance of its own")

    def abcd(self, f_hz, q_inductor=None, q_capacitor=None) -> np.ndarray:
        """Chain matrix of the part, shape (points, 2, 2).

        References
        ----------
        .. [1] Pozar, *Microwave Engineering*, 4th ed., Table 4.2 (from memory for the
           table number): series Z -> [[1, Z], [0, 1]], shunt Y -> [[1, 0], [Y, 1]],
           ideal transformer N:1 -> [[N, 0], [0, 1/N]].
        """
        f = np.atleast_1d(np.asarray(f_hz, dtype=float))
        m = np.zeros((f.size, 2, 2), dtype=complex)
        if self.kind == "T":
            m[:, 0, 0] = self.value
            m[:, 1, 1] = 1.0 / self.value
            return m
        z = self.impedance(f, q_inductor, q_capacitor)
        m[:, 0, 0] = 1.0
        m[:, 1, 1] = 1.0
        if self.placement == "series":
            m[:, 0, 1] = z
        else:
            m[:, 1, 0] = 1.0 / z
        return m

    def value_text(self, digits: int = 4) -> str:
        """The value as read: "38.98 nH", "1.2 pF", or "Np/Ns = 3.162" for a transformer
        (a ratio takes no SI prefix)."""
        if self.kind == "T":
            return f"Np/Ns = {eng(self.value, '', digits)}"
        return eng(self.value, UNITS[self.kind], digits)

    def label(self) -> str:
        """Human text such as ``"L1 series inductor 38.98 nH"``."""
        if self.kind == "T":
            t = f" ({self.turns[0]}:{self.turns[1]} turns)" if self.turns else ""
            return f"{self.name} ideal transformer {self.value_text()}{t}"
        what = "inductor" if self.kind == "L" else "capacitor"
        return f"{self.name} {self.placement} {what} {self.value_text()}"


def chain(parts, f_hz, q_inductor=None, q_capacitor=None) -> np.ndarray:
    """ABCD matrix of a ladder (source first), shape (points, 2, 2); identity if empty."""
    f = np.atleast_1d(np.asarray(f_hz, dtype=float))
    m = np.broadcast_to(np.eye(2, dtype=complex), (f.size, 2, 2)).copy()
    for p in parts:
        m = m @ p.abcd(f, q_inductor, q_capacitor)
    return m


def input_impedance(abcd: np.ndarray, z_load) -> np.ndarray:
    r"""Input impedance of a two-port terminated by ``z_load`` [ohm].

    .. math:: Z_{in} = \frac{A Z_L + B}{C Z_L + D}

    References
    ----------
    .. [1] Pozar, *Microwave Engineering*, 4th ed., ch. 4 (ABCD matrix; from memory for the
       section).
    """
    zl = np.asarray(z_load, dtype=complex)
    a, b, c, d = abcd[:, 0, 0], abcd[:, 0, 1], abcd[:, 1, 0], abcd[:, 1, 1]
    with np.errstate(divide="ignore", invalid="ignore"):
        return (a * zl + b) / (c * zl + d)


# ----------------------------------------------------------------------------- the load


def load_name(load) -> str:
    """Short description of a load for provenance."""
    if isinstance(load, Capture):
        return f"capture {load.name}" + (f" (sha256 {load.sha256[:12]})" if load.sha256 else "")
    if is_network(load):
        return f"network {load.name or '(unnamed)'}"
    if callable(load):
        return f"function {getattr(load, '__name__', 'load')}"
    if np.ndim(load) == 0:
        z = complex(load)
        return (f"Z = {quantity(z.real, 'Ω', digits=6)} {'+' if z.imag >= 0 else '−'} "
                f"j{quantity(abs(z.imag), 'Ω', digits=6)}")
    return "impedance array"


def measured_z(load) -> tuple[np.ndarray, np.ndarray]:
    """Frequency grid [Hz] and one-port impedance [ohm] of a Capture or Network.

    By the kit's one coercion (:func:`kit.network.coerce.sweep`, reflection at port 1, with
    the capture's own reference impedance).
    """
    src = sweep(load, method="reflection", what="the matching load")
    return src.f_hz, src.z_ohm


def load_grid(load) -> np.ndarray | None:
    """The measured frequency grid of a Capture or Network load, else None."""
    if isinstance(load, Capture) or is_network(load):
        return np.asarray(network_of(load, "load_grid()").frequency.f, dtype=float)
    return None


def load_z(load, f_hz) -> np.ndarray:
    """Load impedance [ohm] at ``f_hz``.

    Parameters
    ----------
    load : Capture, skrf.Network, complex, array_like or callable
        A measured one-port (its impedance, interpolated linearly in real and imaginary
        parts between measured points), a fixed impedance, an array with one value per
        frequency, or a function ``f_hz -> Z``.
    f_hz : float or array_like
        Frequencies [Hz].

    Raises
    ------
    CaptureError
        When a frequency lies outside the capture's range (names the file).
    """
    f = np.atleast_1d(np.asarray(f_hz, dtype=float))
    if isinstance(load, Capture) or is_network(load):
        fg, z = measured_z(load)
        lo, hi = fg[0], fg[-1]
        tol = 1e-9 * max(abs(hi), 1.0)
        if np.any(f < lo - tol) or np.any(f > hi + tol):
            path = getattr(load, "path", None)
            raise CaptureError(
                f"frequency {quantity(f.min(), 'Hz', digits=6)}..{quantity(f.max(), 'Hz', digits=6)}"
                f" is outside the capture's range {quantity(lo, 'Hz', digits=6)}.."
                f"{quantity(hi, 'Hz', digits=6)}; choose frequencies inside the measured sweep",
                path)
        ok = np.isfinite(z)
        if not np.all(ok):
            fg, z = fg[ok], z[ok]
        return np.interp(f, fg, z.real) + 1j * np.interp(f, fg, z.imag)
    if callable(load):
        return np.asarray(load(f), dtype=complex) * np.ones(f.shape)
    z = np.asarray(load, dtype=complex)
    if z.ndim == 0:
        return np.full(f.shape, complex(z))
    if z.shape != f.shape:
        raise ValueError(f"load array has {z.size} values but {f.size} frequencies were given")
    return z


# ----------------------------------------------------------------------------- the design


@dataclass(frozen=True, eq=False)
class MatchDesign(Result):
    """A matching circuit designed for one load, with where it came from.

    Attributes
    ----------
    kind : str
        ``"tuning-inductor"``, ``"transformer"``, ``"tuned-transformer"``,
        ``"l-network"`` or ``"band"``.
    title : str
        One-line human description.
    parts : tuple of Part
        The ladder, source (port 1) first, load (port 2) last.
    r_source_ohm : float
        Source (and port 1 reference) resistance [ohm].
    f_design_hz : float
        Design frequency (band centre for band designs) [Hz].
    z_load_design_ohm : complex
        Load impedance at the design frequency [ohm] (NaN where not used).
    params : dict
        Inputs of the design function (for provenance).
    references : tuple of str
        Sources of the formulas used.
    notes : tuple of str
        Anything the user should know (assumptions, rounding, flags).
    f_grid_hz : numpy.ndarray or None
        Frequency grid of the load capture, if the design came from one.
    info : dict
        Extra numbers (for example the optimiser's result of a band design).

    A :class:`kit.results.Result`: ``to_dict()``/``from_dict()``, ``report()`` (parts with
    their values, then the notes) and an escaped HTML view; :meth:`summary` is the shorter
    text with the part labels.
    """

    kind: str
    title: str
    parts: tuple[Part, ...]
    r_source_ohm: float = 50.0
    f_design_hz: float = float("nan")
    z_load_design_ohm: complex = complex("nan")
    params: dict[str, Any] = field(default_factory=dict)
    references: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    f_grid_hz: np.ndarray | None = None
    info: dict[str, Any] = field(default_factory=dict)

    @property
    def heading(self) -> str:
        """The design's title (heading of the text and HTML views)."""
        return self.title

    #: a design, stress table or part row is always computed (bad input raises instead)
    ok = True
    reason = ""
    _ROWS = (("r_source_ohm", "source resistance", "Ω"), ("f_design_hz", "design frequency", "Hz"))

    def view_rows(self) -> list[tuple[str, str]]:
        """Source and design frequency ("not used" when NaN), then one row per part."""
        rows = [(k, "not used" if v == "not found" else v) for k, v in super().view_rows()]
        return rows + [
            (f"{p.name} ({p.placement})", p.value_text()) for p in self.parts]

    def _footer(self) -> list[str]:
        return super()._footer() + [f"note: {n}" for n in self.notes]

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON data of every field (parts as dicts, the grid as a list or None)."""
        d = {k: plain(getattr(self, k)) for k in self.__dataclass_fields__ if k != "parts"}
        d["parts"] = [plain(dataclasses.asdict(p)) for p in self.parts]
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "MatchDesign":
        """The design back from :meth:`to_dict`."""
        parts = tuple(Part(**{**p, "turns": None if p.get("turns") is None else tuple(p["turns"])})
                      for p in d.get("parts", ()))
        out = super().from_dict({k: v for k, v in d.items() if k != "parts"} | {"parts": ()})
        grid = None if out.f_grid_hz is None else np.asarray(out.f_grid_hz, dtype=float)
        return dataclasses.replace(out, parts=parts, f_grid_hz=grid)

    @property
    def values(self) -> dict[str, float]:
        """Part name -> value [H, F or turns ratio]."""
        return {p.name: p.value for p in self.parts}

    def abcd(self, f_hz, q_inductor=None, q_capacitor=None) -> np.ndarray:
        """Chain matrix of the circuit, shape (points, 2, 2)."""
        return chain(self.parts, f_hz, q_inductor, q_capacitor)

    def z_in(self, load, f_hz, q_inductor=None, q_capacitor=None) -> np.ndarray:
        """Impedance seen by the source with ``load`` attached [ohm]."""
        f = np.atleast_1d(np.asarray(f_hz, dtype=float))
        return input_impedance(self.abcd(f, q_inductor, q_capacitor), load_z(load, f))

    def _default_grid(self) -> np.ndarray:
        if self.f_grid_hz is not None:
            return np.asarray(self.f_grid_hz, dtype=float)
        f0 = self.f_design_hz if np.isfinite(self.f_design_hz) else 1e6
        return np.linspace(0.5 * f0, 1.5 * f0, 201)

    def network(self, f_hz=None, q_inductor=None, q_capacitor=None):
        """The matching circuit as a scikit-rf two-port Network.

        Built from scikit-rf's own lumped blocks (``skrf.circuit.Circuit.SeriesImpedance``
        and ``ShuntAdmittance``) cascaded with ``**``; an ideal transformer from its chain
        matrix through ``skrf.network.a2s``. Port 1 faces the source, port 2 the load; both
        ports are referenced to ``r_source_ohm``.

        Parameters
        ----------
        f_hz : array_like, optional
            Frequencies [Hz]; default: the load capture's grid, else 0.5..1.5 f_design.
        """
        import skrf
        from skrf.circuit import Circuit

        f = self._default_grid() if f_hz is None else np.atleast_1d(np.asarray(f_hz, float))
        freq = skrf.Frequency.from_f(f, unit="Hz")
        z0 = float(self.r_source_ohm)
        out = None
        for p in self.parts:
            if p.kind == "T":
                s = skrf.network.a2s(p.abcd(f), z0)
                blk = skrf.Network(frequency=freq, s=s, z0=z0, name=p.name)
            elif p.placement == "series":
                blk = Circuit.SeriesImpedance(freq, p.impedance(f, q_inductor, q_capacitor),
                                              p.name, z0=z0)
            else:
                blk = Circuit.ShuntAdmittance(freq, 1.0 / p.impedance(f, q_inductor, q_capacitor),
                                              p.name, z0=z0)
            out = blk if out is None else out ** blk
        if out is None:  # no parts: a through
            s = np.zeros((f.size, 2, 2), dtype=complex)
            s[:, 0, 1] = s[:, 1, 0] = 1.0
            out = skrf.Network(frequency=freq, s=s, z0=z0)
        out.name = self.kind
        return out

    def with_parts(self, parts, note: str, **info) -> "MatchDesign":
        """A copy with other parts (for example rounded values) and one more note."""
        return dataclasses.replace(self, parts=tuple(parts), notes=self.notes + (note,),
                                   info={**self.info, **info})

    def describe(self) -> dict[str, Any]:
        """Provenance record: what was designed, from what, with which formulas."""
        return {
            "step": f"match.{self.kind}",
            "title": self.title,
            "parts": [{"name": p.name, "kind": p.kind, "placement": p.placement,
                       "value": p.value, "unit": UNITS[p.kind],
                       **({"turns": list(p.turns)} if p.turns else {})} for p in self.parts],
            "r_source_ohm": self.r_source_ohm,
            "f_design_hz": self.f_design_hz,
            "z_load_design_ohm": [self.z_load_design_ohm.real, self.z_load_design_ohm.imag],
            "params": dict(self.params),
            "references": list(self.references),
            "notes": list(self.notes),
            "info": {k: v for k, v in self.info.items() if np.isscalar(v) or isinstance(v, str)},
        }

    def summary(self) -> str:
        """Plain text: title, parts (source to load), notes."""
        lines = [self.heading, f"  source {quantity(self.r_source_ohm, 'Ω')} -> "
                 + " -> ".join(p.name for p in self.parts) + " -> load"]
        lines += ["  " + p.label() for p in self.parts]
        lines += ["  note: " + n for n in self.notes]
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.summary()

    def __repr__(self) -> str:
        vals = ", ".join(f"{p.name}: {p.value_text(6)}" for p in self.parts)
        return f"MatchDesign({self.kind!r}, {vals})"
