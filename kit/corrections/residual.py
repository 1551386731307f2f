"""Residual check of a corrected capture against a part of known impedance."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from kit.capture import CaptureError
from kit.corrections.base import as_capture


@dataclass(frozen=True)
class Residual:
    """How far a corrected capture of a known part is from its expected impedance.

    Attributes
    ----------
    worst_rel : float
        Largest ``|Z - Z_expected| / |Z_expected|`` over the valid points [1].
    f_hz : float
        Frequency of the worst point [Hz].
    rel : numpy.ndarray
        The relative error at every frequency (NaN where Z could not be computed) [1].
    z_ohm : numpy.ndarray
        Measured (corrected) impedance [ohm].
    expected_ohm : numpy.ndarray
        Expected impedance on the same grid [ohm].
    freq_hz : numpy.ndarray
        The grid [Hz].
    median_rel : float
        Median relative error [1].
    limit : float or None
        The acceptance limit asked for, if any.
    margin : float or None
        ``limit - worst_rel`` (positive: inside the limit by that much).
    invalid_points : int
        Points where Z was not finite (ideal open) and that were left out.
    name : str
        The capture checked.
    """

    worst_rel: float
    f_hz: float
    rel: np.ndarray = field(repr=False)
    z_ohm: np.ndarray = field(repr=False)
    expected_ohm: np.ndarray = field(repr=False)
    freq_hz: np.ndarray = field(repr=False)
    median_rel: float = float("nan")
    limit: float | None = None
    margin: float | None = None
    invalid_points: int = 0
    name: str = ""

    def to_dict(self) -> dict[str, Any]:
        """Scalars only, for tables and JSON."""
        return {"name": self.name, "worst_rel": self.worst_rel, "f_hz": self.f_hz,
                "median_rel": self.median_rel, "limit": self.limit, "margin": self.margin,
                "invalid_points": self.invalid_points}

    def __str__(self) -> str:
        text = (f"{self.name}: worst |Z - Zexp|/|Zexp| = {self.worst_rel:.3g} at "
                f"{self.f_hz:.6g} Hz (median {self.median_rel:.3g})")
        if self.margin is not None:
            text += f", margin to limit {self.limit:g}: {self.margin:+.3g}"
        return text


def residual(corrected: Any, expected_ohms: Any, *, limit: float | None = None,
             method: str = "reflection", port: int = 1) -> Residual:
    r"""Relative residual of a corrected capture of a known part.

    .. math:: r(f) = \frac{|Z(f) - Z_{exp}(f)|}{|Z_{exp}(f)|}

    Parameters
    ----------
    corrected : Capture or skrf.Network
        The corrected capture of the known part (a check resistor, a load standard).
    expected_ohms : complex, array_like or callable
        The part's impedance [ohm]: a number, an array on the capture's grid, or a
        function of frequency [Hz] returning impedance.
    limit : float, optional
        An acceptance limit on the worst relative error; the result then carries
        ``margin = limit - worst_rel``.
    method : {"reflection", "series-through", "shunt-through"}
        How Z is taken from the capture (see :func:`kit.impedance`).
    port : int
        1-based port for "reflection".

    Returns
    -------
    Residual

    References
    ----------
    .. [1] Verification on a known part after compensation: an instrument maker's impedance
       measurement handbook, §4.3 (common practice of checking with a known standard).
    """
    from kit import impedance  # resolved through kit._EXPORTS (module may move)

    cap = as_capture(corrected)
    f = np.asarray(cap.f_hz, dtype=float)
    s = np.asarray(cap.s)
    if method == "reflection" and 1 <= port <= cap.ports:
        # Z from Gamma without the singular-point warning: an ideal open is simply invalid
        g = s[:, port - 1, port - 1]
        z0 = cap.z0[:, port - 1].real
        with np.errstate(divide="ignore", invalid="ignore"):
            z = z0 * (1 + g) / (1 - g)
    else:
        z = impedance(cap, method=method, port=port)
    exp = expected_ohms(f) if callable(expected_ohms) else expected_ohms
    exp = np.broadcast_to(np.asarray(exp, dtype=complex), f.shape) if np.ndim(exp) == 0 \
        else np.asarray(exp, dtype=complex)
    if exp.shape != f.shape:
        raise CaptureError(f"expected_ohms has {exp.size} values but {cap.name!r} has "
                           f"{f.size} frequency points", cap.path)
    if np.any(np.abs(exp) == 0):
        raise CaptureError("expected_ohms is 0 somewhere: a relative residual needs a "
                           "non-zero expected impedance", cap.path)
    with np.errstate(invalid="ignore", over="ignore"):
        rel = np.abs(z - exp) / np.abs(exp)
    ok = np.isfinite(rel)
    if not np.any(ok):
        raise CaptureError(f"no finite impedance in {cap.name!r}; the residual cannot be "
                           "computed", cap.path)
    k = int(np.argmax(np.where(ok, rel, -np.inf)))
    worst = float(rel[k])
    margin = None if limit is None else float(limit) - worst
    return Residual(worst, float(f[k]), rel, z, np.array(exp), f.copy(),
                    float(np.median(rel[ok])), None if limit is None else float(limit),
                    margin, int(np.count_nonzero(~ok)), cap.name)
