"""Two-element match optimised over a band instead of at one frequency.

References
----------
.. [1] Starting points: the L-section solutions of D. M. Pozar, *Microwave Engineering*,
   4th ed., Wiley, 2012, section 5.1 (from memory for the section).
.. [2] J. A. Nelder and R. Mead, "A simplex method for function minimization", Computer
   Journal 7(4), 308-313 (1965) (from memory), as implemented by scipy.optimize.minimize.
"""

from __future__ import annotations

import numpy as np

from kit.match.circuit import MatchDesign, Part, load_grid, load_name, load_z
from kit.match.designs import REF_L, l_network
from kit.match.response import ladder_waves, return_loss_db
from kit.units import eng

OBJECTIVES = ("return-loss", "gain")


def _band_grid(load, f_lo: float, f_hi: float, n_points: int) -> np.ndarray:
    f = np.linspace(f_lo, f_hi, n_points)
    grid = load_grid(load)
    if grid is not None:
        inside = grid[(grid >= f_lo) & (grid <= f_hi)]
        f = np.union1d(f, inside)
    return f


def _zin_fast(parts, f, zl, q_l, q_c) -> np.ndarray:
    """Input impedance by folding the ladder from the load (no matrices)."""
    z = zl
    for p in reversed(parts):
        if p.kind == "T":
            z = p.value**2 * z
        elif p.placement == "series":
            z = z + p.impedance(f, q_l, q_c)
        else:
            z = 1.0 / (1.0 / z + 1.0 / p.impedance(f, q_l, q_c))
    return z


def _score(parts, f, zl, r0, objective, q_l, q_c) -> float:
    if objective == "return-loss":
        with np.errstate(divide="ignore", invalid="ignore"):
            z_in = _zin_fast(parts, f, zl, q_l, q_c)
            val = float(np.max(np.abs((z_in - r0) / (z_in + r0))))
    else:
        design = MatchDesign("band", "", tuple(parts), r0)
        _, nodes, _ = ladder_waves(design, zl, f, 1.0, r0, q_l, q_c)
        v_l, i_l = nodes[-1]
        delivered = np.real(v_l * np.conj(i_l)) * 4.0 * r0
        val = -float(np.min(delivered))
    return val if np.isfinite(val) else 1e9


def band(load, f_lo_hz: float, f_hi_hz: float, r_source_ohm: float = 50.0, *,
         objective: str = "return-loss", q_inductor: float | None = None,
         q_capacitor: float | None = None, n_points: int = 101,
         n_starts: int = 5) -> MatchDesign:
    """Two-element (L-section) match whose values are optimised over a band.

    The L-section solutions at ``n_starts`` frequencies across the band (every topology that
    exists there) are used as starting points; from each, the two part values are varied
    (in log scale, Nelder-Mead) to minimise the worst reflection over the band
    (``objective="return-loss"``) or to maximise the minimum transducer gain, i.e. the
    power delivered to the element over the available power (``objective="gain"``; differs
    from the first only when the parts have a finite Q). The best result is kept.

    Parameters
    ----------
    load : Capture, skrf.Network, complex, array_like or callable
        The element.
    f_lo_hz, f_hi_hz : float
        Band edges [Hz].
    r_source_ohm : float
        Source resistance [ohm].
    objective : {"return-loss", "gain"}
        What is optimised (see above).
    q_inductor, q_capacitor : float, optional
        Part Q used during optimisation (None: lossless).
    n_points : int
        Frequencies evaluated across the band (the capture's own points in the band are
        added).
    n_starts : int
        Number of frequencies whose L-section solutions seed the search.

    Returns
    -------
    MatchDesign
        ``info`` holds ``worst_rl_db``, ``min_gain_db``, the starting design's title and
        the worst return loss of the best single-frequency L-network for comparison.

    Notes
    -----
    A local optimiser: the result is the best of the starts, not a proven global optimum.
    Compare it with :func:`kit.match.bode_fano` for what any network could reach.

    References
    ----------
    .. [1] Pozar, *Microwave Engineering*, 4th ed., section 5.1 (starting points; from
       memory for the section); Nelder and Mead (1965) via scipy.optimize.minimize.
    """
    from scipy.optimize import minimize

    if objective not in OBJECTIVES:
        raise ValueError(f"objective must be one of {OBJECTIVES}, got {objective!r}")
    f_lo, f_hi = float(f_lo_hz), float(f_hi_hz)
    if not (0 < f_lo < f_hi):
        raise ValueError(f"need 0 < f_lo_hz < f_hi_hz, got {f_lo_hz!r}, {f_hi_hz!r}")
    r0 = float(r_source_ohm)
    f = _band_grid(load, f_lo, f_hi, n_points)
    zl = load_z(load, f)
    starts = []
    for fk in np.geomspace(f_lo, f_hi, n_starts):
        try:
            starts += l_network(load, fk, r0, topology="all")
        except ValueError:
            continue
    if not starts:
        raise ValueError("no L-network exists at any starting frequency in the band (the load "
                         "has no resistance there); a band match cannot be designed")
    best = None
    best_point = np.inf
    # keep the two best starts of each topology (placement and kind of each part)
    scored: dict[tuple, list] = {}
    for d in starts:
        s0 = _score(d.parts, f, zl, r0, objective, q_inductor, q_capacitor)
        if objective == "return-loss":
            best_point = min(best_point, s0)
        key = tuple((p.placement, p.kind) for p in d.parts)
        scored.setdefault(key, []).append((s0, d))
    chosen = [x for v in scored.values() for x in sorted(v, key=lambda t: t[0])[:2]]
    for s0, d in chosen:
        parts = d.parts

        def fun(logv, parts=parts):
            new = [Part(p.name, p.kind, p.placement, float(np.exp(x)))
                   for p, x in zip(parts, logv)]
            return _score(new, f, zl, r0, objective, q_inductor, q_capacitor)

        x0 = np.log([p.value for p in parts])
        res = minimize(fun, x0, method="Nelder-Mead",
                       options={"xatol": 1e-5, "fatol": 1e-8, "maxiter": 1000})
        val, x = (res.fun, res.x) if res.fun <= s0 else (s0, x0)
        if best is None or val < best[0]:
            best = (val, d, x, res)
    val, d0, x, res = best
    parts = tuple(Part(p.name, p.kind, p.placement, float(np.exp(v)))
                  for p, v in zip(d0.parts, x))
    design = MatchDesign("band", "", parts, r0)
    z_in, nodes, _ = ladder_waves(design, zl, f, 1.0, r0, q_inductor, q_capacitor)
    g = (z_in - r0) / (z_in + r0)
    v_l, i_l = nodes[-1]
    gain = np.real(v_l * np.conj(i_l)) * 4.0 * r0
    worst_rl = float(np.min(return_loss_db(g)))
    words = ", ".join(f"{p.placement} {p.kind}" for p in parts)
    fc = float(np.sqrt(f_lo * f_hi))
    return MatchDesign(
        kind="band",
        title=(f"band match ({words}) over {eng(f_lo, 'Hz')}..{eng(f_hi, 'Hz')}: worst return "
               f"loss {worst_rl:.2f} dB"),
        parts=parts, r_source_ohm=r0, f_design_hz=fc, z_load_design_ohm=complex(load_z(load, fc)[0]),
        params={"f_lo_hz": f_lo, "f_hi_hz": f_hi, "objective": objective,
                "q_inductor": q_inductor, "q_capacitor": q_capacitor, "n_points": int(f.size),
                "n_starts": n_starts, "load": load_name(load)},
        references=(REF_L, "Nelder-Mead simplex (Nelder and Mead, Computer Journal 7, 1965, "
                    "from memory) via scipy.optimize.minimize"),
        notes=("optimised numerically from L-network starting points; a local optimum, not a "
               "proven global one",),
        f_grid_hz=load_grid(load),
        info={"worst_rl_db": worst_rl, "min_gain_db": float(10 * np.log10(np.min(gain))),
              "start": d0.title, "optimizer_success": bool(res.success),
              "point_design_worst_rl_db": float(-20 * np.log10(best_point))
              if np.isfinite(best_point) else float("nan")},
    )
