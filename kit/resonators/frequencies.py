r"""Characteristic frequencies of a resonator from its measured impedance.

:func:`resonance` finds, on a capture or on arrays (f, Z):

=========  =====================================================================
``fm_hz``  minimum of \|Z\|
``fn_hz``  maximum of \|Z\|
``fs_hz``  maximum of the conductance G = Re(1/Z) (motional, series resonance)
``fp_hz``  maximum of the resistance R = Re Z (parallel resonance)
``fr_hz``  lower zero-reactance frequency (X = Im Z goes from - to +)
``fa_hz``  upper zero-reactance frequency (X goes from + to -)
=========  =====================================================================

plus ``k_eff`` from (fs, fp) and ``qm`` from the half-power points of the conductance.

How the numbers are obtained (say this when you quote them; the numerics are those of
:mod:`kit.resonators.peaks`, the kit's one peak reader, so the fit's start values, the
Bode-Fano series branch and the match panel read the same fs from the same points):

* Extrema. The sample with the extreme value is found among the interior local extrema (the
  most prominent one, so that the 1/(omega C) slope of a wide sweep is not mistaken for a
  peak). It is refined by a 3-point parabola through that sample and its two neighbours,
  fitted not to the quantity itself but to the one that is locally quadratic in frequency
  for a single resonance: \|Z\|^2 for fm, \|Y\|^2 for fn, 1/G for fs, 1/R for fp (near a
  resonance the reactance is nearly linear in f, so these are nearly exact parabolas).
* Crossings (fr, fa and the half-power points). A quadratic through three neighbouring
  samples, solved inside the bracketing interval (linear interpolation as a fall-back); for
  the half-power points the quadratic is fitted to 1/G, which is quadratic in the motional
  reactance.
* An extremum at the edge of the span, or a crossing that does not occur, gives NaN and
  a flag; nothing is extrapolated.

Uncertainties (fields ``<figure>_stderr_hz``, ``k_eff_stderr``, ``qm_stderr``; the helpers
are in :mod:`kit.resonators.peak_errors`):

* Noise from the data alone. The measured S-parameter is rebuilt from Z (S11 for
  "reflection" and bare arrays, S21 for the through methods); white noise of variance
  sigma^2 gives second differences of variance 6 sigma^2, and sigma is read robustly from
  their median absolute deviation, so that the resonance's own curvature does not inflate
  it. ``noise_rms`` is that noise as a complex rms [1]. It is carried to Z by \|dZ/dS\| and
  to the quantity each reading uses (1/G, 1/R, \|Z\|^2, \|Y\|^2, X) point by point by
  its derivative, since noise that is white on S is far from white on 1/G.
* Extrema (fs, fp, fm, fn). The larger of two standard errors of the three-point vertex:
  the delta method (first-order propagation of the ordinate noise through
  x* = x1 - b/(2a)), and a simulation of the whole reading (choice of the extreme sample
  and vertex) on the least-squares parabola of the peak, which holds where many samples
  lie across the peak and the extreme sample is itself chosen by the noise. A reading that
  is the sample itself has at least step/sqrt(12).
* Crossings (fr, fa, half-power points). Noise over the local slope; the half-power level
  carries the error of G(fs).
* k_eff and Qm by first-order propagation from fs, fp and the half-power points
  (the level error moves f1 and f2 apart together).
* Where the noise of the quantity read exceeds 5 % of it (:data:`NOISE_LIMIT`), the first
  order no longer holds: the reading is flagged ``noise-limited:<figure>``.

The coverage of these errors over 240 noisy BVD captures is checked in
tests/test_resonance_errors.py (about 95 % within two standard errors on fine grids,
more on coarse ones, where the noise estimate of a short sweep is conservative).

References
----------
.. [1] ANSI/IEEE Std 176-1987, *IEEE Standard on Piezoelectricity*, and ANSI/IEEE Std
   177-1966 (symbols fm, fn, fs, fp, fr, fa; the definitions used here are from memory and
   were checked numerically on the Butterworth-Van Dyke circuit, methods sheet section 1.2).
.. [2] IEC 60050-561:2014, IEV 561-01-66 (parallel resonance frequency fp).
.. [3] JCGM 100:2008 (GUM), sections 5.1.2 (first-order propagation, the delta method) and
   4.3.7 (a reading known to within one step: step/sqrt(12)); JCGM 101:2008 (GUM
   Supplement 1, propagation by simulation).
.. [4] D. M. Pozar, *Microwave Engineering*, 4th ed., 2012, Table 4.2 (S21 of a series and a
   shunt impedance; from memory for the table number).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from kit.network.coerce import sweep
from kit.resonators.peaks import (
    clean_trace,
    conductance_peak,
    crossing,
    half_power_points,
    nearest_peak,
    prominent_peak,
    q_half_power,
    resistance_peak,
    vertex_min,
)
from kit.resonators.resonance_errors import NOISE_LIMIT, STDERR_FIELDS, UNCERTAINTY, uncertainties
from kit.results import Result, nan_if_none
from kit.units import eng, scale_for, unit_of

__all__ = ["Resonance", "resonance", "INTERPOLATION", "NOISE_LIMIT", "STDERR_FIELDS"]

#: How extrema and crossings are refined (see the module docstring).
INTERPOLATION = "parabolic-3pt (|Z|^2, |Y|^2, 1/G, 1/R); quadratic-3pt crossings"

_MIN_POINTS = 7


#: Result fields that are numbers (NaN when not found).
_VALUES = ("fm_hz", "fn_hz", "fs_hz", "fp_hz", "fr_hz", "fa_hz", "zm_ohm", "zn_ohm", "g_max_siemens",
           "r_max_ohm", "f1_hz", "f2_hz", "k_eff", "qm")
#: flag -> why a figure needed by ``ok`` is missing
_WHY = {"no-peak:fs": "no conductance peak inside the span",
        "no-peak:fp": "no resistance peak above fs inside the span",
        "fp-not-above-fs": "fp is not above fs",
        "half-power-outside-span": "a half-power point of the conductance is outside the span",
        "magnitude-extrema": "read from the extrema of |S21| alone, as the complex impedance "
                             "cannot be trusted (fixture not removed); fit the magnitude "
                             "(kit.fit(..., method='series-through', data='magnitude')) for Qm"}


def _row(key: str, label: str, unit: str | None = None) -> tuple[str, str, str]:
    return key, label, unit_of(key) if unit is None else unit


@dataclass(frozen=True)
class Resonance(Result):
    """Characteristic frequencies of one resonance, with what could not be found.

    Attributes
    ----------
    fm_hz, fn_hz : float
        Frequencies of minimum and maximum \\|Z\\| [Hz].
    fs_hz, fp_hz : float
        Frequencies of maximum conductance and of maximum resistance [Hz].
    fr_hz, fa_hz : float
        Lower and upper zero-reactance frequencies [Hz]; NaN where X does not cross zero
        (a resonance with a figure of merit M = Qm C1/C0 below about 2).
    zm_ohm, zn_ohm : float
        \\|Z\\| at fm and at fn [ohm] (from the parabola).
    g_max_siemens : float
        Conductance at fs [S].
    r_max_ohm : float
        Resistance at fp [ohm].
    f1_hz, f2_hz : float
        Lower and upper half-power points of the conductance, G = G(fs)/2 [Hz].
    k_eff : float
        Effective coupling factor from fs and fp [1].
    qm : float
        Mechanical quality factor fs/(f2 - f1) [1].
    flags : tuple of str
        What could not be computed or looks doubtful, e.g. ``"no-peak:fs"``,
        ``"no-zero-reactance"``, ``"half-power-outside-span"``, ``"coarse-sampling"``,
        ``"nan-points:3"``, ``"repeated-frequencies:12"``, ``"unexpected-order:fm<fs<fr"``,
        ``"negative-resistance:40"`` (R < 0 at 40 points: not a passive device, so the
        fixture or phase reference is not corrected and every number is doubtful).
    span_hz : tuple of float
        The frequency range analysed [Hz].
    points : int
        Number of samples analysed.
    step_hz : float
        Median frequency step [Hz].
    name : str
        The capture's name (or "arrays").
    method : str
        How Z was obtained ("reflection", "series-through", ... or "arrays").
    interpolation : str
        How extrema and crossings were refined.
    fs_stderr_hz, fp_stderr_hz, fm_stderr_hz, fn_stderr_hz, fr_stderr_hz, fa_stderr_hz : float
        Standard errors of the frequencies [Hz] (module docstring, "Uncertainties").
    k_eff_stderr, qm_stderr : float
        Standard errors of k_eff and Qm [1].
    noise_rms : float
        Complex rms noise of the measured S-parameter, estimated from the data alone [1].

    Every value that was not found is NaN (a None given is stored as NaN). ``ok`` is True
    when fs, fp, k_eff and qm are all finite; otherwise ``reason`` says which are missing
    and why. ``to_dict()`` adds ``ok`` and ``reason`` to the fields.
    """

    fm_hz: float
    fn_hz: float
    fs_hz: float
    fp_hz: float
    fr_hz: float
    fa_hz: float
    zm_ohm: float
    zn_ohm: float
    g_max_siemens: float
    r_max_ohm: float
    f1_hz: float
    f2_hz: float
    k_eff: float
    qm: float
    flags: tuple[str, ...]
    span_hz: tuple[float, float]
    points: int
    step_hz: float
    name: str = "arrays"
    method: str = "arrays"
    interpolation: str = INTERPOLATION
    fs_stderr_hz: float = math.nan
    fp_stderr_hz: float = math.nan
    fm_stderr_hz: float = math.nan
    fn_stderr_hz: float = math.nan
    fr_stderr_hz: float = math.nan
    fa_stderr_hz: float = math.nan
    k_eff_stderr: float = math.nan
    qm_stderr: float = math.nan
    noise_rms: float = math.nan

    _ROWS = (_row("fm_hz", "fm (min |Z|)"), _row("fs_hz", "fs (max G)"),
             _row("fr_hz", "fr (X = 0, lower)"), _row("fa_hz", "fa (X = 0, upper)"),
             _row("fp_hz", "fp (max R)"), _row("fn_hz", "fn (max |Z|)"),
             _row("zm_ohm", "|Z| at fm"), _row("zn_ohm", "|Z| at fn"),
             _row("g_max_siemens", "G at fs"),
             _row("r_max_ohm", "R at fp"), _row("f1_hz", "half-power f1"),
             _row("f2_hz", "half-power f2"), _row("k_eff", "k_eff"),
             _row("qm", "Qm (half-power)"), _row("noise_rms", "noise (relative, from data)"))

    def __post_init__(self):
        for key in _VALUES + tuple(STDERR_FIELDS.values()) + ("noise_rms",):
            object.__setattr__(self, key, nan_if_none(getattr(self, key)))
        object.__setattr__(self, "flags", tuple(self.flags))
        object.__setattr__(self, "span_hz", tuple(float(v) for v in self.span_hz))

    @property
    def ok(self) -> bool:
        """True when fs, fp, k_eff and qm were all found (finite)."""
        return all(math.isfinite(getattr(self, k)) for k in ("fs_hz", "fp_hz", "k_eff", "qm"))

    @property
    def reason(self) -> str:
        """Which of fs, fp, k_eff and qm were not found and why ("" when ok)."""
        missing = [k.removesuffix("_hz") for k in ("fs_hz", "fp_hz", "k_eff", "qm")
                   if not math.isfinite(getattr(self, k))]
        if not missing:
            return ""
        why = [_WHY[fl] for fl in self.flags if fl in _WHY]
        return f"{', '.join(missing)} not found" + (f": {'; '.join(why)}" if why else "")

    @property
    def heading(self) -> str:
        lo, hi = self.span_hz
        return (f"Resonance of {self.name!r} ({self.method}, {self.points} points, "
                f"{eng(lo, 'Hz', 7)}..{eng(hi, 'Hz', 7)})")

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON data: every field (NaN where not found), plus ``ok`` and ``reason``."""
        return {**super().to_dict(), "ok": self.ok, "reason": self.reason}

    def stderr_of(self, key: str) -> float | None:
        """The standard error of a row (:data:`STDERR_FIELDS`; the report prints "± error")."""
        err = getattr(self, STDERR_FIELDS.get(key, ""), math.nan)
        return err if math.isfinite(err) else None

    def _footer(self) -> list[str]:
        return super()._footer() + [f"interpolation: {self.interpolation}",
                                    f"standard errors: {UNCERTAINTY}"]

    def __repr__(self) -> str:
        return self.report()

    def plot(self, ax=None, data=None):
        """\\|Z\\| over the span with the characteristic frequencies marked; returns the axes.

        Parameters
        ----------
        ax : matplotlib Axes, optional
            Where to draw (a new figure when None).
        data : Capture, skrf.Network or (f_hz, z_ohm), optional
            The measurement analysed, for the \\|Z\\| curve (its impedance by ``method``);
            without it only the marked frequencies are drawn.
        """
        import matplotlib.pyplot as plt

        from kit.network.coerce import sweep

        if ax is None:
            _, ax = plt.subplots(figsize=(7, 4))
        lo, hi = self.span_hz
        factor, unit = scale_for(self.span_hz, "Hz")
        if data is not None:
            method = "reflection" if self.method == "arrays" else self.method
            sw = sweep(data, method=method, what="Resonance.plot")
            sel = (sw.f_hz >= lo) & (sw.f_hz <= hi)
            ax.semilogy(sw.f_hz[sel] * factor, np.abs(sw.z_ohm[sel]), "-", lw=1, label="|Z|")
        for i, (key, label, _) in enumerate(r for r in self._ROWS if r[0].endswith("_hz")):
            v = getattr(self, key)
            if math.isfinite(v):
                ax.axvline(v * factor, ls=":", lw=1, color=f"C{(i + 1) % 10}",
                           label=f"{label} {eng(v, 'Hz', 7)}")
        ax.set_xlim(lo * factor, hi * factor)
        ax.set_xlabel(f"frequency [{unit}]")
        ax.set_ylabel(f"|Z| [{unit_of('z_ohm')}]")
        ax.set_title(self.heading if self.ok else f"{self.heading}\n{self.reason}", fontsize="small")
        ax.legend(loc="best", fontsize="x-small")
        return ax


# --------------------------------------------------------------------------- main

def _taken(pk, key: str, flags: list[str]) -> tuple[int | None, float | None, float | None]:
    """(index, frequency, value) of a peak of the reader, flagging a missing or unrefined one."""
    if pk is None:
        flags.append(f"no-peak:{key}")
        return None, None, None
    if not pk.refined:
        flags.append(f"not-interpolated:{key}")
    return pk[0], pk[1], pk[2]


def resonance(capture_or_f, z=None, span_hz=None, method: str = "reflection",
              port: int = 1) -> Resonance:
    """Characteristic frequencies, k_eff and Qm of the main resonance in a capture.

    Parameters
    ----------
    capture_or_f : Capture, skrf.Network or array_like
        The measurement, or the frequencies [Hz] when ``z`` is given.
    z : array_like of complex, optional
        Impedance [ohm] at ``capture_or_f`` (arrays mode).
    span_hz : (float, float), optional
        Analyse only this frequency range [Hz] (inclusive); use it to pick one mode of a
        multi-mode capture.
    method : {"reflection", "series-through", "shunt-through"}
        How Z is obtained from a capture (see :func:`kit.impedance`); ignored for arrays.
    port : int
        1-based port for ``"reflection"``.

    Returns
    -------
    Resonance
        Frequencies [Hz] with sub-step interpolation, k_eff, Qm, their standard errors
        (``<figure>_stderr_hz``, ``k_eff_stderr``, ``qm_stderr``), the noise estimate
        ``noise_rms`` and flags ("noise-limited:<figure>" where the noise is comparable
        with the quantity read, so that its standard error is only indicative). The main resonance
        is the most prominent conductance peak; fp is the most prominent resistance peak
        above it, fm and fn the \\|Z\\| extrema nearest to fs and fp. Points with NaN are
        dropped; samples at repeated frequencies are averaged (both flagged).

    Raises
    ------
    CaptureError
        When fewer than 7 usable points remain or the span is malformed.

    Notes
    -----
    Qm is fs/(f2 - f1) with f1, f2 where G = G(fs)/2 (exact for the Butterworth-Van Dyke
    circuit, where omega2 - omega1 = R1/L1). A conductance baseline (dielectric loss,
    neighbouring modes) biases it; fit an equivalent circuit when that matters.

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987 and ANSI/IEEE Std 177-1966 (definitions from memory).
    .. [2] IEC 60050-561:2014, IEV 561-01-66 (fp).
    .. [3] k_eff^2 = (fp^2 - fs^2)/fp^2: ANSI/IEEE Std 176-1987 (from memory), quoted by
       Lamberti & Pappalardo, IEEE Ultrasonics Symp. 1991, doi 10.1109/ULTSYM.1991.234236.
    """
    src = sweep(capture_or_f, z, method=method, port=port, what="resonance()")
    if method == "series-through" and not src.from_arrays:
        from kit.resonators import crystal

        why = crystal.complex_route_flags(capture_or_f, method, span_hz)
        if why:  # a crystal behind its fixture: only the magnitude of S21 can be read
            return _read_magnitude(crystal.magnitude_resonance(capture_or_f, span_hz), src,
                                   span_hz, why)
    return _read_complex(src, span_hz)


def _read_magnitude(mag, src, span_hz, why) -> Resonance:
    """A :class:`Resonance` from the |S21| extrema of a series-through capture.

    fs is the frequency of maximum |S21| and fp that of the minimum above it; k_eff follows
    from them; |Z| at fs is R1 = 2 Z0 (1/|S21| - 1) (the crystal is resistive there). Their
    standard errors are those of the extrema reading
    (:attr:`kit.resonators.crystal.MagnitudeResonance.fs_stderr_hz`). Qm is left to the magnitude fit.

    References
    ----------
    .. [1] ANSI/IEEE Std 177-1966 (fs as the frequency of maximum transmission; from memory).
    .. [2] JCGM 100:2008 (GUM), 4.3.7.
    """
    from kit.resonators.coupling import k_eff as _k_eff

    fs, fp = mag.fs_hz, mag.fp_hz
    keff = float(_k_eff(fs, fp)) if math.isfinite(fp) and fp > fs > 0 else math.nan
    lo_hi = span_hz if span_hz is not None else (float(src.f_hz.min()), float(src.f_hz.max()))
    return Resonance(fm_hz=math.nan, fn_hz=math.nan, fs_hz=fs, fp_hz=fp, fr_hz=math.nan,
                     fa_hz=math.nan, zm_ohm=mag.r1_ohm, zn_ohm=math.nan,
                     g_max_siemens=math.nan, r_max_ohm=math.nan, f1_hz=math.nan,
                     f2_hz=math.nan, k_eff=keff, qm=math.nan,
                     flags=tuple(dict.fromkeys((*why, *mag.flags))), span_hz=lo_hi,
                     points=int(len(src.f_hz)), step_hz=mag.step_hz, name=src.name,
                     method=src.method, fs_stderr_hz=mag.fs_stderr_hz,
                     fp_stderr_hz=mag.fp_stderr_hz)


def _read_complex(src, span_hz) -> Resonance:
    """The readings of :func:`resonance` from the complex impedance of a coerced sweep."""
    name, meth, path = src.name, src.method, src.path
    f, zz, flags, span = clean_trace(src.f_hz, src.z_ohm, span_hz, min_points=_MIN_POINTS,
                                     path=path)
    n = len(f)
    step = float(np.median(np.diff(f)))
    with np.errstate(divide="ignore", invalid="ignore"):
        y = 1.0 / zz
    g, x, mag = y.real, zz.imag, np.abs(zz)
    n_neg = int(np.count_nonzero(zz.real < -1e-9 * mag))
    if n_neg:
        # a passive device has R >= 0: the fixture or the phase reference is not corrected
        flags.append(f"negative-resistance:{n_neg}")

    def vertex(i, t):
        return vertex_min(f, t, i) if 0 < i < n - 1 else (float(f[i]), float(t[i]))

    # fs: most prominent conductance peak, refined on 1/G (the one peak reader)
    i_s, fs, g_max = _taken(conductance_peak(f, zz), "fs", flags)
    # fp: most prominent resistance peak above fs (anywhere if fs is missing)
    i_p, fp, r_max = _taken(resistance_peak(f, zz, after=i_s), "fp", flags)

    # fm, fn: |Z| extrema nearest to fs and fp
    fm = zm = fn = zn = None
    i_m = (nearest_peak(-np.log(mag), i_s) if i_s is not None
           else prominent_peak(-np.log(mag)))
    if i_m is None:
        flags.append("no-peak:fm")
    else:
        fm, t = vertex(i_m, mag**2)
        zm = math.sqrt(max(t, 0.0))
    i_n = (nearest_peak(np.log(mag), i_p) if i_p is not None
           else prominent_peak(np.log(mag)))
    if i_n is None:
        flags.append("no-peak:fn")
    else:
        fn, t = vertex(i_n, 1.0 / mag**2)
        zn = 1.0 / math.sqrt(t) if t > 0 else float(mag[i_n])

    # fr, fa: zero-reactance crossings nearest to fs and fp
    fr = fa = iu = idn = None
    sx = np.sign(x)
    up = np.nonzero((sx[:-1] < 0) & (sx[1:] >= 0))[0]
    down = np.nonzero((sx[:-1] > 0) & (sx[1:] <= 0))[0]
    if len(up) and len(down):
        ref_s = fs if fs is not None else (fm if fm is not None else f[0])
        ref_p = fp if fp is not None else (fn if fn is not None else f[-1])
        iu = up[np.argmin(np.abs(f[up] - ref_s))]
        later = down[down > iu]
        if len(later):
            idn = later[np.argmin(np.abs(f[later] - ref_p))]
            fr, fa = crossing(f, x, int(iu), 0.0), crossing(f, x, int(idn), 0.0)
        if len(up) > 1 or len(down) > 1:
            flags.append("several-zero-reactance-pairs")
    if fr is None:
        flags.append("no-zero-reactance")

    # half-power points of G
    f1 = f2 = qm = None
    if fs is not None and g_max is not None and g_max > 0:
        pts = half_power_points(f, g, i_s, g_max)
        if pts is None:
            flags.append("half-power-outside-span")
        else:
            f1, f2 = pts
            qm = q_half_power(fs, f1, f2)
            if (f2 - f1) < 4 * step:
                flags.append("coarse-sampling")

    k = None
    if fs is not None and fp is not None and fp > fs:
        from kit.resonators.coupling import k_eff as _k_eff

        k = float(_k_eff(fs, fp))
    elif fs is not None and fp is not None:
        flags.append("fp-not-above-fs")

    tol = 0.5 * step
    if None not in (fm, fs, fr) and not (fm <= fs + tol and fs <= fr + tol):
        flags.append("unexpected-order:fm<fs<fr")
    if None not in (fa, fp, fn) and not (fa <= fp + tol and fp <= fn + tol):
        flags.append("unexpected-order:fa<fp<fn")

    found = dict(fm_hz=fm, fn_hz=fn, fs_hz=fs, fp_hz=fp, fr_hz=fr, fa_hz=fa, f1_hz=f1, f2_hz=f2,
                 k_eff=k, qm=qm)
    where = {"fm_hz": i_m, "fn_hz": i_n, "fs_hz": i_s, "fp_hz": i_p, "fr_hz": iu, "fa_hz": idn}
    errors = uncertainties(f, zz, found, where, flags, meth, src.z0_ohm)
    return Resonance(**found, zm_ohm=zm, zn_ohm=zn, g_max_siemens=g_max, r_max_ohm=r_max,
                     flags=tuple(flags), span_hz=span, points=n, step_hz=step,
                     name=name, method=meth, **errors)
