"""Resonator and component models for fitting, with closed-form start values.

A :class:`Model` bundles a circuit (see :mod:`kit.network.circuits`), its parameter names, the
closed-form start estimates from a measured impedance curve, hard physical bounds and the
derived figures (fs, fp, k_eff, Qm). Models are found by name with
:func:`kit.resonators.registry.get_model`:

========== ==================================================== ==============================
name       circuit                                              parameters
========== ==================================================== ==============================
bvd        C0 parallel (R1 - L1 - C1)                           C0, R1, L1, C1
bvd-loss   Rs - [ (R0 - C0) parallel (R1 - L1 - C1) ]           C0, R0, Rs, R1, L1, C1
multi      C0 parallel N branches (Rn - Ln - Cn)                C0, R1, L1, C1, R2, L2, C2, ...
inductor   (Rs - L) parallel Cp                                 L, Rs, Cp
capacitor  ESR - ESL - C                                        C, ESR, ESL
plate      thickness-mode plate, free or loaded (modes > 1:     kt, fp_hz, C0, qm, tan_delta
           extra branches Rn-Ln-Cn in parallel), series Rs      Rs (+ R2, L2, C2, ...)
bar        length-extensional bar (k31 mode)                    CT, fs_hz, k31, qm, tan_delta
========== ==================================================== ==============================

The physical models live in :mod:`kit.resonators.physical`, the registry by name in
:mod:`kit.resonators.registry`.

References
----------
.. [1] ANSI/IEEE Std 176-1987, *IEEE Standard on Piezoelectricity*: BVD identities
   fs = 1/(2 pi sqrt(L1 C1)), k_eff^2 = (fp^2 - fs^2)/fp^2, Qm = 1/(2 pi fs R1 C1)
   (clause numbers from memory); IEC 60050-561:2014, IEV 561-01-66, for
   fp = fs sqrt(1 + C1/C0). Summarised in the methods sheet, sections 1.2, 1.3, 1.7, 2.1.
.. [2] Closed-form start values (fs from the conductance maximum, fp from the resistance
   maximum, C from the low-frequency reactance, R1 = 1/Gmax): methods sheet section 2.2,
   common practice, no source.
.. [3] Modified BVD (R0 in series with C0, series electrode resistance Rs): Larson et al.,
   IEEE Ultrasonics Symposium 2000 (from memory).
.. [4] Real inductor (Rs + j omega L) parallel Cp and real capacitor ESR + j omega ESL +
   1/(j omega C): methods sheet section 10, common practice.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from kit.network.circuits import C, Circuit, L, R, parallel, series
from kit.resonators.circle import circle_start
from kit.resonators.peaks import (
    conductance_peak,
    drop_nonfinite,
    half_power_points,
    peak_by_reciprocal,
    q_half_power,
    resistance_peak,
    sort_merge,
    vertex_min,
)

__all__ = ["Model", "StartError", "bvd_figures", "bvd_loss_model", "bvd_model", "capacitor_model",
           "clean_fz", "estimate_bvd", "inductor_model", "multi_model", "start_peak_q"]

class StartError(ValueError):
    """The closed-form start values could not be found in the data (reason in the message)."""


@dataclass(frozen=True)
class Model:
    """A fittable model: circuit, parameter names, start values, bounds, derived figures.

    Attributes
    ----------
    name : str
        Registry name, e.g. "bvd".
    circuit : Circuit
        Gives Z and dZ/dp (analytic where possible).
    params : tuple of str
        Fitted parameter names (SI units).
    start : callable
        ``start(f_hz, z) -> dict`` of closed-form start values; raises :class:`StartError`.
    derived : callable
        ``derived(params) -> dict`` with at least "fs_hz", "fp_hz", "k_eff", "qm" (NaN where
        the figure does not apply).
    bounds : dict
        Hard physical bounds ``name -> (low, high)``, in SI; default (0, inf).
    options : dict
        Construction options (e.g. ``modes``, acoustic loads), kept for round trips.
    analytic_jacobian : bool
        Whether dZ/dp is analytic (else central differences).
    alt_starts : callable, optional
        ``alt_starts(f_hz, z) -> list of dict`` of further start values, tried before
        ``start`` (e.g. the admittance circle, :mod:`kit.resonators.circle`); None entries
        are skipped.
    """

    name: str
    circuit: Circuit
    params: tuple[str, ...]
    start: Callable[[np.ndarray, np.ndarray], dict]
    derived: Callable[[dict], dict]
    bounds: dict = field(default_factory=dict)
    options: dict = field(default_factory=dict)
    analytic_jacobian: bool = True
    description: str = ""
    alt_starts: Callable[[np.ndarray, np.ndarray], list] | None = None

    def starts(self, f_hz, z) -> list[dict]:
        """Every start value of the model, in the order a fit tries them.

        Raises
        ------
        StartError
            When no start value can be found (the message of :attr:`start`).
        """
        out = []
        with np.errstate(all="ignore"):
            try:
                out = [p for p in (self.alt_starts(f_hz, z) if self.alt_starts else ()) if p]
            except (ArithmeticError, ValueError):  # an alternative only: the closed forms follow
                out = []
            try:
                out.append(self.start(f_hz, z))
            except (ArithmeticError, ValueError) as exc:  # StartError is a ValueError
                if not out:
                    raise exc if isinstance(exc, StartError) else StartError(
                        f"the closed forms failed on these data ({exc})") from exc
        return out

    def z(self, f_hz, params) -> np.ndarray:
        """Model impedance [ohm] at ``f_hz`` [Hz]."""
        return self.circuit.z(f_hz, params)

    def z_and_jac(self, f_hz, params):
        """Model impedance [ohm] and dZ/dp for every parameter."""
        return self.circuit.z_and_jac(f_hz, params)


# ---------------------------------------------------------------------------------------
# closed-form helpers (methods sheet section 2.2; common practice, no source)


def bvd_figures(c0: float, r1: float, l1: float, c1: float) -> dict:
    """fs, fp, k_eff and Qm of a BVD circuit (lossless-limit identities).

    Parameters
    ----------
    c0, r1, l1, c1 : float
        Static capacitance [F], motional resistance [ohm], inductance [H], capacitance [F].

    Returns
    -------
    dict
        "fs_hz" = 1/(2 pi sqrt(L1 C1)) [Hz], "fp_hz" = fs sqrt(1 + C1/C0) [Hz],
        "k_eff" = sqrt(C1/(C0 + C1)) [1], "qm" = 1/(2 pi fs R1 C1) [1].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987 (from memory for the clause); IEC 60050-561:2014,
       IEV 561-01-66 (fp); methods sheet sections 1.3, 1.7 and 2.1.
    """
    fs = 1.0 / (2 * np.pi * np.sqrt(l1 * c1))
    return {"fs_hz": fs, "fp_hz": fs * np.sqrt(1 + c1 / c0),
            "k_eff": np.sqrt(c1 / (c0 + c1)), "qm": 1.0 / (2 * np.pi * fs * r1 * c1)}


def clean_fz(f_hz, z) -> tuple[np.ndarray, np.ndarray]:
    """Finite, non-zero impedance points sorted by frequency, repeated frequencies averaged.

    The same cleaning as :func:`kit.resonance` (:func:`kit.resonators.peaks.clean_trace`),
    plus dropping Z = 0 (no admittance), so that start values and the characteristic
    frequencies are read from the same points.

    Returns
    -------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz].
    z : numpy.ndarray of complex
        Impedance [ohm].
    """
    f, z, _ = drop_nonfinite(f_hz, np.asarray(z, dtype=complex))
    f, z, _ = sort_merge(f, z)
    ok = z != 0
    return f[ok], z[ok]


def start_peak_q(f_hz, g, i: int, base: float = 0.0,
                 default_q: float = 100.0) -> tuple[float, float, float]:
    """Peak frequency, height and half-power Q of a conductance peak, for start values.

    Parameters
    ----------
    f_hz : numpy.ndarray
        Increasing frequencies [Hz].
    g : numpy.ndarray
        Conductance [S].
    i : int
        Index of the discrete peak.
    base : float
        Baseline under the peak [S] (a neighbouring mode or dielectric loss).
    default_q : float
        Q returned when the half-power points are not inside the span [1] (a start value
        only; common practice, no source).

    Returns
    -------
    f0_hz, g_peak_s, q : float
        From :func:`kit.resonators.peaks.peak_by_reciprocal` and
        :func:`kit.resonators.peaks.half_power_points`, Q = f0/(f2 - f1).

    References
    ----------
    .. [1] Methods sheet sections 1.7(b) and 2.2; ANSI/IEEE Std 177-1966 (from memory).
    """
    pk = peak_by_reciprocal(f_hz, np.asarray(g) - base, i)   # the peak above the baseline
    g_peak = pk.value + base
    pts = half_power_points(f_hz, g, i, g_peak, base)
    q = q_half_power(pk.f_hz, *pts) if pts is not None else default_q
    return pk.f_hz, g_peak, q


def estimate_bvd(f_hz, z) -> dict:
    """Closed-form BVD start values from a measured impedance curve.

    fs from the conductance maximum (parabolic sub-step), R1 = 1/Gmax, fp from the
    resistance maximum above fs, C0 from the reactance at the span ends corrected for the
    motional branch, C1 = C0 (fp^2/fs^2 - 1), L1 = 1/(omega_s^2 C1). When fp is not inside the
    span, C1 comes from the half-power width of G (Qm = fs/(f2 - f1)).

    Returns
    -------
    dict
        "C0" [F], "R1" [ohm], "L1" [H], "C1" [F].

    Raises
    ------
    StartError
        When no conductance peak lies inside the span.

    References
    ----------
    .. [1] Methods sheet section 2.2 (steps 1-6) and 1.7(b); common practice, no source.
    """
    f, z = clean_fz(f_hz, z)
    if len(f) < 5:
        raise StartError("fewer than 5 usable points")
    y = 1.0 / z
    g = y.real
    pk = conductance_peak(f, z)
    if pk is None:
        raise StartError("the conductance maximum (series resonance) is at the edge of the "
                         "span; widen the span around the resonance")
    i, fs, gmax, _refined = pk
    if not gmax > 0:
        raise StartError("no positive conductance peak")
    r1 = 1.0 / gmax
    pk_p = resistance_peak(f, z, after=i)
    fp = pk_p.f_hz if pk_p is not None else None
    ws = 2 * np.pi * fs
    if fp is not None and fp > fs:
        ratio = (fp / fs) ** 2 - 1.0
        ests = []
        for k in (0, len(f) - 1):
            x2 = (f[k] / fs) ** 2
            fac = 1.0 + ratio / (1.0 - x2)
            c0k = y[k].imag / (2 * np.pi * f[k] * fac)
            if c0k > 0 and np.isfinite(c0k):
                ests.append((abs(1 - x2), c0k))
        if ests:
            c0 = max(ests)[1]
            c1 = ratio * c0
            return {"C0": c0, "R1": r1, "L1": 1.0 / (ws**2 * c1), "C1": c1}
    q = start_peak_q(f, g, i)[2]
    c1 = 1.0 / (ws * q * r1)
    l1 = 1.0 / (ws**2 * c1)
    k = 0 if abs(f[0] - fs) > abs(f[-1] - fs) else len(f) - 1
    w = 2 * np.pi * f[k]
    ym = 1.0 / (r1 + 1j * w * l1 + 1.0 / (1j * w * c1))
    c0 = (y[k].imag - ym.imag) / w
    if not c0 > 0:
        c0 = max(y[k].imag / w, c1) if y[k].imag > 0 else c1
    return {"C0": c0, "R1": r1, "L1": l1, "C1": c1}


def _estimate_multi(f_hz, z, modes: int) -> dict:
    """Start values for N branches from the N most prominent conductance peaks."""
    from scipy.signal import find_peaks

    f, z = clean_fz(f_hz, z)
    y = 1.0 / z
    g = y.real
    peaks, props = find_peaks(g, prominence=0)
    if len(peaks) < modes:
        raise StartError(f"found {len(peaks)} conductance peak(s) inside the span, "
                         f"{modes} mode(s) asked; widen the span or lower modes")
    order = np.argsort(props["prominences"])[::-1][:modes]
    chosen = sorted(zip(peaks[order], props["prominences"][order]))
    out: dict[str, float] = {}
    motional = np.zeros_like(y)
    for n, (i, prom) in enumerate(chosen, start=1):
        base = g[i] - prom
        fn, _gpk, q = start_peak_q(f, g, int(i), base)
        rn = 1.0 / max(prom, 1e-300)
        wn = 2 * np.pi * fn
        cn = 1.0 / (wn * q * rn)
        ln = 1.0 / (wn**2 * cn)
        out.update({f"R{n}": rn, f"L{n}": ln, f"C{n}": cn})
        w = 2 * np.pi * f
        motional = motional + 1.0 / (rn + 1j * w * ln + 1.0 / (1j * w * cn))
    w = 2 * np.pi * f
    c0s = (y.imag - motional.imag) / w
    c0 = float(np.median(c0s))
    if not c0 > 0:
        c0 = float(np.median(np.abs(y.imag) / w))
    out = {"C0": c0, **out}
    return out


def bvd_model() -> Model:
    """The Butterworth-Van Dyke model "bvd" (registry entry)."""
    circ = parallel(C("C0"), series(R("R1"), L("L1"), C("C1")))
    return Model("bvd", circ, ("C0", "R1", "L1", "C1"), estimate_bvd,
                 lambda p: bvd_figures(p["C0"], p["R1"], p["L1"], p["C1"]),
                 description="Butterworth-Van Dyke: C0 parallel (R1 - L1 - C1)",
                 alt_starts=lambda f, z: [circle_start(f, z)])


def bvd_loss_model() -> Model:
    """The modified BVD model "bvd-loss" (registry entry)."""
    circ = series(R("Rs"), parallel(series(R("R0"), C("C0")),
                                    series(R("R1"), L("L1"), C("C1"))))

    def lossy(p):
        if p is None:
            return None
        fp = bvd_figures(p["C0"], p["R1"], p["L1"], p["C1"])["fp_hz"]
        return {"C0": p["C0"], "R0": 0.005 / (2 * np.pi * fp * p["C0"]), "Rs": 0.1 * p["R1"],
                "R1": 0.9 * p["R1"], "L1": p["L1"], "C1": p["C1"]}

    return Model("bvd-loss", circ, ("C0", "R0", "Rs", "R1", "L1", "C1"),
                 lambda f, z: lossy(estimate_bvd(f, z)),
                 lambda p: bvd_figures(p["C0"], p["R1"], p["L1"], p["C1"]),
                 description="modified BVD: Rs - [(R0 - C0) parallel (R1 - L1 - C1)]",
                 alt_starts=lambda f, z: [lossy(circle_start(f, z))])


def multi_model(modes: int) -> Model:
    """C0 parallel ``modes`` motional branches, "multi" (registry entry)."""
    branches = [series(R(f"R{n}"), L(f"L{n}"), C(f"C{n}")) for n in range(1, modes + 1)]
    circ = parallel(C("C0"), *branches)
    names = ("C0",) + tuple(f"{s}{n}" for n in range(1, modes + 1) for s in "RLC")

    def derived(p):
        out = bvd_figures(p["C0"], p["R1"], p["L1"], p["C1"])
        for n in range(2, modes + 1):
            fig = bvd_figures(p["C0"], p[f"R{n}"], p[f"L{n}"], p[f"C{n}"])
            out.update({f"fs{n}_hz": fig["fs_hz"], f"qm{n}": fig["qm"]})
        return out

    return Model("multi", circ, names, lambda f, z: _estimate_multi(f, z, modes), derived,
                 options={"modes": modes},
                 description=f"C0 parallel {modes} motional branch(es) Rn - Ln - Cn; "
                             "fs, fp, k_eff, qm are those of branch 1 (lowest frequency)")


def inductor_model() -> Model:
    """The real inductor model "inductor" (registry entry)."""
    circ = parallel(series(R("Rs"), L("L")), C("Cp"))

    def start(f, z):
        f, z = clean_fz(f, z)
        i = int(np.argmax(z.real))
        lo = 2 * np.pi * f[0]
        if 0 < i < len(f) - 1:
            _i, fsrf, rmax, _ok = peak_by_reciprocal(f, z.real, i)
            x2 = (f[0] / fsrf) ** 2
            ind = z[0].imag * (1 - x2) / lo
            cp = 1.0 / ((2 * np.pi * fsrf) ** 2 * ind)
            rs = ind / (rmax * cp)
        else:
            ind = z[0].imag / lo
            cp = 1.0 / ((2 * np.pi * 3 * f[-1]) ** 2 * abs(ind))
            rs = max(z[0].real, 1e-3 * abs(z[0].imag))
        if not (ind > 0 and rs > 0):
            raise StartError("no inductive reactance at the low end of the span")
        return {"L": ind, "Rs": rs, "Cp": cp}

    def derived(p):
        srf = 1.0 / (2 * np.pi * np.sqrt(p["L"] * p["Cp"]))
        return {"fs_hz": srf, "srf_hz": srf, "fp_hz": np.nan, "k_eff": np.nan,
                "qm": np.nan, "q_at_srf_ohmic": 2 * np.pi * srf * p["L"] / p["Rs"]}

    return Model("inductor", circ, ("L", "Rs", "Cp"), start, derived,
                 description="real inductor: (Rs - L) parallel Cp; fs_hz = self-resonance")


def capacitor_model() -> Model:
    """The real capacitor model "capacitor" (registry entry)."""
    circ = series(R("ESR"), L("ESL"), C("C"))

    def start(f, z):
        f, z = clean_fz(f, z)
        mag = np.abs(z)
        i = int(np.argmin(mag))
        if 0 < i < len(f) - 1:
            fsrf = vertex_min(f, mag**2, i)[0]
            esr = max(z[i].real, 1e-6)
        else:
            fsrf = 3 * f[-1]
            esr = max(float(np.min(z.real)), 1e-6)
        w0 = 2 * np.pi * f[0]
        cap = -(1 - (f[0] / fsrf) ** 2) / (w0 * z[0].imag)
        if not cap > 0:
            raise StartError("no capacitive reactance at the low end of the span")
        return {"C": cap, "ESR": esr, "ESL": 1.0 / ((2 * np.pi * fsrf) ** 2 * cap)}

    def derived(p):
        srf = 1.0 / (2 * np.pi * np.sqrt(p["ESL"] * p["C"]))
        return {"fs_hz": srf, "srf_hz": srf, "fp_hz": np.nan, "k_eff": np.nan, "qm": np.nan}

    return Model("capacitor", circ, ("C", "ESR", "ESL"), start, derived,
                 description="real capacitor: ESR - ESL - C; fs_hz = self-resonance")
