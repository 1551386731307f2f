"""The correction contract, input handling, frequency grids, passivity and chains.

A correction is a small object made by a factory function (``kit.osl(...)``,
``kit.cable(...)`` ...). Calling it on a capture returns a *new* Capture whose provenance
has one more step, the correction's :meth:`Correction.describe` dict (plus what happened
on this capture: resampling, passivity). The input is never changed.

To add a correction: subclass :class:`Correction`, set ``kind``, implement
``_parameters()``, ``_inputs()`` (standards and fixtures, for hashes), ``_check(cap)``
(refuse before computing) and ``_correct(cap) -> (s, extra_step_info)``; then write a
factory function and add it to ``kit/corrections/__init__.py``.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from kit.capture import Capture, CaptureError, Finding, from_network
from kit.network.coerce import is_network
from kit.results import Result, nan_if_none
from kit.units import eng

#: Default tolerance on |S| (or the largest singular value of S) above 1 before a
#: corrected capture is reported as active. Common practice, no source; real calibrated
#: data are slightly active (the microstrip open of ../shared/realdata reaches about 1.004).
PASSIVITY_TOL = 1e-3


# ---------------------------------------------------------------------------- inputs
def as_capture(obj: Any, role: str = "capture") -> Capture:
    """A Capture from a Capture, a scikit-rf Network, or a Touchstone path.

    Parameters
    ----------
    obj : Capture, skrf.Network, str or Path
        The data.
    role : str
        What the object is for (``"open standard"``, ``"fixture"``...), used in messages.

    Raises
    ------
    CaptureError
        When a path does not exist or cannot be read, or the object is of another type.
    """
    if isinstance(obj, Capture):
        return obj
    if isinstance(obj, (str, Path)):
        path = Path(obj)
        if not path.exists():
            raise CaptureError(f"the {role} file was not found; check the path or pick the "
                               "file again", path)
        from kit.io.touchstone import load

        return load(path)
    if is_network(obj):
        return from_network(obj)
    raise CaptureError(f"the {role} must be a Capture, a scikit-rf Network or a Touchstone "
                       f"path, got {type(obj).__name__}")


def require_ports(cap: Capture, ports: int | tuple[int, ...], role: str, why: str = "") -> None:
    """Refuse a capture with the wrong number of ports, naming the file."""
    allowed = (ports,) if isinstance(ports, int) else tuple(ports)
    if cap.ports not in allowed:
        want = " or ".join(f"{p}-port" for p in allowed)
        raise CaptureError(
            f"the {role} {cap.name!r} is a {cap.ports}-port capture; a {want} is needed"
            + (f" ({why})" if why else ""), cap.path)


def real_reference(cap: Capture, role: str) -> np.ndarray:
    """The capture's reference impedances [ohm], shape (points, ports), refused if complex."""
    z0 = cap.z0
    if np.any(np.abs(z0.imag) > 1e-9 * np.maximum(1.0, np.abs(z0.real))):
        raise CaptureError(f"the {role} {cap.name!r} has a complex reference impedance; "
                           "corrections need a real reference (renormalise it first)", cap.path)
    return z0.real


def identity(cap: Capture) -> dict[str, Any]:
    """Name, path and hash of an input: the file's SHA-256, or of the data when in memory."""
    if cap.sha256 is not None:
        return {"name": cap.name, "path": str(cap.path), "sha256": cap.sha256}
    h = hashlib.sha256()
    h.update(np.ascontiguousarray(cap.f_hz).tobytes())
    h.update(np.ascontiguousarray(cap.s).tobytes())
    return {"name": cap.name, "path": None, "data_sha256": h.hexdigest()}


# ---------------------------------------------------------------------------- grids
def grid_text(f_hz: np.ndarray) -> str:
    """``1 MHz to 10 MHz, 21 points`` (with "non-uniform" when the steps differ); the ends
    to 9 significant digits, so that two grids that differ read differently."""
    f = np.asarray(f_hz, dtype=float)
    if f.size == 0:
        return "an empty grid"
    text = f"{eng(f[0], 'Hz', 9)} to {eng(f[-1], 'Hz', 9)}, {f.size} points"
    if not is_uniform(f):
        text += ", non-uniform"
    return text


def is_uniform(f_hz: np.ndarray, rtol: float = 1e-6) -> bool:
    """True when the frequency steps are equal within ``rtol`` of the mean step."""
    f = np.asarray(f_hz, dtype=float)
    if f.size < 3:
        return True
    d = np.diff(f)
    return bool(np.all(np.abs(d - d.mean()) <= rtol * abs(d.mean())))


def same_grid(a: np.ndarray, b: np.ndarray, rtol: float = 1e-9) -> bool:
    """True when two frequency grids have the same points (to ``rtol`` of the top frequency)."""
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    if a.shape != b.shape:
        return False
    if a.size == 0:
        return True
    scale = max(abs(a[-1]), abs(b[-1]), 1.0)
    return bool(np.all(np.abs(a - b) <= rtol * scale))


def grid_key(f_hz: np.ndarray) -> tuple:
    """A hashable key identifying a frequency grid (for caches of error terms)."""
    f = np.ascontiguousarray(f_hz, dtype=float)
    return (f.size, hashlib.sha1(f.tobytes()).hexdigest())


def grid_mismatch(cap: Capture, other: Capture, role: str) -> CaptureError:
    """The error for mismatched grids, naming both grids and the way out."""
    return CaptureError(
        f"frequency grids differ: the capture {cap.name!r} has {grid_text(cap.f_hz)}, the "
        f"{role} {other.name!r} has {grid_text(other.f_hz)}. Measure both on the same grid, "
        "or build the correction with resample=True to interpolate the "
        f"{role} onto the capture's grid (recorded in the provenance)", cap.path)


def resample_s(src_f: np.ndarray, src_s: np.ndarray, f_hz: np.ndarray) -> np.ndarray:
    """Linear interpolation of S (real and imaginary parts) onto ``f_hz``; no extrapolation.

    References
    ----------
    .. [1] Linear interpolation in Cartesian form, as scikit-rf's ``Network.interpolate``
       default (scikit-rf 2.2.0); common practice, no source.
    """
    out = np.empty((len(f_hz),) + src_s.shape[1:], dtype=complex)
    for i in range(src_s.shape[1]):
        for j in range(src_s.shape[2]):
            out[:, i, j] = (np.interp(f_hz, src_f, src_s[:, i, j].real)
                            + 1j * np.interp(f_hz, src_f, src_s[:, i, j].imag))
    return out


def s_on_grid(cap: Capture, other: Capture, role: str, resample: bool) -> tuple[np.ndarray, dict]:
    """S of ``other`` on the grid of ``cap``: as is when the grids match, else interpolated.

    Returns the array and a dict for the provenance (empty when nothing was resampled).

    Raises
    ------
    CaptureError
        On a grid mismatch without ``resample``, or when the capture's grid reaches outside
        ``other``'s range (no extrapolation).
    """
    if same_grid(cap.f_hz, other.f_hz):
        return np.asarray(other.s), {}
    if not resample:
        raise grid_mismatch(cap, other, role)
    f, g = cap.f_hz, other.f_hz
    if f[0] < g[0] * (1 - 1e-12) or f[-1] > g[-1] * (1 + 1e-12):
        raise CaptureError(
            f"cannot resample the {role} {other.name!r} ({grid_text(g)}) onto the capture "
            f"{cap.name!r} ({grid_text(f)}): the capture reaches outside the {role}'s range "
            "and extrapolation is not done", cap.path)
    note = {"what": role, "name": other.name, "from": grid_text(g), "to": grid_text(f),
            "method": "linear in real and imaginary parts"}
    return resample_s(np.asarray(g), np.asarray(other.s), np.asarray(f)), note


# ---------------------------------------------------------------------------- passivity
@dataclass(frozen=True)
class Passivity(Result):
    """How far a capture is from passive.

    Attributes
    ----------
    worst : float
        Largest |S11| (one-port) or largest singular value of S (n-port) over frequency [1].
    f_hz : float
        Frequency where it occurs [Hz].
    excess : float
        ``worst - 1`` [1]: positive means active by that much, negative is the passive
        headroom.
    name : str
        The capture.
    ok, reason : bool, str
        False with a plain reason when no frequency point has a finite S.
    """

    worst: float
    f_hz: float
    excess: float
    name: str = ""
    ok: bool = True
    reason: str = ""

    _ROWS = (("worst", "largest gain of S", ""), ("f_hz", "at", "Hz"),
             ("excess", "above 1 by", ""))

    def __post_init__(self) -> None:
        for key in ("worst", "f_hz", "excess"):
            object.__setattr__(self, key, nan_if_none(getattr(self, key)))


def passivity(capture: Any) -> Passivity:
    """Passivity of a capture: the largest gain of S over frequency.

    Parameters
    ----------
    capture : Capture or skrf.Network

    Returns
    -------
    Passivity
        ``ok`` False with a reason when no point has finite S.

    References
    ----------
    .. [1] A network is passive when the largest singular value of S is at most 1 at every
       frequency (for a one-port, |S11| <= 1); scikit-rf 2.2.0 ``Network.passivity`` uses
       the same criterion (I - S^H S positive semi-definite). Common practice.
    """
    cap = as_capture(capture)
    s = np.asarray(cap.s)
    if cap.ports == 1:
        gain = np.abs(s[:, 0, 0])
    else:
        gain = np.linalg.svd(s, compute_uv=False)[:, 0]
    if gain.size == 0 or not np.any(np.isfinite(gain)):
        return Passivity(math.nan, math.nan, math.nan, cap.name, False,
                         "no frequency point has finite S-parameters")
    k = int(np.nanargmax(gain))
    return Passivity(float(gain[k]), float(cap.f_hz[k]), float(gain[k] - 1.0), cap.name)


def passivity_finding(before: Capture, after: Capture, tol: float) -> tuple[dict, tuple]:
    """Provenance entry and (maybe) an ``"active"`` warning for a corrected capture."""
    p = passivity(after)
    entry = {"worst": p.worst, "f_hz": p.f_hz, "excess": p.excess, "tol": tol}
    if not (np.isfinite(p.excess) and p.excess > tol):
        return entry, ()
    p0 = passivity(before)
    what = "|S11|" if after.ports == 1 else "the largest singular value of S"
    msg = (f"the corrected capture is active: {what} reaches {eng(p.worst, '', 6)} at "
           f"{eng(p.f_hz, 'Hz', 7)}, {eng(p.excess, '', 3)} above 1 (tolerance "
           f"{eng(tol, '')}); before the correction the worst was {eng(p0.worst, '', 6)}")
    fix = ("check the standards, the cable or fixture parameters and that the grids match; "
           "a small excess is normal in calibrated data")
    finding = Finding("warning", msg, None, fix, "active",
                      None if after.path is None else str(after.path))
    return entry, (finding,)


# ---------------------------------------------------------------------------- contract
class Correction:
    """Base of every correction: callable on a capture, returning a new capture.

    Subclasses set ``kind`` and implement ``_parameters``, ``_inputs``, ``_check`` and
    ``_correct``. Attributes are set once by the factory and not changed afterwards.
    """

    kind = "correction"

    def __init__(self, passivity_tol: float = PASSIVITY_TOL) -> None:
        self.passivity_tol = float(passivity_tol)

    # -- to implement
    def _parameters(self) -> dict[str, Any]:
        return {}

    def _inputs(self) -> dict[str, Any]:
        return {}

    def _check(self, cap: Capture) -> None:
        """Raise CaptureError for an input this correction cannot take (before computing)."""

    def _correct(self, cap: Capture) -> tuple[np.ndarray, dict[str, Any]]:
        raise NotImplementedError

    # -- public
    def describe(self) -> dict[str, Any]:
        """Plain dict for provenance: kind, parameters and input identities (hashes)."""
        return {"kind": self.kind, "parameters": self._parameters(), "inputs": self._inputs()}

    def __call__(self, capture: Any) -> Capture:
        """Apply to a Capture (or a scikit-rf Network); returns a new Capture."""
        return self._apply(as_capture(capture), check=True, tol=self.passivity_tol)

    def _apply(self, cap: Capture, check: bool, tol: float) -> Capture:
        self._check(cap)
        s, extra = self._correct(cap)
        net = _network_like(cap.network, s)
        step = self.describe()
        step.update(extra)
        findings: tuple = ()
        if check:
            after = cap.derive(net)
            step["passivity"], findings = passivity_finding(cap, after, tol)
        return cap.derive(net, step=step, findings=findings)

    def __repr__(self) -> str:
        params = ", ".join(f"{k}={v!r}" for k, v in self._parameters().items())
        return f"{type(self).__name__}({params})"


def _network_like(template, s: np.ndarray):
    """A new scikit-rf Network on the template's grid and reference, with new S."""
    import skrf

    return skrf.Network(frequency=template.frequency, s=s, z0=template.z0,
                        name=template.name, s_def=template.s_def)


class Chain(Correction):
    """Corrections applied in order; itself a correction.

    Each member adds its own provenance step; passivity is checked once, on the result.
    """

    kind = "chain"

    def __init__(self, steps: tuple[Correction, ...], passivity_tol: float = PASSIVITY_TOL):
        super().__init__(passivity_tol)
        self.steps = tuple(steps)

    def describe(self) -> dict[str, Any]:
        """Kind ``"chain"`` and the members' descriptions, in order."""
        return {"kind": self.kind, "parameters": {}, "steps": [c.describe() for c in self.steps]}

    def _check(self, cap: Capture) -> None:
        # corrections keep the grid and the port count, so every member can be checked on
        # the input: a wrong input is refused before anything is computed
        for c in self.steps:
            c._check(cap)

    def _apply(self, cap: Capture, check: bool, tol: float) -> Capture:
        self._check(cap)
        if not self.steps:
            return cap.derive(cap.network.copy(), step=self.describe())
        for c in self.steps[:-1]:
            cap = c._apply(cap, check=False, tol=tol)
        return self.steps[-1]._apply(cap, check=check, tol=tol)

    def __repr__(self) -> str:
        return "chain(" + ", ".join(repr(c) for c in self.steps) + ")"


def chain(*corrections: Correction, passivity_tol: float = PASSIVITY_TOL) -> Chain:
    """Compose corrections, applied left to right; the result is itself a correction.

    Parameters
    ----------
    *corrections : Correction
        In the order they are applied (the one nearest the analyser first).
    passivity_tol : float
        Tolerance on |S| above 1 for the ``"active"`` finding on the final result.

    Returns
    -------
    Chain

    Examples
    --------
    >>> import kit
    >>> c = kit.chain(kit.port_extension(1e-9), kit.port_extension(-1e-9))
    >>> c.describe()["kind"]
    'chain'
    """
    flat: list[Correction] = []
    for c in corrections:
        if not isinstance(c, Correction):
            raise CaptureError(f"chain() takes corrections, got {type(c).__name__}")
        flat.append(c)
    return Chain(tuple(flat), passivity_tol)
