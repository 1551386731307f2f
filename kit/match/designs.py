"""Matching designs: tuning inductor, ideal transformer, L-network, two-element band design.

Every design takes the load either as numbers or as a measured one-port (a
:class:`~kit.capture.Capture` or scikit-rf Network, whose impedance comes from
:func:`kit.impedance`), and returns a :class:`~kit.match.circuit.MatchDesign`.

References
----------
.. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, section 5.1, L-section
   matching (equation numbers from memory).
.. [2] Methods sheet (shared/reference/methods.md), sections 8.1 and 8.2.
"""

from __future__ import annotations

import numpy as np

from kit.match.circuit import MatchDesign, Part, load_grid, load_name, load_z
from kit.units import complex_quantity, eng, quantity

REF_L = ("D. M. Pozar, Microwave Engineering, 4th ed., Wiley 2012, section 5.1, L-section "
         "matching (equation numbers from memory)")
REF_TUNE = ("Tuning out a capacitance with a resonating inductor, L = 1/(omega^2 C) "
            "(common practice, no source; methods sheet section 8.2)")
REF_XFMR = ("Ideal transformer Zp = (Np/Ns)^2 Zs (common practice, no source; methods sheet "
            "section 8.2)")


def _z_at(load, f_hz: float) -> complex:
    z = complex(load_z(load, f_hz)[0])
    if not np.isfinite(z):
        raise ValueError(f"the load impedance at {quantity(f_hz, 'Hz', digits=6)} is not finite ({z})")
    return z


def _reactive_part(name: str, placement: str, x_or_b: float, w: float, what: str) -> Part | None:
    """Part realising reactance X (series) or susceptance B (shunt) at angular frequency w."""
    if x_or_b == 0:
        return None
    if what == "X":  # series reactance
        if x_or_b > 0:
            return Part("L" + name, "L", placement, x_or_b / w)
        return Part("C" + name, "C", placement, -1.0 / (w * x_or_b))
    if x_or_b > 0:  # shunt susceptance
        return Part("C" + name, "C", placement, x_or_b / w)
    return Part("L" + name, "L", placement, -1.0 / (w * x_or_b))


def _check_f(f_hz: float) -> float:
    f = float(f_hz)
    if not (np.isfinite(f) and f > 0):
        raise ValueError(f"design frequency must be finite and > 0 Hz, got {f_hz!r}")
    return f


def _check_r(r: float, what: str) -> float:
    r = float(r)
    if not (np.isfinite(r) and r > 0):
        raise ValueError(f"{what} must be finite and > 0 ohm, got {r!r}")
    return r


# ----------------------------------------------------------------------------- tuning


def tuning_inductor(c0_f, f_hz: float, kind: str = "shunt", r_source_ohm: float = 50.0,
                    *, load=None) -> MatchDesign:
    r"""Inductor that cancels the element's capacitance (or measured reactance) at ``f_hz``.

    .. math::

        L_p = \frac{1}{\omega^2 C_0} \ (\text{shunt}), \qquad
        L_s = -\frac{\operatorname{Im} Z(f)}{\omega} \ (\text{series})

    From a measured load: the shunt inductor cancels the measured susceptance,
    L = 1/(omega Im Y(f)); the series inductor the measured reactance. With C0 alone both
    give 1/(omega^2 C0).

    Parameters
    ----------
    c0_f : float or Capture or skrf.Network or complex
        Clamped capacitance C0 [F]; or the load itself (a measured one-port, or a complex
        impedance [ohm]) whose reactance is cancelled.
    f_hz : float
        Frequency where the reactance is cancelled [Hz] (usually fs of the element).
    kind : {"shunt", "series"}
        Inductor across the element or in series with it.
    r_source_ohm : float
        Source resistance [ohm], kept for the response.
    load : optional
        The load used for the response and provenance when ``c0_f`` is a number.

    Returns
    -------
    MatchDesign

    Raises
    ------
    ValueError
        When the load is inductive at ``f_hz`` (an inductor cannot cancel it).

    References
    ----------
    .. [1] Methods sheet section 8.2: Lp = 1/(omega^2 C0); series Ls = -Im Z(f)/omega
       (common practice, no source).
    """
    f = _check_f(f_hz)
    w = 2.0 * np.pi * f
    if kind not in ("shunt", "series"):
        raise ValueError(f"kind must be 'shunt' or 'series', got {kind!r}")
    from_load = not (np.ndim(c0_f) == 0 and np.isreal(c0_f) and not hasattr(c0_f, "network")
                     and not hasattr(c0_f, "frequency"))
    if from_load:
        load = c0_f
        z = _z_at(load, f)
        if kind == "shunt":
            b = (1.0 / z).imag
            if b <= 0:
                raise ValueError(
                    f"the load is inductive at {quantity(f, 'Hz', digits=6)} (Im Y = "
                    f"{quantity(b, 'S')}): a shunt inductor "
                    "cannot cancel it; choose a frequency where the element is capacitive")
            val = 1.0 / (w * b)
            basis = f"measured susceptance Im Y = {quantity(b, 'S')} at {quantity(f, 'Hz', digits=6)}"
        else:
            if z.imag >= 0:
                raise ValueError(
                    f"the load is inductive at {quantity(f, 'Hz', digits=6)} (Im Z = "
                    f"{quantity(z.imag, 'Ω')}): a series "
                    "inductor cannot cancel it; choose a frequency where it is capacitive")
            val = -z.imag / w
            basis = f"measured reactance Im Z = {quantity(z.imag, 'Ω')} at {quantity(f, 'Hz', digits=6)}"
    else:
        c0 = float(c0_f)
        if not (np.isfinite(c0) and c0 > 0):
            raise ValueError(f"c0_f must be a capacitance > 0 F, got {c0_f!r}")
        val = 1.0 / (w * w * c0)
        basis = f"C0 = {eng(c0, 'F')}"
        z = _z_at(load, f) if load is not None else complex("nan")
    part = Part("L1", "L", kind, val)
    return MatchDesign(
        kind="tuning-inductor",
        title=f"{kind} tuning inductor {eng(val, 'H')} at {eng(f, 'Hz')} ({basis})",
        parts=(part,), r_source_ohm=_check_r(r_source_ohm, "r_source_ohm"), f_design_hz=f,
        z_load_design_ohm=z,
        params={"c0_f": None if from_load else float(c0_f), "f_hz": f, "kind": kind,
                "load": load_name(load) if load is not None else None},
        references=(REF_TUNE,), f_grid_hz=load_grid(load) if load is not None else None,
        notes=("cancels reactance at one frequency only; it does not transform the resistance",),
    )


# ----------------------------------------------------------------------------- transformer


def _turns(n: float, max_turns: int = 20) -> tuple[int, int]:
    """Whole turns (Np, Ns) with Np, Ns <= max_turns closest to ratio n (log error)."""
    best, err = (1, 1), np.inf
    for ns in range(1, max_turns + 1):
        np_ = int(round(n * ns))
        if 1 <= np_ <= max_turns:
            e = abs(np.log(np_ / ns / n))
            if e < err - 1e-12:
                best, err = (np_, ns), e
    return best


def transformer(r_load_ohm, r_source_ohm: float = 50.0, *, f_hz: float | None = None,
                max_turns: int = 20) -> MatchDesign:
    r"""Ideal transformer whose turns ratio matches the load resistance to the source.

    .. math:: Z_p = (N_p/N_s)^2 Z_s, \qquad N_p/N_s = \sqrt{R_0 / R_L}

    Parameters
    ----------
    r_load_ohm : float or Capture or skrf.Network or complex
        Load resistance [ohm], or a load whose real part at ``f_hz`` is matched.
    r_source_ohm : float
        Source resistance R0 [ohm].
    f_hz : float, optional
        Frequency [Hz] where the real part of a complex or measured load is taken.
    max_turns : int
        Largest winding for the suggested whole-turns pair.

    Returns
    -------
    MatchDesign
        One transformer part, primary toward the source; ``turns`` suggests whole turns.

    References
    ----------
    .. [1] Methods sheet section 8.2; ideal transformer impedance ratio (common practice,
       no source).
    """
    rs = _check_r(r_source_ohm, "r_source_ohm")
    load = r_load_ohm
    is_num = np.ndim(load) == 0 and np.isreal(load) and not hasattr(load, "frequency") \
        and not hasattr(load, "network")
    if is_num:
        rl = _check_r(float(np.real(load)), "r_load_ohm")
        z = complex(rl)
        f = float("nan") if f_hz is None else _check_f(f_hz)
    else:
        if f_hz is None:
            raise ValueError("give f_hz: the real part of a complex or measured load is taken there")
        f = _check_f(f_hz)
        z = _z_at(load, f)
        rl = _check_r(z.real, f"Re Z of the load at {quantity(f, 'Hz', digits=6)}")
    n = float(np.sqrt(rs / rl))
    turns = _turns(n, max_turns)
    part = Part("T1", "T", "transformer", n, turns=turns)
    return MatchDesign(
        kind="transformer",
        title=f"ideal transformer Np/Ns = {eng(n, '')} ({quantity(rl, 'Ω')} -> {quantity(rs, 'Ω')})",
        parts=(part,), r_source_ohm=rs, f_design_hz=f, z_load_design_ohm=z,
        params={"r_load_ohm": rl, "r_source_ohm": rs, "f_hz": f_hz,
                "load": None if is_num else load_name(load)},
        references=(REF_XFMR,), f_grid_hz=None if is_num else load_grid(load),
        notes=("ideal: no leakage inductance, magnetising inductance or core loss",
               f"nearest whole turns with at most {max_turns}: {turns[0]}:{turns[1]} "
               f"(ratio {eng(turns[0] / turns[1], '')})"),
    )


def tuned_transformer(load, f_hz: float, kind: str = "shunt", r_source_ohm: float = 50.0,
                      *, max_turns: int = 20) -> MatchDesign:
    """Tuning inductor at the element, then an ideal transformer to the source.

    The inductor cancels the reactance (shunt: susceptance) of ``load`` at ``f_hz``; the
    transformer then matches the remaining resistance to ``r_source_ohm``.

    Parameters
    ----------
    load : Capture or skrf.Network or complex
        The element (measured or as an impedance [ohm]).
    f_hz : float
        Design frequency [Hz].
    kind : {"shunt", "series"}
        Placement of the tuning inductor.
    r_source_ohm : float
        Source resistance [ohm].

    Returns
    -------
    MatchDesign
        Parts T1 (source side) then L1 (element side).

    References
    ----------
    .. [1] Methods sheet section 8.2 (tuning and ideal transformer; common practice, no
       source).
    """
    tune = tuning_inductor(load, f_hz, kind=kind, r_source_ohm=r_source_ohm)
    f = tune.f_design_hz
    z = tune.z_load_design_ohm
    r_after = complex(tune.z_in(z, f)[0]).real
    xf = transformer(r_after, r_source_ohm, max_turns=max_turns)
    return MatchDesign(
        kind="tuned-transformer",
        title=(f"{kind} tuning inductor {eng(tune.parts[0].value, 'H')} + ideal transformer "
               f"Np/Ns = {eng(xf.parts[0].value, '')} at {eng(f, 'Hz')}"),
        parts=(xf.parts[0], tune.parts[0]), r_source_ohm=xf.r_source_ohm, f_design_hz=f,
        z_load_design_ohm=z,
        params={"f_hz": f, "kind": kind, "load": load_name(load),
                "r_after_tuning_ohm": r_after},
        references=(REF_TUNE, REF_XFMR), f_grid_hz=load_grid(load),
        notes=("tuned at one frequency only",) + xf.notes,
    )


# ----------------------------------------------------------------------------- L-network


def _l_solutions(zl: complex, z0: float, topology: str):
    """(topology, sign, X, B) tuples after Pozar section 5.1."""
    rl, xl = zl.real, zl.imag
    out = []
    if topology in ("shunt-load", "all"):
        disc = rl * rl + xl * xl - z0 * rl
        if disc >= 0:
            for sign in (+1, -1):
                b = (xl + sign * np.sqrt(rl / z0) * np.sqrt(disc)) / (rl * rl + xl * xl)
                if abs(b) < 1e-12 / abs(zl):
                    b = 0.0
                # X = 1/B + XL Z0/RL - Z0/(B RL) (Pozar), evaluated as the reactance that
                # cancels Im of (YL + jB)^-1: identical, but without 0/0 when B -> 0.
                x = -(1.0 / (1.0 / zl + 1j * b)).imag
                out.append(("shunt-load", sign, x, b))
        elif topology == "shunt-load":
            raise ValueError(
                f"no shunt-at-load L-network: Re(1/ZL) > 1/R0 for ZL = {complex_quantity(zl, 'Ω')}, "
                f"R0 = {quantity(z0, 'Ω')}")
    if topology in ("series-load", "all"):
        if rl <= z0:
            for sign in (+1, -1):
                x = sign * np.sqrt(rl * (z0 - rl)) - xl
                b = sign * np.sqrt((z0 - rl) / rl) / z0
                out.append(("series-load", sign, x, b))
        elif topology == "series-load":
            raise ValueError(f"no series-at-load L-network: Re ZL = {quantity(rl, 'Ω')} > R0 = "
                             f"{quantity(z0, 'Ω')}")
    return out


def l_network(z_load_ohm, f_hz: float, r_source_ohm: float = 50.0,
              topology: str = "auto") -> list[MatchDesign]:
    r"""Both lossless L-section solutions from a complex load to a real source resistance.

    Load ZL = RL + jXL, source R0. For RL > R0 the shunt element sits next to the load:

    .. math::

        B = \frac{X_L \pm \sqrt{R_L/R_0}\sqrt{R_L^2 + X_L^2 - R_0 R_L}}{R_L^2 + X_L^2},
        \qquad X = \frac{1}{B} + \frac{X_L R_0}{R_L} - \frac{R_0}{B R_L}

    For RL < R0 the series element sits next to the load:

    .. math::

        X = \pm\sqrt{R_L (R_0 - R_L)} - X_L, \qquad B = \pm\frac{\sqrt{(R_0 - R_L)/R_L}}{R_0}

    X > 0 is an inductor X/omega, X < 0 a capacitor -1/(omega X); B > 0 a capacitor
    B/omega, B < 0 an inductor -1/(omega B).

    Parameters
    ----------
    z_load_ohm : complex or Capture or skrf.Network
        Load impedance [ohm] or a measured load (its impedance at ``f_hz``).
    f_hz : float
        Design frequency [Hz].
    r_source_ohm : float
        Source resistance R0 [ohm].
    topology : {"auto", "shunt-load", "series-load", "all"}
        "auto" follows the RL > R0 rule above (two solutions); "all" returns every
        topology that exists for this load (up to four).

    Returns
    -------
    list of MatchDesign
        Parts ordered source first; a zero-valued element is left out.

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, section 5.1 (from
       memory for the equation numbers); methods sheet section 8.1.
    """
    f = _check_f(f_hz)
    w = 2.0 * np.pi * f
    z0 = _check_r(r_source_ohm, "r_source_ohm")
    zl = _z_at(z_load_ohm, f)
    if zl.real <= 0:
        raise ValueError(f"the load has no resistance at {quantity(f, 'Hz', digits=6)} (Re Z = "
                         f"{quantity(zl.real, 'Ω')}); "
                         "a lossless L-network cannot match it")
    if topology == "auto":
        topology = "shunt-load" if zl.real > z0 else "series-load"
    if topology not in ("shunt-load", "series-load", "all"):
        raise ValueError(f"topology must be auto, shunt-load, series-load or all, got {topology!r}")
    designs, seen = [], []
    sols = []
    for topo, sign, x, b in _l_solutions(zl, z0, topology):
        key = (np.round(x / z0, 12), np.round(b * z0, 12), topo if b and x else "")
        if key not in seen:  # a degenerate case (one element) comes out twice
            seen.append(key)
            sols.append((topo, sign, x, b))
    for i, (topo, sign, x, b) in enumerate(sols, start=1):
        if topo == "shunt-load":
            parts = [_reactive_part("1", "series", x, w, "X"), _reactive_part("2", "shunt", b, w, "B")]
        else:
            parts = [_reactive_part("1", "shunt", b, w, "B"), _reactive_part("2", "series", x, w, "X")]
        parts = tuple(p for p in parts if p is not None)
        words = ", ".join(f"{p.placement} {'L' if p.kind == 'L' else 'C'}" for p in parts)
        words = words or "no parts: the load is already matched"
        designs.append(MatchDesign(
            kind="l-network",
            title=f"L-network solution {i} ({topo}, {words}) at {eng(f, 'Hz')}",
            parts=parts, r_source_ohm=z0, f_design_hz=f, z_load_design_ohm=zl,
            params={"f_hz": f, "r_source_ohm": z0, "topology": topo, "sign": sign,
                    "load": load_name(z_load_ohm)},
            references=(REF_L,), f_grid_hz=load_grid(z_load_ohm),
            info={"X_ohm": x, "B_S": b, "loaded_q": abs(x) / min(zl.real, z0)
                  if zl.imag == 0 else float("nan")},
        ))
    return designs
