"""Time-domain gating (through scikit-rf), to remove or keep a fixture reflection."""

from __future__ import annotations

import math
import re
import warnings
from typing import Any, Literal

import numpy as np

from kit.capture import Capture, CaptureError
from kit.corrections.base import PASSIVITY_TOL, Correction, grid_text, is_uniform

GateMode = Literal["bandpass", "bandstop"]
_SIJ = re.compile(r"^s([1-9])([1-9])$")


class TimeGate(Correction):
    """A time gate applied to chosen S-parameters; see :func:`time_gate`."""

    kind = "time_gate"

    def __init__(self, start_s, stop_s, center_s, span_s, mode, window, method, which, tol):
        super().__init__(tol)
        self.start_s, self.stop_s = start_s, stop_s
        self.center_s, self.span_s = center_s, span_s
        self.mode, self.window, self.method = mode, window, method
        self.which = which

    def _parameters(self) -> dict[str, Any]:
        return {"start_s": self.start_s, "stop_s": self.stop_s, "center_s": self.center_s,
                "span_s": self.span_s, "mode": self.mode,
                "window": list(self.window) if isinstance(self.window, tuple) else self.window,
                "method": self.method, "which": list(self.which) if self.which else "all"}

    def _pairs(self, cap: Capture) -> list[tuple[int, int]]:
        if not self.which:
            return [(i, j) for i in range(cap.ports) for j in range(cap.ports)]
        pairs = []
        for name in self.which:
            m = _SIJ.match(name.lower())
            i, j = int(m.group(1)) - 1, int(m.group(2)) - 1
            if i >= cap.ports or j >= cap.ports:
                raise CaptureError(f"time_gate on {name} asked, but {cap.name!r} has "
                                   f"{cap.ports} port(s)", cap.path)
            pairs.append((i, j))
        return pairs

    def _check(self, cap: Capture) -> None:
        if not is_uniform(cap.f_hz):
            raise CaptureError(f"time gating needs a uniform frequency grid; {cap.name!r} has "
                               f"{grid_text(cap.f_hz)}. Re-measure on a linear sweep",
                               cap.path)
        if cap.points < 8:
            raise CaptureError(f"time gating needs a sweep of several points; {cap.name!r} "
                               f"has {cap.points}", cap.path)
        self._pairs(cap)

    def _correct(self, cap: Capture):
        import skrf
        from skrf.time import time_gate as skrf_gate

        s = np.array(cap.s, dtype=complex)
        notes: list[str] = []
        for i, j in self._pairs(cap):
            one = skrf.Network(frequency=cap.network.frequency, s=s[:, i, j], z0=50.0)
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                try:
                    gated = skrf_gate(one, start=self.start_s, stop=self.stop_s,
                                      center=self.center_s, span=self.span_s, mode=self.mode,
                                      window=self.window, method=self.method, t_unit="s")
                except Exception as exc:  # noqa: BLE001 - library refusal -> clear message
                    raise CaptureError(f"time gating of S{i + 1}{j + 1} failed "
                                       f"({type(exc).__name__}: {exc})", cap.path) from None
            notes += [f"S{i + 1}{j + 1}: {w.message}" for w in caught]
            s[:, i, j] = gated.s[:, 0, 0]
        return s, ({"library_notes": notes} if notes else {})


def time_gate(start_s: float | None = None, stop_s: float | None = None, *,
              center_s: float | None = None, span_s: float | None = None,
              mode: GateMode = "bandpass", window: Any = ("kaiser", 6),
              method: Literal["fft", "rfft", "convolution"] = "fft",
              which: tuple[str, ...] | list[str] | None = None,
              passivity_tol: float = PASSIVITY_TOL) -> TimeGate:
    """Time-domain gate on a capture's S-parameters.

    A ``"bandpass"`` gate keeps what lies between ``start_s`` and ``stop_s`` (or within
    ``span_s`` around ``center_s``); a ``"bandstop"`` gate removes it, for example a
    fixture's connector reflection ahead of the device. The frequency-domain window used
    for the transform is removed after gating.

    Parameters
    ----------
    start_s, stop_s : float, optional
        Gate edges [s] (one-way time of the impulse response, i.e. round trip for a
        reflection).
    center_s, span_s : float, optional
        Alternative: gate centre and width [s].
    mode : {"bandpass", "bandstop"}
        Keep or remove what lies inside the gate.
    window : tuple, str, float or callable
        Gate window (scipy.signal.windows name, kaiser beta, ...).
    method : {"fft", "rfft", "convolution"}
        scikit-rf's gating method ("rfft", low-pass mode, needs a DC point).
    which : sequence of str, optional
        S-parameters to gate, such as ``("s11",)``; default all.
    passivity_tol : float
        Tolerance on |S| above 1 for the ``"active"`` finding.

    Returns
    -------
    TimeGate
        Callable on a capture; refused on a non-uniform grid.

    References
    ----------
    .. [1] scikit-rf 2.2.0 ``skrf.time.time_gate`` (the implementation used).
    .. [2] An instrument maker's application note "Time Domain Analysis Using a Network
       Analyzer" (cited by scikit-rf's ``Network.windowed``); alias-free time range 1/df
       (standard FFT fact, from memory).
    """
    if mode not in ("bandpass", "bandstop"):
        raise CaptureError(f"mode must be 'bandpass' or 'bandstop', got {mode!r}")
    if method not in ("fft", "rfft", "convolution"):
        raise CaptureError(f"method must be 'fft', 'rfft' or 'convolution', got {method!r}")
    by_edges = start_s is not None and stop_s is not None
    by_centre = center_s is not None and span_s is not None
    if by_edges == by_centre:
        raise CaptureError("give the gate either as start_s and stop_s or as center_s and "
                           "span_s (in seconds); automatic gating is not done")
    vals = (start_s, stop_s) if by_edges else (center_s, span_s)
    if not all(math.isfinite(float(v)) for v in vals):
        raise CaptureError(f"gate times must be finite numbers of seconds, got {vals!r}")
    if by_edges and not float(start_s) < float(stop_s):
        raise CaptureError(f"start_s must be before stop_s, got {start_s!r} >= {stop_s!r}")
    if by_centre and not float(span_s) > 0:
        raise CaptureError(f"span_s must be > 0, got {span_s!r}")
    names = None
    if which:
        names = tuple(str(w).lower() for w in which)
        bad = [w for w in names if not _SIJ.match(w)]
        if bad:
            raise CaptureError(f"which must name S-parameters like 's11' or 's21', got {bad}")
    def conv(v):
        return None if v is None else float(v)

    return TimeGate(conv(start_s), conv(stop_s), conv(center_s), conv(span_s), mode, window,
                    method, names, passivity_tol)
