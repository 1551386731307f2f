r"""The least-squares core of :func:`kit.fit`: restarts, noise floor, honest uncertainties.

:func:`solve` fits a model from one or more start values and returns a
:class:`kit.resonators.fit_result.FitResult`.

Method
------
* **Least squares.** theta = log(p), weighted admittance residual
  r = (Y_model - Y_meas)/sigma_Y (real and imaginary parts stacked), analytic Jacobian,
  ``scipy.optimize.least_squares`` (MINPACK Levenberg-Marquardt, or the trust-region
  reflective method where the model has physical bounds). Methods sheet section 2.4;
  common practice, no source.
* **Noise floor and restarts.** The noise of the data is estimated without a model, in the
  same weighting, from fourth differences of neighbouring points
  (:func:`kit.resonators.noise.difference_variance`). The fit starts from the first start
  value; while the RMS weighted residual stays above :data:`RESTART_FACTOR` times the noise
  it restarts from the next one (the admittance circle, the closed forms, a start
  perturbed from the best point so far) and keeps the lowest residual. A fit at the noise
  floor stops after the first start.
* **Weights from the model.** The weighting's sigma_Y is first computed from the measured
  impedance, whose noise then enters the weights (most where |1 + S11| is small); a final
  pass from the best point re-weights with sigma_Y of the fitted model (one step of
  iteratively re-weighted least squares; common practice, no source).
* **Uncertainties.** cov(theta) = s^2 (J^T J)^-1 with the residual variance
  s^2 = sum r^2 / (2N - P) (the reduced chi-square scaling). Where the weighting does not
  follow the noise (the noise of the points differs from sigma_Y by more than a constant
  factor) this is not the covariance of the estimate; the heteroscedasticity-consistent
  "sandwich" estimate (J^T J)^-1 J^T diag(u^2) J (J^T J)^-1, u_i = r_i/(1 - h_ii), h the
  leverages (HC3 [1]), is computed too and replaces it when it gives a variance larger by
  :data:`HC_SWITCH` for any parameter.
  Where the residual is systematically above the noise (ratio above
  :data:`NOISE_FACTOR`), the residual is correlated from point to point and the data
  carry fewer independent observations than points: the covariance is multiplied by
  (1 + rho)/(1 - rho), rho the lag-1 autocorrelation of the residual (the variance
  factor of a mean of a first-order autoregressive series [2]), and the fit is flagged
  "errors-inflated".
* **Derived figures** (fs, fp, k_eff, Qm, ...) get errors by the delta method: the Jacobian
  of the derivation (central differences in theta) with the full covariance,
  var(g) = grad g^T cov grad g. Parameters at a bound enter as fixed.

References
----------
.. [1] J. G. MacKinnon and H. White, "Some heteroskedasticity-consistent covariance matrix
   estimators with improved finite sample properties", J. Econometrics 29(3), 305-325,
   1985 (HC3; from memory); H. White, Econometrica 48(4), 817-838, 1980 (the sandwich
   estimator; from memory).
.. [2] G. E. P. Box, G. M. Jenkins and G. C. Reinsel, *Time Series Analysis: Forecasting
   and Control*, 4th ed., Wiley, 2008: the variance of the mean of an AR(1) series is
   (sigma^2/n)(1 + rho)/(1 - rho) for large n (from memory).
"""

from __future__ import annotations

import numpy as np

from kit.resonators.fit_result import FitResult
from kit.resonators.noise import difference_variance, mean_variance, noise_rms

__all__ = ["NOISE_FACTOR", "RESTART_FACTOR", "SEVERE_FLAGS", "solve"]

#: flags (by prefix) that make ``ok`` False; the others are advice.
SEVERE_FLAGS = ("not-converged", "poor-fit", "at-bound", "no-uncertainty", "no-start", "no-data",
                "resonance-outside-span")
#: residual / noise above which the errors are inflated and flagged, and (with the
#: ``poor_fit`` limit on ``residual_rel``) the fit is "poor-fit". Chosen from the coverage
#: study in tests/test_fit_coverage.py: fits at the noise floor stay below 1.1 there (below
#: 1.2 with the "relative" weighting on S11 noise); 1.5 leaves room for short captures,
#: whose noise estimate is less sure.
NOISE_FACTOR = 1.5
#: residual / noise above which the next start value is tried.
RESTART_FACTOR = 1.2
#: variance ratio (sandwich / reduced chi-square) of any parameter above which the sandwich
#: covariance is used: the weighting does not follow the noise.
HC_SWITCH = 1.3
_BOX = 18.0  # log-parameter box around the start: a factor 6.6e7 either way ("at-bound")


def failed(model, reason, flag, **kw) -> FitResult:
    """A FitResult with ``ok=False``, no parameters, one flag and the reason."""
    return FitResult(model=model, params={}, stderr={}, ok=False, flags=(flag,), reason=reason,
                     **kw)


def _box(mdl, p0):
    names = mdl.params
    theta0 = np.log([p0[p] for p in names])
    lo, hi = theta0 - _BOX, theta0 + _BOX
    for i, p in enumerate(names):
        if p in mdl.bounds:
            blo, bhi = mdl.bounds[p]
            lo[i] = max(lo[i], np.log(blo)) if blo > 0 else lo[i]
            hi[i] = min(hi[i], np.log(bhi)) if np.isfinite(bhi) else hi[i]
    return lo, hi


class _Problem:
    """Residual and Jacobian of one weighted admittance fit in theta = log p (cached)."""

    def __init__(self, mdl, f, y, w):
        self.mdl, self.f, self.y, self.w = mdl, f, y, w
        self._key = None
        self._val = None

    def __call__(self, th):
        key = th.tobytes()
        if key != self._key:
            names = self.mdl.params
            with np.errstate(all="ignore"):  # the solver may try far-off points: inf, nan
                p = dict(zip(names, np.exp(th)))
                zm, dz = self.mdl.z_and_jac(self.f, p)
                r = (1.0 / zm - self.y) * self.w
                cols = np.array([-(dz[n] / zm**2) * p[n] * self.w for n in names])
            res = np.concatenate([r.real, r.imag])
            jac = np.concatenate([cols.real, cols.imag], axis=1).T
            self._val = (np.where(np.isfinite(res), res, 1e30),
                         np.where(np.isfinite(jac), jac, 0.0))
            self._key = key
        return self._val


def _run(prob, theta0, lo, hi, max_nfev):
    from scipy.optimize import least_squares

    if prob.mdl.bounds:
        args = {"method": "trf", "bounds": (lo, hi)}
    else:  # MINPACK Levenberg-Marquardt when the model has no physical bounds (faster)
        args = {"method": "lm"}
    theta0 = np.clip(theta0, lo + 1e-9, hi - 1e-9)
    return least_squares(lambda t: prob(t)[0], theta0, jac=lambda t: prob(t)[1], **args,
                         max_nfev=max_nfev, x_scale=1.0, xtol=1e-10, ftol=1e-12, gtol=1e-12)


def _lag1(r):
    """Lag-1 autocorrelation of a residual sequence (near 0 for white noise)."""
    den = float(r @ r)
    return float(r[:-1] @ r[1:]) / den if den > 0 else 0.0


def _covariance(jac, res, free, s2):
    """Reduced-chi-square and HC3 covariances of the free columns; None when singular."""
    n = jac.shape[1]
    j = jac[:, free]
    _, sv, vt = np.linalg.svd(j, full_matrices=False)
    if not (sv[0] > 0 and sv[-1] > sv[0] * 1e-13):
        return None
    ainv = (vt.T / sv**2) @ vt
    cov = ainv * s2
    lev = np.einsum("ij,jk,ik->i", j, ainv, j)
    u = res / np.clip(1.0 - lev, 1e-3, None)
    meat = (j * (u**2)[:, None]).T @ j
    hc = ainv @ meat @ ainv
    with np.errstate(invalid="ignore", divide="ignore"):
        gain = np.diag(hc) / np.diag(cov)
    full = np.full((n, n), np.nan)
    full[np.ix_(free, free)] = hc if np.nanmax(gain, initial=0.0) > HC_SWITCH else cov
    return full


def derived_errors(mdl, th, cov):
    """Derived figures and their errors by the delta method (central differences in theta).

    Returns
    -------
    (dict, dict)
        The figures of ``mdl.derived`` at exp(th) and their standard errors
        sqrt(grad^T cov grad) with the full covariance ``cov`` of theta.
    """
    names = mdl.params

    def d_of(t):
        return mdl.derived(dict(zip(names, np.exp(t))))

    base = {k: float(v) for k, v in d_of(th).items()}
    keys = [k for k, v in base.items() if np.isfinite(v)]
    grads = np.zeros((len(keys), len(th)))
    h = 1e-6
    for i in range(len(th)):
        up, dn = th.copy(), th.copy()
        up[i] += h
        dn[i] -= h
        du, dd = d_of(up), d_of(dn)
        for k_i, k in enumerate(keys):
            grads[k_i, i] = (float(du[k]) - float(dd[k])) / (2 * h)
    with np.errstate(all="ignore"):
        var = np.einsum("ki,ij,kj->k", grads, cov, grads)
    sd = {k: float(np.sqrt(v)) if v >= 0 else float("nan") for k, v in zip(keys, var)}
    return base, sd


def _perturbed(mdl, th, rng):
    """A start near the best point so far: every parameter moved by a few per cent."""
    return dict(zip(mdl.params, np.exp(th + rng.normal(0.0, 0.03, len(th)))))


def solve(mdl, f, z, starts, scale, max_nfev, poor_fit, common) -> FitResult:
    """Fit ``mdl`` to (f, z) from ``starts`` (list of dicts, first first); see module doc.

    ``scale(z)`` gives the weighting's sigma_Y [S] for an impedance curve: first of the
    measured one, then, for the final pass, of the fitted model.
    """
    names = mdl.params
    y = 1.0 / z
    sigma_y = scale(z)
    w = 1.0 / sigma_y
    prob = _Problem(mdl, f, y, w)
    var = difference_variance(y, sigma_y)
    tau2 = mean_variance(var)
    lo, hi = _box(mdl, starts[0])
    dof = max(2 * len(f) - len(names), 1)
    best, nfev, njev, error = None, 0, 0, "no start value"
    queue = list(starts) + [None]  # None: a start perturbed from the best point so far
    for p0 in queue:
        if p0 is None:
            if best is None:
                break
            p0 = _perturbed(mdl, best[1].x, np.random.default_rng(len(f)))
        try:
            sol = _run(prob, np.log([p0[p] for p in names]), lo, hi, max_nfev)
        except (ValueError, np.linalg.LinAlgError, FloatingPointError) as exc:
            error = str(exc)
            continue
        nfev += int(sol.nfev)
        njev += int(sol.njev or 0)
        if best is None or sol.cost < best[1].cost:
            best = (p0, sol)
        ratio = np.sqrt(2 * best[1].cost / dof / tau2) if tau2 > 0 else np.nan
        if not ratio > RESTART_FACTOR:
            break
    if best is None:
        return failed(mdl.name, f"solver failed: {error}", "not-converged",
                      start=starts[0], **common)
    sol = best[1]
    # final pass with the weights of the fitted model instead of the noisy data
    with np.errstate(all="ignore"):
        zm = mdl.z(f, dict(zip(names, np.exp(sol.x))))
        sigma_m = scale(zm)
    if np.all(np.isfinite(sigma_m) & (sigma_m > 0)):
        prob.w = 1.0 / sigma_m
        prob._key = None
        try:
            again = _run(prob, sol.x, lo, hi, max_nfev)
            nfev += int(again.nfev)
            njev += int(again.njev or 0)
            sol, sigma_y = again, sigma_m
            var = difference_variance(y, sigma_y)
            tau2 = mean_variance(var)
        except (ValueError, np.linalg.LinAlgError, FloatingPointError):
            prob.w = w
            prob._key = None
    return _assess(mdl, f, y, sol, prob, lo, hi, var, tau2, sigma_y, poor_fit,
                   dict(common, start=dict(starts[0]), nfev=nfev, njev=njev))


def _assess(mdl, f, y, sol, prob, lo, hi, var, tau2, sigma_y, poor_fit, common) -> FitResult:
    """Covariance, derived errors, noise comparison and flags of the best solution."""
    names = mdl.params
    th = sol.x
    res, jac = prob(th)
    params = {n: float(v) for n, v in zip(names, np.exp(th))}
    m, n = jac.shape
    flags: list[str] = []
    # parameters at a bound are held fixed for the covariance (their error is NaN)
    at_bound = np.array([sol.active_mask[i] != 0 or th[i] - lo[i] < 1e-6 or hi[i] - th[i] < 1e-6
                         for i in range(n)])
    # a parameter declared >= 0 (bounds (0, ...)) that the fit drove far below its start has
    # vanished (e.g. a contact resistance that is not there): 0, held fixed, not a failure.
    # For such a parameter the box is (start - _BOX, ...), so its start is lo + _BOX.
    gone = np.array([mdl.bounds.get(p, (None,))[0] == 0 and th[i] < lo[i] + _BOX - 9.0
                     for i, p in enumerate(names)], dtype=bool)
    at_bound |= gone
    free = np.nonzero(~at_bound)[0]
    s2 = float(res @ res) / max(m - len(free), 1)
    ratio = float(np.sqrt(s2 / tau2)) if tau2 > 0 else float("nan")
    half = len(res) // 2
    rho = max(_lag1(res[:half]), _lag1(res[half:]))
    cov = _covariance(jac, res, free, s2) if len(free) else None
    if cov is None:
        cov = np.full((n, n), np.nan)
        flags.append("no-uncertainty")
    elif ratio > NOISE_FACTOR:
        rho_c = min(max(rho, 0.0), 0.98)
        cov = cov * (1 + rho_c) / (1 - rho_c)
        flags.append("errors-inflated")
    sd_th = np.sqrt(np.diag(cov))
    stderr = {p: float(params[p] * e) for p, e in zip(names, sd_th)}
    with np.errstate(all="ignore"):
        corr = cov / np.outer(sd_th, sd_th)
    correlation = {a: {b: float(corr[i, j]) for j, b in enumerate(names)}
                   for i, a in enumerate(names)}
    cov_fixed = cov.copy()  # parameters at a bound enter the propagation as fixed
    cov_fixed[at_bound, :] = 0.0
    cov_fixed[:, at_bound] = 0.0
    with np.errstate(all="ignore"):
        derived, derived_sd = derived_errors(mdl, th, cov_fixed)
        zm = mdl.z(f, params)
        resid_rel = float(np.sqrt(np.mean(np.abs((1.0 / zm - y) / y) ** 2)))
    if not sol.success or sol.status == 0:
        flags.append("not-converged")
    flags.extend(f"at-bound:{p}" for i, p in enumerate(names) if at_bound[i] and not gone[i])
    params.update({p: 0.0 for i, p in enumerate(names) if gone[i]})
    above = ratio > NOISE_FACTOR if np.isfinite(ratio) else True
    if not np.isfinite(resid_rel) or (resid_rel > poor_fit and above):
        flags.append("poor-fit")
    if "no-uncertainty" not in flags and not np.all(np.isfinite(sd_th[free])):
        flags.append("no-uncertainty")
    flags.extend(_span_flags(f, derived))
    if half >= 20 and rho > 0.5:
        flags.append("systematic-residual")
    for p, e in stderr.items():
        if np.isfinite(e) and e > 0.5 * params[p]:
            flags.append(f"large-uncertainty:{p}")
    if hasattr(mdl, "extra_flags"):  # model-specific findings (e.g. "contact-resistance")
        flags.extend(mdl.extra_flags(params, stderr, f, zm))
    severe = [fl for fl in flags if fl.split(":")[0] in SEVERE_FLAGS]
    return FitResult(model=mdl.name, params=params, stderr=stderr, correlation=correlation,
                     derived=derived, derived_stderr=derived_sd, residual_rel=resid_rel,
                     noise_rms=noise_rms(var, sigma_y, y), residual_to_noise=ratio,
                     ok=not severe, flags=tuple(dict.fromkeys(flags)), reason="; ".join(severe),
                     **common)


def _span_flags(f, derived) -> list[str]:
    """"span-too-narrow" (fs or fp outside the data), "resonance-outside-span" (severe: the
    series resonance of a resonator model lies outside the data, the fit extrapolates),
    "under-resolved" (fewer than 3 points in the half-power band)."""
    out = []
    fs, fp = derived.get("fs_hz", np.nan), derived.get("fp_hz", np.nan)
    if any(np.isfinite(fr) and not (f.min() <= fr <= f.max()) for fr in (fs, fp)):
        out.append("span-too-narrow")
    if np.isfinite(fp) and np.isfinite(fs) and not (f.min() <= fs <= f.max()):
        out.append("resonance-outside-span")  # the resonance itself was not measured
    qm = derived.get("qm", np.nan)
    if np.isfinite(fs) and np.isfinite(qm) and qm > 0:
        if np.count_nonzero(np.abs(f - fs) <= fs / (2 * qm)) < 3:
            out.append("under-resolved")
    return out
