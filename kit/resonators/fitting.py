"""Equivalent-circuit and physical-model fits of resonator and component captures.

:func:`fit` fits one capture (or arrays f, Z) and returns a :class:`FitResult` that always
says how sure it is: standard errors from the covariance scaled by the residual, the
correlation matrix, and flags. A fit that cannot be done returns ``ok=False`` with a reason;
only clearly invalid arguments raise. :func:`fit_lot` (in :mod:`kit.resonators.fit_lot`, re-exported
here) fits a whole lot in parallel processes, one table row per capture.

Method (methods sheet section 2.4; common practice, no source)
--------------------------------------------------------------
* Parameters are fitted as theta = log(p) with ``scipy.optimize.least_squares`` (trust
  region reflective, bounds from physics where they exist), using analytic Jacobians for the
  lumped circuits (chain rule through :mod:`kit.network.circuits`) and central differences for the
  physical models.
* Start values come from closed forms (:mod:`kit.resonators.models`): fs and fp from the conductance and
  resistance maxima, C from the reactance at the span ends, R1 = 1/Gmax, several modes from
  the conductance peaks.
* **Weighting.** The residual is the admittance error divided by a per-point scale,
  r = (Y_model - Y_meas)/sigma_Y, real and imaginary parts stacked. With
  ``weighting="relative"`` (default) sigma_Y = |Y_meas|, i.e. the relative error of Y (which
  equals that of Z): the series resonance (large |Y|) and the parallel resonance (small |Y|)
  count alike. ``weighting="reflection"`` uses the noise of a reflection measurement with a
  constant error in Gamma, sigma_Y = |Y| |Z + Z0|^2 / (2 Z0 |Z|); ``"uniform"`` is a plain
  admittance fit.
* Flags: severe ones (:data:`SEVERE_FLAGS`) make ``ok`` False; advice flags are
  "span-too-narrow" (fs or fp of the fitted model outside the data), "under-resolved" (fewer
  than 3 points within the half-power band), "large-uncertainty:<p>" (stderr > 50 %) and
  "systematic-residual" (lag-1 autocorrelation of the residual above 0.5: the model does
  not describe the data to within the noise, so the stated errors are too small).
* Uncertainties: cov(theta) = s^2 (J^T J)^-1 with s^2 = sum r^2 / (2N - P), so they are right
  when the weighting matches the noise up to a constant factor; stderr(p) = p stderr(theta).
  Derived figures (fs, fp, k_eff, Qm) carry uncertainties propagated from cov(theta).
"""

from __future__ import annotations

import html
import json
import math
import warnings
from dataclasses import dataclass, field, fields
from typing import Any

import numpy as np

from kit.network.coerce import sweep
from kit.resonators.models import StartError, clean_fz
from kit.resonators.registry import MODEL_NAMES, get_model
from kit.results import Result
from kit.units import unit_of

__all__ = ["fit", "FitResult", "WEIGHTINGS", "SEVERE_FLAGS"]

WEIGHTINGS = ("relative", "reflection", "uniform")
#: flags (by prefix) that make ``ok`` False; the others are advice.
SEVERE_FLAGS = ("not-converged", "poor-fit", "at-bound", "no-uncertainty", "no-start", "no-data")


def _jsonable(v):
    if isinstance(v, dict):
        return {str(k): _jsonable(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_jsonable(x) for x in v]
    if isinstance(v, (complex, np.complexfloating)):
        return {"__complex__": [_jsonable(v.real), _jsonable(v.imag)]}
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        return float(v) if math.isfinite(v) else None
    if isinstance(v, np.ndarray):
        return _jsonable(v.tolist())
    return v


def _unjson(v, nan=True):
    if isinstance(v, dict):
        if set(v) == {"__complex__"}:
            re, im = v["__complex__"]
            return complex(np.nan if re is None else re, np.nan if im is None else im)
        return {k: _unjson(x, nan) for k, x in v.items()}
    if isinstance(v, list):
        return [_unjson(x, nan) for x in v]
    if v is None and nan:
        return float("nan")
    return v


def param_unit(name: str) -> str:
    """Unit of a fit parameter or derived figure: the kit's one look-up, :func:`kit.units.unit_of`."""
    return unit_of(name)



def _derived(key: str, doc: str) -> property:
    """A read-only figure of ``FitResult.derived`` (NaN when the model has none)."""
    return property(lambda self: float(self.derived.get(key, np.nan)), doc=doc)

@dataclass(frozen=True)
class FitResult(Result):
    """Outcome of one fit: parameters with uncertainties, derived figures and flags.

    Attributes
    ----------
    model : str
        Model name (see :mod:`kit.resonators.models`).
    params, stderr : dict
        Fitted values and standard errors, SI units (F, ohm, H, Hz, 1); NaN when the fit
        failed or an uncertainty could not be computed.
    correlation : dict of dict
        Correlation coefficients between parameters.
    derived, derived_stderr : dict
        Figures of the fitted model ("fs_hz", "fp_hz", "k_eff", "qm", ...), with errors.
    residual_rel : float
        Normalised RMS residual sqrt(mean(|Y_model - Y_meas|^2 / |Y_meas|^2)) [1].
    ok : bool
        True when no severe flag is raised (see :data:`SEVERE_FLAGS`).
    flags : tuple of str
        e.g. "at-bound:R2", "not-converged", "poor-fit", "span-too-narrow".
    reason : str
        Why ``ok`` is False (empty when ok).

    A :class:`kit.results.Result` whose ``to_dict()`` is strict JSON (NaN and inf become None,
    read back as NaN by ``from_dict``), as fits are written with ``allow_nan=False``.
    """

    model: str
    params: dict
    stderr: dict
    correlation: dict = field(default_factory=dict)
    derived: dict = field(default_factory=dict)
    derived_stderr: dict = field(default_factory=dict)
    residual_rel: float = float("nan")
    ok: bool = False
    flags: tuple = ()
    reason: str = ""
    name: str = ""
    modes: int = 1
    model_options: dict = field(default_factory=dict)
    method: str = "reflection"
    weighting: str = "relative"
    span_hz: tuple | None = None
    n_points: int = 0
    nfev: int = 0
    njev: int = 0
    start: dict = field(default_factory=dict)
    f_hz: Any = field(default=None, repr=False, compare=False)
    z: Any = field(default=None, repr=False, compare=False)

    _ROWS = (("fs_hz", "fs_hz", "Hz"), ("fp_hz", "fp_hz", "Hz"), ("k_eff", "k_eff", ""),
             ("qm", "qm", ""), ("residual_rel", "residual (normalised RMS)", ""))

    @property
    def title(self) -> str:
        return f"fit of {self.name or '<arrays>'} with model {self.model}" + (
            f" ({self.modes} modes)" if self.modes > 1 else "")

    # -- derived figures of the fitted circuit
    fs_hz = _derived("fs_hz", "Series (motional) resonance of the fitted model [Hz].")
    fp_hz = _derived("fp_hz", "Parallel resonance of the fitted model [Hz].")
    k_eff = _derived("k_eff", "Effective coupling sqrt((fp^2 - fs^2)/fp^2) of the fitted model [1].")
    qm = _derived("qm", "Mechanical Q of the fitted model [1].")

    def model_z(self, f_hz) -> np.ndarray:
        """Impedance [ohm] of the fitted model at ``f_hz`` [Hz].

        Raises
        ------
        ValueError
            When the fit produced no parameters (see ``reason``).
        """
        if not all(np.isfinite(v) for v in self.params.values()) or not self.params:
            raise ValueError(f"fit {self.name!r} has no parameters to evaluate: {self.reason}")
        m = get_model(self.model, self.modes, **self.model_options)
        return m.z(np.asarray(f_hz, dtype=float), self.params)

    # -- text and HTML
    def _rows(self):
        for p, v in self.params.items():
            e = self.stderr.get(p, np.nan)
            rel = abs(e / v) * 100 if v else np.nan
            yield p, v, e, rel
        for p in ("fs_hz", "fp_hz", "k_eff", "qm"):
            v = self.derived.get(p, np.nan)
            if np.isfinite(v) and p not in self.params:
                e = self.derived_stderr.get(p, np.nan)
                yield p, v, e, abs(e / v) * 100 if v else np.nan

    def report(self) -> str:
        """Plain-text summary: values with standard errors, derived figures, flags."""
        lines = [self.title, f"ok: {self.ok}" + (f" ({self.reason})" if self.reason else ""),
                 f"flags: {', '.join(self.flags) or 'none'}",
                 f"residual (normalised RMS): {self.residual_rel:.3g}; points: {self.n_points}; "
                 f"evaluations: {self.nfev} + {self.njev} Jacobian; weighting: {self.weighting}"]
        for p, v, e, rel in self._rows():
            u = param_unit(p)
            u = f" {u}" if u else ""
            lines.append(f"  {p:>10s} = {v:.6g}{u} +/- {e:.2g}{u}  ({rel:.2g} %)")
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.report()

    def _repr_html_(self) -> str:
        esc = html.escape
        rows = "".join(
            f"<tr><td>{esc(p)} [{esc(param_unit(p) or '1')}]</td><td>{v:.6g}</td><td>{e:.2g}</td>"
            f"<td>{rel:.2g} %</td></tr>"
            for p, v, e, rel in self._rows())
        flags = esc(", ".join(self.flags) or "none")
        status = "ok" if self.ok else "NOT ok: " + esc(self.reason)
        return (f"<div><b>{esc(self.model)}</b> fit of {esc(self.name or '<arrays>')} &mdash; "
                f"{status}<br>flags: {flags}; residual {self.residual_rel:.3g}"
                "<table><tr><th>parameter</th><th>value</th><th>std. error</th>"
                f"<th>relative</th></tr>{rows}</table></div>")

    # -- round trip
    def to_dict(self, include_data: bool = False) -> dict:
        """JSON-safe dict (NaN and inf become None; complex as {"__complex__": [re, im]})."""
        out = {}
        for fl in fields(self):
            if fl.name in ("f_hz", "z"):
                continue
            out[fl.name] = _jsonable(getattr(self, fl.name))
        if include_data and self.f_hz is not None:
            out["data"] = {"f_hz": _jsonable(np.asarray(self.f_hz)),
                           "z_re": _jsonable(np.real(self.z)), "z_im": _jsonable(np.imag(self.z))}
        return out

    @classmethod
    def from_dict(cls, d: dict) -> "FitResult":
        """Inverse of :meth:`to_dict`."""
        kw = {}
        names = {fl.name for fl in fields(cls)}
        for k, v in d.items():
            if k not in names:
                continue
            if k in ("name", "reason", "model", "method", "weighting"):
                kw[k] = v
            elif k in ("ok",):
                kw[k] = bool(v)
            elif k in ("modes", "n_points", "nfev", "njev"):
                kw[k] = int(v)
            elif k in ("flags",):
                kw[k] = tuple(v)
            elif k == "span_hz":
                kw[k] = None if v is None else tuple(_unjson(v))
            else:
                kw[k] = _unjson(v)
        data = d.get("data")
        if data:
            kw["f_hz"] = np.asarray(_unjson(data["f_hz"]), dtype=float)
            kw["z"] = (np.asarray(_unjson(data["z_re"]), dtype=float)
                       + 1j * np.asarray(_unjson(data["z_im"]), dtype=float))
        return cls(**kw)

    def to_json(self, include_data: bool = False) -> str:
        """:meth:`to_dict` as a JSON string."""
        return json.dumps(self.to_dict(include_data), allow_nan=False)

    def plot(self, ax=None):
        """Measured (if kept) and model |Z| and phase; returns the axes.

        ``ax``: None (new figure with |Z| and phase), one Axes (|Z| only) or two Axes.
        """
        import matplotlib.pyplot as plt

        if ax is None:
            _, axes = plt.subplots(2, 1, sharex=True, figsize=(7, 5))
        else:
            axes = list(ax) if isinstance(ax, (list, tuple, np.ndarray)) else [ax]
        f = self.f_hz
        if f is None:
            lo, hi = self.span_hz or (0.5 * self.fs_hz, 1.5 * self.fp_hz)
            f = np.linspace(lo, hi, 801)
        if self.z is not None:
            axes[0].semilogy(f, np.abs(self.z), ".", ms=2, label="measured")
            if len(axes) > 1:
                axes[1].plot(f, np.degrees(np.angle(self.z)), ".", ms=2, label="measured")
        try:
            ff = np.linspace(np.min(f), np.max(f), max(801, len(f)))
            zm = self.model_z(ff)
            axes[0].semilogy(ff, np.abs(zm), "-", label=f"model {self.model}")
            if len(axes) > 1:
                axes[1].plot(ff, np.degrees(np.angle(zm)), "-", label=f"model {self.model}")
        except ValueError:
            axes[0].set_title(f"no model: {self.reason}")
        axes[0].set_ylabel("|Z| [ohm]")
        if len(axes) > 1:
            axes[1].set_ylabel("phase [deg]")
        axes[-1].set_xlabel("frequency [Hz]")
        axes[0].legend(loc="best", fontsize="small")
        return axes


# ---------------------------------------------------------------------------------------


def _failed(model, reason, flag, **kw) -> FitResult:
    return FitResult(model=model, params={}, stderr={}, ok=False, flags=(flag,), reason=reason,
                     **kw)


def _data(capture, z, method, port, z0_ohm):
    """(f, z, name, z0) by the one coercion (:func:`kit.network.coerce.sweep`).

    A Capture or Network keeps its own reference impedance (``z0_ohm`` must then be None or
    equal to it); bare arrays take ``z0_ohm`` or 50 ohm.
    """
    from kit.network.immittance import SingularPointsWarning

    if isinstance(capture, list) and len(capture) == 2 and z is None:
        capture = tuple(capture)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SingularPointsWarning)
        src = sweep(capture, z, method=method, port=port, z0_ohm=z0_ohm, what="fit()")
    name = "" if src.from_arrays else src.name
    return src.f_hz, src.z_ohm, name, src.z0_ohm


def _sigma_y(y, z, weighting, z0):
    if weighting == "relative":
        return np.abs(y)
    if weighting == "reflection":
        return np.abs(y) * np.abs(z + z0) ** 2 / (2 * z0 * np.abs(z))
    return np.full(y.shape, float(np.median(np.abs(y))))


def _solve(mdl, f, z, p0, sigma_y, max_nfev, poor_fit, common) -> FitResult:
    """Least squares in theta = log p; covariance, derived errors and flags."""
    from scipy.optimize import least_squares

    names = mdl.params
    y = 1.0 / z
    w = 1.0 / sigma_y
    theta0 = np.log([p0[p] for p in names])
    lo = theta0 - 18.0  # a factor 6.6e7 either way: beyond it a parameter is "at-bound"
    hi = theta0 + 18.0
    for i, p in enumerate(names):
        if p in mdl.bounds:
            blo, bhi = mdl.bounds[p]
            lo[i] = max(lo[i], np.log(blo)) if blo > 0 else lo[i]
            hi[i] = min(hi[i], np.log(bhi)) if np.isfinite(bhi) else hi[i]
    theta0 = np.clip(theta0, lo + 1e-9, hi - 1e-9)
    cache: dict = {}
    count = [0]

    def evaluate(th):
        key = th.tobytes()
        if key not in cache:
            cache.clear()
            p = dict(zip(names, np.exp(th)))
            zm, dz = mdl.z_and_jac(f, p)
            count[0] += 1
            with np.errstate(all="ignore"):
                ym = 1.0 / zm
                r = (ym - y) * w
                cols = [-(dz[n] / zm**2) * p[n] * w for n in names]
            res = np.concatenate([r.real, r.imag])
            jac = np.concatenate([np.array(cols).real, np.array(cols).imag], axis=1).T
            res = np.where(np.isfinite(res), res, 1e30)
            jac = np.where(np.isfinite(jac), jac, 0.0)
            cache[key] = (res, jac)
        return cache[key]

    try:
        sol = least_squares(lambda t: evaluate(t)[0], theta0, jac=lambda t: evaluate(t)[1],
                            **_solver_args(mdl, lo, hi), max_nfev=max_nfev,
                            x_scale=1.0, xtol=1e-10, ftol=1e-12, gtol=1e-12)
    except (ValueError, np.linalg.LinAlgError, FloatingPointError) as exc:
        return _failed(mdl.name, f"solver failed: {exc}", "not-converged", start=p0, **common)
    th = sol.x
    res, jac = evaluate(th)
    params = {n: float(v) for n, v in zip(names, np.exp(th))}
    m, n = jac.shape
    flags: list[str] = []
    # parameters at a bound are held fixed for the covariance (their error is NaN)
    at_bound = np.array([sol.active_mask[i] != 0 or th[i] - lo[i] < 1e-6 or hi[i] - th[i] < 1e-6
                         for i in range(n)])
    free = np.nonzero(~at_bound)[0]
    dof = max(m - len(free), 1)
    s2 = float(res @ res) / dof
    cov = np.full((n, n), np.nan)
    if len(free):
        _, sv, vt = np.linalg.svd(jac[:, free], full_matrices=False)
        if sv[0] > 0 and sv[-1] > sv[0] * 1e-13:
            cov[np.ix_(free, free)] = (vt.T / sv**2) @ vt * s2
        else:
            flags.append("no-uncertainty")
    sd_th = np.sqrt(np.diag(cov))
    stderr = {p: float(params[p] * e) for p, e in zip(names, sd_th)}
    with np.errstate(all="ignore"):
        corr = cov / np.outer(sd_th, sd_th)
    correlation = {a: {b: float(corr[i, j]) for j, b in enumerate(names)}
                   for i, a in enumerate(names)}
    cov_fixed = cov.copy()  # parameters at a bound enter the propagation as fixed
    cov_fixed[at_bound, :] = 0.0
    cov_fixed[:, at_bound] = 0.0
    derived, derived_sd = _derived(mdl, th, cov_fixed)
    zm = mdl.z(f, params)
    with np.errstate(all="ignore"):
        resid_rel = float(np.sqrt(np.mean(np.abs((1.0 / zm - y) / y) ** 2)))
    if not sol.success or sol.status == 0:
        flags.append("not-converged")
    # lm has no bounds: a parameter that ran beyond the box is flagged the same way
    flags.extend(f"at-bound:{p}" for i, p in enumerate(names) if at_bound[i])
    if not np.isfinite(resid_rel) or resid_rel > poor_fit:
        flags.append("poor-fit")
    if "no-uncertainty" not in flags and not np.all(np.isfinite(sd_th[free])):
        flags.append("no-uncertainty")
    fs, fp = derived.get("fs_hz", np.nan), derived.get("fp_hz", np.nan)
    for fr in (fs, fp):
        if np.isfinite(fr) and not (f.min() <= fr <= f.max()):
            flags.append("span-too-narrow")
            break
    qm = derived.get("qm", np.nan)
    if np.isfinite(fs) and np.isfinite(qm) and qm > 0:
        if np.count_nonzero(np.abs(f - fs) <= fs / (2 * qm)) < 3:
            flags.append("under-resolved")
    half = len(res) // 2
    rho = [_lag1(res[:half]), _lag1(res[half:])]
    if half >= 20 and max(rho) > 0.5:
        flags.append("systematic-residual")
    for p, e in stderr.items():
        if np.isfinite(e) and e > 0.5 * params[p]:
            flags.append(f"large-uncertainty:{p}")
    severe = [fl for fl in flags if fl.split(":")[0] in SEVERE_FLAGS]
    reason = "; ".join(severe)
    return FitResult(model=mdl.name, params=params, stderr=stderr, correlation=correlation,
                     derived=derived, derived_stderr=derived_sd, residual_rel=resid_rel,
                     ok=not severe, flags=tuple(dict.fromkeys(flags)), reason=reason,
                     nfev=int(sol.nfev), njev=int(sol.njev or 0), start=dict(p0), **common)


def _solver_args(mdl, lo, hi) -> dict:
    """MINPACK Levenberg-Marquardt when the model has no physical bounds (faster), else the
    bounded trust-region reflective method."""
    if not mdl.bounds:
        return {"method": "lm"}
    return {"method": "trf", "bounds": (lo, hi)}


def _lag1(r):
    """Lag-1 autocorrelation of a residual sequence (near 0 for white noise)."""
    den = float(r @ r)
    return float(r[:-1] @ r[1:]) / den if den > 0 else 0.0


def _derived(mdl, th, cov):
    """Derived figures and their errors by first-order propagation (central differences)."""
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


def fit(capture, model: str = "bvd", span_hz=None, modes: int = 1, method: str = "reflection",
        *, z=None, weighting: str = "relative", z0_ohm: float | None = None,
        start: dict | None = None, port: int = 1, max_nfev: int = 200,
        poor_fit: float = 0.05, name: str | None = None, keep_data: bool = True,
        data: str = "auto", **options) -> FitResult:
    """Fit a model to a capture; returns a :class:`FitResult` with uncertainties and flags.

    Parameters
    ----------
    capture : Capture, skrf.Network, (f, z) pair, or array of f [Hz]
        The measurement. With an array of frequencies pass the impedance as ``z`` (or as
        the second positional argument, ``fit(f, z)``, BVD model).
    model : str
        "bvd", "bvd-loss", "multi", "plate", "bar", "inductor" or "capacitor"
        (see :mod:`kit.resonators.models`).
    span_hz : (float, float), optional
        Only points with lo <= f <= hi are fitted [Hz].
    modes : int
        Number of motional branches ("bvd"/"multi").
    method : {"reflection", "series-through", "shunt-through"}
        How Z follows from the capture (see :func:`kit.impedance`).
    z : array_like of complex, optional
        Impedance [ohm] when ``capture`` is the frequency array.
    weighting : {"relative", "reflection", "uniform"}
        Admittance residual scale (module docstring). Default "relative": both the series
        and the parallel resonance count.
    z0_ohm : float, optional
        Reference impedance [ohm] of ``weighting="reflection"`` for bare arrays (default
        50 ohm). A Capture or Network always uses its own reference (the port's, from the
        Touchstone file); a different value here raises :class:`kit.CaptureError`.
    start : dict, optional
        Start values overriding the closed-form estimates.
    port : int
        Port for ``method="reflection"``.
    max_nfev : int
        Limit of residual evaluations.
    poor_fit : float
        ``residual_rel`` above which the fit is flagged "poor-fit".
    name : str, optional
        Name for the report (default: the capture's).
    keep_data : bool
        Keep the fitted f and Z in the result (for plots).
    data : {"auto", "complex", "magnitude"}
        "magnitude" fits |S21| of a series-through "bvd" capture alone
        (:func:`kit.resonators.crystal.magnitude_fit`, flag "magnitude-only"); "auto" does
        so when :func:`kit.resonators.crystal.needs_magnitude` finds the complex route
        untrustworthy (negative resistance; fixture not removed); "complex" never.
    **options
        Model options (e.g. ``z_front``, ``z_back`` for "plate").

    Returns
    -------
    FitResult

    Raises
    ------
    ValueError
        For an unknown model, method or weighting, modes < 1, or mismatched arrays.
    CaptureError
        When ``z0_ohm`` contradicts the capture's reference impedance.

    References
    ----------
    .. [1] Methods sheet section 2.4 (log-parameter least squares, seeding by section 2.2);
       common practice, no source. Covariance scaled by the residual variance: the standard
       nonlinear least-squares estimate (common practice, no source).
    """
    if not isinstance(model, str):  # fit(f, z, ...): the second positional is the impedance
        if z is not None:
            raise ValueError("give the impedance either as the second argument or as z=")
        z, model = model, "bvd"
    if weighting not in WEIGHTINGS:
        raise ValueError(f"unknown weighting {weighting!r}; choose one of {', '.join(WEIGHTINGS)}")
    if model not in MODEL_NAMES:
        raise ValueError(f"unknown model {model!r}; choose one of {', '.join(MODEL_NAMES)}")
    if data not in ("auto", "complex", "magnitude"):
        raise ValueError(f"unknown data {data!r}; choose auto, complex or magnitude")
    if method == "series-through" and model == "bvd" and modes == 1 and data != "complex":
        from kit.resonators import crystal
        why = () if data == "magnitude" or z is not None else crystal.complex_route_flags(capture)
        if data == "magnitude" or why:
            return FitResult(**crystal.magnitude_fit(capture, span_hz=span_hz, name=name,
                                                     flags=why, keep_data=keep_data,
                                                     poor_fit=poor_fit))
    mdl = get_model(model, modes, **options)
    f, zz, cname, z0 = _data(capture, z, method, port, z0_ohm)
    name = cname if name is None else name
    if span_hz is not None:
        lo, hi = (float(v) for v in span_hz)
        if not hi > lo:
            raise ValueError(f"span_hz must be (low, high) with high > low, got {span_hz!r}")
        span = (lo, hi)
        sel = (f >= lo) & (f <= hi)
        f, zz = f[sel], zz[sel]
    else:
        span = (float(np.min(f)), float(np.max(f))) if len(f) else None
    f, zz = clean_fz(f, zz)
    common = dict(name=name, modes=int(modes), model_options=dict(mdl.options), method=method,
                  weighting=weighting, span_hz=span, n_points=int(len(f)),
                  f_hz=f if keep_data else None, z=zz if keep_data else None)
    npar = len(mdl.params)
    if len(f) < max(2 * npar, 8):
        return _failed(mdl.name, f"only {len(f)} usable points in the span; need at least "
                       f"{max(2 * npar, 8)}", "no-data", **common)
    try:
        p0 = mdl.start(f, zz)
    except StartError as exc:
        return _failed(mdl.name, f"no start values: {exc}", "no-start", **common)
    if start:
        unknown = set(start) - set(mdl.params)
        if unknown:
            raise ValueError(f"start names {sorted(unknown)} are not parameters of {model!r} "
                             f"({', '.join(mdl.params)})")
        p0.update({k: float(v) for k, v in start.items()})
    if not all(np.isfinite(p0[p]) and p0[p] > 0 for p in mdl.params):
        return _failed(mdl.name, f"start values are not all positive and finite: {p0}",
                       "no-start", **common)
    return _solve(mdl, f, zz, p0, _sigma_y(1.0 / zz, zz, weighting, z0), max_nfev, poor_fit,
                 common)
