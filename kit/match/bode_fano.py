r"""The Bode-Fano limit on matching a capacitive load over a band.

For a load made of a resistance R in parallel with a capacitance C, no lossless passive
matching network can do better than

.. math:: \int_0^\infty \ln\frac{1}{|\Gamma(\omega)|}\, d\omega \le \frac{\pi}{R C}

and with an inductance L also in parallel (a parallel RLC) the low-frequency side adds

.. math:: \int_0^\infty \frac{1}{\omega^2} \ln\frac{1}{|\Gamma(\omega)|}\, d\omega \le \frac{\pi L}{R}.

For a series R-L-C (the motional branch of a Butterworth-Van Dyke element near its series
resonance) the two limits are π R / L on the first integral and π R C on the second. A
shunt C0 across that branch can be counted as part of the matching network, so the
series-RLC limit of the motional branch also bounds every match of the whole BVD element.

If |Γ| is held at a constant value Γm over a band Δω (and 1 outside), the first gives
Γm >= exp(−π / (Δω R C)): the best return loss any network can reach over that band.

A measured element is replaced by its parallel RC (or RLC) equivalent fitted over the band;
the fit residual is reported and flagged when large, since the bound then is indicative.

References
----------
.. [1] R. M. Fano, "Theoretical limitations on the broadband matching of arbitrary
   impedances", J. Franklin Inst. 249 (1950), 57-83 and 139-154 (pages from memory).
.. [2] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, section 5.9, the
   Bode-Fano criterion for RC and RL loads (from memory for the section).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from kit.match.circuit import load_grid, load_z, measured_z
from kit.resonators.peaks import clean_trace, conductance_peak, half_power_points, q_half_power
from kit.results import Result
from kit.units import quantity

REF_FANO = ("R. M. Fano, J. Franklin Inst. 249 (1950); Pozar, Microwave Engineering, 4th ed., "
            "section 5.9 (from memory for the section)")
MODELS = ("parallel-rc", "parallel-rlc", "series-rlc")


def fano_integral(f_hz, gamma, weight: str = "1") -> float:
    r"""Integral of ln(1/|Γ|) over angular frequency, safe at perfect-match points.

    Between grid points |Γ| is taken as linear and ln|Γ| is integrated exactly on each
    cell, so a perfect match at a grid point (|Γ| = 0, an integrable log singularity)
    adds its true finite share instead of a huge trapezoid spike. Where |Γ| has a
    V-shaped zero inside a cell the linear model over-estimates |Γ| there, so the result
    errs low, never high.

    Parameters
    ----------
    f_hz : array_like
        Increasing frequencies [Hz].
    gamma : array_like
        Reflection coefficient at each frequency [1].
    weight : {"1", "1/w2"}
        Integrate ln(1/|Γ|) dω [rad/s] or ω^-2 ln(1/|Γ|) dω [s/rad] (the weight is taken
        at each cell's middle).

    Returns
    -------
    float
        The integral over the given range only (a lower bound on the integral over all
        frequencies when |Γ| <= 1 outside it). Cells with a non-finite end are skipped.

    References
    ----------
    .. [1] Fano (1950); Pozar, 4th ed., section 5.9 (from memory for the section).
    """
    w = 2.0 * np.pi * np.asarray(f_hz, dtype=float)
    g = np.abs(np.asarray(gamma))
    if weight not in ("1", "1/w2"):
        raise ValueError(f"weight must be '1' or '1/w2', got {weight!r}")
    g0, g1, h = g[:-1], g[1:], np.diff(w)
    ok = np.isfinite(g0) & np.isfinite(g1)
    g0, g1, h = g0[ok], g1[ok], h[ok]
    wm = 0.5 * (w[:-1] + w[1:])[ok]

    def xlogx(x):
        return np.where(x > 0, x * np.log(np.where(x > 0, x, 1.0)), 0.0)

    d = g1 - g0
    close = np.abs(d) <= 1e-9 * np.maximum(g0, g1)
    with np.errstate(divide="ignore", invalid="ignore"):
        mean_log = np.where(close, np.log(np.maximum(0.5 * (g0 + g1), 1e-300)),
                            (xlogx(g1) - xlogx(g0)) / np.where(close, 1.0, d) - 1.0)
    cell = -h * mean_log
    if weight == "1/w2":
        cell = cell / wm**2
    return float(np.sum(cell))


@dataclass(frozen=True, eq=False)
class FanoLimit(Result):
    """Bode-Fano limit for a parallel RC or RLC equivalent over a band.

    Attributes
    ----------
    model : {"parallel-rc", "parallel-rlc", "series-rlc"}
    r_ohm, c_f, l_h : float
        Equivalent R [ohm], C [F], L [H] (L is inf for the RC model).
    r_std_ohm, c_std_f, l_std_h : float
        Standard uncertainties of the fitted values from the fit residual (0 for values
        given as numbers; NaN when too few points).
    f_lo_hz, f_hi_hz : float
        Band [Hz].
    bound_rad_s : float
        Limit on ∫ ln(1/|Γ|) dω [rad/s]: π/(R C) for the parallel models, π R / L for the
        series RLC.
    bound_low_s : float
        Limit on ∫ ω⁻² ln(1/|Γ|) dω [s/rad]: π L / R (parallel RLC), π R C (series RLC),
        inf for the parallel RC.
    fit_residual : float
        RMS of |Y_fit − Y| over RMS |Y| in the band (0 for numbers).
    flags : tuple of str
        Cautions about the equivalent.
    """

    model: str
    r_ohm: float
    c_f: float
    l_h: float
    f_lo_hz: float
    f_hi_hz: float
    bound_rad_s: float
    bound_low_s: float
    r_std_ohm: float = 0.0
    c_std_f: float = 0.0
    l_std_h: float = 0.0
    fit_residual: float = 0.0
    flags: tuple[str, ...] = ()

    _ROWS = (("r_ohm", "R", "Ω"), ("c_f", "C", "F"), ("l_h", "L", "H"),
             ("f_lo_hz", "band from", "Hz"), ("f_hi_hz", "band to", "Hz"),
             ("bound_rad_s", "limit on ∫ ln(1/|Γ|) dω", "rad/s"),
             ("bound_low_s", "limit on ∫ ω⁻² ln(1/|Γ|) dω", "s/rad"),
             ("gamma_min", "best constant |Γ| over the band", ""),
             ("rl_max_db", "best constant return loss", "dB"),
             ("fit_residual", "fit residual (relative RMS)", ""))

    @property
    def heading(self) -> str:
        return f"Bode-Fano limit ({self.model})"

    @property
    def ok(self) -> bool:
        """True when the limit is a finite positive number."""
        return bool(np.isfinite(self.bound_rad_s) and self.bound_rad_s > 0)

    @property
    def reason(self) -> str:
        """Why ``ok`` is False ("" when ok)."""
        return "" if self.ok else (f"the limit is not a finite positive number: R = "
                                   f"{quantity(self.r_ohm, 'Ω')}, C = {quantity(self.c_f, 'F')}")

    @property
    def log_budget(self) -> float:
        """Largest constant ln(1/|Γ|) over the band allowed by the limit(s) [1]."""
        w1, w2 = 2 * np.pi * self.f_lo_hz, 2 * np.pi * self.f_hi_hz
        a = self.bound_rad_s / (w2 - w1)
        b = self.bound_low_s / (1.0 / w1 - 1.0 / w2) if np.isfinite(self.bound_low_s) else np.inf
        return float(min(a, b))

    @property
    def gamma_min(self) -> float:
        """Smallest constant |Γ| achievable over the whole band [1]."""
        return float(np.exp(-self.log_budget))

    @property
    def rl_max_db(self) -> float:
        """Best constant return loss over the band [dB]."""
        return float(20.0 * self.log_budget / np.log(10.0))

    def integrals(self, f_hz, gamma, band_only: bool = True) -> tuple[float, float]:
        """(∫ ln(1/|Γ|) dω, ∫ ω⁻² ln(1/|Γ|) dω) over the band (or the whole given range)."""
        f = np.asarray(f_hz, dtype=float)
        g = np.asarray(gamma)
        if band_only:
            sel = (f >= self.f_lo_hz) & (f <= self.f_hi_hz)
            f, g = f[sel], g[sel]
        if f.size < 2:
            return float("nan"), float("nan")
        return fano_integral(f, g), fano_integral(f, g, "1/w2")

    def ratio(self, response_or_f, gamma=None, band_only: bool = True) -> float:
        """Share of the Bode-Fano budget a response uses: integral / bound_rad_s [1].

        For the parallel RC this is the integral over π/(RC). For the RLC models the larger
        of the two ratios (the one nearer its limit) is given.
        Over the band only by default: how much of the whole budget the design spends where
        it is wanted. A value above 1 over the full range would break the limit.
        """
        if gamma is None:
            f, gamma = response_or_f.f_hz, response_or_f.gamma
        else:
            f = response_or_f
        i1, i2 = self.integrals(f, gamma, band_only)
        r = i1 / self.bound_rad_s
        if np.isfinite(self.bound_low_s):
            r = max(r, i2 / self.bound_low_s)
        return float(r)

    def summary(self) -> str:
        """Plain text."""
        eq = f"R = {quantity(self.r_ohm, 'Ω')}, C = {quantity(self.c_f, 'F')}"
        if self.model != "parallel-rc":
            eq += f", L = {quantity(self.l_h, 'H')}"
        lines = [f"Bode-Fano limit ({self.model}: {eq}) over "
                 f"{quantity(self.f_lo_hz, 'Hz', digits=6)}..{quantity(self.f_hi_hz, 'Hz', digits=6)}",
                 f"  limit on the integral of ln(1/|Gamma|) d omega = "
                 f"{quantity(self.bound_rad_s, 'rad/s')}; best constant |Gamma| over the band "
                 f"{quantity(self.gamma_min, '')} (return loss {quantity(self.rl_max_db, 'dB')})"]
        lines += ["  caution: " + x for x in self.flags]
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.summary()


def _fit(f, z, model):
    """Least-squares parallel RC / RLC fit to Y = 1/Z; values, stds, residual."""
    w = 2 * np.pi * f
    y = 1.0 / z
    g = y.real
    n = f.size
    r_g = float(np.mean(g))
    g_std = float(np.std(g, ddof=1) / np.sqrt(n)) if n > 1 else float("nan")
    wc = float(np.sqrt(w[0] * w[-1]))
    x = w / wc  # scaled so that both columns are of order 1
    if model == "parallel-rc":
        a = x[:, None]
        scale = np.array([1.0 / wc])
    else:
        a = np.column_stack([x, -1.0 / x])
        scale = np.array([1.0 / wc, wc])  # coef -> (C, 1/L)
    coef, *_ = np.linalg.lstsq(a, y.imag, rcond=None)
    b_fit = a @ coef
    dof = n - a.shape[1]
    if dof > 0:
        s2 = float(np.sum((y.imag - b_fit) ** 2) / dof)
        cov = s2 * np.linalg.inv(a.T @ a)
        std = np.sqrt(np.diag(cov)) * scale
    else:
        std = np.full(a.shape[1], np.nan)
    coef = coef * scale
    y_fit = r_g + 1j * b_fit
    resid = float(np.sqrt(np.mean(np.abs(y_fit - y) ** 2)) / np.sqrt(np.mean(np.abs(y) ** 2)))
    return r_g, g_std, coef, std, resid


def _series_rlc_estimate(f, z):
    """Motional R1, L1, C1 from the conductance peak and its half-power points.

    Near fs the motional admittance traces a circle of diameter 1/R1; the points where
    G = Gmax/2 are the +-45 degree points, f2 - f1 = fs/Qm. fs, Gmax, f1 and f2 come from
    the kit's one peak reader (:mod:`kit.resonators.peaks`), the same as :func:`kit.resonance`
    on the same points.
    """
    g = (1.0 / z).real
    pk = conductance_peak(f, z)
    if pk is None or not pk.value > 0:
        raise ValueError("no conductance peak (series resonance) inside the band; widen the "
                         "band or give r_ohm, l_h and c_f of the motional branch")
    pts = half_power_points(f, g, pk.index, pk.value)
    if pts is None:
        raise ValueError("the conductance peak's half-power points are not inside the band; "
                         "widen the band or give r_ohm, l_h and c_f of the motional branch")
    (f1, f2), fs, gmax = pts, pk.f_hz, pk.value
    qm = q_half_power(fs, f1, f2)
    r1 = 1.0 / gmax
    ws = 2 * np.pi * fs
    l1 = qm * r1 / ws
    c1 = 1.0 / (ws * ws * l1)
    lo = max(int(np.searchsorted(f, f1)) - 1, 0)
    hi = min(int(np.searchsorted(f, f2)), len(f) - 1)
    spacing = float(np.max(np.diff(f[lo:hi + 1]))) if hi > lo else float("nan")
    # grid-limited uncertainty (conservative): half a step on f1 and f2
    q_rel = np.hypot(spacing / 2, spacing / 2) / (f2 - f1)
    return r1, l1, c1, q_rel, (f1, fs, f2)


def bode_fano(load=None, f_lo_hz: float = None, f_hi_hz: float = None, *,
              model: str = "parallel-rc", r_ohm: float | None = None, c_f: float | None = None,
              l_h: float | None = None, n_points: int = 201) -> FanoLimit:
    """Bode-Fano limit for the element's RC or RLC equivalent over a band.

    Parameters
    ----------
    load : Capture, skrf.Network, complex array, callable, or None
        The element. "parallel-rc"/"parallel-rlc": the equivalent is fitted over the band
        by linear least squares on Y = 1/Z (G = mean Re Y; Im Y = ωC, or ωC − 1/(ωL)).
        "series-rlc": the motional branch R1, L1, C1 from the conductance peak in the band
        (R1 = 1/Gmax) and its half-power points (Qm = fs/(f2 − f1)). None: give the values.
    f_lo_hz, f_hi_hz : float
        Band [Hz].
    model : {"parallel-rc", "parallel-rlc", "series-rlc"}
        Equivalent circuit.
    r_ohm, c_f, l_h : float, optional
        Equivalent values [ohm, F, H] when ``load`` is None.
    n_points : int
        Points across the band for a load given as a function or number (a capture uses
        its own points in the band).

    Returns
    -------
    FanoLimit

    Raises
    ------
    ValueError
        When the fit gives a negative R, C or L (the equivalent does not describe the
        element over this band), or the band is empty.

    References
    ----------
    .. [1] R. M. Fano, J. Franklin Inst. 249 (1950); Pozar, *Microwave Engineering*,
       4th ed., section 5.9 (from memory for the section).
    .. [2] Half-power points of the motional admittance circle: methods sheet section 2.3
       (IEEE 177-1966, classical; from memory).
    """
    if model not in MODELS:
        raise ValueError(f"model must be one of {MODELS}, got {model!r}")
    f_lo, f_hi = float(f_lo_hz), float(f_hi_hz)
    if not (0 < f_lo < f_hi):
        raise ValueError(f"need 0 < f_lo_hz < f_hi_hz, got {f_lo_hz!r}, {f_hi_hz!r}")
    flags: list[str] = []
    r_std = c_std = l_std = 0.0
    resid = 0.0
    if load is None:
        if r_ohm is None or c_f is None or (model != "parallel-rc" and l_h is None):
            raise ValueError("give a load, or r_ohm and c_f (and l_h for the RLC models)")
        r, c = float(r_ohm), float(c_f)
        l = float(l_h) if model != "parallel-rc" else np.inf
    else:
        if load_grid(load) is not None:
            # the measured points in the band, cleaned as kit.resonance cleans them
            fm, zm = measured_z(load)
            f, z, _, _ = clean_trace(fm, zm, (f_lo, f_hi), min_points=3,
                                     path=getattr(load, "path", None))
        else:
            f = np.linspace(f_lo, f_hi, n_points)
            z = load_z(load, f)
        ok = np.isfinite(z) & (z != 0)
        f, z = f[ok], z[ok]
        if model == "series-rlc":
            r, l, c, q_rel, (f1, fs, f2) = _series_rlc_estimate(f, z)
            # Qm from the grid: R1 exact at the peak only to the grid; C1, L1 follow Qm
            l_std, c_std = l * q_rel, c * q_rel
            flags.append(f"motional branch from the conductance peak at "
                         f"{quantity(fs, 'Hz', digits=6)} and its half-power points "
                         f"{quantity(f1, 'Hz', digits=6)}, {quantity(f2, 'Hz', digits=6)} "
                         "(grid-limited estimate)")
        else:
            g, g_std, coef, std, resid = _fit(f, z, model)
            if g <= 0:
                raise ValueError("the element shows no loss (mean Re Y <= 0) over the band; "
                                 "the Bode-Fano limit needs a resistive part")
            r, r_std = 1.0 / g, g_std / g**2
            c, c_std = float(coef[0]), float(std[0])
            if c <= 0:
                raise ValueError("the fitted capacitance is not positive: the element is not "
                                 f"capacitive over the band; a {model} equivalent does not apply")
            l = np.inf
            if model == "parallel-rlc":
                if coef[1] <= 0:
                    raise ValueError("the fitted parallel inductance is not positive; try "
                                     "model='parallel-rc' or 'series-rlc'")
                l, l_std = 1.0 / coef[1], std[1] / coef[1] ** 2
            if resid > 0.1:
                flags.append(f"the {model} equivalent fits the measured admittance poorly over "
                             f"the band (residual {100 * resid:.3g} %); the limit is indicative "
                             "only (near a series resonance try model='series-rlc')")
    if not (r > 0 and c > 0 and l > 0):
        raise ValueError(f"R, C and L must be > 0, got R={r}, C={c}, L={l}")
    if model == "series-rlc":
        b1, b2 = np.pi * r / l, np.pi * r * c
    else:
        b1 = np.pi / (r * c)
        b2 = np.pi * l / r if np.isfinite(l) else np.inf
    return FanoLimit(model, r, c, l, f_lo, f_hi, b1, b2, r_std, c_std, l_std, resid,
                     tuple(flags))
