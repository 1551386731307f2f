"""Measured fixtures and compensation standards: fixture de-embedding, OSL, open/short.

Each correction keeps its standards or fixture as Captures (read once when the correction
is made, so a missing file is refused at once) and computes its error terms once per
frequency grid; applying it is then a few element-wise array operations.
"""

from __future__ import annotations

from typing import Any, Literal

import numpy as np

from kit.capture import Capture, CaptureError
from kit.corrections.algebra import (
    error_terms_from_s,
    remove_one_port_box,
    remove_two_port_boxes,
    solve_one_port_terms,
)
from kit.corrections.base import (
    PASSIVITY_TOL,
    Correction,
    as_capture,
    grid_key,
    grid_text,
    identity,
    real_reference,
    require_ports,
    s_on_grid,
    same_grid,
)
from kit.network.reflection import gamma_from_z, z_from_gamma


class _StandardsCorrection(Correction):
    """A correction built on measured inputs (standards or fixtures) on their own grid."""

    def __init__(self, inputs: dict[str, Capture], resample: bool, passivity_tol: float):
        super().__init__(passivity_tol)
        self.inputs = dict(inputs)
        self.resample = bool(resample)
        self._cache: dict[tuple, tuple] = {}
        names = list(self.inputs)
        for other in names[1:]:  # the inputs must agree among themselves
            a, b = self.inputs[names[0]], self.inputs[other]
            if not (resample or same_grid(a.f_hz, b.f_hz)):
                raise CaptureError(
                    f"frequency grids differ between the {_role(names[0])} {a.name!r} "
                    f"({grid_text(a.f_hz)}) and the {_role(other)} {b.name!r} "
                    f"({grid_text(b.f_hz)}); measure them on one grid or pass resample=True",
                    b.path)

    def _inputs(self) -> dict[str, Any]:
        return {k: identity(v) for k, v in self.inputs.items()}

    def _check(self, cap: Capture) -> None:
        z0 = real_reference(cap, "capture")
        ref = float(z0.ravel()[0]) if z0.size else 50.0
        for key, std in self.inputs.items():
            zs = real_reference(std, _role(key))
            if not (_all_near(z0, ref) and _all_near(zs, ref)):
                raise CaptureError(
                    f"reference impedances differ: the capture {cap.name!r} is on "
                    f"{_refs(z0)} Ω, the {_role(key)} {std.name!r} on {_refs(zs)} Ω; "
                    "renormalise them to one reference first", cap.path)
            if not same_grid(cap.f_hz, std.f_hz):
                s_on_grid(cap, std, _role(key), self.resample)  # raises with both grids

    def _on_grid(self, cap: Capture) -> tuple[dict[str, np.ndarray], list[dict]]:
        arrays, notes = {}, []
        for key, std in self.inputs.items():
            s, note = s_on_grid(cap, std, _role(key), self.resample)
            arrays[key] = s
            if note:
                notes.append(note)
        return arrays, notes

    def _terms(self, cap: Capture) -> tuple:
        """Error terms on the capture's grid (cached) and the resampling notes."""
        key = grid_key(cap.f_hz) + (np.ascontiguousarray(cap.z0.real).tobytes(),)
        hit = self._cache.get(key)
        if hit is None:
            if len(self._cache) > 16:
                self._cache.clear()
            arrays, notes = self._on_grid(cap)
            hit = (self._make_terms(cap, arrays), notes)
            self._cache[key] = hit
        return hit

    def _make_terms(self, cap: Capture, arrays: dict[str, np.ndarray]):
        raise NotImplementedError

    @staticmethod
    def _extra(notes: list[dict]) -> dict[str, Any]:
        return {"resampled": notes} if notes else {}


def _all_near(z: np.ndarray, ref: float) -> bool:
    """Every reference impedance equals ``ref`` (to 1e-9); exact equality is checked first,
    which is the usual case and several times faster than allclose (measured in a batch run)."""
    return bool(np.all(z == ref)) or bool(np.allclose(z, ref, rtol=1e-9))


def _refs(z0: np.ndarray) -> str:
    return "/".join(f"{v:g}" for v in np.unique(np.round(z0, 9)))


def _role(key: str) -> str:
    return {"open": "open standard", "short": "short standard", "load": "load standard",
            "left": "fixture", "right": "right-hand fixture",
            "thru": "2x-thru"}.get(key, key)


# ------------------------------------------------------------------------------ fixture
class Fixture(_StandardsCorrection):
    """De-embeds measured two-port fixtures; see :func:`fixture`."""

    kind = "fixture"

    def _parameters(self) -> dict[str, Any]:
        return {"sides": list(self.inputs), "resample": self.resample}

    def _check(self, cap: Capture) -> None:
        require_ports(cap, (1, 2), "capture", "fixtures are removed from one- and two-ports")
        if cap.ports == 1 and "right" in self.inputs:
            raise CaptureError(f"a right-hand fixture was given but {cap.name!r} is a one-port "
                               "capture; give the fixture as the first argument", cap.path)
        super()._check(cap)

    def _make_terms(self, cap, arrays):
        if cap.ports == 1:
            return error_terms_from_s(arrays["left"])
        return arrays.get("left"), arrays.get("right")

    def _correct(self, cap: Capture):
        terms, notes = self._terms(cap)
        s = np.asarray(cap.s)
        if cap.ports == 1:
            out = remove_one_port_box(s[:, 0, 0], *terms)[:, None, None]
        else:
            out = remove_two_port_boxes(s, *terms)
        return out, self._extra(notes)


def fixture(left: Any = None, right: Any = None, *, resample: bool = False,
            passivity_tol: float = PASSIVITY_TOL) -> Fixture:
    r"""De-embed a measured (or modelled) two-port fixture by inverse cascade.

    .. math:: T_{DUT} = T_A^{-1}\,T_m\,T_B^{-1}

    In front of a one-port the same removal is the bilinear map
    :math:`\Gamma = (\Gamma_m - S_{11})/(S_{22}\Gamma_m + S_{12}S_{21} - S_{11}S_{22})`.

    Parameters
    ----------
    left : Capture, skrf.Network or path, optional
        Fixture A at port 1: its port 1 faces the analyser, port 2 the device.
    right : Capture, skrf.Network or path, optional
        Fixture B at port 2 of a two-port device: its port 1 faces the device, port 2 the
        analyser (cascade order, as in ``A ** DUT ** B``).
    resample : bool
        Interpolate the fixture onto the capture's grid when the grids differ (recorded
        in the provenance). Default: refuse.
    passivity_tol : float
        Tolerance on |S| above 1 for the ``"active"`` finding.

    Returns
    -------
    Fixture
        Callable on a capture.

    Raises
    ------
    CaptureError
        Missing file, a fixture that is not a two-port, no fixture at all.

    References
    ----------
    .. [1] T-parameter cascade, scikit-rf 2.2.0 ``skrf.network.s2t`` (citing Dobrowolski
       2016, pp. 65-68); scikit-rf's ``meas // (A, B)`` is the tests' reference.
    """
    inputs: dict[str, Capture] = {}
    for key, obj in (("left", left), ("right", right)):
        if obj is None:
            continue
        cap = as_capture(obj, _role(key))
        require_ports(cap, 2, _role(key), "a fixture is a two-port")
        inputs[key] = cap
    if not inputs:
        raise CaptureError("fixture() needs at least one fixture (left and/or right)")
    return Fixture(inputs, resample, passivity_tol)


# ------------------------------------------------------------------------------ OSL
class OSL(_StandardsCorrection):
    """Open/short/load compensation; see :func:`osl`."""

    kind = "osl"

    def __init__(self, inputs, load_ohms, open_c_f, short_l_h, load_l_h, resample, tol):
        self.load_ohms = float(load_ohms)
        self.open_c_f = float(open_c_f)
        self.short_l_h = float(short_l_h)
        self.load_l_h = float(load_l_h)
        super().__init__(inputs, resample, tol)

    def _parameters(self) -> dict[str, Any]:
        return {"load_ohms": self.load_ohms, "open_c_f": self.open_c_f,
                "short_l_h": self.short_l_h, "load_l_h": self.load_l_h,
                "resample": self.resample}

    def _check(self, cap: Capture) -> None:
        require_ports(cap, 1, "capture", "open/short/load compensation corrects one-port "
                      "reflection; for a two-port use fixture() or two_x_thru()")
        super()._check(cap)

    def actual_gammas(self, f_hz: np.ndarray, z0_ohm) -> list[np.ndarray]:
        """True reflections of the open, short and load on a grid [Hz] and reference [ohm]."""
        w = 2 * np.pi * np.asarray(f_hz, dtype=float)
        z0 = np.asarray(z0_ohm, dtype=float)
        # open with capacitance C: Gamma = (1 - jwCZ0)/(1 + jwCZ0) (= 1 for C = 0)
        wcz = 1j * w * self.open_c_f * z0
        g_open = (1 - wcz) / (1 + wcz)
        g_short = gamma_from_z(1j * w * self.short_l_h, z0)
        g_load = gamma_from_z(self.load_ohms + 1j * w * self.load_l_h, z0)
        return [g_open, g_short, g_load]

    def _make_terms(self, cap, arrays):
        measured = [arrays[k][:, 0, 0] for k in ("open", "short", "load")]
        return solve_one_port_terms(measured, self.actual_gammas(cap.f_hz, cap.z0[:, 0].real))

    def error_terms(self, capture: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """``(e00, e11, d)`` on a capture's grid (see :mod:`kit.corrections.algebra`)."""
        cap = as_capture(capture)
        self._check(cap)
        return self._terms(cap)[0]

    def _correct(self, cap: Capture):
        terms, notes = self._terms(cap)
        gm = np.asarray(cap.s)[:, 0, 0]
        return remove_one_port_box(gm, *terms)[:, None, None], self._extra(notes)


def _one_port_standards(named: dict[str, Any]) -> dict[str, Capture]:
    out = {}
    for key, obj in named.items():
        cap = as_capture(obj, _role(key))
        require_ports(cap, 1, _role(key), "standards are one-port reflection captures")
        out[key] = cap
    return out


def osl(open: Any, short: Any, load: Any, load_ohms: float = 50.0, *,  # noqa: A002
        open_c_f: float = 0.0, short_l_h: float = 0.0, load_l_h: float = 0.0,
        resample: bool = False, passivity_tol: float = PASSIVITY_TOL) -> OSL:
    r"""Open/short/load compensation at the fixture (the three-term one-port model).

    With ideal open and short and a load of value :math:`Z_{std}` this is the handbook
    formula

    .. math::

        Z_{dut} = Z_{std}\,\frac{(Z_s - Z_{xm})(Z_{sm} - Z_o)}{(Z_{xm} - Z_o)(Z_s - Z_{sm})}

    (:math:`Z_o, Z_s, Z_{sm}`: measured open, short and load; :math:`Z_{xm}`: measured
    device), computed as the equivalent one-port error model
    :math:`\Gamma_m = e_{00} + e_{01}e_{10}\Gamma/(1 - e_{11}\Gamma)`, whose three terms are
    solved per frequency from the standards, so non-ideal standard definitions also work.

    Parameters
    ----------
    open, short, load : Capture, skrf.Network or path
        One-port captures of the standards at the fixture, on the device's grid.
    load_ohms : float
        Resistance of the load standard [ohm].
    open_c_f : float
        Capacitance of the open standard [F] (0: ideal open).
    short_l_h : float
        Inductance of the short standard [H] (0: ideal short).
    load_l_h : float
        Series inductance of the load standard [H].
    resample : bool
        Interpolate the standards onto the capture's grid when they differ (inaccurate
        for raw standards; recorded in the provenance). Default: refuse.
    passivity_tol : float
        Tolerance on |S11| above 1 for the ``"active"`` finding.

    Returns
    -------
    OSL
        Callable on a one-port capture; ``.error_terms(capture)`` gives the terms.

    References
    ----------
    .. [1] An instrument maker's impedance measurement handbook, Appendix C eq. (14) and
       §4.3.3 (open/short/load compensation).
    .. [2] scikit-rf 2.2.0 ``skrf.calibration.OnePort`` (the same three-term model),
       the tests' independent reference.
    """
    stds = _one_port_standards({"open": open, "short": short, "load": load})
    return OSL(stds, load_ohms, open_c_f, short_l_h, load_l_h, resample, passivity_tol)


# ------------------------------------------------------------------------------ open/short
OpenShortModel = Literal["series-shunt", "shunt-series", "symmetric"]
OPEN_SHORT_MODELS = ("series-shunt", "shunt-series", "symmetric")


class OpenShort(_StandardsCorrection):
    """Two-term open/short compensation; see :func:`open_short`."""

    kind = "open_short"

    def __init__(self, inputs, model, resample, tol):
        self.model = model
        super().__init__(inputs, resample, tol)

    def _parameters(self) -> dict[str, Any]:
        return {"model": self.model, "resample": self.resample}

    def _check(self, cap: Capture) -> None:
        require_ports(cap, 1, "capture", "open/short compensation corrects one-port "
                      "reflection; for a two-port use fixture() or two_x_thru()")
        super()._check(cap)

    def _make_terms(self, cap, arrays):
        z0 = cap.z0[:, 0].real
        with np.errstate(divide="ignore", invalid="ignore"):
            y_open = 1.0 / z_from_gamma(arrays["open"][:, 0, 0], z0)
            z_short = z_from_gamma(arrays["short"][:, 0, 0], z0)
        return y_open, z_short

    def _correct(self, cap: Capture):
        (y_o, z_s), notes = self._terms(cap)
        z0 = cap.z0[:, 0].real
        with np.errstate(divide="ignore", invalid="ignore"):
            z_m = z_from_gamma(np.asarray(cap.s)[:, 0, 0], z0)
            if self.model == "series-shunt":
                # series residual Zs at the analyser, stray Yo at the device:
                # Zm = Zs + 1/(Yo + 1/Zdut), Yo = 1/(Zo,m - Zs,m) exactly in this model
                y_stray = y_o / (1.0 - z_s * y_o)
                dz = z_m - z_s
                z = dz / (1.0 - dz * y_stray)
            elif self.model == "shunt-series":
                # stray at the analyser, series residual at the device
                y_m, y_s = 1.0 / z_m, 1.0 / z_s
                z = 1.0 / (y_m - y_o) - 1.0 / (y_s - y_o)
            else:  # symmetric ABCD (A = D): Zdut = Zo (Zs - Zxm)/(Zxm - Zo)
                z = (z_s - z_m) / (z_m * y_o - 1.0)
        return gamma_from_z(z, z0)[:, None, None], self._extra(notes)


def open_short(open: Any, short: Any, model: OpenShortModel = "series-shunt", *,  # noqa: A002
               resample: bool = False, passivity_tol: float = PASSIVITY_TOL) -> OpenShort:
    r"""Open/short (two-term) compensation, for fixtures where no load is available.

    Models, with measured open :math:`Z_o` (admittance :math:`Y_o`), short :math:`Z_s`
    and device :math:`Z_m`:

    * ``"series-shunt"``: residual impedance nearest the analyser, stray admittance
      nearest the device, :math:`Z_{dut} = (Z_m - Z_s)/(1 - (Z_m - Z_s)Y_o')` with
      :math:`Y_o' = 1/(Z_o - Z_s)` (the handbook's simple model, exact in that model);
    * ``"shunt-series"``: stray admittance nearest the analyser,
      :math:`Z_{dut} = (Y_m - Y_o)^{-1} - (Y_s - Y_o)^{-1}`;
    * ``"symmetric"``: an ABCD fixture with A = D,
      :math:`Z_{dut} = Z_o (Z_s - Z_m)/(Z_m - Z_o)`.

    Parameters
    ----------
    open, short : Capture, skrf.Network or path
        One-port captures of the open and the short at the fixture.
    model : {"series-shunt", "shunt-series", "symmetric"}
        The fixture model (see above).
    resample : bool
        Interpolate the standards onto the capture's grid when the grids differ.
    passivity_tol : float
        Tolerance on |S11| above 1 for the ``"active"`` finding.

    Returns
    -------
    OpenShort

    References
    ----------
    .. [1] An instrument maker's impedance measurement handbook, §4.3.2 (simple model) and
       Appendix B eq. (9) (symmetric ABCD form); a bench LCR meter's operating manual, §4.2.
    .. [2] scikit-rf 2.2.0 ``skrf.calibration.deembedding.OpenShort`` (the shunt-series
       topology, after Koolen et al., BCTM 1991, pp. 188-191), the tests' reference.
    """
    if model not in OPEN_SHORT_MODELS:
        raise CaptureError(f"unknown open/short model {model!r}; choose one of "
                           f"{', '.join(OPEN_SHORT_MODELS)}")
    stds = _one_port_standards({"open": open, "short": short})
    return OpenShort(stds, model, resample, passivity_tol)
