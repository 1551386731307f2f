"""Equivalent-circuit and physical-model fits of resonator and component captures.

:func:`fit` fits one capture (or arrays f, Z) and returns a :class:`FitResult` that always
says how sure it is: standard errors, the correlation matrix, the measurement noise
estimated from the data beside the residual, and flags. A fit that cannot be done returns
``ok=False`` with a reason; only clearly invalid arguments raise. :func:`fit_lot` (in
:mod:`kit.resonators.fit_lot`) fits a whole lot in parallel processes, one table row per
capture.

Method (methods sheet section 2.4; common practice, no source)
--------------------------------------------------------------
* Parameters are fitted as theta = log(p) with ``scipy.optimize.least_squares``, using
  analytic Jacobians for the lumped circuits (chain rule through :mod:`kit.network.circuits`)
  and central differences for the physical models; restarts, the noise floor and the
  uncertainties are described in :mod:`kit.resonators.solve`.
* Start values: for "bvd" first the admittance circle of the motional branch
  (:mod:`kit.resonators.circle`), then the closed forms of :mod:`kit.resonators.models` (fs
  and fp from the conductance and resistance maxima, C from the reactance at the span ends,
  R1 = 1/Gmax; several modes from the conductance peaks). Start values given by the caller
  come first.
* **Weighting.** The residual is the admittance error divided by a per-point scale,
  r = (Y_model - Y_meas)/sigma_Y, real and imaginary parts stacked. ``"relative"``:
  sigma_Y = |Y_meas|, the relative error of Y (equal to that of Z): the series and the
  parallel resonance count alike. ``"reflection"``: the noise of a measured S-parameter
  with a constant complex error, sigma_Y = |Z + Z0'|^2 / (2 Z0' |Z|^2) = |dY/dS|, with
  Z0' = Z0 for a reflection, 2 Z0 for a series-through and Z0/2 for a shunt-through capture
  (the three impedance methods of :func:`kit.impedance` have this same form). ``"uniform"``:
  a plain admittance fit. ``"auto"`` (default): "reflection" for a Capture or Network (its
  S-parameters are what was measured, with the capture's own reference), "relative" for
  bare arrays.
* Flags: severe ones (:data:`SEVERE_FLAGS`) make ``ok`` False; advice flags are
  "span-too-narrow" (fs or fp of the fitted model outside the data; when it is fs of a
  resonator model the severe "resonance-outside-span"), "under-resolved" (fewer
  than 3 points within the half-power band), "large-uncertainty:<p>" (stderr > 50 %),
  "systematic-residual" (lag-1 autocorrelation of the residual above 0.5) and
  "errors-inflated" (residual above the noise: errors widened, see
  :mod:`kit.resonators.solve`). "poor-fit" is raised only when the residual is above the
  noise by :data:`kit.resonators.solve.NOISE_FACTOR` and ``residual_rel`` exceeds
  ``poor_fit``.
"""

from __future__ import annotations

import warnings

import numpy as np

from kit.network.coerce import sweep
from kit.resonators.fit_result import FitResult, param_unit
from kit.resonators.models import StartError, clean_fz
from kit.resonators.registry import MODEL_NAMES, get_model
from kit.resonators.solve import SEVERE_FLAGS, failed, solve

__all__ = ["fit", "FitResult", "WEIGHTINGS", "SEVERE_FLAGS", "param_unit"]

WEIGHTINGS = ("auto", "relative", "reflection", "uniform")
#: effective reference of the "reflection" weighting per impedance method [times Z0]
_Z0_FACTOR = {"reflection": 1.0, "series-through": 2.0, "shunt-through": 0.5}


def _data(capture, z, method, port, z0_ohm):
    """(f, z, name, z0, from_arrays) by the one coercion (:func:`kit.network.coerce.sweep`).

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
    return src.f_hz, src.z_ohm, name, src.z0_ohm, src.from_arrays


def _sigma_y(z, weighting, z0, method):
    """Per-point admittance scale of a weighting (module docstring) [S], for impedance z."""
    y = 1.0 / z
    if weighting == "relative":
        return np.abs(y)
    if weighting == "reflection":
        ze = z0 * _Z0_FACTOR.get(method, 1.0)
        return np.abs(z + ze) ** 2 / (2 * ze * np.abs(z) ** 2)
    return np.full(y.shape, float(np.median(np.abs(y))))


def fit(capture, model: str = "bvd", span_hz=None, modes: int = 1, method: str = "reflection",
        *, z=None, weighting: str = "auto", z0_ohm: float | None = None,
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
    weighting : {"auto", "relative", "reflection", "uniform"}
        Admittance residual scale (module docstring). Default "auto": the noise of the
        measured S-parameter for a Capture or Network, the relative error for arrays.
    z0_ohm : float, optional
        Reference impedance [ohm] of ``weighting="reflection"`` for bare arrays (default
        50 ohm). A Capture or Network always uses its own reference (the port's, from the
        Touchstone file); a different value here raises :class:`kit.CaptureError`.
    start : dict, optional
        Start values overriding the closed-form estimates (tried first; the other start
        values follow while the residual stays above the noise).
    port : int
        Port for ``method="reflection"``.
    max_nfev : int
        Limit of residual evaluations per start.
    poor_fit : float
        ``residual_rel`` above which a fit whose residual is above the noise
        (``residual_to_noise`` > :data:`kit.resonators.solve.NOISE_FACTOR`) is flagged
        "poor-fit".
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
       common practice, no source. Admittance-circle start: methods sheet section 2.3 and
       :mod:`kit.resonators.circle`. Noise floor, restarts and uncertainties:
       :mod:`kit.resonators.solve` and :mod:`kit.resonators.noise`.
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

        why = (() if data == "magnitude" or z is not None
               else crystal.complex_route_flags(capture, span_hz=span_hz))
        if data == "magnitude" or why:
            return FitResult(**crystal.magnitude_fit(capture, span_hz=span_hz, name=name,
                                                     flags=why, keep_data=keep_data,
                                                     poor_fit=poor_fit))
    mdl = get_model(model, modes, **options)
    f, zz, cname, z0, from_arrays = _data(capture, z, method, port, z0_ohm)
    if weighting == "auto":
        weighting = "relative" if from_arrays else "reflection"
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
        return failed(mdl.name, f"only {len(f)} usable points in the span; need at least "
                      f"{max(2 * npar, 8)}", "no-data", **common)
    try:
        starts = mdl.starts(f, zz)
    except StartError as exc:
        return failed(mdl.name, f"no start values: {exc}", "no-start", **common)
    if start:
        unknown = set(start) - set(mdl.params)
        if unknown:
            raise ValueError(f"start names {sorted(unknown)} are not parameters of {model!r} "
                             f"({', '.join(mdl.params)})")
        starts.insert(0, dict(starts[0], **{k: float(v) for k, v in start.items()}))
    starts = [p for p in starts if all(np.isfinite(p[k]) and p[k] > 0 for k in mdl.params)]
    if not starts:
        return failed(mdl.name, "start values are not all positive and finite", "no-start",
                      **common)
    return solve(mdl, f, zz, starts, lambda zk: _sigma_y(zk, weighting, z0, method), max_nfev,
                 poor_fit, common)
