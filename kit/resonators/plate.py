"""Thickness-mode piezoelectric plate, free on both faces, with complex material constants.

References
----------
.. [1] ANSI/IEEE Std 176-1987, *IEEE Standard on Piezoelectricity*, thickness-extensional
   plate impedance (clause and equation numbers from memory).
.. [2] The methods sheet (shared/reference/methods.md) sections 1.4 and 3.1: the same closed
   form, checked there against the Mason and KLM networks.
"""

from __future__ import annotations

import numpy as np


def free_plate_z(f_hz, kt: float, fp_hz: float, c0_f: float, qm: float = np.inf,
                 tan_delta: float = 0.0) -> np.ndarray:
    r"""Electrical impedance of a free (unloaded) thickness-mode plate.

    .. math::

        Z(f) = \frac{1}{j \omega C_0 (1 - j \tan\delta)}
               \left[1 - k_t^2 \frac{\tan x}{x}\right],
        \qquad x = \frac{\pi}{2} \frac{f}{f_p \sqrt{1 + j/Q_m}}

    The lossless plate has its impedance pole at ``fp_hz`` (x = pi/2, the parallel
    resonance) and its zero at fs where kt^2 tan(x)/x = 1. Elastic loss enters through the
    complex stiffness c = c'(1 + j/Qm) (so the wave speed scales with sqrt(1 + j/Qm)),
    dielectric loss through the clamped capacitance C0 (1 - j tan_delta).

    Parameters
    ----------
    f_hz : array_like
        Frequencies [Hz].
    kt : float
        Thickness coupling factor [1].
    fp_hz : float
        Parallel (anti-)resonance of the lossless plate, v^D / (2 d) [Hz].
    c0_f : float
        Clamped capacitance C0 = eps33^S A / d [F].
    qm : float
        Mechanical quality factor [1]; ``inf`` for no elastic loss.
    tan_delta : float
        Dielectric loss tangent [1].

    Returns
    -------
    numpy.ndarray of complex
        Z [ohm].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, thickness-extensional plate (from memory for the clause).
    """
    f = np.asarray(f_hz, dtype=float)
    w = 2.0 * np.pi * f
    loss = np.sqrt(1.0 + 1j / qm) if np.isfinite(qm) else 1.0
    x = (np.pi / 2.0) * f / (fp_hz * loss)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(np.abs(x) > 1e-12, np.tan(x) / np.where(x == 0, 1, x), 1.0)
        return (1.0 - kt**2 * ratio) / (1j * w * c0_f * (1.0 - 1j * tan_delta))
