r"""Figures of merit of filters (two-port transmission) and of real components (impedance).

:func:`filter_figures` reads \|S21\| of a low-pass, high-pass, band-pass or notch response
and gives the insertion loss, the band edges at a level below the pass band (default
-3 dB), centre, bandwidth, loaded Q and stop-band rejection.

:func:`component_figures` (implemented in :mod:`kit.parts.components`, re-exported here) reads
the impedance of an inductor or capacitor and gives its self-resonant frequency, Q against
frequency, the effective L or C against frequency and closed-form estimates of the
real-component circuit (optionally a fitted one through :func:`kit.fit`).

Conventions (common practice, no source): levels are relative to the pass-band maximum of
\|S21\| (so a -3 dB edge is where the transmitted power has halved relative to the best
point of the pass band); insertion loss is minus that maximum in dB; the centre of a band is
the geometric mean sqrt(f_low f_high) (exact for a single resonance); loaded Q is
centre / bandwidth.

References
----------
.. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley 2012, ch. 6 (resonator Q and
   bandwidth) and ch. 8 (filter responses), from memory for the chapters.
.. [2] Methods sheet section 10: real inductor (Rs + j omega L) parallel Cp with
   SRF = 1/(2 pi sqrt(L Cp)); real capacitor ESR + j omega ESL + 1/(j omega C) with
   SRF = 1/(2 pi sqrt(ESL C)) and |Z(SRF)| = ESR (standard textbook forms, from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from kit.capture import CaptureError
from kit.network.accept import s_term
from kit.network.coerce import name_of, network_of
from kit.parts.components import ComponentFigures, component_figures  # noqa: F401  (re-export)
from kit.resonators.peaks import clean_trace, crossing, vertex_min
from kit.results import Result, nan_if_none
from kit.units import eng, scale_for

__all__ = ["FilterFigures", "ComponentFigures", "filter_figures", "component_figures",
           "FILTER_KINDS", "HALF_POWER_DB"]

FILTER_KINDS: tuple[str, ...] = ("low-pass", "high-pass", "band-pass", "notch")

#: The exact half-power level, -10 log10(2) = -3.0103 dB. The default level of
#: :func:`filter_figures` is the literal -3 dB; pass this for half-power edges (the two differ
#: by 0.24 % in the edge of a first-order section).
HALF_POWER_DB: float = -10.0 * math.log10(2.0)



# =========================================================================== filters

_FILTER_VALUES = ("f_low_hz", "f_high_hz", "center_hz", "bandwidth_hz", "q_loaded", "f_peak_hz",
                  "rejection_db")
#: the figures a response of each kind must have to be analysed
_NEEDED = {"low-pass": ("f_high_hz",), "high-pass": ("f_low_hz",),
           "band-pass": ("f_low_hz", "f_high_hz"), "notch": ("f_low_hz", "f_high_hz")}


@dataclass(frozen=True)
class FilterFigures(Result):
    """Figures of merit of one filter response.

    Attributes
    ----------
    kind : str
        "low-pass", "high-pass", "band-pass", "notch" or "undetermined".
    level_db : float
        Edge level relative to the pass-band maximum [dB] (negative).
    insertion_loss_db : float
        Minus the pass-band maximum of \\|S21\\| [dB].
    f_low_hz, f_high_hz : float
        Lower and upper band edges at ``level_db`` [Hz] (a low-pass has only f_high, a
        high-pass only f_low; for a notch they bound the stop band); NaN when not found.
    center_hz : float
        sqrt(f_low f_high) [Hz] (band-pass and notch).
    bandwidth_hz : float
        f_high - f_low; for a low-pass, f_high (from DC) [Hz].
    q_loaded : float
        center / bandwidth [1] (band-pass and notch).
    f_peak_hz : float
        Frequency of maximum \\|S21\\| (band-pass) or of minimum \\|S21\\| (notch),
        parabola-refined [Hz].
    rejection_db : float
        Pass-band maximum minus the highest \\|S21\\| in the stop band [dB]; for a notch,
        the notch depth.
    stopband_hz : tuple of (float, float)
        The frequency ranges used for ``rejection_db`` [Hz].
    flags : tuple of str
        e.g. ``"no-edge-in-span"``, ``"several-pass-bands"``, ``"stopband-outside-span"``,
        ``"no-lower-edge"``, ``"no-upper-edge"``, ``"nan-points:2"``,
        ``"repeated-frequencies:12"`` (samples at equal frequencies are averaged).
    name, trace : str
        Capture name and the S-parameter used.
    points : int
        Number of samples used.

    Figures not found are NaN. ``ok`` is True when the band edges of the kind were found
    (f_high for a low-pass, f_low for a high-pass, both otherwise); else ``reason`` says why.
    """

    kind: str
    level_db: float
    insertion_loss_db: float
    f_low_hz: float
    f_high_hz: float
    center_hz: float
    bandwidth_hz: float
    q_loaded: float
    f_peak_hz: float
    rejection_db: float
    stopband_hz: tuple[tuple[float, float], ...]
    flags: tuple[str, ...]
    name: str
    trace: str
    points: int

    _ROWS = (("insertion_loss_db", "insertion loss", "dB"), ("level_db", "edge level", "dB"),
             ("f_low_hz", "lower edge", "Hz"), ("f_high_hz", "upper edge", "Hz"),
             ("center_hz", "centre", "Hz"), ("bandwidth_hz", "bandwidth", "Hz"),
             ("q_loaded", "loaded Q", ""), ("f_peak_hz", "peak (band-pass) or notch", "Hz"),
             ("rejection_db", "stop-band rejection or notch depth", "dB"))

    def __post_init__(self):
        for key in _FILTER_VALUES:
            object.__setattr__(self, key, nan_if_none(getattr(self, key)))
        object.__setattr__(self, "flags", tuple(self.flags))
        object.__setattr__(self, "stopband_hz",
                           tuple((float(lo), float(hi)) for lo, hi in self.stopband_hz))

    @property
    def ok(self) -> bool:
        """True when the band edges of the response's kind were found."""
        need = _NEEDED.get(self.kind)
        return need is not None and all(math.isfinite(getattr(self, k)) for k in need)

    @property
    def reason(self) -> str:
        """Why ``ok`` is False ("" when ok)."""
        if self.kind not in _NEEDED:
            return "the kind of response could not be determined: no edge in the span"
        missing = [k.removesuffix("_hz").replace("_", " ") for k in _NEEDED[self.kind]
                   if not math.isfinite(getattr(self, k))]
        return (f"{' and '.join(missing)} edge not found at {self.level_db:g} dB inside the "
                f"span ({self.kind})") if missing else ""

    @property
    def heading(self) -> str:
        return (f"Filter figures of {self.name!r} ({self.kind}, {self.trace}, "
                f"{self.points} points)")

    def __repr__(self) -> str:
        return self.report()

    def plot(self, ax=None, capture=None):
        r"""\|S21\| [dB] with the band edges and the edge level marked; returns the axes.

        Parameters
        ----------
        ax : matplotlib Axes, optional
            Where to draw (a new figure when None).
        capture : Capture or skrf.Network, optional
            The measurement analysed, for the curve (trace ``self.trace``); without it only
            the edges and the levels are drawn.
        """
        import matplotlib.pyplot as plt

        if ax is None:
            _, ax = plt.subplots(figsize=(7, 4))
        marks = [v for v in (self.f_low_hz, self.f_high_hz, self.f_peak_hz) if math.isfinite(v)]
        f = s = None
        if capture is not None:
            f, s, *_ = _s_trace(capture, "S21" if self.trace == "one-port trace" else self.trace)
        factor, unit = scale_for(marks if f is None else f, "Hz")
        if f is not None:
            with np.errstate(divide="ignore"):
                ax.plot(f * factor, 20 * np.log10(np.abs(s)), "-", lw=1, label=f"|{self.trace}|")
        ax.axhline(-self.insertion_loss_db + self.level_db, ls="--", lw=1, color="0.5",
                   label=f"edge level ({self.level_db:g} dB)")
        for key, label, color in (("f_low_hz", "lower edge", "C1"), ("f_high_hz", "upper edge", "C2"),
                                  ("f_peak_hz", "notch" if self.kind == "notch" else "peak", "C3")):
            v = getattr(self, key)
            if math.isfinite(v):
                ax.axvline(v * factor, ls=":", lw=1, color=color, label=f"{label} {eng(v, 'Hz')}")
        ax.set_xlabel(f"frequency [{unit}]")
        ax.set_ylabel(f"|{self.trace}| [dB]")
        ax.set_title(self.heading if self.ok else f"{self.heading}\n{self.reason}", fontsize="small")
        ax.legend(loc="best", fontsize="x-small")
        return ax


def _s_trace(capture, trace: str):
    ntwk = network_of(capture, "filter_figures()")
    path = getattr(capture, "path", None)
    name = name_of(capture)
    n = ntwk.nports
    if n == 1:
        return ntwk.frequency.f, ntwk.s[:, 0, 0], name, "one-port trace", path
    i, j, t = s_term(capture, trace, "filter_figures()")
    return ntwk.frequency.f, ntwk.s[:, i, j], name, t, path


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Index ranges [a, b] (inclusive) where mask is True."""
    d = np.diff(np.concatenate([[0], mask.astype(int), [0]]))
    starts = np.nonzero(d == 1)[0]
    ends = np.nonzero(d == -1)[0] - 1
    return list(zip(starts.tolist(), ends.tolist()))


def filter_figures(capture, level_db: float = -3.0, kind: str | None = None, *,
                   trace: str = "S21", stopband_hz=None) -> FilterFigures:
    """Insertion loss, band edges, centre, bandwidth, loaded Q and rejection of a filter.

    Parameters
    ----------
    capture : Capture or skrf.Network
        Two-port capture (or a one-port holding the transmission trace alone).
    level_db : float
        Edge level below the pass-band maximum [dB], negative (default -3; use
        :data:`HALF_POWER_DB` = -3.0103 dB for exact half-power edges).
    kind : {"low-pass", "high-pass", "band-pass", "notch"}, optional
        The response type; detected from where the pass band lies when omitted: pass band
        at the low end only -> low-pass, high end only -> high-pass, neither -> band-pass,
        both with a stop region between -> notch.
    trace : str
        S-parameter to read (default "S21").
    stopband_hz : (float, float) or sequence of pairs, optional
        Stop band(s) for the rejection [Hz]. Default (common practice, no source): one
        octave beyond the edge (low-pass f >= 2 f_high, high-pass f <= f_low / 2); for a
        band-pass, more than one bandwidth outside the edges. For a notch the rejection is
        the notch depth.

    Returns
    -------
    FilterFigures
        Edges are refined by a quadratic through three samples of 1/\\|S21\\|^2 (exact for a
        first-order RC section, nearly so for a single resonance), solved inside the
        bracketing interval.

    Raises
    ------
    CaptureError
        For fewer than 5 usable points, a positive level or an unknown kind.

    References
    ----------
    .. [1] Pozar, *Microwave Engineering*, 4th ed., ch. 6 and 8 (from memory); the
       conventions are common practice, no source.
    """
    f, s, name, tr, path = _s_trace(capture, trace)
    if not (np.isfinite(level_db) and level_db < 0):
        raise CaptureError(f"level_db must be a negative number of dB, got {level_db!r}", path)
    if kind is not None and kind not in FILTER_KINDS:
        raise CaptureError(f"unknown kind {kind!r}; choose one of {', '.join(FILTER_KINDS)}", path)
    f, s, flags, _ = clean_trace(f, np.asarray(s, complex), min_points=5, path=path)
    p = np.maximum(np.abs(s) ** 2, 1e-300)
    db = 10 * np.log10(p)
    inv_p = 1.0 / p
    i_max = int(np.argmax(db))
    ref = float(db[i_max])
    edge_db = ref + level_db
    thr = 10 ** (-edge_db / 10)          # 1/|S21|^2 at the edge level
    passing = db >= edge_db
    runs = _runs(passing)

    if kind is None:
        if passing.all():
            kind = "undetermined"
            flags.append("no-edge-in-span")
        elif passing[0] and passing[-1]:
            kind = "notch"
        elif passing[0]:
            kind = "low-pass"
        elif passing[-1]:
            kind = "high-pass"
        else:
            kind = "band-pass"

    def edge_at(i):  # crossing between i and i+1
        return crossing(f, inv_p, i, thr)

    f_lo = f_hi = center = bw = q = f_pk = rej = None
    stop: list[tuple[float, float]] = []
    if kind == "low-pass":
        run = next((r for r in runs if r[0] <= i_max <= r[1]), runs[0])
        if run[1] < len(f) - 1:
            f_hi = edge_at(run[1])
            bw = f_hi
            stop = [(2 * f_hi, math.inf)]
        else:
            flags.append("no-upper-edge")
    elif kind == "high-pass":
        run = next((r for r in runs if r[0] <= i_max <= r[1]), runs[-1])
        if run[0] > 0:
            f_lo = edge_at(run[0] - 1)
            stop = [(0.0, f_lo / 2)]
        else:
            flags.append("no-lower-edge")
    elif kind == "band-pass":
        a, b = next(r for r in runs if r[0] <= i_max <= r[1])
        f_pk = (vertex_min(f, inv_p, i_max)[0] if 0 < i_max < len(f) - 1 else float(f[i_max]))
        if a > 0:
            f_lo = edge_at(a - 1)
        else:
            flags.append("no-lower-edge")
        if b < len(f) - 1:
            f_hi = edge_at(b)
        else:
            flags.append("no-upper-edge")
        if f_lo is not None and f_hi is not None:
            center, bw = math.sqrt(f_lo * f_hi), f_hi - f_lo
            q = center / bw
            stop = [(0.0, f_lo - bw), (f_hi + bw, math.inf)]
    elif kind == "notch":
        i_min = int(np.argmin(db))
        f_pk = (vertex_min(f, p, i_min)[0] if 0 < i_min < len(f) - 1 else float(f[i_min]))
        rej = ref - float(db[i_min])
        if passing[i_min]:
            flags.append("no-edge-in-span")
        else:
            left = np.nonzero(passing[:i_min])[0]
            right = np.nonzero(passing[i_min:])[0]
            if len(left):
                f_lo = edge_at(int(left[-1]))
            else:
                flags.append("no-lower-edge")
            if len(right):
                f_hi = edge_at(int(i_min + right[0]) - 1)
            else:
                flags.append("no-upper-edge")
            if f_lo is not None and f_hi is not None:
                center, bw = math.sqrt(f_lo * f_hi), f_hi - f_lo
                q = center / bw
    if kind in ("low-pass", "high-pass", "band-pass") and len(runs) > 1:
        flags.append("several-pass-bands")

    if stopband_hz is not None and kind != "notch":
        sb = np.asarray(stopband_hz, dtype=float)
        if sb.ndim == 1:
            sb = sb.reshape(1, 2)
        if sb.ndim != 2 or sb.shape[1] != 2:
            raise CaptureError(f"stopband_hz must be a pair (lo, hi) or pairs, got {stopband_hz!r}",
                               path)
        stop = [(float(lo), float(hi)) for lo, hi in sb]
    if kind != "notch" and stop:
        sel = np.zeros(len(f), bool)
        for lo, hi in stop:
            sel |= (f >= lo) & (f <= hi)
        if sel.any():
            rej = ref - float(np.max(db[sel]))
        else:
            flags.append("stopband-outside-span")

    return FilterFigures(kind=kind, level_db=float(level_db), insertion_loss_db=-ref,
                         f_low_hz=f_lo, f_high_hz=f_hi, center_hz=center, bandwidth_hz=bw,
                         q_loaded=q, f_peak_hz=f_pk, rejection_db=rej,
                         stopband_hz=tuple(stop), flags=tuple(flags), name=name, trace=tr,
                         points=len(f))
