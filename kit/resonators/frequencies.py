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

How the numbers are obtained (say this when you quote them):

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

from kit.capture import Capture, CaptureError

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
    g_max_siemens : float or None
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
    g_max_siemens: float | None
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
             ("g_max_siemens", "G at fs", "S"), ("r_max_ohm", "R at fp", "ohm"),
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


# --------------------------------------------------------------------------- numerics

def _parabola(x: np.ndarray, y: np.ndarray) -> tuple[float, float, float]:
    """Coefficients (a, b, c) of y = a (x - x1)^2 + b (x - x1) + c through 3 points."""
    d0, d2 = x[0] - x[1], x[2] - x[1]
    e0, e2 = y[0] - y[1], y[2] - y[1]
    a = (e2 * d0 - e0 * d2) / (d0 * d2 * (d2 - d0))
    b = (e0 - a * d0 * d0) / d0
    return a, b, float(y[1])


def _vertex_min(f: np.ndarray, t: np.ndarray, i: int) -> tuple[float, float]:
    """Refine a discrete minimum of t at interior index i by a 3-point parabola."""
    x = f[i - 1:i + 2]
    y = t[i - 1:i + 2]
    if not np.all(np.isfinite(y)):
        return float(f[i]), float(t[i])
    a, b, c = _parabola(x, y)
    if not a > 0:
        return float(f[i]), float(t[i])
    dx = -b / (2 * a)
    dx = min(max(dx, x[0] - x[1]), x[2] - x[1])
    return float(x[1] + dx), float(c + b * dx + a * dx * dx)


def _cross(f: np.ndarray, y: np.ndarray, i: int, level: float) -> float:
    """Where y - level changes sign between samples i and i+1 (quadratic through 3 samples)."""
    lo, hi = float(f[i]), float(f[i + 1])
    y0, y1 = float(y[i]) - level, float(y[i + 1]) - level
    lin = lo + (hi - lo) * y0 / (y0 - y1) if y0 != y1 else lo
    j = i - 1 if i >= 1 else (i if i + 2 < len(f) else None)
    if j is None:
        return lin
    x = f[j:j + 3]
    yy = y[j:j + 3] - level
    if not np.all(np.isfinite(yy)):
        return lin
    a, b, c = _parabola(x, yy)
    x1 = float(x[1])
    if abs(a) < 1e-300:
        return lin
    disc = b * b - 4 * a * c
    if disc < 0:
        return lin
    sq = math.sqrt(disc)
    # numerically stable roots
    q = -0.5 * (b + math.copysign(sq, b))
    roots = [q / a] + ([c / q] if q != 0 else [])
    inside = [x1 + r for r in roots if lo - 1e-9 * (hi - lo) <= x1 + r <= hi + 1e-9 * (hi - lo)]
    if not inside:
        return lin
    return float(min(inside, key=lambda r: abs(r - lin)))


def _peaks(y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Interior local maxima of y and their prominences (NaN-free input)."""
    from scipy.signal import find_peaks

    idx, props = find_peaks(y, prominence=0)
    return idx, props["prominences"]


def _most_prominent(y: np.ndarray, mask: np.ndarray | None = None) -> int | None:
    idx, prom = _peaks(y)
    if mask is not None and len(idx):
        keep = mask[idx]
        idx, prom = idx[keep], prom[keep]
    if len(idx) == 0:
        return None
    return int(idx[np.argmax(prom)])


def _nearest_peak(y: np.ndarray, target: int) -> int | None:
    idx, prom = _peaks(y)
    if len(idx) == 0:
        return None
    # nearest in index; among equally near, the more prominent
    order = np.lexsort((-prom, np.abs(idx - target)))
    return int(idx[order[0]])


# --------------------------------------------------------------------------- input

def _arrays(capture_or_f, z, method: str, port: int) -> tuple[np.ndarray, np.ndarray, str, str,
                                                              str | None]:
    if z is None:
        from kit.network.immittance import impedance

        obj = capture_or_f
        if not (isinstance(obj, Capture) or (hasattr(obj, "s") and hasattr(obj, "frequency"))):
            raise TypeError("resonance() needs a Capture or a scikit-rf Network, or two arrays "
                            f"(f_hz, z_ohm); got {type(obj).__name__} without z")
        zz = impedance(obj, method=method, port=port)
        ntwk = obj.network if isinstance(obj, Capture) else obj
        name = obj.name if isinstance(obj, Capture) else str(ntwk.name or "network")
        path = str(obj.path) if isinstance(obj, Capture) and obj.path is not None else None
        return np.asarray(ntwk.frequency.f, float), np.asarray(zz), name, method, path
    f = np.asarray(capture_or_f, dtype=float)
    zz = np.asarray(z, dtype=complex)
    if f.ndim != 1 or zz.shape != f.shape:
        raise ValueError(f"resonance(): f_hz and z must be 1-D arrays of the same length, got "
                         f"shapes {f.shape} and {zz.shape}")
    return f, zz, "arrays", "arrays", None


def _dedupe(f: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray, int]:
    """Sort by frequency and average complex values at repeated frequencies.

    Returns the new arrays and how many samples were merged away (0 if none).
    """
    if len(f) == 0 or np.all(np.diff(f) > 0):
        return f, z, 0
    order = np.argsort(f, kind="stable")
    f, z = f[order], z[order]
    uf, inv, counts = np.unique(f, return_inverse=True, return_counts=True)
    if len(uf) == len(f):
        return f, z, 0
    zr = np.bincount(inv, weights=z.real) / counts
    zi = np.bincount(inv, weights=z.imag) / counts
    return uf, zr + 1j * zi, len(f) - len(uf)


def _clean(f, z, span_hz, path) -> tuple[np.ndarray, np.ndarray, list[str], tuple[float, float]]:
    flags: list[str] = []
    if span_hz is not None:
        try:
            lo, hi = (float(v) for v in span_hz)
        except (TypeError, ValueError):
            raise CaptureError(f"span_hz must be a pair (f_low, f_high) in Hz, got {span_hz!r}",
                               path) from None
        if not lo < hi:
            raise CaptureError(f"span_hz = {span_hz!r}: the low edge must be below the high edge",
                               path)
        sel = (f >= lo) & (f <= hi)
        f, z = f[sel], z[sel]
    good = np.isfinite(f) & np.isfinite(z.real) & np.isfinite(z.imag)
    if np.any(~good):
        flags.append(f"nan-points:{int(np.count_nonzero(~good))}")
        f, z = f[good], z[good]
    f, z, n_rep = _dedupe(f, z)
    if n_rep:
        flags.append(f"repeated-frequencies:{n_rep}")
    if len(f) < _MIN_POINTS:
        where = "" if span_hz is None else f" inside span_hz={tuple(span_hz)!r}"
        raise CaptureError(f"only {len(f)} usable point(s){where}; at least {_MIN_POINTS} are "
                           "needed: widen the span or check the data for NaN values", path)
    return f, z, flags, (float(f[0]), float(f[-1]))


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
    f, zz, name, meth, path = _arrays(capture_or_f, z, method, port)
    f, zz, flags, span = _clean(f, zz, span_hz, path)
    n = len(f)
    step = float(np.median(np.diff(f)))
    with np.errstate(divide="ignore", invalid="ignore"):
        y = 1.0 / zz
    g, r, x, mag = y.real, zz.real, zz.imag, np.abs(zz)
    n_neg = int(np.count_nonzero(r < -1e-9 * mag))
    if n_neg:
        # a passive device has R >= 0: the fixture or the phase reference is not corrected
        flags.append(f"negative-resistance:{n_neg}")

    def vertex(i, t):
        return _vertex_min(f, t, i) if 0 < i < n - 1 else (float(f[i]), float(t[i]))

    # fs: most prominent conductance peak
    fs = g_max = None
    i_s = _most_prominent(g)
    if i_s is None:
        flags.append("no-peak:fs")
    else:
        gi = g[i_s - 1:i_s + 2]
        if np.all(gi > 0):
            with np.errstate(divide="ignore"):
                fs, t = vertex(i_s, 1.0 / g)
            g_max = 1.0 / t
        else:
            fs, g_max = float(f[i_s]), float(g[i_s])
            flags.append("not-interpolated:fs")

    # fp: most prominent resistance peak above fs (anywhere if fs is missing)
    fp = r_max = None
    i_p = _most_prominent(r, None if i_s is None else np.arange(n) > i_s)
    if i_p is None:
        flags.append("no-peak:fp")
    else:
        ri = r[i_p - 1:i_p + 2]
        if np.all(ri > 0):
            fp, t = vertex(i_p, 1.0 / r)
            r_max = 1.0 / t
        else:
            fp, r_max = float(f[i_p]), float(r[i_p])
            flags.append("not-interpolated:fp")

    # fm, fn: |Z| extrema nearest to fs and fp
    fm = zm = fn = zn = None
    i_m = (_nearest_peak(-np.log(mag), i_s) if i_s is not None
           else _most_prominent(-np.log(mag)))
    if i_m is None:
        flags.append("no-peak:fm")
    else:
        fm, t = vertex(i_m, mag**2)
        zm = math.sqrt(max(t, 0.0))
    i_n = (_nearest_peak(np.log(mag), i_p) if i_p is not None
           else _most_prominent(np.log(mag)))
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
            fr, fa = _cross(f, x, int(iu), 0.0), _cross(f, x, int(idn), 0.0)
        if len(up) > 1 or len(down) > 1:
            flags.append("several-zero-reactance-pairs")
    if fr is None:
        flags.append("no-zero-reactance")

    # half-power points of G
    f1 = f2 = qm = None
    if fs is not None and g_max is not None and g_max > 0:
        half = 0.5 * g_max
        left = np.nonzero(g[:i_s] <= half)[0]
        right = np.nonzero(g[i_s + 1:] <= half)[0]
        if len(left) and len(right):
            il = int(left[-1])
            ir = int(i_s + 1 + right[0]) - 1
            with np.errstate(divide="ignore"):
                inv_g = 1.0 / g
            f1 = _cross(f, inv_g, il, 1.0 / half) if g[il] > 0 else _cross(f, g, il, half)
            f2 = _cross(f, inv_g, ir, 1.0 / half) if g[ir + 1] > 0 else _cross(f, g, ir, half)
            if f2 > f1:
                qm = fs / (f2 - f1)
                if (f2 - f1) < 4 * step:
                    flags.append("coarse-sampling")
        else:
            flags.append("half-power-outside-span")

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
                     zn_ohm=zn, g_max_siemens=g_max, r_max_ohm=r_max, f1_hz=f1, f2_hz=f2, k_eff=k,
                     qm=qm, flags=tuple(flags), span_hz=span, points=n, step_hz=step,
                     name=name, method=meth)
