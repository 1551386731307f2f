"""Line models removed from a capture: port extension (matched delay) and coaxial cable.

Both model a two-port line at one or both ports and remove it exactly (bilinear map for a
one-port, inverse T cascade for a two-port). The model is evaluated on the capture's own
grid, so there is no grid to match; it is computed once per grid and cached.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from kit.capture import Capture, CaptureError
from kit.corrections.algebra import (
    error_terms_from_s,
    line_s,
    remove_one_port_box,
    remove_two_port_boxes,
)
from kit.corrections.base import PASSIVITY_TOL, Correction, grid_key, real_reference

#: Speed of light in vacuum [m/s] (SI, exact by definition).
C0_M_S = 299_792_458.0
_NP_PER_DB = math.log(10.0) / 20.0


def _ports_tuple(port: int | tuple[int, ...] | list[int]) -> tuple[int, ...]:
    ports = (port,) if isinstance(port, (int, np.integer)) else tuple(int(p) for p in port)
    if not ports or any(p not in (1, 2) for p in ports) or len(set(ports)) != len(ports):
        raise CaptureError(f"port must be 1, 2 or (1, 2), got {port!r}")
    return tuple(int(p) for p in ports)


def _sqrt_f_loss_np(f_hz: np.ndarray, loss_db: float, ref_hz: float | None) -> np.ndarray:
    """Loss [Np] scaling as sqrt(f), equal to ``loss_db`` [dB] at ``ref_hz``."""
    if loss_db == 0.0:
        return np.zeros_like(f_hz, dtype=float)
    return loss_db * _NP_PER_DB * np.sqrt(np.asarray(f_hz, dtype=float) / ref_hz)


def _check_loss(loss: float, ref_hz: float | None, what: str) -> None:
    if not math.isfinite(loss) or loss < 0:
        raise CaptureError(f"{what} must be a finite number >= 0, got {loss!r}")
    if loss != 0.0 and (ref_hz is None or not math.isfinite(ref_hz) or ref_hz <= 0):
        raise CaptureError(f"{what} is not zero, so loss_ref_hz (the frequency where that "
                           f"loss applies, in Hz) is required and must be > 0; got {ref_hz!r}")


class _LineCorrection(Correction):
    """Removes the same two-port line model at the listed ports."""

    def __init__(self, ports: tuple[int, ...], passivity_tol: float) -> None:
        super().__init__(passivity_tol)
        self.ports = ports
        self._cache: dict[tuple, np.ndarray] = {}

    def _box(self, f_hz: np.ndarray, z0_ohm: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def box(self, f_hz: np.ndarray, z0_ohm: float | np.ndarray = 50.0) -> np.ndarray:
        """S of the modelled line on a grid and reference, shape (points, 2, 2)."""
        f = np.asarray(f_hz, dtype=float)
        z0 = np.broadcast_to(np.asarray(z0_ohm, dtype=float), f.shape)
        key = grid_key(f) + (np.ascontiguousarray(z0).tobytes(),)
        s = self._cache.get(key)
        if s is None:
            if len(self._cache) > 16:
                self._cache.clear()
            s = self._box(f, z0)
            self._cache[key] = s
        return s

    def _check(self, cap: Capture) -> None:
        if cap.ports > 2:
            raise CaptureError(f"{self.kind} handles one- and two-port captures; "
                               f"{cap.name!r} has {cap.ports} ports", cap.path)
        if cap.ports == 1 and self.ports != (1,):
            raise CaptureError(f"{self.kind} at port(s) {self.ports} asked, but {cap.name!r} "
                               "is a one-port capture (use port=1)", cap.path)
        real_reference(cap, "capture")

    def _correct(self, cap: Capture) -> tuple[np.ndarray, dict[str, Any]]:
        z0 = real_reference(cap, "capture")
        f = cap.f_hz
        s = np.asarray(cap.s)
        if cap.ports == 1:
            e00, e11, d = error_terms_from_s(self.box(f, z0[:, 0]))
            return remove_one_port_box(s[:, 0, 0], e00, e11, d)[:, None, None], {}
        left = self.box(f, z0[:, 0]) if 1 in self.ports else None
        right = self.box(f, z0[:, 1]) if 2 in self.ports else None
        return remove_two_port_boxes(s, left, right), {}


class PortExtension(_LineCorrection):
    """Removes a matched, lossy delay line; see :func:`port_extension`."""

    kind = "port_extension"

    def __init__(self, delay_s, loss_db, loss_ref_hz, ports, passivity_tol):
        super().__init__(ports, passivity_tol)
        self.delay_s = float(delay_s)
        self.loss_db = float(loss_db)
        self.loss_ref_hz = None if loss_ref_hz is None else float(loss_ref_hz)

    def _parameters(self) -> dict[str, Any]:
        return {"delay_s": self.delay_s, "loss_db": self.loss_db,
                "loss_ref_hz": self.loss_ref_hz, "port": list(self.ports)}

    def _box(self, f_hz, z0_ohm):
        gl = (_sqrt_f_loss_np(f_hz, self.loss_db, self.loss_ref_hz)
              + 2j * np.pi * f_hz * self.delay_s)
        s = np.zeros(f_hz.shape + (2, 2), dtype=complex)
        s[:, 0, 1] = s[:, 1, 0] = np.exp(-gl)
        return s


class Cable(_LineCorrection):
    """Removes a uniform coaxial line model; see :func:`cable`."""

    kind = "cable"

    def __init__(self, length_m, velocity_factor, z0_ohm, loss_db_per_m, loss_ref_hz, ports,
                 passivity_tol):
        super().__init__(ports, passivity_tol)
        self.length_m = float(length_m)
        self.velocity_factor = float(velocity_factor)
        self.z0_ohm = float(z0_ohm)
        self.loss_db_per_m = float(loss_db_per_m)
        self.loss_ref_hz = None if loss_ref_hz is None else float(loss_ref_hz)

    def _parameters(self) -> dict[str, Any]:
        return {"length_m": self.length_m, "velocity_factor": self.velocity_factor,
                "z0_ohm": self.z0_ohm, "loss_db_per_m": self.loss_db_per_m,
                "loss_ref_hz": self.loss_ref_hz, "port": list(self.ports)}

    def gamma(self, f_hz: np.ndarray) -> np.ndarray:
        r"""Propagation constant :math:`\gamma = \alpha + j\beta` [1/m] on a grid [Hz].

        :math:`\beta = 2\pi f/(c_0 \mathrm{VF})`; :math:`\alpha = \alpha(f_{ref})\sqrt{f/f_{ref}}`
        (conductor loss only).
        """
        f = np.asarray(f_hz, dtype=float)
        alpha = _sqrt_f_loss_np(f, self.loss_db_per_m, self.loss_ref_hz)
        return alpha + 2j * np.pi * f / (C0_M_S * self.velocity_factor)

    def _box(self, f_hz, z0_ohm):
        return line_s(self.gamma(f_hz) * self.length_m, self.z0_ohm, z0_ohm)


def port_extension(delay_s: float, loss_db: float = 0.0, loss_ref_hz: float | None = None,
                   port: int | tuple[int, ...] = 1, *,
                   passivity_tol: float = PASSIVITY_TOL) -> PortExtension:
    r"""Port extension: remove a one-way electrical delay (and loss) at a port.

    The reference plane is moved forward by a matched line of one-way delay ``delay_s``.
    A reflection sees the round trip, a transmission the one-way path:

    .. math::

        \Gamma_{DUT} = \Gamma_m\, e^{2\alpha l}\, e^{+j 2\omega\tau}, \qquad
        S_{21,DUT} = S_{21,m}\, e^{\alpha l}\, e^{+j\omega\tau},\qquad
        \alpha l = \mathrm{loss\_db}\,\frac{\ln 10}{20}\sqrt{f/f_{ref}}

    Parameters
    ----------
    delay_s : float
        One-way delay to remove [s] (negative adds delay).
    loss_db : float
        One-way loss at ``loss_ref_hz`` [dB], >= 0; scaled as sqrt(f) (conductor loss).
    loss_ref_hz : float, optional
        Frequency where ``loss_db`` applies [Hz]; required when ``loss_db`` is not 0.
    port : int or tuple of int
        1-based port(s) to extend: 1, 2 or (1, 2).
    passivity_tol : float
        Tolerance on |S| above 1 for the ``"active"`` finding.

    Returns
    -------
    PortExtension
        Callable on a capture.

    References
    ----------
    .. [1] Delay and sqrt(f) conductor-loss removal: standard practice (from memory),
       checked numerically against scikit-rf 2.2.0 ``Network.delay`` (round-trip delay for
       a one-port) in the tests.
    .. [2] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley 2012, ch. 2 (matched line),
       from memory for the chapter.
    """
    delay = float(delay_s)
    if not math.isfinite(delay):
        raise CaptureError(f"delay_s must be a finite number of seconds, got {delay_s!r}")
    _check_loss(float(loss_db), loss_ref_hz, "loss_db")
    return PortExtension(delay, loss_db, loss_ref_hz, _ports_tuple(port), passivity_tol)


def cable(length_m: float, velocity_factor: float, z0_ohm: float = 50.0,
          loss_db_per_m: float = 0.0, loss_ref_hz: float | None = None,
          port: int | tuple[int, ...] = 1, *, passivity_tol: float = PASSIVITY_TOL) -> Cable:
    r"""Coaxial cable between the analyser and the device, removed from the capture.

    A uniform line of real characteristic impedance :math:`Z_c` and propagation constant
    :math:`\gamma = \alpha + j\beta`. For a one-port the device impedance follows from the
    inverse of the terminated-line formula

    .. math::

        Z_{in} = Z_c \frac{Z_L + Z_c\tanh\gamma l}{Z_c + Z_L\tanh\gamma l}
        \;\Rightarrow\;
        Z_L = Z_c \frac{Z_{in} - Z_c\tanh\gamma l}{Z_c - Z_{in}\tanh\gamma l},

    computed in reflection form with the line's S on the capture's reference; a two-port is
    de-embedded by inverse T cascade at the given port(s).

    Parameters
    ----------
    length_m : float
        Physical length [m], > 0.
    velocity_factor : float
        v / c0 [1], in (0, 1].
    z0_ohm : float
        Characteristic impedance of the cable [ohm] (real: conductor-loss model).
    loss_db_per_m : float
        Attenuation at ``loss_ref_hz`` [dB/m], >= 0, scaled as sqrt(f).
    loss_ref_hz : float, optional
        Frequency of ``loss_db_per_m`` [Hz]; required when the loss is not 0.
    port : int or tuple of int
        1-based port(s) the cable is on (1, 2 or (1, 2)).
    passivity_tol : float
        Tolerance on |S| above 1 for the ``"active"`` finding.

    Returns
    -------
    Cable
        Callable on a capture; ``.gamma(f_hz)`` and ``.box(f_hz, z0_ohm)`` expose the model.

    Notes
    -----
    A real :math:`Z_c` with sqrt(f) loss neglects the low-frequency rise of the line's
    impedance (where R' is comparable to omega L'); below roughly 100 kHz for common coax
    use a measured fixture (:func:`fixture`) instead (common practice, no source).

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley 2012, ch. 2 (terminated
       lossy line) and ch. 3 (coax, conductor loss proportional to sqrt(f)); from memory for
       the chapters.
    .. [2] scikit-rf 2.2.0 ``skrf.media.DefinedGammaZ0`` and
       ``Coaxial.from_attenuation_VF``: the same line model, used as the tests' reference.
    """
    length, vf, zc = float(length_m), float(velocity_factor), float(z0_ohm)
    if not (math.isfinite(length) and length > 0):
        raise CaptureError(f"length_m must be > 0 [m], got {length_m!r}")
    if not (math.isfinite(vf) and 0 < vf <= 1):
        raise CaptureError(f"velocity_factor must be in (0, 1], got {velocity_factor!r}")
    if not (math.isfinite(zc) and zc > 0):
        raise CaptureError(f"z0_ohm must be > 0 [ohm], got {z0_ohm!r}")
    _check_loss(float(loss_db_per_m), loss_ref_hz, "loss_db_per_m")
    return Cable(length, vf, zc, loss_db_per_m, loss_ref_hz, _ports_tuple(port), passivity_tol)
