r"""Reflection coefficient and the figures made from it: impedance, VSWR, return loss, mismatch loss.

One home for these definitions; the views, the corrections and the matching designs all
use them.

References
----------
.. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, ch. 2 (from memory for the
   chapter); methods sheet sections 0 (conventions) and 8.3 (VSWR, return loss, mismatch loss).
.. [2] ECSS glossary, "return loss" (positive when the reflected wave is the smaller one).
"""

from __future__ import annotations

import numpy as np


def gamma_from_z(z, z0_ohm=50.0) -> np.ndarray:
    r"""Reflection coefficient of an impedance on a real reference.

    .. math:: \Gamma = \frac{Z - Z_0}{Z + Z_0}

    Parameters
    ----------
    z : array_like of complex
        Impedance [ohm]; ``inf`` (an ideal open) gives 1, NaN stays NaN.
    z0_ohm : float or array_like
        Real reference impedance [ohm].

    Returns
    -------
    numpy.ndarray of complex
        Gamma [1].

    References
    ----------
    .. [1] Pozar, *Microwave Engineering*, 4th ed., ch. 2 (from memory for the chapter).
    """
    z = np.asarray(z, dtype=complex)
    z0 = np.asarray(z0_ohm, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        g = (z - z0) / (z + z0)
    return np.where(np.isinf(z), 1.0 + 0j, g)


def z_from_gamma(gamma, z0_ohm=50.0) -> np.ndarray:
    r"""Impedance of a one-port termination from its reflection coefficient on a real reference.

    .. math:: Z = Z_0 \frac{1 + \Gamma}{1 - \Gamma}

    The inverse of :func:`gamma_from_z`. This is the one home of the formula: callers that
    want singular points flagged (NaN and a warning) use
    :func:`kit.network.immittance.z_from_reflection`, which calls this.

    Parameters
    ----------
    gamma : array_like of complex
        Reflection coefficient [1] (pseudo or power waves; the two coincide on a real
        reference).
    z0_ohm : float or array_like
        Real reference impedance [ohm], broadcast against ``gamma``.

    Returns
    -------
    numpy.ndarray of complex
        Z [ohm]; Gamma = 1 exactly (an ideal open) gives ``inf``, NaN stays NaN. No warning
        is raised: the caller decides what an ideal open means.

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, eq. 2.35 (from memory
       for the equation number); methods sheet section 0 (conventions):
       Z = Z0 (1 + Gamma)/(1 - Gamma).
    """
    g = np.asarray(gamma, dtype=complex)
    z0 = np.asarray(z0_ohm, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = z0 * (1.0 + g) / (1.0 - g)
    return np.where(g == 1.0, complex(np.inf, 0.0), z)


def vswr(gamma) -> np.ndarray:
    r"""Voltage standing wave ratio :math:`(1 + |\Gamma|)/(1 - |\Gamma|)` [1].

    ``inf`` where :math:`|\Gamma| \ge 1` (total reflection, or an active or noisy point).

    References
    ----------
    .. [1] Methods sheet section 8.3; the same formula as scikit-rf ``Network.s_vswr``.
    """
    m = np.abs(np.asarray(gamma, dtype=complex))
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (1.0 + m) / (1.0 - m)
    return np.where(m >= 1.0, np.inf, out)


def gamma_from_vswr(s) -> np.ndarray:
    r"""Reflection magnitude :math:`|\Gamma| = (\mathrm{VSWR} - 1)/(\mathrm{VSWR} + 1)` [1].

    References
    ----------
    .. [1] Methods sheet section 8.3.
    """
    s = np.asarray(s, dtype=float)
    return (s - 1.0) / (s + 1.0)


def return_loss_db(gamma) -> np.ndarray:
    r"""Return loss :math:`RL = -20 \log_{10} |\Gamma|` [dB], positive for a passive load.

    References
    ----------
    .. [1] ECSS glossary, "return loss"; methods sheet section 8.3.
    """
    m = np.abs(np.asarray(gamma, dtype=complex))
    with np.errstate(divide="ignore"):
        return -20.0 * np.log10(m)


def mismatch_loss_db(gamma) -> np.ndarray:
    r"""Mismatch loss :math:`ML = -10 \log_{10}(1 - |\Gamma|^2)` [dB].

    References
    ----------
    .. [1] Methods sheet section 8.3.
    """
    m = np.abs(np.asarray(gamma, dtype=complex))
    with np.errstate(divide="ignore", invalid="ignore"):
        return -10.0 * np.log10(1.0 - m**2)


def db20(s) -> np.ndarray:
    """Magnitude in decibels, 20 log10 |s| [dB] (-inf where s = 0)."""
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.abs(np.asarray(s, dtype=complex)))
