r"""Loaded and unloaded Q of a resonator coupled to a line, from S-parameters.

A thin layer over scikit-rf's :class:`skrf.qfactor.Qfactor`, which implements the
NLQFIT6/7/8 least-squares fits of NPL Report MAT 58 (the resonance is a circle in the
complex S plane, :math:`S = S_D + d\,e^{-2j\delta}/(1 + j Q_L t)`,
:math:`t = f/f_L - f_L/f`). This module adds what a lab needs around it: a Capture as
input, standard errors from the fit's covariance, flags instead of silent doubtful
numbers, and a small result object.

Relations used (MAT 58; Pozar ch. 6, from memory for the chapter):
:math:`1/Q_L = 1/Q_0 + 1/Q_e`, coupling :math:`\beta = Q_0/Q_e = Q_0/Q_L - 1`
(for a transmission resonator this is the sum of the two port couplings).

References
----------
.. [1] A. P. Gregory, *Q-factor measurement by using a Vector Network Analyser*, NPL Report
   MAT 58 (2021), doi 10.47120/npl.mat58.
.. [2] scikit-rf 2.2.0, ``skrf.qfactor.Qfactor`` (the implementation used).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from kit.capture import CaptureError
from kit.network.accept import s_term
from kit.network.coerce import name_of, network_of
from kit.results import Result, nan_if_none
from kit.units import eng, unit_of

__all__ = ["QFactor", "q_factor", "KINDS", "REFUSALS"]

#: our kind -> scikit-rf resonance type
KINDS: dict[str, str] = {
    "reflection": "reflection",
    "reflection-method2": "reflection_method2",
    "transmission": "transmission",
    "absorption": "absorption",
}
_FITS = ("NLQFIT6", "NLQFIT7", "NLQFIT8")
#: flags (by prefix) that make ``ok`` False, with the reason given for each.
REFUSALS: dict[str, str] = {
    "singular-fit": "the fit is singular (the trace does not determine a Q circle)",
    "negative-q": "the fitted loaded Q is negative: no resonance of this kind in the span",
    "q-not-finite": "the fitted loaded Q is not finite",
    "f-outside-span": "the fitted resonant frequency lies outside the fitted span",
    "bandwidth-below-2-steps": "the fitted Q implies a half-power bandwidth below two frequency "
                               "steps: the sweep does not resolve the resonance",
    "poor-fit": "the fitted circle misses the data (RMS residual above 5 % of the circle "
                "diameter)",
}
#: F-test level for fitting the line length by default (NLQFIT7 over NLQFIT6).
LINE_TEST_P = 1e-3


_VALUES = ("q_loaded", "q_loaded_stderr", "q_unloaded", "q_unloaded_stderr", "f_hz",
           "f_hz_stderr", "coupling", "coupling_stderr", "diameter", "bandwidth_hz", "scale",
           "rms_error")


@dataclass(frozen=True)
class QFactor(Result):
    """Result of a Q-factor fit.

    Attributes
    ----------
    q_loaded, q_loaded_stderr : float
        Loaded Q and its standard error [1].
    q_unloaded, q_unloaded_stderr : float
        Unloaded Q and its standard error [1]; NaN when it cannot be computed (flagged).
    f_hz, f_hz_stderr : float
        Loaded resonant frequency and its standard error [Hz].
    coupling, coupling_stderr : float
        beta = Q0/QL - 1 [1] (sum of the port couplings for a transmission resonator).
    diameter : float
        Q-circle diameter after scaling [1].
    bandwidth_hz : float
        f_L / Q_L [Hz].
    kind : str
        "reflection", "reflection-method2", "transmission" or "absorption".
    fit : str
        "NLQFIT6", "NLQFIT7" or "NLQFIT8" (MAT 58 algorithm names).
    scale : float
        The scaling factor A used (NaN: taken from the fitted detuned S, |S_V| -> 1).
    rms_error : float
        Weighted RMS of the complex residual [1].
    iterations : int
        Gauss-Newton iterations.
    converged : bool
        The fit met its convergence test.
    flags : tuple of str
        e.g. ``"not-converged"``, ``"q-loaded-below-100"``, ``"scale-assumed:1"``,
        ``"resonance-near-edge"`` (a half-power point lies outside the sweep),
        ``"line-length-fitted"`` (NLQFIT7 chosen by default), ``"no-uncertainty:NLQFIT8"``;
        the refusals of :data:`REFUSALS` (``"poor-fit"``, ``"negative-q"``,
        ``"f-outside-span"``, ``"bandwidth-below-2-steps"``, ``"singular-fit"``,
        ``"q-not-finite"``) make ``ok`` False.
    name, trace : str
        The capture's name and the S-parameter used (e.g. "S21").
    points : int
        Number of frequency points fitted.
    coefficients : tuple of float
        The fitted MAT 58 coefficients m1..m6 (m7 for NLQFIT7), for :meth:`plot`.
    f_low_hz : float
        Lowest frequency fitted [Hz] (the frequency scale of ``coefficients``).

    Missing values (and standard errors that could not be computed) are NaN; ``ok`` is
    True when the fit converged with finite Q_L and Q_0, else ``reason`` says why.
    """

    q_loaded: float
    q_loaded_stderr: float
    q_unloaded: float
    q_unloaded_stderr: float
    f_hz: float
    f_hz_stderr: float
    coupling: float
    coupling_stderr: float
    diameter: float
    bandwidth_hz: float
    kind: str
    fit: str
    scale: float
    rms_error: float
    iterations: int
    converged: bool
    flags: tuple[str, ...]
    name: str
    trace: str
    points: int
    coefficients: tuple[float, ...] = ()
    f_low_hz: float = math.nan

    _ROWS = (("q_loaded", "loaded Q", ""), ("q_unloaded", "unloaded Q", ""),
             ("f_hz", "f_L", unit_of("f_hz")), ("coupling", "coupling beta", ""),
             ("bandwidth_hz", "bandwidth f_L/Q_L", unit_of("bandwidth_hz")),
             ("diameter", "Q-circle diameter", ""), ("rms_error", "RMS residual", ""))

    def __post_init__(self):
        for key in _VALUES + ("f_low_hz",):
            object.__setattr__(self, key, nan_if_none(getattr(self, key)))
        object.__setattr__(self, "flags", tuple(self.flags))
        object.__setattr__(self, "coefficients", tuple(float(c) for c in self.coefficients))

    @property
    def ok(self) -> bool:
        """Converged, with Q_L and Q_0 finite and positive, and no refusal flag
        (:data:`REFUSALS`: f_L outside the span, bandwidth below two steps, singular fit)."""
        return (self.converged and math.isfinite(self.q_loaded) and self.q_loaded > 0
                and math.isfinite(self.q_unloaded) and self.q_unloaded > 0
                and not any(fl.split(":")[0] in REFUSALS for fl in self.flags))

    @property
    def reason(self) -> str:
        """Why ``ok`` is False ("" when ok), in plain words."""
        why = [REFUSALS[fl.split(":")[0]] for fl in self.flags if fl.split(":")[0] in REFUSALS]
        if why:
            return "; ".join(dict.fromkeys(why))
        if not self.converged:
            why.append(f"the {self.fit} fit did not converge in {self.iterations} iterations")
        if not math.isfinite(self.q_loaded):
            why.append("the loaded Q was not computed")
        elif not math.isfinite(self.q_unloaded):
            why.append("the unloaded Q could not be computed from the fitted circle")
        elif self.q_unloaded <= 0:
            why.append(f"the unloaded Q is negative ({eng(self.q_unloaded, '')}): the fitted circle "
                       "does not describe a passive resonator")
        return "; ".join(dict.fromkeys(why))

    @property
    def heading(self) -> str:
        return (f"Q factor of {self.name!r} ({self.kind}, {self.trace}, {self.points} points, "
                f"{self.fit}, {self.iterations} iterations, "
                f"{'converged' if self.converged else 'NOT converged'})")

    def stderr_of(self, key: str) -> float | None:
        """The ``<key>_stderr`` field (the report prints "value ± error")."""
        return getattr(self, f"{key}_stderr", None)

    def __repr__(self) -> str:
        return self.report()

    def model_s(self, f_hz) -> np.ndarray:
        """The fitted S (MAT 58 eq. (21)) at ``f_hz`` [Hz]; NaN without coefficients."""
        f = np.asarray(f_hz, dtype=float)
        if len(self.coefficients) < 6:
            return np.full(f.shape, complex(math.nan, math.nan))
        return _model(np.asarray(self.coefficients), f, self.f_low_hz)

    def plot(self, ax=None, capture=None):
        """The fitted Q circle in the complex S plane (and the measured trace); returns ax.

        Parameters
        ----------
        ax : matplotlib Axes, optional
            Where to draw (a new figure when None).
        capture : Capture or skrf.Network, optional
            The measurement fitted; its trace (``self.trace``) is drawn as points.
        """
        import matplotlib.pyplot as plt

        if ax is None:
            _, ax = plt.subplots(figsize=(5, 5))
        if capture is not None:
            ntwk, _ = _trace(capture, self.kind, None if self.trace == "one-port trace"
                             else self.trace)
            s = ntwk.s[:, 0, 0]
            ax.plot(s.real, s.imag, ".", ms=3, label=f"measured {self.trace}")
        if math.isfinite(self.bandwidth_hz):
            f = self.f_hz + np.linspace(-8, 8, 801) * self.bandwidth_hz
            sm = self.model_s(f[f > 0])
            ax.plot(sm.real, sm.imag, "-", label=f"fitted circle ({self.fit})")
            s0 = self.model_s([self.f_hz])[0]
            ax.plot([s0.real], [s0.imag], "o", label=f"f_L {eng(self.f_hz, 'Hz', 7)}")
        ax.set_aspect("equal", adjustable="datalim")
        ax.set_xlabel("Re S")
        ax.set_ylabel("Im S")
        ax.set_title(f"Q_L {eng(self.q_loaded, '')}, Q_0 {eng(self.q_unloaded, '')}"
                     + ("" if self.ok else f"\n{self.reason}"), fontsize="small")
        ax.legend(loc="best", fontsize="x-small")
        return ax


# --------------------------------------------------------------------------- model

def _params(res, f_low: float, fit: str) -> np.ndarray:
    m5 = float(np.squeeze(res["Q_L"]))
    m6 = f_low * m5 / float(np.squeeze(res["f_L"]))
    p = [float(np.squeeze(res[k])) for k in ("m1", "m2", "m3", "m4")] + [m5, m6]
    if fit == "NLQFIT7":
        p.append(float(np.squeeze(res["m7a"])) * f_low)
    return np.array(p)


def _model(p: np.ndarray, f: np.ndarray, f_low: float) -> np.ndarray:
    """MAT 58 eq. (21) in the m1..m6 form of NLQFIT6, times the line term of NLQFIT7."""
    s = complex(p[0], p[1]) + complex(p[2], p[3]) / (1.0 + 2j * (p[5] * f / f_low - p[4]))
    if len(p) == 7:
        s = s * np.exp(1j * p[6] * (f / f_low - p[4] / p[5]))
    return s


def _jacobian(p: np.ndarray, f: np.ndarray, f_low: float) -> np.ndarray:
    cols = []
    for k in range(len(p)):
        h = 1e-6 * max(abs(p[k]), 1e-3)
        dp = np.zeros_like(p)
        dp[k] = h
        d = (_model(p + dp, f, f_low) - _model(p - dp, f, f_low)) / (2 * h)
        cols.append(np.concatenate([d.real, d.imag]))
    return np.array(cols).T


def _covariance(p, f, s, f_low, weights) -> np.ndarray | None:
    """Parameter covariance sigma^2 (J^T W J)^-1 with sigma^2 from the weighted residual."""
    r = s - _model(p, f, f_low)
    rr = np.concatenate([r.real, r.imag])
    w = np.concatenate([weights, weights])
    j = _jacobian(p, f, f_low)
    dof = len(rr) - len(p)
    if dof <= 0:
        return None
    sigma2 = float(np.sum(w * rr * rr) / dof)
    try:
        return sigma2 * np.linalg.inv(j.T @ (w[:, None] * j))
    except np.linalg.LinAlgError:
        return None


# --------------------------------------------------------------------------- main

def _trace(capture, kind: str, trace: str | None):
    import skrf as rf

    ntwk = network_of(capture, "q_factor()")
    n = ntwk.nports
    if n == 1 and trace is None:
        return ntwk, "one-port trace"
    if trace is None:
        trace = "S11" if kind.startswith("reflection") else "S21"
    i, j, t = s_term(capture, trace, "q_factor()")
    one = rf.Network(frequency=ntwk.frequency, s=ntwk.s[:, i, j].reshape(-1, 1, 1),
                     z0=np.asarray(ntwk.z0)[:, j], name=ntwk.name)
    return one, t


def q_factor(capture, kind: str = "reflection", *, trace: str | None = None,
             span_hz=None, fit: str | None = None, scale: float | None = None,
             q_guess: float | None = None, f_guess_hz: float | None = None,
             loop_plan: str = "fwfwc") -> QFactor:
    """Loaded and unloaded Q, resonant frequency and coupling of one resonance.

    Parameters
    ----------
    capture : Capture or skrf.Network
        The measurement. A one-port capture is taken as the trace itself (for example S21
        stored alone); for a two-port, "reflection" kinds use S11 and "transmission" /
        "absorption" use S21 unless ``trace`` says otherwise.
    kind : {"reflection", "reflection-method2", "transmission", "absorption"}
        The resonator type of MAT 58: one-port reflection (Q0 from the circle scaled to
        the detuned reflection, lossless coupling), reflection with the "touching circle"
        of method 2 (needs ``scale``), transmission (needs ``scale``), absorption/notch.
    trace : str, optional
        The S-parameter to fit, e.g. "S22" or "S12".
    span_hz : (float, float), optional
        Fit only this frequency range [Hz].
    fit : {None, "NLQFIT6", "NLQFIT7", "NLQFIT8"}
        The MAT 58 algorithm: 6 coefficients; 7 with an uncalibrated line length; 8 with
        frequency-dependent leakage (no uncertainties are computed for NLQFIT8). None
        (default) fits NLQFIT6 and, when that gives a positive Q_L with f_L inside the span,
        also NLQFIT7, and keeps NLQFIT7, flagged
        ``"line-length-fitted"``, when the line length lowers the weighted residual sum of
        squares significantly: an extra-sum-of-squares F-test with p < 1e-3 and at least
        half of the residual removed (:func:`_choose_line`; an uncalibrated line otherwise
        biases Q0, as on MAT 58's Table 6(c) data).
    scale : float, optional
        MAT 58 scaling factor A (1/|S| of a through or of the detuned reflection of a
        lossless line). For "transmission" and "reflection-method2" it defaults to 1.0
        (calibrated data / lossless line) and the result is flagged ``"scale-assumed:1"``.
    q_guess, f_guess_hz : float, optional
        Start values for Q_L and f_L (default: MAT 58's initial fit).
    loop_plan : str
        MAT 58 loop plan of fit (f), weight (w) and converge (c) steps.

    Returns
    -------
    QFactor
        ``ok`` is False, with a plain ``reason`` and no exception, when the fit is singular,
        Q_L or Q_0 is negative or not finite, f_L lies outside the fitted span, or
        f_L/Q_L is below two frequency steps (:data:`REFUSALS`).
        With standard errors of Q_L, f_L, Q_0 and beta from the covariance of the fitted
        coefficients, sigma^2 (J^T W J)^-1, sigma^2 the weighted residual variance and W the
        MAT 58 angular weights of the last step (common practice, no source), propagated
        linearly. They describe noise only, not calibration error nor model bias: the
        narrow-band model puts f_L slightly off (18 Hz below 10 MHz for a parallel RLC with
        Q_L = 265), which can exceed the stated f_L standard error on clean data.

    Raises
    ------
    CaptureError
        When the span leaves too few points, the trace does not exist, or kind/fit is unknown.

    References
    ----------
    .. [1] A. P. Gregory, NPL Report MAT 58 (2021), doi 10.47120/npl.mat58: eq. (21) model,
       NLQFIT6/7/8, eq. (28) angular weights, section 2.5 unloaded Q.
    .. [2] scikit-rf 2.2.0 ``skrf.qfactor.Qfactor`` (the fit is delegated to it).
    """
    path = getattr(capture, "path", None)
    if kind not in KINDS:
        raise CaptureError(f"unknown kind {kind!r}; choose one of {', '.join(KINDS)}", path)
    if fit is not None and fit not in _FITS:
        raise CaptureError(f"unknown fit {fit!r}; choose one of {', '.join(_FITS)}", path)
    ntwk, trace = _trace(capture, kind, trace)
    name = name_of(capture)
    flags: list[str] = []
    f_all = ntwk.frequency.f
    if span_hz is not None:
        lo, hi = (float(v) for v in span_hz)
        sel = (f_all >= lo) & (f_all <= hi)
        if np.count_nonzero(sel) < 10:
            raise CaptureError(f"only {np.count_nonzero(sel)} point(s) inside span_hz="
                               f"{tuple(span_hz)!r}; at least 10 are needed", path)
        ntwk = ntwk[sel]
    s = ntwk.s[:, 0, 0]
    good = np.isfinite(s)
    if not np.all(good):
        flags.append(f"nan-points:{int(np.count_nonzero(~good))}")
        ntwk = ntwk[good]
        s = s[good]
    f = ntwk.frequency.f
    if len(f) < 10:
        raise CaptureError(f"only {len(f)} usable point(s); at least 10 are needed", path)

    a = scale
    if a is None and kind in ("transmission", "reflection-method2"):
        a = 1.0
        flags.append("scale-assumed:1")
    f_low = float(f[0])
    chosen = fit or "NLQFIT6"
    runs = {chosen: _fit_once(ntwk, kind, chosen, loop_plan, q_guess, f_guess_hz)}
    if fit is None and _plausible(runs[chosen][1], f, f_low):
        runs["NLQFIT7"] = _fit_once(ntwk, kind, "NLQFIT7", loop_plan, q_guess, f_guess_hz)
        chosen, note = _choose_line(runs, f, s, f_low)
        flags.extend(note)
    q, res, caught = runs[chosen]
    if res is None:
        return _refused(kind, chosen, a, flags + ["singular-fit"], name, trace, len(f), f_low)
    for w in caught:
        flags.append(f"fit-warning:{w.message}")

    converged = bool(np.all(res["success"]))
    if not converged:
        flags.append("not-converged")
    p = _params(res, f_low, chosen)
    ql, fl = float(p[4]), float(f_low * p[4] / p[5])
    if not (math.isfinite(ql) and math.isfinite(fl)):
        return _refused(kind, chosen, a, flags + ["q-not-finite"], name, trace, len(f), f_low)
    if ql <= 0:
        flags.append("negative-q")
    elif ql < 100:
        flags.append("q-loaded-below-100")  # MAT 58's model assumes Q_L of about 100 or more
    if not f[0] <= fl <= f[-1]:
        flags.append("f-outside-span")
    step = float(np.median(np.diff(f)))
    if ql > 0 and fl / ql < 2 * step:
        flags.append(f"bandwidth-below-2-steps:{eng(fl / ql, 'Hz', 3)}")

    def derived(pp: np.ndarray) -> np.ndarray:
        r = dict(res)
        r.update(m1=pp[0], m2=pp[1], m3=pp[2], m4=pp[3], Q_L=pp[4], f_L=f_low * pp[4] / pp[5])
        try:
            q0 = float(q.Q_unloaded(opt_res=type(res)(r), A=a))
        except (ZeroDivisionError, ValueError):
            q0 = math.nan
        return np.array([pp[4], f_low * pp[4] / pp[5], q0, q0 / pp[4] - 1.0])

    vals = derived(p)
    q0 = float(vals[2]) if np.isfinite(vals[2]) else None
    if q0 is None:
        flags.append("q-unloaded-undefined")
    try:
        diam = float(q.Q_circle(opt_res=res, A=a)[0])
    except (ValueError, ZeroDivisionError):
        diam = None
    rms = float(np.squeeze(res["RMS_Error"])) if res.get("RMS_Error") is not None else None
    if rms is not None and diam and rms > 0.05 * diam:
        flags.append("poor-fit")
    bw = fl / ql if ql > 0 else None
    if bw is not None and (fl - f[0] < 0.5 * bw or f[-1] - fl < 0.5 * bw):
        flags.append("resonance-near-edge")

    se = [None] * 4
    if chosen == "NLQFIT8":
        flags.append("no-uncertainty:NLQFIT8")
    else:
        weights = (q.angular_weights(f, fl, ql) if "w" in loop_plan else np.ones(len(f)))
        cov = _covariance(p, f, s, f_low, np.asarray(weights, float))
        if cov is None:
            flags.append("no-uncertainty")
        else:
            jac = np.zeros((4, len(p)))
            for k in range(len(p)):
                h = 1e-6 * max(abs(p[k]), 1e-3)
                dp = np.zeros_like(p)
                dp[k] = h
                jac[:, k] = (derived(p + dp) - derived(p - dp)) / (2 * h)
            var = np.einsum("ik,kl,il->i", jac, cov, jac)
            se = [float(math.sqrt(v)) if np.isfinite(v) and v >= 0 else None for v in var]
    if q0 is None:
        se[2] = se[3] = None

    return QFactor(q_loaded=ql, q_loaded_stderr=se[0], q_unloaded=q0, q_unloaded_stderr=se[2],
                   f_hz=fl, f_hz_stderr=se[1],
                   coupling=None if q0 is None else float(vals[3]), coupling_stderr=se[3],
                   diameter=diam, bandwidth_hz=bw, kind=kind, fit=chosen, scale=a,
                   rms_error=rms, iterations=int(np.squeeze(res["number_iterations"])),
                   converged=converged, flags=tuple(flags), name=name, trace=trace,
                   points=len(f), coefficients=tuple(p), f_low_hz=f_low)


def _fit_once(ntwk, kind, fit, loop_plan, q_guess, f_guess_hz):
    """(Qfactor, fit result or None when singular, caught warnings) of one MAT 58 fit."""
    from skrf.qfactor import Qfactor

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            q = Qfactor(ntwk, KINDS[kind], Q_L0=q_guess, f_L0=f_guess_hz)
            res = q.fit(method=fit, loop_plan=loop_plan)
        except (ValueError, np.linalg.LinAlgError, ZeroDivisionError, FloatingPointError):
            return None, None, list(caught)
    return q, res, list(caught)


def _plausible(res, f, f_low) -> bool:
    """NLQFIT6 gave a positive, finite Q_L with f_L inside the span: only then is the line
    length worth a second (slower) NLQFIT7 fit by default."""
    if res is None:
        return False
    p = _params(res, f_low, "NLQFIT6")
    if not (np.all(np.isfinite(p)) and p[4] > 0 and p[5] > 0):
        return False
    return bool(f[0] <= f_low * p[4] / p[5] <= f[-1])


def _choose_line(runs, f, s, f_low) -> tuple[str, list[str]]:
    """NLQFIT7 (line length fitted) or NLQFIT6, by an extra-sum-of-squares F-test.

    Both residual sums of squares are weighted alike (MAT 58 eq. (28) angular weights of
    the NLQFIT6 fit). The line length is one extra parameter, so under "no line"
    F = (RSS6 - RSS7) / (RSS7 / (2N - 7)) follows F(1, 2N - 7) (2N real residuals); the line
    is taken when p < :data:`LINE_TEST_P` and it removes at least half of RSS6, so that
    noise-free data with a tiny model bias do not switch.

    References
    ----------
    .. [1] D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
       Wiley, 1988, section 3.5 (extra sum of squares for nested models; from memory for
       the section).
    .. [2] A. P. Gregory, NPL Report MAT 58 (2021): NLQFIT7 fits the length of an
       uncalibrated lossless line; eq. (28) weights.
    """
    from scipy.special import fdtrc

    q6, r6, _ = runs["NLQFIT6"]
    q7, r7, _ = runs["NLQFIT7"]
    if r6 is None:
        return ("NLQFIT7", ["line-length-fitted"]) if r7 is not None else ("NLQFIT6", [])
    if r7 is None:
        return "NLQFIT6", []
    p6, p7 = _params(r6, f_low, "NLQFIT6"), _params(r7, f_low, "NLQFIT7")
    if not (np.all(np.isfinite(p6)) and np.all(np.isfinite(p7))) or p6[4] <= 0:
        return ("NLQFIT7", ["line-length-fitted"]) if np.all(np.isfinite(p7)) and p7[4] > 0 \
            else ("NLQFIT6", [])
    w = np.asarray(q6.angular_weights(f, f_low * p6[4] / p6[5], p6[4]), float)
    rss6, rss7 = _rss(p6, f, s, f_low, w), _rss(p7, f, s, f_low, w)
    dof = 2 * len(f) - 7
    if p7[4] <= 0 or not rss7 < 0.5 * rss6 or dof <= 0:
        return "NLQFIT6", []
    p_value = float(fdtrc(1, dof, (rss6 - rss7) / (rss7 / dof))) if rss7 > 0 else 0.0
    if p_value < LINE_TEST_P:
        return "NLQFIT7", ["line-length-fitted"]
    return "NLQFIT6", []


def _rss(p, f, s, f_low, w) -> float:
    """Weighted residual sum of squares sum w |S - model|^2 [1]."""
    r = s - _model(p, f, f_low)
    return float(np.sum(w * (r.real ** 2 + r.imag ** 2)))


def _refused(kind, fit, a, flags, name, trace, points, f_low) -> QFactor:
    """A result with no numbers: ``ok`` False, the reason from the refusal flag."""
    nan = math.nan
    return QFactor(q_loaded=nan, q_loaded_stderr=nan, q_unloaded=nan, q_unloaded_stderr=nan,
                   f_hz=nan, f_hz_stderr=nan, coupling=nan, coupling_stderr=nan, diameter=nan,
                   bandwidth_hz=nan, kind=kind, fit=fit or "NLQFIT6", scale=nan_if_none(a),
                   rms_error=nan, iterations=0, converged=False, flags=tuple(flags),
                   name=name, trace=trace, points=points, f_low_hz=f_low)
