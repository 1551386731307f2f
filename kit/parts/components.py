r"""Self-resonance, Q against frequency and effective value of real inductors and capacitors.

Part of the filter and component figures of :mod:`kit.parts.filters` (which re-exports
:func:`component_figures`); kept apart to keep modules short.

References
----------
.. [1] Methods sheet section 10: real inductor (Rs + j omega L) parallel Cp with
   SRF = 1/(2 pi sqrt(L Cp)); real capacitor ESR + j omega ESL + 1/(j omega C) with
   SRF = 1/(2 pi sqrt(ESL C)) and |Z(SRF)| = ESR (standard textbook forms, from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from kit.capture import CaptureError
from kit.network.coerce import sweep
from kit.resonators.peaks import crossing, sort_merge, vertex_min
from kit.results import Result, nan_if_none, plain
from kit.units import eng, quantity, scale_for, unit_of

__all__ = ["ComponentFigures", "component_figures"]



_COMPONENT_VALUES = ("srf_hz", "f_extremum_hz", "z_extremum_ohm", "q_max", "f_q_max_hz",
                     "estimate_residual_rel")
_ARRAYS = ("f_hz", "r_ohm", "x_ohm", "q", "value")


def _empty() -> np.ndarray:
    return np.empty(0)


@dataclass(frozen=True, eq=False)
class ComponentFigures(Result):
    """Self-resonance, Q and effective value of a real inductor or capacitor.

    Attributes
    ----------
    kind : str
        "inductor" or "capacitor" (from the sign of the reactance at the lowest frequencies
        unless given).
    srf_hz : float
        Self-resonant frequency: where the reactance first changes sign [Hz]; NaN when it
        is not inside the span.
    f_extremum_hz, z_extremum_ohm : float
        Frequency and value of max \\|Z\\| (inductor) or min \\|Z\\| (capacitor) near the
        SRF, parabola-refined.
    q_max, f_q_max_hz : float
        Highest Q = \\|X\\|/R below the SRF and where it occurs.
    estimate : dict
        Closed-form estimate of the circuit (inductor "L", "Rs", "Cp"; capacitor "C",
        "ESR", "ESL") [SI units]; not a fit, no uncertainties.
    estimate_residual_rel : float
        RMS of \\|Z_estimate - Z\\| / \\|Z\\|: how well the estimate describes the data.
    fit : FitResult or None
        The fitted real-component model from :func:`kit.fit` (only with ``fit_model=True``).
    f_hz, r_ohm, x_ohm, q, value : numpy.ndarray
        Frequency [Hz], resistance and reactance [ohm], Q = \\|X\\|/R [1] (NaN where R <= 0)
        and the effective value: L = X/omega [H] for an inductor, C = -1/(omega X) [F] for a
        capacitor (empty when built from a dict without arrays).
    flags : tuple of str
    name, method : str

    Figures not found are NaN. ``ok`` is True when the self-resonance and the highest Q
    were found; otherwise ``reason`` says which not and why (the estimate may still hold).
    """

    kind: str
    srf_hz: float
    f_extremum_hz: float
    z_extremum_ohm: float
    q_max: float
    f_q_max_hz: float
    estimate: dict[str, float]
    estimate_residual_rel: float
    fit: Any
    f_hz: np.ndarray = field(default_factory=_empty, repr=False)
    r_ohm: np.ndarray = field(default_factory=_empty, repr=False)
    x_ohm: np.ndarray = field(default_factory=_empty, repr=False)
    q: np.ndarray = field(default_factory=_empty, repr=False)
    value: np.ndarray = field(default_factory=_empty, repr=False)
    flags: tuple[str, ...] = ()
    name: str = "capture"
    method: str = "series-through"

    _ROWS = (("srf_hz", "self-resonance", "Hz"), ("f_extremum_hz", "|Z| extremum at", "Hz"),
             ("z_extremum_ohm", "|Z| extremum", unit_of("z_extremum_ohm")),
             ("q_max", "highest Q", ""), ("f_q_max_hz", "highest Q at", "Hz"),
             ("estimate_residual_rel", "estimate residual", ""))

    def __post_init__(self):
        for key in _COMPONENT_VALUES:
            object.__setattr__(self, key, nan_if_none(getattr(self, key)))
        for key in _ARRAYS:
            object.__setattr__(self, key, np.asarray(getattr(self, key), dtype=float))
        object.__setattr__(self, "estimate", {k: nan_if_none(v) for k, v in self.estimate.items()})
        object.__setattr__(self, "flags", tuple(self.flags))

    @property
    def ok(self) -> bool:
        """True when the self-resonance and the highest Q below it were found."""
        return math.isfinite(self.srf_hz) and math.isfinite(self.q_max)

    @property
    def reason(self) -> str:
        """Why ``ok`` is False ("" when ok)."""
        why = []
        if not math.isfinite(self.srf_hz):
            why.append("no self-resonance inside the span (the reactance does not change sign)")
        if not math.isfinite(self.q_max):
            why.append("no point with R > 0 below the self-resonance for the highest Q")
        return "; ".join(why)

    @property
    def heading(self) -> str:
        return (f"Component figures of {self.name!r} ({self.kind}, {self.method}, "
                f"{len(self.f_hz)} points)")

    def view_rows(self) -> list[tuple[str, str]]:
        """The rows of ``_ROWS`` and one per estimated circuit value."""
        return super().view_rows() + [(f"{k} (estimate)", quantity(v, unit_of(k)))
                                 for k, v in self.estimate.items()]

    def to_dict(self, arrays: bool = False) -> dict[str, Any]:
        """Plain dict; the per-frequency arrays only with ``arrays=True`` (as lists)."""
        d = {k: plain(getattr(self, k)) for k in self.__dataclass_fields__
             if k not in _ARRAYS and k != "fit"}
        d["fit"] = None if self.fit is None else self.fit.to_dict()
        if arrays:
            for k in _ARRAYS:
                d[k] = [None if not np.isfinite(v) else float(v) for v in getattr(self, k)]
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "ComponentFigures":
        """The figures back from :meth:`to_dict` (arrays too when they were included)."""
        from kit.resonators.fitting import FitResult

        kw = {k: d[k] for k in cls.__dataclass_fields__ if k in d}
        kw["fit"] = None if d.get("fit") is None else FitResult.from_dict(d["fit"])
        for k in _ARRAYS:
            if k in kw:
                kw[k] = [np.nan if v is None else v for v in kw[k]]
        kw["flags"] = tuple(kw.get("flags", ()))
        return cls(**kw)

    def __repr__(self) -> str:
        return self.report()

    def plot(self, ax=None):
        """Q = \\|X\\|/R over frequency, the self-resonance marked; returns the axes."""
        import matplotlib.pyplot as plt

        if ax is None:
            _, ax = plt.subplots(figsize=(7, 4))
        factor, unit = scale_for(self.f_hz, "Hz")
        ax.plot(self.f_hz * factor, self.q, "-", label="Q = |X|/R")
        if math.isfinite(self.srf_hz):
            ax.axvline(self.srf_hz * factor, ls=":", color="C1",
                       label=f"self-resonance {eng(self.srf_hz, 'Hz')}")
        if math.isfinite(self.q_max):
            ax.plot([self.f_q_max_hz * factor], [self.q_max], "o", color="C2",
                    label=f"highest Q {quantity(self.q_max, '')}")
        ax.set_xlabel(f"frequency [{unit}]")
        ax.set_ylabel("Q [1]")
        ax.set_title(self.heading if self.ok else f"{self.heading}\n{self.reason}", fontsize="small")
        ax.legend(loc="best", fontsize="x-small")
        return ax


def _series_rl(f, z, cp):
    """Rs, L and relative residual of Rs + j omega L fitted to 1/(Y - j omega Cp)."""
    w = 2 * np.pi * f
    zs = 1.0 / (1.0 / z - 1j * w * cp)
    wt = 1.0 / np.abs(zs)
    rs = float(np.sum(wt**2 * zs.real) / np.sum(wt**2))
    lval = float(np.sum(wt**2 * w * zs.imag) / np.sum(wt**2 * w * w))
    res = (zs - (rs + 1j * w * lval)) * wt
    return rs, lval, float(np.sqrt(np.mean(np.abs(res) ** 2)))


def _inductor_estimate(f, z, srf):
    """L, Rs, Cp: for each trial Cp, Rs + j omega L = 1/(Y - j omega Cp) by weighted least
    squares; Cp by a bounded 1-D search (log scale) around 1/((2 pi SRF)^2 L_low)."""
    from scipy.optimize import minimize_scalar

    w = 2 * np.pi * f
    n_low = max(3, len(f) // 20)
    l_low = float(np.median(z.imag[:n_low] / w[:n_low]))
    cp = 0.0
    if srf and l_low > 0:
        c0 = 1.0 / ((2 * np.pi * srf) ** 2 * l_low)
        sol = minimize_scalar(lambda u: _series_rl(f, z, c0 * math.exp(u))[2],
                              bounds=(-4.0, 4.0), method="bounded",
                              options={"xatol": 1e-10})
        cp = c0 * math.exp(sol.x)
    rs, lval, _ = _series_rl(f, z, cp)
    model = 1.0 / (1j * w * cp + 1.0 / (rs + 1j * w * lval))
    return {"L": lval, "Rs": rs, "Cp": cp}, model


def _capacitor_estimate(f, z):
    """C, ESL by least squares of X = omega ESL - 1/(omega C), rows weighted by 1/|Z|;
    ESR the weighted mean of R."""
    w = 2 * np.pi * f
    wr = math.sqrt(w[0] * w[-1])          # column scaling keeps the system well conditioned
    wt = 1.0 / np.abs(z)
    a = np.column_stack([w / wr, -wr / w]) * wt[:, None]
    (u, v), *_ = np.linalg.lstsq(a, z.imag * wt, rcond=None)
    esl, inv_c = u / wr, v * wr
    esr = float(np.sum(wt**2 * z.real) / np.sum(wt**2))
    c = 1.0 / inv_c if inv_c > 0 else math.nan
    model = esr + 1j * w * esl + 1.0 / (1j * w * c)
    return {"C": float(c), "ESR": esr, "ESL": float(esl)}, model


def component_figures(capture, method: str = "series-through", kind: str | None = None, *,
                      port: int = 1, span_hz=None, fit_model: bool = False) -> ComponentFigures:
    """Self-resonant frequency, Q against frequency and effective value of a real component.

    Parameters
    ----------
    capture : Capture or skrf.Network
        The measurement.
    method : {"series-through", "shunt-through", "reflection"}
        How the component's impedance follows from the capture (see :func:`kit.impedance`).
    kind : {"inductor", "capacitor"}, optional
        Detected from the sign of the reactance over the lowest 5 % of the sweep if omitted.
    port : int
        Port for ``method="reflection"``.
    span_hz : (float, float), optional
        Analyse only this range [Hz].
    fit_model : bool
        Also fit the real-component model with :func:`kit.fit` (model "inductor" or
        "capacitor"); the result, with its uncertainties and flags, is in ``.fit``.

    Returns
    -------
    ComponentFigures
        The SRF is the first sign change of X = Im Z (from + to - for an inductor, the
        parallel resonance with its winding capacitance; from - to + for a capacitor, the
        series resonance with its ESL), refined by a quadratic through three samples of the
        quantity that is smooth there (the susceptance for an inductor, the reactance for
        a capacitor). The circuit estimate is closed form for a capacitor (weighted linear
        least squares) and a bounded 1-D search over Cp for an inductor; it carries no
        uncertainty, only its residual (use ``fit_model=True`` for a fit with
        uncertainties).

    References
    ----------
    .. [1] Methods sheet section 10: real inductor (Rs + j omega L) || Cp,
       SRF = 1/(2 pi sqrt(L Cp)), Q = omega L / Rs below the SRF; real capacitor
       ESR + j omega ESL + 1/(j omega C), |Z(SRF)| = ESR, Q = 1/(omega C ESR) (standard
       textbook forms, from memory).
    """
    path = getattr(capture, "path", None)
    if kind is not None and kind not in ("inductor", "capacitor"):
        raise CaptureError(f"unknown kind {kind!r}; choose 'inductor' or 'capacitor'", path)
    src = sweep(capture, method=method, port=port, what="component_figures()")
    name, f, z = src.name, src.f_hz, src.z_ohm
    flags: list[str] = []
    sel = np.isfinite(z) & np.isfinite(f)
    if span_hz is not None:
        lo, hi = (float(v) for v in span_hz)
        sel &= (f >= lo) & (f <= hi)
    if np.count_nonzero(~np.isfinite(z)):
        flags.append(f"nan-points:{int(np.count_nonzero(~np.isfinite(z)))}")
    f, z = f[sel], z[sel]
    f, z, n_rep = sort_merge(f, z)
    if n_rep:
        flags.append(f"repeated-frequencies:{n_rep}")
    if len(f) < 5:
        raise CaptureError(f"only {len(f)} usable point(s); at least 5 are needed", path)
    r, x = z.real, z.imag
    w = 2 * np.pi * f
    n_low = max(3, len(f) // 20)
    if kind is None:
        kind = "inductor" if np.median(x[:n_low]) > 0 else "capacitor"
    if np.any(r < -1e-9 * np.abs(z)):
        flags.append(f"negative-resistance:{int(np.count_nonzero(r < -1e-9 * np.abs(z)))}")

    sx = np.sign(x)
    if kind == "inductor":
        idx = np.nonzero((sx[:-1] > 0) & (sx[1:] <= 0))[0]
        smooth = (1.0 / z).imag   # B = -X/|Z|^2 crosses zero where X does, and smoothly
    else:
        idx = np.nonzero((sx[:-1] < 0) & (sx[1:] >= 0))[0]
        smooth = x
    srf = crossing(f, smooth, int(idx[0]), 0.0) if len(idx) else None
    if srf is None:
        flags.append("no-self-resonance-in-span")

    f_ext = z_ext = None
    if srf is not None:
        near = int(idx[0])
        lo_i, hi_i = max(0, near - 3), min(len(f), near + 5)
        mag = np.abs(z)
        if kind == "inductor":
            i = lo_i + int(np.argmax(mag[lo_i:hi_i]))
            t = 1.0 / mag**2
        else:
            i = lo_i + int(np.argmin(mag[lo_i:hi_i]))
            t = mag**2
        if 0 < i < len(f) - 1:
            f_ext, tv = vertex_min(f, t, i)
            z_ext = 1.0 / math.sqrt(tv) if kind == "inductor" else math.sqrt(max(tv, 0.0))
            # fewer than 3 samples inside the half-power width of the |Z| extremum: the
            # parabola cannot resolve it
            inside = (mag >= z_ext / math.sqrt(2)) if kind == "inductor" else (
                mag <= z_ext * math.sqrt(2))
            if np.count_nonzero(inside) < 3:
                flags.append("coarse-sampling")
        else:
            f_ext, z_ext = float(f[i]), float(mag[i])
            flags.append("extremum-at-edge")

    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.where(r > 0, np.abs(x) / r, np.nan)
        value = x / w if kind == "inductor" else -1.0 / (w * x)
    below = (f < srf) if srf is not None else np.ones(len(f), bool)
    q_max = f_q = None
    if np.any(below & np.isfinite(q)):
        qb = np.where(below & np.isfinite(q), q, -np.inf)
        iq = int(np.argmax(qb))
        q_max, f_q = float(q[iq]), float(f[iq])

    if kind == "inductor":
        est, model = _inductor_estimate(f, z, srf)
    else:
        est, model = _capacitor_estimate(f, z)
    with np.errstate(divide="ignore", invalid="ignore"):
        resid = np.abs(model - z) / np.abs(z)
    resid_rel = float(np.sqrt(np.nanmean(resid**2))) if np.any(np.isfinite(resid)) else None

    fitted = None
    if fit_model:
        try:
            from kit.resonators.fitting import fit as _fit

            fitted = _fit(f, z=z, model=kind, name=name)
        except Exception as exc:  # a failed fit must not lose the closed-form figures
            flags.append(f"fit-failed:{type(exc).__name__}: {exc}")

    return ComponentFigures(kind=kind, srf_hz=srf, f_extremum_hz=f_ext, z_extremum_ohm=z_ext,
                            q_max=q_max, f_q_max_hz=f_q, estimate=est,
                            estimate_residual_rel=resid_rel, fit=fitted, f_hz=f, r_ohm=r,
                            x_ohm=x, q=q, value=value, flags=tuple(flags), name=name,
                            method=method)
