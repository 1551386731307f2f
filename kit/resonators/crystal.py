r"""Crystals from the magnitude of S21: a series-through capture whose phase cannot be trusted.

A crystal mounted in series between port 1 and port 2 gives, for equal real port
references Z0,

.. math:: S_{21} = \frac{2 Z_0}{2 Z_0 + Z}, \qquad
          Z = \left(j\omega C_0 + \frac{1}{R_1 + j\omega L_1 + 1/(j\omega C_1)}\right)^{-1}

(the S21 of a series impedance, from its ABCD matrix [[1, Z], [0, 1]] and the ABCD-to-S
conversion; methods sheet sections 5 and 6.1). When the fixture is not removed, the phase
of S21 is not that of the crystal: the impedance 2 Z0 (1 - S21)/S21 then shows negative
resistance near resonance and a resistive, not capacitive, path away from it, and every
complex route (BVD fit, impedance extrema) reads nonsense. The magnitude still holds the
crystal: at series resonance the crystal is resistive, so the peak gives R1 from
|S21| = 2 Z0 / (2 Z0 + R1); the loaded half-power width gives
Q_L = omega_s L1 / (R1 + 2 Z0), hence L1 and C1 (the unloaded Q_m = Q_L (R1 + 2 Z0)/R1);
and the minimum above fs (the anti-resonance) gives C0 = C1 / ((fp/fs)^2 - 1).

:func:`magnitude_fit` fits |S21| of that model to the data by least squares and returns a
:class:`kit.resonators.fitting.FitResult` (flag ``"magnitude-only"``); :func:`needs_magnitude`
tells when the complex route cannot be trusted; :func:`magnitude_resonance` reads fs and fp
from the extrema of |S21| alone.

References
----------
.. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, Table 4.2 (ABCD to S
   conversion; from memory for the table number); methods sheet sections 5 and 6.1.
.. [2] ANSI/IEEE Std 177-1966 and IEC 60444-1 (series resonance resistance from the
   transmission of a crystal between two resistive terminations; from memory for the
   clauses); methods sheet section 1.9: R_r = 2 R_T (1/T - 1).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from kit.capture import CaptureError
from kit.network.coerce import name_of, network_of, reference_ohm
from kit.network.immittance import z_from_series_through
from kit.resonators.models import bvd_figures
from kit.resonators.peak_errors import GRID_FACTOR
from kit.resonators.peaks import clean_trace, half_power_points, peak_by_reciprocal, vertex_min
from kit.resonators.registry import get_model
from kit.results import Result, nan_if_none
from kit.units import unit_of

__all__ = ["MagnitudeResonance", "complex_route_flags", "magnitude_fit",
           "magnitude_resonance", "needs_magnitude", "s21_series"]

#: Share of the points with significant negative resistance that condemns the complex route.
NEGATIVE_SHARE = 0.002
#: Flags that make the magnitude fit's ``ok`` False (those of ``kit.fit``'s severe list that
#: can arise here).
SEVERE = ("not-converged", "poor-fit", "no-uncertainty", "no-data")
#: Median |cos(arg Z)| above which the impedance away from resonance is called resistive.
RESISTIVE_COS = 0.5


def s21_series(z_ohm, z0_ohm: float) -> np.ndarray:
    """S21 of an impedance in series between two ports of equal real reference [1].

    Parameters
    ----------
    z_ohm : array_like of complex
        Series impedance [ohm].
    z0_ohm : float
        Reference impedance of both ports [ohm].

    Returns
    -------
    numpy.ndarray of complex
        S21 = 2 Z0 / (2 Z0 + Z) [1].

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, Table 4.2 (ABCD of a
       series impedance and ABCD to S; from memory for the table number); methods sheet
       sections 5 and 6.1.
    """
    return 2.0 * z0_ohm / (2.0 * z0_ohm + np.asarray(z_ohm, dtype=complex))


def _s21_trace(obj, span_hz=None):
    """(f, S21, flags, z0, name, path) of a two-port capture, cleaned by the one reader."""
    ntwk = network_of(obj, "the magnitude route")
    path = getattr(obj, "path", None)
    if ntwk.nports != 2:
        raise CaptureError(f"the magnitude route needs a two-port capture (series-through), "
                           f"got {ntwk.nports} port(s)", path)
    z01, z02 = reference_ohm(obj, 1), reference_ohm(obj, 2)
    f, s21, flags, _ = clean_trace(ntwk.f, ntwk.s[:, 1, 0], span_hz, min_points=7, path=path)
    if not math.isclose(z01, z02, rel_tol=1e-9):
        flags.append(f"unequal-port-references:{z01:g}/{z02:g}")
    return f, s21, flags, 0.5 * (z01 + z02), name_of(obj), path


def _noise_rms(v) -> float:
    """Robust noise of a sampled trace from its second differences [unit of v].

    For white noise of standard deviation sigma the second difference has standard
    deviation sigma sqrt(6); the median absolute value (times 1.4826) makes it robust to
    the few points of a sharp resonance.

    References
    ----------
    .. [1] J. von Neumann, "Distribution of the ratio of the mean square successive
       difference to the variance", Ann. Math. Statist. 12(4), 367-395 (1941) (difference
       estimators of the noise; from memory); MAD scale 1.4826: common practice, no source.
    """
    d2 = np.diff(np.asarray(v, dtype=float), 2)
    return float(1.4826 * np.median(np.abs(d2)) / math.sqrt(6.0)) if len(d2) else math.nan


def complex_route_flags(capture, method: str = "series-through",
                        span_hz=None) -> tuple[str, ...]:
    """Why the complex impedance of a series-through capture cannot be trusted (empty: it can).

    Parameters
    ----------
    capture : Capture or skrf.Network
        A two-port capture.
    method : str
        The impedance method; only "series-through" is examined (others give ``()``).
    span_hz : (float, float), optional
        Examine only this range [Hz], the one the analysis reads.

    Returns
    -------
    tuple of str
        ``"negative-resistance:N"`` when Re Z < -3 sigma on at least 0.2 % of the points
        (sigma = 2 Z0 sigma_S / |S21|^2 from the noise sigma_S of S21, :func:`_noise_rms`),
        and ``"resistive-off-resonance"`` when the median |cos(arg Z)| exceeds 0.5 (a
        crystal away from resonance is a capacitor, |cos| near 0). Both thresholds are
        choices of this kit (common practice, no source).

    References
    ----------
    .. [1] Methods sheet section 5 (series-through Z = 2 Z0 (1 - S21)/S21); passivity,
       Re Z >= 0, of a crystal: common practice, no source.
    """
    if method != "series-through":
        return ()
    f, s21, _, z0, _, _ = _s21_trace(capture, span_hz)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        z = z_from_series_through(s21, z0, f)
    sigma_s = max(_noise_rms(s21.real), _noise_rms(s21.imag), 1e-12)
    with np.errstate(all="ignore"):
        sigma_z = 2.0 * z0 * sigma_s / np.abs(s21) ** 2
        neg = int(np.count_nonzero(z.real < -3.0 * sigma_z))
        cos = float(np.nanmedian(np.abs(np.cos(np.angle(z)))))
    out = []
    if neg >= max(3, NEGATIVE_SHARE * len(f)):
        out.append(f"negative-resistance:{neg}")
    if cos > RESISTIVE_COS:
        out.append("resistive-off-resonance")
    return tuple(out)


def needs_magnitude(capture, method: str = "series-through", span_hz=None) -> bool:
    """True when a series-through capture must be read from |S21| alone.

    See :func:`complex_route_flags` for the tests (negative resistance over a significant
    share of the span, or a resistive path away from resonance: the fixture is not removed).
    """
    return bool(complex_route_flags(capture, method, span_hz))


# --------------------------------------------------------------------------- extrema


@dataclass(frozen=True)
class MagnitudeResonance(Result):
    """Series and parallel resonance read from the extrema of |S21| (series-through).

    Attributes
    ----------
    fs_hz : float
        Frequency of maximum |S21| [Hz] (vertex of 1/|S21|^2 through the maximum sample).
    fp_hz : float
        Frequency of minimum |S21| above fs [Hz]; NaN when the span ends before it.
    s21_peak, s21_min : float
        |S21| at fs and at fp [1].
    r1_ohm : float
        2 Z0 (1/|S21|peak - 1) [ohm]: the crystal is resistive at series resonance.
    step_hz : float
        Median frequency step [Hz], the resolution of fs and fp.
    name : str
    flags : tuple of str
        Always ``"magnitude-extrema"``; also ``"no-anti-resonance"``, cleaning flags.
    reason : str
        Why ``ok`` is False.
    """

    fs_hz: float
    fp_hz: float
    s21_peak: float
    s21_min: float
    r1_ohm: float
    step_hz: float
    name: str = ""
    flags: tuple[str, ...] = ()
    reason: str = ""

    _ROWS = (("fs_hz", "fs (max |S21|)", unit_of("fs_hz")),
             ("fp_hz", "fp (min |S21| above fs)", unit_of("fp_hz")),
             ("s21_peak", "|S21| at fs", ""), ("r1_ohm", "R1", unit_of("r1_ohm")),
             ("step_hz", "frequency step", unit_of("step_hz")),
             ("fs_stderr_hz", "standard error of fs and fp", unit_of("fs_stderr_hz")))

    @property
    def fs_stderr_hz(self) -> float:
        """Standard uncertainty of fs [Hz]: one frequency step over sqrt(12), the reading of an
        extremum known to one step (GUM, JCGM 100:2008, 4.3.7)."""
        return GRID_FACTOR * self.step_hz

    @property
    def fp_stderr_hz(self) -> float:
        """Standard uncertainty of fp [Hz] (as for fs; NaN without an anti-resonance)."""
        return GRID_FACTOR * self.step_hz if math.isfinite(self.fp_hz) else math.nan

    def __post_init__(self):
        for key in ("fs_hz", "fp_hz", "s21_peak", "s21_min", "r1_ohm", "step_hz"):
            object.__setattr__(self, key, nan_if_none(getattr(self, key)))
        object.__setattr__(self, "flags", tuple(self.flags))

    @property
    def ok(self) -> bool:
        """fs was found (an interior maximum of |S21|)."""
        return math.isfinite(self.fs_hz) and not self.reason


def _extrema(f, s21):
    """(peak, index of fp or None, |S21|^2) of a cleaned trace."""
    p = np.abs(s21) ** 2
    i = int(np.argmax(p))
    pk = peak_by_reciprocal(f, p, i)
    j = i + int(np.argmin(p[i:]))
    return pk, (j if i < j < len(f) - 1 else None), p


def magnitude_resonance(capture_or_network, span_hz=None) -> MagnitudeResonance:
    """fs and fp of a series-through capture from the extrema of |S21| alone.

    Parameters
    ----------
    capture_or_network : Capture or skrf.Network
        A two-port series-through capture.
    span_hz : (float, float), optional
        Read only this range [Hz].

    Returns
    -------
    MagnitudeResonance
        ``ok`` False (with a reason) when the maximum of |S21| lies at an end of the span.

    References
    ----------
    .. [1] ANSI/IEEE Std 177-1966 (fs as the frequency of maximum transmission of a crystal
       between resistive terminations; from memory); methods sheet sections 1.9 and 5.
    """
    f, s21, flags, z0, name, _ = _s21_trace(capture_or_network, span_hz)
    flags.append("magnitude-extrema")
    pk, j, p = _extrema(f, s21)
    step = float(np.median(np.diff(f)))
    peak = math.sqrt(pk.value)
    if not pk.refined:
        return MagnitudeResonance(math.nan, math.nan, peak, math.nan, math.nan, step, name,
                                  tuple(flags), "the maximum of |S21| lies at an end of the "
                                  "span: widen the span around the series resonance")
    fp = smin = math.nan
    if j is None:
        flags.append("no-anti-resonance")
    else:
        fp, t = vertex_min(f, p, j)
        smin = math.sqrt(max(t, 0.0))
    return MagnitudeResonance(pk.f_hz, fp, peak, smin, 2.0 * z0 * (1.0 / peak - 1.0), step,
                              name, tuple(flags))


# --------------------------------------------------------------------------- fit


def _start(f, s21, z0):
    """Closed-form start values (fs, R1, L1, C0), the anti-resonance index and flags."""
    pk, j, p = _extrema(f, s21)
    flags = []
    fs = pk.f_hz
    ws = 2 * math.pi * fs
    r1 = max(2.0 * z0 * (1.0 / math.sqrt(pk.value) - 1.0), 1e-3 * z0)
    hp = half_power_points(f, p, pk.index, pk.value)
    step = float(np.median(np.diff(f)))
    width = (hp[1] - hp[0]) if hp else 2 * step
    ql = fs / max(width, step)
    l1 = ql * (r1 + 2 * z0) / ws  # Q_L = omega_s L1 / (R1 + 2 Z0)
    c1 = 1.0 / (ws * ws * l1)
    if j is not None:
        fp, _ = vertex_min(f, p, j)
        c0 = c1 / ((fp / fs) ** 2 - 1.0) if fp > fs else math.nan
    else:
        c0 = math.nan
    if not (math.isfinite(c0) and c0 > 0):
        flags.append("no-anti-resonance")
        # away from resonance |S21| = 2 Z0 / |2 Z0 + 1/(j omega C0)|
        k = 0 if abs(f[0] - fs) > abs(f[-1] - fs) else -1
        a = min(float(abs(s21[k])), 0.999)
        c0 = 1.0 / (2 * math.pi * f[k] * 2 * z0 * math.sqrt(1.0 / (a * a) - 1.0))
    return np.array([fs, r1, l1, c0]), j, flags


def _window(f, x0, j):
    """Default fitted range: fs - 2 (fp - fs) to fp + 2 (fp - fs), or fs +- 50 bandwidths."""
    fs, r1, l1 = x0[0], x0[1], x0[2]
    if j is not None:
        d = f[j] - fs
        return fs - 2 * d, f[j] + 2 * d
    return fs - 50 * (r1 / (2 * math.pi * l1)), fs + 50 * (r1 / (2 * math.pi * l1))


def magnitude_fit(capture, *, span_hz=None, name: str | None = None, keep_data: bool = True,
                  flags=(), poor_fit: float = 0.05, max_nfev: int = 400) -> dict:
    """BVD crystal from |S21| of a series-through capture (no phase used), as the fields of
    a :class:`kit.resonators.fitting.FitResult` (``kit.fit(..., data="magnitude")`` builds it;
    this module stays below :mod:`kit.resonators.fitting`, no import cycle).

    Parameters
    ----------
    capture : Capture or skrf.Network
        Two-port capture, crystal in series between port 1 and port 2.
    span_hz : (float, float), optional
        Fitted range [Hz]. Default: fs - 2 (fp - fs) to fp + 2 (fp - fs) from the extrema of
        |S21|, or fs +- 50 loaded bandwidths when the span holds no anti-resonance (a choice
        of this kit, common practice, no source).
    name : str, optional
        Name for the report.
    keep_data : bool
        Keep the fitted f and the series-through Z (as measured, phase included) for plots.
    flags : iterable of str
        Flags to carry (the reasons the complex route was left, from :func:`kit.fit`).
    poor_fit : float
        RMS residual of |S21| relative to the peak |S21| above which the fit is "poor-fit".
    max_nfev : int
        Limit of model evaluations.

    Returns
    -------
    dict
        Keyword arguments of ``FitResult``: model "bvd", method "series-through", params
        C0, R1, L1, C1 with standard errors; derived f_max_s21_hz (frequency of maximum
        |S21| of the model),
        derived fs_hz, fp_hz, k_eff, qm (unloaded, Q_L (R1 + 2 Z0)/R1), q_loaded, s21_peak
        and insertion_loss_db (-20 lg |S21(fs)|) with standard errors. Flag
        ``"magnitude-only"``; ``"no-anti-resonance"`` when C0 rests on the off-resonance
        level alone; ``"under-resolved"`` with fewer than 3 points in the loaded
        half-power band; ``"peak-mismatch"`` when the model's frequency of maximum |S21|
        (``f_max_s21_hz``) is more than one frequency step from the measured one, or
        2 Z0/(2 Z0 + R1) differs from the measured peak |S21| by more than 1 %: the peak is
        then not a steady-state resonance (a sweep too fast for the crystal's decay time
        rings after the peak; common practice, no source) or the fixture distorts it; the
        standard errors of fs, f_max_s21_hz and R1 are then widened to at least the
        distance between the model and the measured peak (frequency, and R1 read from the
        peak |S21|).

    Notes
    -----
    Least squares of |S21_model| - |S21_meas| with equal weights (scipy
    ``least_squares``), over (fs, R1, L1, C0); C1 = 1/((2 pi fs)^2 L1). The covariance is
    s^2 (J^T J)^-1 with s^2 the residual variance (common practice, no source), propagated
    to derived figures to first order. The fixture's own loss is not separated from R1.

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, Table 4.2 (S21 of a
       series impedance, from memory for the table number); methods sheet sections 5, 6.1.
    .. [2] Loaded and unloaded Q of a series resonator between two loads,
       Q_L = omega L1/(R1 + 2 Z0), Q_0 = Q_L (R1 + 2 Z0)/R1: methods sheet section 9
       (Pozar ch. 6, from memory for the chapter).
    .. [3] Methods sheet section 2.1 (BVD relations: fs, fp, k_eff, Qm).
    """
    from scipy.optimize import least_squares

    f_all, s_all, clean_flags, z0, cname, _ = _s21_trace(capture, None)
    name = cname if name is None else name
    flags = list(flags) + clean_flags + ["magnitude-only"]
    common = dict(name=name, method="series-through", weighting="uniform")
    x0, j, start_flags = _start(f_all, s_all, z0)
    flags += start_flags
    lo, hi = (float(v) for v in span_hz) if span_hz is not None else _window(f_all, x0, j)
    sel = (f_all >= lo) & (f_all <= hi)
    f, s21 = f_all[sel], s_all[sel]
    common.update(span_hz=(float(lo), float(hi)), n_points=int(len(f)),
                  f_hz=None, z=None)
    if keep_data:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            common.update(f_hz=f, z=z_from_series_through(s21, z0, f))
    if len(f) < 8 or any(fl.startswith("unequal-port-references") for fl in flags):
        why = (f"only {len(f)} points in the fitted span; need at least 8" if len(f) < 8 else
               "the two port references differ: |S21| = 2 Z0/(2 Z0 + Z) needs equal ones")
        return dict(model="bvd", params={}, stderr={}, ok=False, reason=why,
                         flags=tuple(flags + ["no-data"]), **common)
    mag = np.abs(s21)
    mdl = get_model("bvd")
    step = max(float(np.median(np.diff(f))), 1e-9 * x0[0])

    def model_mag(q):
        fs, r1, l1, c0 = q
        c1 = 1.0 / ((2 * math.pi * fs) ** 2 * l1)
        z = mdl.z(f, {"C0": c0, "R1": r1, "L1": l1, "C1": c1})
        return np.abs(s21_series(z, z0))

    def phys(x):
        return np.array([x0[0] + x[0] * step, *np.exp(x[1:])])

    def resid(x):
        r = model_mag(phys(x)) - mag
        return np.where(np.isfinite(r), r, 1e3)

    try:
        sol = least_squares(resid, np.array([0.0, *np.log(x0[1:])]), method="lm",
                            x_scale="jac", max_nfev=max_nfev, xtol=1e-12, ftol=1e-12)
    except (ValueError, np.linalg.LinAlgError, FloatingPointError) as exc:
        return dict(model="bvd", params={}, stderr={}, ok=False,
                         reason=f"not-converged: the solver failed ({exc})",
                         flags=tuple(flags + ["not-converged"]), **common)
    if not sol.success:
        flags.append("not-converged")
    p = phys(sol.x)
    r = sol.fun
    s2 = float(r @ r) / max(len(f) - 4, 1)
    jac = np.empty((len(f), 4))  # in physical units (fs [Hz], R1, L1, C0), central differences
    for k in range(4):
        h = (1e-3 * step) if k == 0 else 1e-6 * p[k]
        dp = np.zeros(4)
        dp[k] = h
        jac[:, k] = (model_mag(p + dp) - model_mag(p - dp)) / (2 * h)
    try:
        cov = s2 * np.linalg.inv(jac.T @ jac)
    except np.linalg.LinAlgError:
        cov = np.full((4, 4), np.nan)
        flags.append("no-uncertainty")
    out, sd = _figures(p, cov, z0)
    resid_rel = float(np.sqrt(np.mean(r * r)) / np.max(mag))
    if not resid_rel <= poor_fit:
        flags.append("poor-fit")
    bw = out["fs_hz"] / out["q_loaded"]
    if np.count_nonzero(np.abs(f - out["fs_hz"]) <= bw / 2) < 3:
        flags.append("under-resolved")
    if not f[0] <= out["fs_hz"] <= f[-1]:
        flags.append("span-too-narrow")
    pk = peak_by_reciprocal(f, mag ** 2, int(np.argmax(mag)))
    if (abs(out["f_max_s21_hz"] - pk.f_hz) > step
            or abs(out["s21_peak"] / math.sqrt(pk.value) - 1.0) > 0.01):
        flags.append("peak-mismatch")
        # the bias is then larger than the noise: widen the errors of what the peak sets
        shift = abs(out["f_max_s21_hz"] - pk.f_hz)
        r1_peak = 2 * z0 * (1 / math.sqrt(pk.value) - 1)
        for key, bias in (("fs_hz", shift), ("f_max_s21_hz", shift),
                          ("R1", abs(out["R1"] - r1_peak))):
            sd[key] = float(np.nanmax([sd[key], bias]))
    params = {k: out[k] for k in ("C0", "R1", "L1", "C1")}
    stderr = {k: sd[k] for k in params}
    derived = {k: v for k, v in out.items() if k not in params}
    derived_sd = {k: sd[k] for k in derived}
    severe = [fl for fl in flags if fl.split(":")[0] in SEVERE]
    return dict(model="bvd", params=params, stderr=stderr, derived=derived,
                     derived_stderr=derived_sd, residual_rel=resid_rel, ok=not severe,
                     flags=tuple(dict.fromkeys(flags)), reason="; ".join(severe),
                     nfev=int(sol.nfev), start=dict(zip(("fs_hz", "R1", "L1", "C0"), x0)),
                     **common)


def _f_max(c0, r1, l1, c1, ql, z0) -> float:
    """Frequency of maximum |S21| of the model [Hz]: golden-section search on fs +- 3 f/Q_L.

    It equals fs when R1 is small against 1/(omega C0); C0 moves it away otherwise.

    References
    ----------
    .. [1] scipy.optimize.minimize_scalar, method "bounded" (Brent's method; SciPy
       reference documentation).
    """
    from scipy.optimize import minimize_scalar

    fs = 1.0 / (2 * math.pi * math.sqrt(l1 * c1))
    mdl = get_model("bvd")
    par = {"C0": c0, "R1": r1, "L1": l1, "C1": c1}
    half = 3.0 * fs / ql

    def neg(df):
        return -abs(s21_series(mdl.z(np.array([fs + df]), par), z0)[0])

    res = minimize_scalar(neg, bounds=(-half, half), method="bounded",
                          options={"xatol": 1e-9 * fs})
    return float(fs + res.x)


def _figures(p, cov, z0):
    """BVD parameters and figures of (fs, R1, L1, C0), with first-order standard errors."""

    def figs(q):
        fs, r1, l1, c0 = q
        c1 = 1.0 / ((2 * math.pi * fs) ** 2 * l1)
        d = bvd_figures(c0, r1, l1, c1)
        ql = 2 * math.pi * fs * l1 / (r1 + 2 * z0)
        peak = 2 * z0 / (2 * z0 + r1)
        return {"C0": c0, "R1": r1, "L1": l1, "C1": c1, "fs_hz": float(d["fs_hz"]),
                "f_max_s21_hz": _f_max(c0, r1, l1, c1, ql, z0),
                "fp_hz": float(d["fp_hz"]), "k_eff": float(d["k_eff"]), "qm": float(d["qm"]),
                "q_loaded": ql, "s21_peak": peak, "insertion_loss_db": -20 * math.log10(peak)}

    base = figs(p)
    grads = np.zeros((len(base), 4))
    for k in range(4):
        h = 1e-6 * abs(p[k])
        up, dn = p.copy(), p.copy()
        up[k] += h
        dn[k] -= h
        fu, fd = figs(up), figs(dn)
        grads[:, k] = [(fu[n] - fd[n]) / (2 * h) for n in base]
    with np.errstate(invalid="ignore"):
        var = np.einsum("ki,ij,kj->k", grads, cov, grads)
    sd = {n: float(math.sqrt(v)) if np.isfinite(v) and v >= 0 else math.nan
          for n, v in zip(base, var)}
    return base, sd
