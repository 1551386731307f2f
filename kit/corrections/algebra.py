"""Element-wise network algebra for corrections: numpy only, no scikit-rf.

Every function works on stacked arrays (one matrix per frequency point) and returns new
arrays; inputs are never written to. These are the kernels the correction objects apply,
vectorised so that a correction costs a few array operations per capture.

Conventions
-----------
* Reflection coefficients are pseudo/power waves on a real reference impedance ``z0``
  (the two coincide for real references).
* T-parameters follow scikit-rf's convention, ``[b1; a1] = T [a2; b2]``.
* Z from Gamma and Gamma from Z are :mod:`kit.network.reflection`'s (one home).
* A one-port error box is stored as three terms ``(e00, e11, d)`` such that the measured
  reflection is ``gm = (e00 + d*g) / (1 - e11*g)``, i.e. in linear form
  ``gm = e00 + g*gm*e11 + g*d``, with ``d = e01*e10 - e00*e11``.
"""

from __future__ import annotations

import numpy as np


def error_terms_from_s(s2: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One-port error terms ``(e00, e11, d)`` of a two-port box in front of a one-port.

    Parameters
    ----------
    s2 : ndarray, shape (points, 2, 2)
        S-parameters of the box, port 1 at the analyser, port 2 at the device.

    Returns
    -------
    tuple of ndarray
        ``e00 = S11``, ``e11 = S22``, ``d = S12*S21 - S11*S22``.

    References
    ----------
    .. [1] Terminated two-port: Gm = S11 + S12 S21 G / (1 - S22 G); D. M. Pozar,
       *Microwave Engineering*, 4th ed., ch. 4 (from memory for the chapter).
    """
    s11, s12, s21, s22 = s2[:, 0, 0], s2[:, 0, 1], s2[:, 1, 0], s2[:, 1, 1]
    return s11, s22, s12 * s21 - s11 * s22


def remove_one_port_box(gm: np.ndarray, e00, e11, d) -> np.ndarray:
    r"""Device reflection behind a one-port error box (three-term model).

    .. math:: \Gamma = \frac{\Gamma_m - e_{00}}{e_{11}\Gamma_m + d},
              \quad d = e_{01}e_{10} - e_{00}e_{11}

    Parameters
    ----------
    gm : ndarray of complex
        Measured reflection [1].
    e00, e11, d : ndarray of complex
        Error terms (directivity, source match, and the determinant form above).

    Returns
    -------
    ndarray of complex
        Reflection at the device plane [1].

    References
    ----------
    .. [1] One-port error model (three-term); as implemented by scikit-rf
       ``skrf.calibration.OnePort`` (scikit-rf 2.2.0), which the tests compare against.
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        return (gm - e00) / (e11 * gm + d)


def solve_one_port_terms(measured: list[np.ndarray], actual: list[np.ndarray]):
    """Error terms ``(e00, e11, d)`` from three (measured, actual) reflection pairs.

    Solves, per frequency, ``gm_i = e00 + g_i*gm_i*e11 + g_i*d`` for i = 1..3.

    Parameters
    ----------
    measured, actual : list of three ndarray of complex, each shape (points,)
        Measured and true reflections of the three standards.

    Returns
    -------
    tuple of ndarray
        ``(e00, e11, d)``.

    References
    ----------
    .. [1] One-port error model (three-term), linear form; same model as
       ``skrf.calibration.OnePort`` (scikit-rf 2.2.0).
    """
    gm = np.stack(measured, axis=-1)
    g = np.stack(actual, axis=-1)
    a = np.stack([np.ones_like(gm), g * gm, g], axis=-1)  # (points, 3, 3)
    x = np.linalg.solve(a, gm[..., None])[..., 0]
    return x[:, 0], x[:, 1], x[:, 2]


def s2t(s: np.ndarray) -> np.ndarray:
    """Two-port S to T (scikit-rf convention ``[b1; a1] = T [a2; b2]``).

    References
    ----------
    .. [1] scikit-rf 2.2.0 ``skrf.network.s2t`` docstring (citing Dobrowolski 2016,
       pp. 65-68): T11 = S12 - S11 S22/S21, T12 = S11/S21, T21 = -S22/S21, T22 = 1/S21.
    """
    s11, s12, s21, s22 = s[:, 0, 0], s[:, 0, 1], s[:, 1, 0], s[:, 1, 1]
    t = np.empty_like(s, dtype=complex)
    with np.errstate(invalid="ignore", divide="ignore"):
        t[:, 0, 0] = s12 - s11 * s22 / s21
        t[:, 0, 1] = s11 / s21
        t[:, 1, 0] = -s22 / s21
        t[:, 1, 1] = 1.0 / s21
    return t


def t2s(t: np.ndarray) -> np.ndarray:
    """Two-port T to S, the inverse of :func:`s2t`.

    References
    ----------
    .. [1] Inverse of the relations in scikit-rf 2.2.0 ``skrf.network.s2t`` (solved here).
    """
    t11, t12, t21, t22 = t[:, 0, 0], t[:, 0, 1], t[:, 1, 0], t[:, 1, 1]
    s = np.empty_like(t, dtype=complex)
    with np.errstate(invalid="ignore", divide="ignore"):
        s[:, 0, 0] = t12 / t22
        s[:, 0, 1] = t11 - t12 * t21 / t22
        s[:, 1, 0] = 1.0 / t22
        s[:, 1, 1] = -t21 / t22
    return s


def inv2(m: np.ndarray) -> np.ndarray:
    """Inverse of stacked 2x2 matrices by the adjugate formula."""
    a, b, c, d = m[:, 0, 0], m[:, 0, 1], m[:, 1, 0], m[:, 1, 1]
    det = a * d - b * c
    out = np.empty_like(m, dtype=complex)
    with np.errstate(invalid="ignore", divide="ignore"):
        out[:, 0, 0] = d / det
        out[:, 0, 1] = -b / det
        out[:, 1, 0] = -c / det
        out[:, 1, 1] = a / det
    return out


def remove_two_port_boxes(s_meas: np.ndarray, left_s: np.ndarray | None,
                          right_s: np.ndarray | None) -> np.ndarray:
    r"""De-embed boxes on either side of a two-port by inverse cascade of T matrices.

    .. math:: T_{DUT} = T_A^{-1}\, T_{meas}\, T_B^{-1}

    Parameters
    ----------
    s_meas : ndarray, shape (points, 2, 2)
        Measured S.
    left_s : ndarray, shape (points, 2, 2), or None
        Box A at port 1 (its port 1 at the analyser).
    right_s : ndarray, shape (points, 2, 2), or None
        Box B at port 2 (its port 1 at the device, port 2 at the analyser).

    Returns
    -------
    ndarray, shape (points, 2, 2)
        S of the device.

    References
    ----------
    .. [1] T-matrix cascade with inverse; scikit-rf 2.2.0 ``Network.__floordiv__``
       (``meas // (A, B)``) does the same and is the tests' reference.
    """
    t = s2t(s_meas)
    if left_s is not None:
        t = inv2(s2t(left_s)) @ t
    if right_s is not None:
        t = t @ inv2(s2t(right_s))
    return t2s(t)


def line_s(gamma_l: np.ndarray, zc_ohm, z0_ohm) -> np.ndarray:
    r"""S of a uniform line of characteristic impedance Zc on a reference Z0.

    From the line's ABCD matrix, :math:`A = D = \cosh\gamma l`, :math:`B = Z_c\sinh\gamma l`,
    :math:`C = \sinh\gamma l / Z_c`, converted to S on the reference ``z0_ohm``.

    Parameters
    ----------
    gamma_l : ndarray of complex, shape (points,)
        Propagation constant times length, alpha*l + j*beta*l [Np + j rad].
    zc_ohm : float or ndarray
        Characteristic impedance of the line [ohm].
    z0_ohm : float or ndarray
        Port reference impedance [ohm] (real).

    Returns
    -------
    ndarray, shape (points, 2, 2)

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley 2012, ch. 2 (line) and
       Table 4.2 (ABCD to S), from memory for the numbers.
    """
    gl = np.asarray(gamma_l, dtype=complex)
    ch, sh = np.cosh(gl), np.sinh(gl)
    zc = np.asarray(zc_ohm, dtype=complex)
    z0 = np.asarray(z0_ohm, dtype=float)
    b, c = zc * sh, sh / zc
    den = 2 * ch + b / z0 + c * z0
    s = np.empty(gl.shape + (2, 2), dtype=complex)
    s[:, 0, 0] = (b / z0 - c * z0) / den
    s[:, 1, 1] = s[:, 0, 0]
    s[:, 0, 1] = 2.0 / den
    s[:, 1, 0] = s[:, 0, 1]
    return s
