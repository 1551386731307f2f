"""The design frequency: where it comes from, and how much a design depends on it.

:func:`design_frequency` gives the frequency a single-frequency design starts from: the
series resonance fs of a Butterworth-Van Dyke fit of the element (a frequency of the
model, not of the sweep's grid), else fs of :func:`kit.resonance`.

A tuning inductor that cancels the susceptance left at the design frequency becomes huge
where that susceptance passes through zero (near the series resonance of a high-Q element,
between fr and fs): a 0.1 % shift of the frequency can then change the part many times
over. :func:`design_sensitivity` redesigns at f (1 - δ) and f (1 + δ) and reports the
relative change of each part, so that a panel can warn before a part is bought for a
value that only holds at one exact frequency.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

from kit.results import Result
from kit.units import percent, quantity

#: Relative shift of the design frequency tried on each side [1] (0.1 %).
REL_STEP = 1e-3
#: Largest relative change of a part for that shift before the design is called
#: sensitive [1] (10 %).
THRESHOLD = 0.10


@dataclass(frozen=True)
class Sensitivity(Result):
    """The relative change of each part of a design for a small shift of its frequency.

    Attributes
    ----------
    f_hz : float
        Design frequency [Hz].
    rel_step : float
        Relative shift tried on each side, δ [1].
    parts : tuple of str
        Part names of the design at ``f_hz``.
    changes : tuple of float
        For each part, the largest of \\|v(f (1 ± δ)) - v(f)\\| / \\|v(f)\\| [1]; inf when a
        redesign failed or gave other parts.
    worst : float
        The largest change [1] (0 for a design without parts).
    threshold : float
        The change above which the design is called sensitive [1].
    notes : tuple of str
        Why a redesign failed or changed its parts.
    """

    f_hz: float
    rel_step: float
    parts: tuple[str, ...]
    changes: tuple[float, ...]
    worst: float
    threshold: float
    notes: tuple[str, ...] = ()

    _ROWS = (("f_hz", "design frequency", "Hz"), ("worst", "largest change of a part", "%"))

    @property
    def sensitive(self) -> bool:
        """True when a part changes by more than ``threshold`` (or a redesign fails)."""
        return not self.worst <= self.threshold

    @property
    def heading(self) -> str:
        return f"Sensitivity to the design frequency (± {percent(self.rel_step)})"

    def message(self) -> str:
        """One plain sentence: which part moves how much, and what to do when it is too much."""
        shift = f"a {percent(self.rel_step)} change of the design frequency"
        if not self.sensitive:
            return (f"the design is steady: no part changes by more than "
                    f"{percent(self.worst)} for {shift}")
        worst = max(range(len(self.changes)), key=lambda i: self.changes[i])
        how = ("cannot be redesigned" if math.isinf(self.changes[worst])
               else f"changes by {percent(self.changes[worst])}")
        why = f" ({'; '.join(self.notes)})" if self.notes else ""
        return (f"{self.parts[worst]} {how} for {shift} near {quantity(self.f_hz, 'Hz', digits=7)}"
                f"{why}: this value holds only at that exact frequency; design at a frequency "
                "where the element's reactance changes slowly, tune the C0 of a fit rather "
                "than the measured reactance, or choose the band design")


def design_sensitivity(design_at: Callable[[float], object], f_hz: float,
                       rel_step: float = REL_STEP, threshold: float = THRESHOLD) -> Sensitivity:
    """Redesign at f (1 ± δ) and report the relative change of each part.

    Parameters
    ----------
    design_at : callable
        Frequency [Hz] -> :class:`kit.match.MatchDesign` (e.g.
        ``lambda f: kit.match.tuning_inductor(capture, f)``).
    f_hz : float
        Design frequency [Hz].
    rel_step : float
        δ, the relative shift tried on each side [1].
    threshold : float
        Change above which the design is sensitive [1].

    Returns
    -------
    Sensitivity

    Notes
    -----
    The change of part i is max over ± of \\|v_i(f (1 ± δ)) - v_i(f)\\| / \\|v_i(f)\\|, a
    finite-difference estimate of δ \\|d ln v_i / d ln f\\| (first-order sensitivity,
    common practice, no source). For a capacitance C tuned by L = 1/(ω² C) it is about
    2 δ (0.2 % for δ = 0.1 %).
    """
    base = design_at(float(f_hz))
    names = tuple(p.name for p in base.parts)
    values = {p.name: (p.kind, float(p.value)) for p in base.parts}
    changes = dict.fromkeys(names, 0.0)
    notes: list[str] = []
    for sign in (-1.0, 1.0):
        f = float(f_hz) * (1.0 + sign * rel_step)
        try:
            other = design_at(f)
        except ValueError as exc:
            notes.append(f"at {quantity(f, 'Hz', digits=7)}: {exc}")
            changes = dict.fromkeys(names, math.inf)
            continue
        got = {p.name: (p.kind, float(p.value)) for p in other.parts}
        for n in names:
            kind, v = values[n]
            if n not in got or got[n][0] != kind:
                changes[n] = math.inf
                notes.append(f"at {quantity(f, 'Hz', digits=7)} the design has other parts")
            elif v != 0.0:
                changes[n] = max(changes[n], abs(got[n][1] - v) / abs(v))
    ch = tuple(changes[n] for n in names)
    return Sensitivity(f_hz=float(f_hz), rel_step=float(rel_step), parts=names, changes=ch,
                       worst=max(ch, default=0.0), threshold=float(threshold),
                       notes=tuple(dict.fromkeys(notes)))


def design_frequency(load, fit=None) -> tuple[float, str]:
    """The frequency a single-frequency design of ``load`` starts from, and where it is from.

    Parameters
    ----------
    load : Capture or skrf.Network
        The measured element.
    fit : kit FitResult, optional
        A fit of the element; its fs is used when finite.

    Returns
    -------
    f_hz : float
        fs of ``fit``; else fs of a Butterworth-Van Dyke fit over the span of
        :func:`kit.resonators.starts.suggest_span`; else fs of :func:`kit.resonance` (the
        interpolated maximum of the conductance) when it found fs and fp; else the
        geometric middle of the sweep [Hz].
    basis : str
        Where ``f_hz`` comes from, as a phrase ("fs of a Butterworth-Van Dyke fit").

    References
    ----------
    .. [1] fs as the series resonance of the motional branch, 1/(2 pi sqrt(L1 C1)):
       ANSI/IEEE Std 176-1987 (from memory).
    """
    import numpy as np

    from kit.capture import CaptureError
    from kit.network.accept import network_of
    from kit.resonators.fitting import fit as fit_bvd
    from kit.resonators.starts import suggest_span

    f = np.asarray(network_of(load, "a design frequency").f, dtype=float)
    inside = lambda v: v is not None and math.isfinite(v) and f[0] <= v <= f[-1]  # noqa: E731
    if fit is not None and inside(getattr(fit, "fs_hz", None)):
        return float(fit.fs_hz), f"fs of the {fit.model} fit"
    try:
        start = suggest_span([load])  # reads kit.resonance's fs and fp over the sweep
        r = fit_bvd(load, model="bvd", span_hz=start.span_hz)
        if r.ok and inside(r.fs_hz):
            return float(r.fs_hz), "fs of a Butterworth-Van Dyke fit"
        if inside(start.fs_hz) and math.isfinite(start.fp_hz):
            return float(start.fs_hz), "fs read off the conductance peak (kit.resonance)"
    except (CaptureError, ValueError):
        pass
    return float(np.sqrt(f[0] * f[-1])), "the middle of the sweep (no resonance found)"
