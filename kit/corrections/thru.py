"""Two-port fixtures from a 2x-thru (IEEE Std 370-2020), through scikit-rf.

The halves are split once, when the correction is made, by scikit-rf's
``IEEEP370_SE_NZC_2xThru``; applying the correction is then the inverse T cascade of
:mod:`kit.corrections.algebra`. A symmetry report says how different the two halves are.
"""

from __future__ import annotations

import warnings
from typing import Any

import numpy as np

from kit.capture import Capture, CaptureError
from kit.corrections.base import (
    PASSIVITY_TOL,
    as_capture,
    grid_text,
    identity,
    is_uniform,
    require_ports,
)
from kit.corrections.fixtures import Fixture, _role


def _db(x: float) -> float:
    # floored at -300 dB so that the report stays a finite number (JSON-friendly)
    return float(20 * np.log10(max(x, 1e-15)))


def symmetry_report(thru_s: np.ndarray, side1_s: np.ndarray, side2_s: np.ndarray,
                    f_hz: np.ndarray) -> dict[str, float]:
    """How symmetric a 2x-thru and its halves are, as numbers (dB of the largest difference).

    ``thru_s11_s22_db``: 20 log10 max |S11 - S22| of the 2x-thru itself;
    ``halves_s11_db``: 20 log10 max |S11(side 1) - S22(side 2)|, the analyser-side
    reflections of the two halves (equal for a mirror-symmetric fixture);
    ``halves_s21_db``: the same for the transmissions. Each with the frequency [Hz].

    References
    ----------
    .. [1] Mirror symmetry of the two fixture halves is the assumption of the 2x-thru
       method: IEEE Std 370-2020 (scope as summarised in the methods sheet); Ellison,
       Smith & Agili, MOTL 2020, doi 10.1002/mop.32098.
    """
    out: dict[str, float] = {}
    for key, diff in (("thru_s11_s22", thru_s[:, 0, 0] - thru_s[:, 1, 1]),
                      ("halves_s11", side1_s[:, 0, 0] - side2_s[:, 1, 1]),
                      ("halves_s21", side1_s[:, 1, 0] - side2_s[:, 0, 1])):
        mag = np.abs(diff)
        k = int(np.argmax(mag))
        out[key + "_db"] = _db(float(mag[k]))
        out[key + "_f_hz"] = float(f_hz[k])
    return out


class TwoXThru(Fixture):
    """Fixture halves split from a 2x-thru; see :func:`two_x_thru`."""

    kind = "two_x_thru"

    def __init__(self, thru: Capture, left: Capture, right: Capture, symmetry: dict,
                 notes: list[str], resample: bool, passivity_tol: float):
        super().__init__({"left": left, "right": right}, resample, passivity_tol)
        self.thru = thru
        self.symmetry = dict(symmetry)
        self.notes = list(notes)

    def _parameters(self) -> dict[str, Any]:
        return {"method": "IEEE 370 NZC 2x-thru (scikit-rf)", "symmetry": self.symmetry,
                "resample": self.resample}

    def _inputs(self) -> dict[str, Any]:
        return {"thru": identity(self.thru)}

    def _check(self, cap: Capture) -> None:
        require_ports(cap, 2, "capture", "a 2x-thru de-embeds a two-port device")
        super()._check(cap)

    @property
    def left(self) -> Capture:
        """Half 1 (port 1 side: its port 1 faces the analyser)."""
        return self.inputs["left"]

    @property
    def right(self) -> Capture:
        """Half 2 (port 2 side: its port 2 faces the analyser)."""
        return self.inputs["right"]

    def _correct(self, cap: Capture):
        s, extra = super()._correct(cap)
        if self.notes:
            extra["library_notes"] = list(self.notes)
        return s, extra


def two_x_thru(thru: Any, *, resample: bool = False,
               passivity_tol: float = PASSIVITY_TOL) -> TwoXThru:
    """De-embed a symmetric two-port fixture measured as a 2x-thru (fixture-fixture).

    The 2x-thru is split into its halves by scikit-rf's implementation of the IEEE Std
    370-2020 single-ended 2x-thru without impedance correction (NZC), which time-gates S11
    and S22 and takes a root of S21. The halves are removed from each two-port capture by
    inverse T cascade (side 1 at port 1, side 2 at port 2).

    Parameters
    ----------
    thru : Capture, skrf.Network or path
        Two-port capture of the two fixture halves joined directly. Best on a uniform grid
        that starts at one frequency step (f0 = df); scikit-rf extrapolates to DC otherwise.
    resample : bool
        Interpolate the halves onto a capture's grid when they differ.
    passivity_tol : float
        Tolerance on the largest singular value of S above 1 for the ``"active"`` finding.

    Returns
    -------
    TwoXThru
        Callable on a two-port capture; ``.symmetry`` (dict of dB numbers and where they
        occur, see :func:`symmetry_report`), ``.left`` / ``.right`` halves as Captures.

    Raises
    ------
    CaptureError
        A thru that is not a two-port, a non-uniform grid, or a split that scikit-rf refuses.

    References
    ----------
    .. [1] IEEE Std 370-2020, *IEEE Standard for Electrical Characterization of Printed
       Circuit Board and Related Interconnects at Frequencies up to 50 GHz*.
    .. [2] Ellison, Smith & Agili, Microw. Opt. Technol. Lett. 2020, doi 10.1002/mop.32098
       (the algorithm scikit-rf implements).
    .. [3] scikit-rf 2.2.0 ``skrf.calibration.deembedding.IEEEP370_SE_NZC_2xThru``.
    """
    from skrf.calibration.deembedding import IEEEP370_SE_NZC_2xThru

    from kit.capture import from_network

    cap = as_capture(thru, _role("thru"))
    require_ports(cap, 2, _role("thru"), "a 2x-thru is a two-port capture")
    if not is_uniform(cap.f_hz):
        raise CaptureError(f"the 2x-thru {cap.name!r} has a non-uniform grid "
                           f"({grid_text(cap.f_hz)}); the 2x-thru split works in the time "
                           "domain and needs equal frequency steps", cap.path)
    z0 = float(np.asarray(cap.z0).real.ravel()[0])
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            split = IEEEP370_SE_NZC_2xThru(dummy_2xthru=cap.network, z0=z0, verbose=False)
        except Exception as exc:  # noqa: BLE001 - the library's refusal becomes a clear message
            raise CaptureError(f"the 2x-thru split failed ({type(exc).__name__}: {exc})",
                               cap.path) from None
    notes = [str(w.message) for w in caught]
    # scikit-rf stores side 2 flipped (its port 1 at the analyser); flip it back to the
    # cascade orientation used here (port 1 at the device), as its deembed() does
    s1, s2 = split.s_side1, split.s_side2.flipped()
    sym = symmetry_report(np.asarray(cap.s), s1.s, s2.s, cap.f_hz)
    left = from_network(s1, {"from": cap.name, "side": 1})
    right = from_network(s2, {"from": cap.name, "side": 2})
    return TwoXThru(cap, left, right, sym, notes, resample, passivity_tol)

