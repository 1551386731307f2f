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
* An extremum at the edge of the span, or a crossing that does not occur, gives ``None`` and
  a flag; nothing is extrapolated.

References
----------
.. [1] ANSI/IEEE Std 176-1987, *IEEE Standard on Piezoelectricity*, and ANSI/IEEE Std
   177-1966 (symbols fm, fn, fs, fp, fr, fa; the definitions used here are from memory and
   were checked numerically on the Butterworth-Van Dyke circuit, methods sheet section 1.2).
.. [2] IEC 60050-561:2014, IEV 561-01-66 (parallel resonance frequency fp).
"""

from __future__ import annotations

import dataclasses
import html
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

__all__ = ["Resonance", "resonance", "INTERPOLATION"]

#: How extrema and crossings are refined (see the module docstring).
INTERPOLATION = "parabolic-3pt (|Z|^2, |Y|^2, 1/G, 1/R); quadratic-3pt crossings"

_MIN_POINTS = 7


@dataclass(frozen=True)
class Resonance:
    """Characteristic frequencies of one resonance, with what could not be found.

    Attributes
    ----------
    fm_hz, fn_hz : float or None
        Frequencies of minimum and maximum \\|Z\\| [Hz].
    fs_hz, fp_hz : float or None
        Frequencies of maximum conductance and of maximum resistance [Hz].
    fr_hz, fa_hz : float or None
        Lower and upper zero-reactance frequencies [Hz]; None where X does not cross zero
        (a resonance with a figure of merit M = Qm C1/C0 below about 2).
    zm_ohm, zn_ohm : float or None
        \\|Z\\| at fm and at fn [ohm] (from the parabola).
    g_max_s : float or None
        Conductance at fs [S].
    r_max_ohm : float or None
        Resistance at fp [ohm].
    f1_hz, f2_hz : float or None
        Lower and upper half-power points of the conductance, G = G(fs)/2 [Hz].
    k_eff : float or None
        Effective coupling factor from fs and fp [1].
    qm : float or None
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
    """

    fm_hz: float | None
    fn_hz: float | None
    fs_hz: float | None
    fp_hz: float | None
    fr_hz: float | None
    fa_hz: float | None
    zm_ohm: float | None
    zn_ohm: float | None
    g_max_s: float | None
    r_max_ohm: float | None
    f1_hz: float | None
    f2_hz: float | None
    k_eff: float | None
    qm: float | None
    flags: tuple[str, ...]
    span_hz: tuple[float, float]
    points: int
    step_hz: float
    name: str = "arrays"
    method: str = "arrays"
    interpolation: str = INTERPOLATION

    @property
    def ok(self) -> bool:
        """True when fs, fp, k_eff and qm were all found."""
        return None not in (self.fs_hz, self.fp_hz, self.k_eff, self.qm)

    def to_dict(self) -> dict[str, Any]:
        """Plain dict (JSON-friendly: tuples become lists)."""
        d = dataclasses.asdict(self)
        d["flags"] = list(self.flags)
        d["span_hz"] = list(self.span_hz)
        return d

    _ROWS = (("fm_hz", "fm (min |Z|)", "Hz"), ("fs_hz", "fs (max G)", "Hz"),
             ("fr_hz", "fr (X = 0, lower)", "Hz"), ("fa_hz", "fa (X = 0, upper)", "Hz"),
             ("fp_hz", "fp (max R)", "Hz"), ("fn_hz", "fn (max |Z|)", "Hz"),
             ("zm_ohm", "|Z| at fm", "ohm"), ("zn_ohm", "|Z| at fn", "ohm"),
             ("g_max_s", "G at fs", "S"), ("r_max_ohm", "R at fp", "ohm"),
             ("f1_hz", "half-power f1", "Hz"), ("f2_hz", "half-power f2", "Hz"),
             ("k_eff", "k_eff", ""), ("qm", "Qm (half-power)", ""))

    @staticmethod
    def _fmt(v: float | None, unit: str) -> str:
        if v is None:
            return "not found"
        if unit == "Hz":
            return f"{v:,.2f} Hz"
        return f"{v:.6g} {unit}".rstrip()

    def __repr__(self) -> str:
        lines = [f"Resonance of {self.name!r} ({self.method}, {self.points} points, "
                 f"{self.span_hz[0]:,.6g}..{self.span_hz[1]:,.6g} Hz)"]
        for key, label, unit in self._ROWS:
            lines.append(f"  {label:<20} {self._fmt(getattr(self, key), unit)}")
        lines.append(f"  flags: {', '.join(self.flags) if self.flags else 'none'}")
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        e = html.escape
        rows = "".join(
            f"<tr><td>{e(label)}</td><td style='text-align:right'>"
            f"{e(self._fmt(getattr(self, key), unit))}</td></tr>"
            for key, label, unit in self._ROWS)
        flags = e(", ".join(self.flags)) if self.flags else "none"
        return (f"<div><b>Resonance of {e(self.name)}</b> ({e(self.method)}, {self.points} "
                f"points)<table>{rows}</table><div>flags: {flags}</div>"
                f"<div style='font-size:smaller'>interpolation: {e(self.interpolation)}</div>"
                "</div>")


# --------------------------------------------------------------------------- main

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
        Frequencies [Hz] with sub-step interpolation, k_eff, Qm and flags. The main resonance
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
    fs = g_max = i_s = None
    pk_s = conductance_peak(f, zz)
    if pk_s is None:
        flags.append("no-peak:fs")
    else:
        i_s, fs, g_max, _ = pk_s
        if not pk_s.refined:
            flags.append("not-interpolated:fs")

    # fp: most prominent resistance peak above fs (anywhere if fs is missing)
    fp = r_max = i_p = None
    pk_p = resistance_peak(f, zz, after=i_s)
    if pk_p is None:
        flags.append("no-peak:fp")
    else:
        i_p, fp, r_max, _ = pk_p
        if not pk_p.refined:
            flags.append("not-interpolated:fp")

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
    fr = fa = None
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

    return Resonance(fm_hz=fm, fn_hz=fn, fs_hz=fs, fp_hz=fp, fr_hz=fr, fa_hz=fa, zm_ohm=zm,
                     zn_ohm=zn, g_max_s=g_max, r_max_ohm=r_max, f1_hz=f1, f2_hz=f2, k_eff=k,
                     qm=qm, flags=tuple(flags), span_hz=span, points=n, step_hz=step,
                     name=name, method=meth)
