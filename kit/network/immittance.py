"""Impedance and admittance of a device from one capture, element-wise.

Three measurement set-ups are covered, each with its closed form:

* ``"reflection"``: the device terminates port ``port``; Z from the reflection coefficient.
* ``"series-through"``: the device is in series between port 1 and port 2; Z from S21.
* ``"shunt-through"``: the device is shunted to ground across a through path; Z from S21.

These element-wise forms are exact for the stated set-ups and far faster than a general
N-port inversion (scikit-rf's ``Network.z``), which is the right tool for full matrices.
"""

from __future__ import annotations

import warnings
from typing import Literal

import numpy as np

from kit.capture import CaptureError
from kit.network.accept import network_of
from kit.network.reflection import z_from_gamma
from kit.units import eng

Method = Literal["reflection", "series-through", "shunt-through"]
METHODS: tuple[str, ...] = ("reflection", "series-through", "shunt-through")


class SingularPointsWarning(UserWarning):
    """Some frequency points gave a vanishing denominator and were set to NaN."""


def _warn_singular(bad: np.ndarray, f_hz: np.ndarray | None, what: str) -> None:
    n = int(np.count_nonzero(bad))
    if n == 0:
        return
    if f_hz is not None:
        fs = ", ".join(eng(float(x), "Hz", 7) for x in np.asarray(f_hz)[bad][:5])
        more = "" if n <= 5 else f" and {n - 5} more"
        where = f" at f = {fs}{more}"
    else:
        where = ""
    warnings.warn(
        f"{what}: denominator vanishes at {n} point(s){where}; those points are NaN",
        SingularPointsWarning,
        stacklevel=3,
    )


def _finish(num: np.ndarray, den: np.ndarray, f_hz, what: str) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        out = num / den
    return _nan_singular(out, f_hz, what)


def _nan_singular(out: np.ndarray, f_hz, what: str) -> np.ndarray:
    """``out`` with its non-finite points set to NaN, and a warning naming them."""
    # fast path: one pass over the result; the singular points are found only when needed
    if np.isfinite(out.real.sum() + out.imag.sum()):
        return out
    bad = ~np.isfinite(out)
    out[bad] = np.nan + 1j * np.nan
    _warn_singular(bad, f_hz, what)
    return out


def _z0(z0: np.ndarray, p: int):
    col = z0[:, p] if z0.ndim == 2 else z0
    first = col[0]
    # a single real reference (the usual case) is used as a scalar: no per-point array
    if np.all(col == first) and first.imag == 0:
        return float(first.real)
    return col.real


def z_from_reflection(gamma: np.ndarray, z0_ohm=50.0, f_hz=None) -> np.ndarray:
    r"""Impedance of a one-port termination from its reflection coefficient.

    .. math:: Z = Z_0 \frac{1 + \Gamma}{1 - \Gamma}

    The formula is :func:`kit.network.reflection.z_from_gamma`; this adds the handling of
    singular points (NaN and a :class:`SingularPointsWarning`).

    Parameters
    ----------
    gamma : array_like of complex
        Reflection coefficient (S11) [1].
    z0_ohm : float or array_like
        Reference impedance [ohm].
    f_hz : array_like, optional
        Frequencies [Hz], only used to name singular points in the warning.

    Returns
    -------
    numpy.ndarray of complex
        Impedance [ohm]; NaN where Gamma = 1 (an ideal open).

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, eq. 2.35 (from memory
       for the equation number); methods sheet section 0.
    """
    return _nan_singular(z_from_gamma(gamma, z0_ohm), f_hz, "reflection impedance")


def z_from_series_through(s21: np.ndarray, z0_ohm=50.0, f_hz=None) -> np.ndarray:
    r"""Impedance of a device in series between two ports from the transmission S21.

    .. math:: Z = 2 Z_0 \frac{1 - S_{21}}{S_{21}}

    Parameters
    ----------
    s21 : array_like of complex
        Forward transmission [1].
    z0_ohm : float or array_like
        Reference impedance of both ports [ohm].
    f_hz : array_like, optional
        Frequencies [Hz], only used in the warning.

    Returns
    -------
    numpy.ndarray of complex
        Impedance [ohm]; NaN where S21 = 0.

    References
    ----------
    .. [1] An instrument maker's application note "Impedance Measurement" (series-through
       method), as summarised in the methods sheet, section 5. The closed form follows from
       the ABCD matrix of a series impedance, Pozar, *Microwave Engineering*, 4th ed.,
       Table 4.2 (from memory for the table number).
    """
    t = np.asarray(s21, dtype=complex)
    return _finish(2.0 * np.asarray(z0_ohm) * (1.0 - t), t, f_hz, "series-through impedance")


def z_from_shunt_through(s21: np.ndarray, z0_ohm=50.0, f_hz=None) -> np.ndarray:
    r"""Impedance of a device shunted across a through path from the transmission S21.

    .. math:: Z = \frac{Z_0 S_{21}}{2 (1 - S_{21})}

    Parameters
    ----------
    s21 : array_like of complex
        Forward transmission [1].
    z0_ohm : float or array_like
        Reference impedance [ohm].
    f_hz : array_like, optional
        Frequencies [Hz], only used in the warning.

    Returns
    -------
    numpy.ndarray of complex
        Impedance [ohm]; NaN where S21 = 1 (no device).

    References
    ----------
    .. [1] An instrument maker's application note "Impedance Measurement" (shunt-through
       method); closed form from the ABCD matrix of a shunt admittance, Pozar,
       *Microwave Engineering*, 4th ed., Table 4.2 (from memory for the table number).
    """
    t = np.asarray(s21, dtype=complex)
    return _finish(np.asarray(z0_ohm) * t, 2.0 * (1.0 - t), f_hz, "shunt-through impedance")


def impedance(capture, method: Method = "reflection", port: int = 1) -> np.ndarray:
    """Device impedance per frequency from a capture.

    Parameters
    ----------
    capture : Capture or skrf.Network
        The measurement.
    method : {"reflection", "series-through", "shunt-through"}
        The set-up: the device terminates ``port`` ("reflection"), or sits in series
        ("series-through") or in shunt ("shunt-through") between ports 1 and 2.
    port : int
        1-based port for "reflection".

    Returns
    -------
    numpy.ndarray of complex
        Z [ohm], one value per frequency; NaN with a :class:`SingularPointsWarning` where
        the closed form has a vanishing denominator.

    Raises
    ------
    CaptureError
        When the capture has too few ports for the method or an unknown method is asked.

    References
    ----------
    .. [1] See :func:`z_from_reflection`, :func:`z_from_series_through` and
       :func:`z_from_shunt_through` for the formulas and their sources.
    """
    ntwk = network_of(capture, "impedance")
    path = getattr(capture, "path", None)
    n = ntwk.nports
    f = ntwk.frequency.f
    z0 = np.asarray(ntwk.z0)
    if method == "reflection":
        if not 1 <= port <= n:
            raise CaptureError(f"port {port} does not exist: the capture has {n} port(s)", path)
        p = port - 1
        return z_from_reflection(ntwk.s[:, p, p], _z0(z0, p), f)
    if method in ("series-through", "shunt-through"):
        if n < 2:
            raise CaptureError(
                f"method {method!r} needs a two-port capture (S21), this one has {n} port; "
                "use method='reflection' for a one-port", path)
        z0r = _z0(z0, 0)
        if method == "series-through":
            return z_from_series_through(ntwk.s[:, 1, 0], z0r, f)
        return z_from_shunt_through(ntwk.s[:, 1, 0], z0r, f)
    raise CaptureError(f"unknown method {method!r}; choose one of {', '.join(METHODS)}", path)


def admittance(capture, method: Method = "reflection", port: int = 1) -> np.ndarray:
    """Device admittance per frequency, Y = 1/Z [S]; see :func:`impedance`.

    Points where Z is 0 become NaN with a :class:`SingularPointsWarning`.

    References
    ----------
    .. [1] Y = 1/Z by definition of admittance (common practice, no source).
    """
    z = impedance(capture, method=method, port=port)
    f = network_of(capture, "admittance").frequency.f
    return _finish(np.ones_like(z), z, f, "admittance")
