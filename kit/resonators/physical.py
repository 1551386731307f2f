"""Physical resonator models: thickness-mode plate (free or loaded) and length-extensional bar.

Complex material constants follow the methods sheet section 0 (time dependence e^{+j w t}):
stiffness c = c'(1 + j/Qm), so the wave speed and fp scale with sqrt(1 + j/Qm); compliance
s = s'(1 - j/Qm) for the bar; permittivity eps = eps'(1 - j tan_delta), so C0 (1 - j tan_delta).
The coupling ``kt`` may be passed complex (piezoelectric loss); the fitted models keep it real.

The closed form of the loaded plate is checked in the tests against :func:`mason_plate_z` and
:func:`klm_plate_z`, two independent network realisations, and against the check values of the
methods sheet section 3.

References
----------
.. [1] ANSI/IEEE Std 176-1987, thickness-extensional plate and length-extensional bar
   (clause numbers from memory); methods sheet sections 1.4, 1.5, 3.1, 3.2.
.. [2] W. P. Mason, *Electromechanical Transducers and Wave Filters*, 2nd ed., 1948 (from
   memory): the Mason network; methods sheet section 3.3.
.. [3] R. Krimholtz, D. A. Leedom, G. L. Matthaei, "New equivalent circuits for elementary
   piezoelectric transducers", Electron. Lett. 6(13), 398-399 (1970): the KLM network;
   methods sheet section 3.4.
.. [4] S. Sherrit, S. P. Leary, B. P. Dolgin, Y. Bar-Cohen, "Comparison of the Mason and KLM
   equivalent circuits for piezoelectric resonators in the thickness mode", IEEE Ultrasonics
   Symposium 1999: Mason = KLM = analytic solution with complex constants.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from kit.network.circuits import Block
from kit.resonators.models import Model, StartError, clean_fz, start_peak_q
from kit.resonators.peaks import conductance_peak, resistance_peak
from kit.resonators.plate import free_plate_z

__all__ = ["CONTACT_FRACTION", "PlateModel", "plate_z", "mason_plate_z", "klm_plate_z", "bar_y",
           "bar_z", "plate_fs_hz", "bar_fp_hz", "plate_model", "bar_model"]


def _lossy(f_hz, fp_hz, c0_f, qm, tan_delta):
    f = np.asarray(f_hz, dtype=float)
    w = 2 * np.pi * f
    vel = np.sqrt(1.0 + 1j / qm) if np.isfinite(qm) else 1.0 + 0j
    kd = np.pi * f / (fp_hz * vel)  # k d = pi f / fp for the lossless plate
    c0c = c0_f * (1.0 - 1j * tan_delta)
    return w, kd, c0c, vel


def plate_z(f_hz, kt, fp_hz: float, c0_f: float, qm: float = np.inf, tan_delta: float = 0.0,
            z_front: complex = 0.0, z_back: complex = 0.0) -> np.ndarray:
    r"""Electrical impedance of a thickness-mode plate with acoustic loads on both faces.

    .. math::

        Z = \frac{1}{j\omega C_0}\left[1 - \frac{k_t^2}{kd}
            \frac{(z_F + z_B)\sin kd + 2j(1 - \cos kd)}
                 {(z_F + z_B)\cos kd + j(1 + z_F z_B)\sin kd}\right],
        \qquad kd = \pi f / f_p

    With ``z_front = z_back = 0`` it reduces to the free plate of :func:`kit.resonators.plate.free_plate_z`.

    Parameters
    ----------
    f_hz : array_like
        Frequencies [Hz].
    kt : float or complex
        Thickness coupling factor [1] (complex for piezoelectric loss).
    fp_hz : float
        Parallel resonance of the free lossless plate, v^D/(2d) [Hz].
    c0_f : float
        Clamped capacitance eps33^S A/d [F].
    qm : float
        Mechanical Q of the stiffness, c = c'(1 + j/qm) [1]; inf for none.
    tan_delta : float
        Dielectric loss tangent [1].
    z_front, z_back : complex
        Acoustic load impedances of the faces normalised to the plate's rho v^D A [1]
        (0 = free face).

    Returns
    -------
    numpy.ndarray of complex
        Electrical impedance of the plate with its face loads [ohm].

    References
    ----------
    .. [1] Methods sheet section 3.2 (closed form, checked there against the Mason network);
       ANSI/IEEE Std 176-1987 for the free plate (from memory for the clause).
    """
    w, kd, c0c, vel = _lossy(f_hz, fp_hz, c0_f, qm, tan_delta)
    zf, zb = z_front / vel, z_back / vel  # loads normalised to the complex Z0
    s, c = np.sin(kd), np.cos(kd)
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = ((zf + zb) * s + 2j * (1 - c)) / ((zf + zb) * c + 1j * (1 + zf * zb) * s)
        return (1.0 - (kt**2 / kd) * frac) / (1j * w * c0c)


def mason_plate_z(f_hz, kt, fp_hz: float, c0_f: float, qm: float = np.inf,
                  tan_delta: float = 0.0, z_front: complex = 0.0,
                  z_back: complex = 0.0) -> np.ndarray:
    """Plate impedance from the Mason network (same parameters as :func:`plate_z`).

    Electrical port: C0 in shunt, then -C0 in series with an ideal transformer 1:N,
    N = h33 C0; acoustic T-network with arms j Z0 tan(kd/2) to each face and the shunt arm
    Z0/(j sin kd) to the transformer; faces loaded by Z_F, Z_B. The transformer maps a
    mechanical impedance Z_m to Z_m/N^2 = z_m/(2 kt^2 C0 fp) with z_m = Z_m/Z0, since
    h33^2/Z0 = 2 kt^2 fp/C0.

    References
    ----------
    .. [1] W. P. Mason, *Electromechanical Transducers and Wave Filters*, 2nd ed., 1948
       (from memory); topology as in the methods sheet section 3.3.
    """
    w, kd, c0c, vel = _lossy(f_hz, fp_hz, c0_f, qm, tan_delta)
    fpc = fp_hz * vel
    zf, zb = z_front / vel, z_back / vel
    with np.errstate(divide="ignore", invalid="ignore"):
        arm = 1j * np.tan(kd / 2)
        shunt = 1.0 / (1j * np.sin(kd))
        zm = shunt + 1.0 / (1.0 / (arm + zf) + 1.0 / (arm + zb))
        zc0 = 1.0 / (1j * w * c0c)
        branch = -zc0 + zm / (2 * kt**2 * c0c * fpc)
        return 1.0 / (1.0 / zc0 + 1.0 / branch)


def klm_plate_z(f_hz, kt, fp_hz: float, c0_f: float, qm: float = np.inf,
                tan_delta: float = 0.0, z_front: complex = 0.0,
                z_back: complex = 0.0) -> np.ndarray:
    """Plate impedance from the KLM network (same parameters as :func:`plate_z`).

    Z = 1/(j w C0) + j X1 + Z_ac/phi^2, X1 = Z0 M^2 sin kd, phi = 1/(2 M sin(kd/2)),
    M = h33/(w Z0); Z_ac is the impedance at the centre of the acoustic line (the two
    half-lines loaded by Z_F and Z_B, in parallel).

    References
    ----------
    .. [1] R. Krimholtz, D. A. Leedom, G. L. Matthaei, Electron. Lett. 6(13), 398-399 (1970);
       element values as in the methods sheet section 3.4 (from memory there).
    """
    w, kd, c0c, vel = _lossy(f_hz, fp_hz, c0_f, qm, tan_delta)
    fpc = fp_hz * vel
    zf, zb = z_front / vel, z_back / vel
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.tan(kd / 2)
        hf = (zf + 1j * t) / (1 + 1j * zf * t)
        hb = (zb + 1j * t) / (1 + 1j * zb * t)
        zac = hf * hb / (hf + hb)
        m2z0 = 2 * kt**2 * fpc / (c0c * w**2)  # Z0 M^2 = h33^2/(w^2 Z0)
        return 1.0 / (1j * w * c0c) + 1j * m2z0 * np.sin(kd) + 4 * np.sin(kd / 2) ** 2 * m2z0 * zac


def plate_fs_hz(kt: float, fp_hz: float) -> float:
    """Series resonance of the free lossless plate: kt^2 tan(x)/x = 1, fs = fp x/(pi/2).

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987 (from memory); methods sheet section 1.4 (inversion of the
       tan formula).
    """
    from scipy.optimize import brentq

    k2 = float(kt) ** 2
    if not 0 < k2 < 1:
        return float("nan")
    x = brentq(lambda x: k2 * np.sin(x) - x * np.cos(x), 1e-12, np.pi / 2, xtol=1e-15)
    return float(fp_hz * x / (np.pi / 2))


def bar_fp_hz(k31: float, fs_hz: float) -> float:
    """Parallel resonance of the lossless bar: (1 - k31^2) + k31^2 tan(x)/x = 0.

    Equivalent to k31^2/(1 - k31^2) = (pi/2)(fp/fs) tan((pi/2)(fp - fs)/fs).

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987 (from memory); methods sheet section 1.5.
    """
    from scipy.optimize import brentq

    k2 = float(k31) ** 2
    if not 0 < k2 < 1:
        return float("nan")
    x = brentq(lambda x: (1 - k2) * x * np.cos(x) + k2 * np.sin(x), np.pi / 2 + 1e-12,
               np.pi, xtol=1e-15)
    return float(fs_hz * x / (np.pi / 2))


def bar_y(f_hz, ct_f: float, fs_hz: float, k31, qm: float = np.inf,
          tan_delta: float = 0.0) -> np.ndarray:
    r"""Admittance of a length-extensional bar (transverse, k31 mode), electrodes on the faces.

    .. math::

        Y = j\omega C^T (1 - j\tan\delta)\left[(1 - k_{31}^2) + k_{31}^2 \frac{\tan x}{x}\right],
        \qquad x = \frac{\pi}{2}\frac{f}{f_s}\sqrt{1 - j/Q_m}

    Parameters
    ----------
    f_hz : array_like
        Frequencies [Hz].
    ct_f : float
        Free (low-frequency) capacitance C^T [F].
    fs_hz : float
        Series resonance of the lossless bar, 1/(2 l sqrt(rho s11^E)) [Hz].
    k31 : float
        Transverse coupling factor [1].
    qm : float
        Mechanical Q of the compliance, s = s'(1 - j/qm) [1].
    tan_delta : float
        Dielectric loss tangent [1].

    Returns
    -------
    numpy.ndarray of complex
        Y [S].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, length-extensional bar (from memory); methods sheet
       section 1.5 (the admittance and its zero).
    """
    f = np.asarray(f_hz, dtype=float)
    w = 2 * np.pi * f
    loss = np.sqrt(1.0 - 1j / qm) if np.isfinite(qm) else 1.0
    x = (np.pi / 2) * f / fs_hz * loss
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(np.abs(x) > 1e-12, np.tan(x) / np.where(x == 0, 1, x), 1.0)
    return 1j * w * ct_f * (1 - 1j * tan_delta) * ((1 - k31**2) + k31**2 * ratio)


def bar_z(f_hz, ct_f, fs_hz, k31, qm=np.inf, tan_delta=0.0) -> np.ndarray:
    """Impedance [ohm] of the bar, 1/:func:`bar_y`."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return 1.0 / bar_y(f_hz, ct_f, fs_hz, k31, qm, tan_delta)


def _fs_fp_from_data(f, z):
    """fs, fp, half-power Q and Y from the one peak reader (:mod:`kit.resonators.peaks`)."""
    y = 1.0 / z
    pk = conductance_peak(f, z)
    if pk is None:
        raise StartError("the conductance maximum is at the edge of the span; widen the span")
    pk_p = resistance_peak(f, z, after=pk.index)
    if pk_p is None:
        raise StartError("no resistance maximum (parallel resonance) above fs inside the span")
    fs, _g, q = start_peak_q(f, y.real, pk.index)
    return fs, pk_p.f_hz, q, y


def _plate_start(f, z):
    f, z = clean_fz(f, z)
    fs, fp, q, y = _fs_fp_from_data(f, z)
    kt2 = (np.pi / 2) * (fs / fp) * np.tan((np.pi / 2) * (fp - fs) / fp)
    kt = float(np.sqrt(min(max(kt2, 1e-4), 0.9)))
    k = 0 if abs(f[0] - fs) > abs(f[-1] - fp) else len(f) - 1
    shape = plate_z(f[k:k + 1], kt, fp, 1.0)  # Z for C0 = 1 F
    c0 = float((shape / z[k:k + 1]).real[0])
    if not c0 > 0:
        c0 = float(y.imag[0] / (2 * np.pi * f[0]) * (1 - kt**2))
    tand = float(np.clip(y.real[0] / abs(y.imag[0]), 1e-4, 0.1))
    p = {"kt": kt, "fp_hz": fp, "C0": abs(c0), "qm": q, "tan_delta": tand}
    return {**p, "Rs": _contact_start(f, z, fs, p)}


def _contact_start(f, z, fs, p) -> float:
    r"""Start value of the series contact resistance Rs [ohm].

    The minimum of Re Z within a half-power width of fs, less the plate's own minimum
    there. The plate's own is computed with the Q read from the half-power width of the
    resistance peak at fp, where \|Z\| is large and a contact of a few ohm does not widen
    the peak (the Q read at fs includes the contact). Floored at 1e-3 of the plate's own
    resistance, since the fit works on log Rs: a small positive start lets it rise to a
    contact's value or fall to nothing.

    References
    ----------
    .. [1] Common practice, no source: a resistance in series adds to Re Z at every
       frequency, so the excess of the measured minimum of Re Z over the model's is its
       estimate.
    """
    pk_p = resistance_peak(f, z, after=int(np.searchsorted(f, fs)))
    q = p["qm"] if pk_p is None else start_peak_q(f, z.real, pk_p.index, default_q=p["qm"])[2]
    near = np.abs(f - fs) <= fs / (2 * p["qm"])
    if np.count_nonzero(near) < 3:
        near = np.argsort(np.abs(f - fs))[:3]
    own = float(np.min(free_plate_z(f[near], p["kt"], p["fp_hz"], p["C0"], q,
                                    p["tan_delta"]).real))
    floor = 1e-3 * max(own, 1e-12)
    return float(max(float(np.min(z[near].real)) - own, floor))


def _extra_branches(start, modes):
    """Start function adding motional branches 2..modes (spurious modes) in parallel."""
    from scipy.signal import find_peaks

    def wrapped(f, z):
        p = start(f, z)
        if modes == 1:
            return p
        f, z = clean_fz(f, z)
        g = (1.0 / z).real
        peaks, props = find_peaks(g, prominence=0)
        main = conductance_peak(f, z).index  # start() found it, so it exists
        keep = [(pr, i) for i, pr in zip(peaks, props["prominences"]) if abs(i - main) > 2]
        keep.sort(reverse=True)
        if len(keep) < modes - 1:
            raise StartError(f"found {len(keep)} conductance peak(s) besides the main mode, "
                             f"{modes - 1} asked; lower modes or widen the span")
        for n, (prom, i) in enumerate(sorted(keep[:modes - 1], key=lambda t: t[1]), start=2):
            fn, _gpk, q = start_peak_q(f, g, int(i), g[i] - prom)
            rn = 1.0 / prom
            wn = 2 * np.pi * fn
            cn = 1.0 / (wn * q * rn)
            p.update({f"R{n}": rn, f"L{n}": 1.0 / (wn**2 * cn), f"C{n}": cn})
        return p

    return wrapped


def _with_branches(block, names, modes):
    if modes == 1:
        return block, names
    from kit.network.circuits import C, L, R, parallel, series

    extra = [series(R(f"R{n}"), L(f"L{n}"), C(f"C{n}")) for n in range(2, modes + 1)]
    return (parallel(block, *extra),
            names + tuple(f"{s}{n}" for n in range(2, modes + 1) for s in "RLC"))


#: A contact resistance is flagged when it exceeds this fraction of |Z| at fs (and three
#: standard errors): below it the contact changes no figure of the element beyond the
#: ordinary spread of a lot (common practice, no source).
CONTACT_FRACTION = 0.05


@dataclass(frozen=True)
class PlateModel(Model):
    """The plate model, which also reports a series contact resistance it finds."""

    def z(self, f_hz, params) -> np.ndarray:
        """Model impedance [ohm]; a missing "Rs" is 0 (parameter sets from before it)."""
        return super().z(f_hz, {"Rs": 0.0, **params})

    def z_and_jac(self, f_hz, params):
        """Model impedance [ohm] and dZ/dp; a missing "Rs" is 0."""
        return super().z_and_jac(f_hz, {"Rs": 0.0, **params})

    def extra_flags(self, params: dict, stderr: dict, f_hz, z_model) -> list[str]:
        """["contact-resistance"] when Rs > 3 stderr and Rs > CONTACT_FRACTION |Z(fs)|.

        Parameters
        ----------
        params, stderr : dict
            Fitted values and standard errors (Rs [ohm]).
        f_hz, z_model : numpy.ndarray
            Fitted frequencies [Hz] and the model impedance there [ohm] (unused here; the
            signature of :func:`kit.resonators.fitting.fit`'s model hook).

        References
        ----------
        .. [1] Common practice, no source: a significance test at three standard errors and
           a relevance threshold (:data:`CONTACT_FRACTION`).
        """
        rs, err = params.get("Rs", 0.0), stderr.get("Rs", np.nan)
        if not (rs > 0 and np.isfinite(err) and rs > 3 * err):
            return []
        fs = plate_fs_hz(params["kt"], params["fp_hz"])
        z_fs = abs(complex(self.z(np.array([fs]), params)[0])) if np.isfinite(fs) else np.nan
        return ["contact-resistance"] if rs > CONTACT_FRACTION * z_fs else []


def plate_model(z_front: complex = 0.0, z_back: complex = 0.0, modes: int = 1) -> Model:
    r"""Fittable thickness-mode plate: free (loads 0, via kit.resonators.plate.free_plate_z) or loaded.

    Parameters are "kt", "fp_hz", "C0", "qm", "tan_delta" and "Rs", a series contact
    resistance [ohm] (Rs >= 0; a fit that drives it to zero reports 0); the loads are fixed
    options, normalised to rho v^D A. With ``modes > 1`` motional branches "Rn", "Ln", "Cn"
    (n = 2..modes) are added in parallel for spurious (e.g. lateral) modes, started from the
    most prominent conductance peaks other than the main one. Rs is in series with the whole
    element (plate and extra branches). The fit flags "contact-resistance" when Rs is above
    three standard errors and above :data:`CONTACT_FRACTION` of \|Z\| at fs
    (:meth:`PlateModel.extra_flags`).
    """
    free = z_front == 0 and z_back == 0
    if free:
        def zfun(f, kt, fp_hz, C0, qm, tan_delta):
            return free_plate_z(f, kt, fp_hz, C0, qm, tan_delta)
    else:
        def zfun(f, kt, fp_hz, C0, qm, tan_delta):
            return plate_z(f, kt, fp_hz, C0, qm, tan_delta, z_front, z_back)
    names = ("kt", "fp_hz", "C0", "qm", "tan_delta")

    def derived(p):
        fs = plate_fs_hz(p["kt"], p["fp_hz"])
        return {"fs_hz": fs, "fp_hz": p["fp_hz"], "k_eff": np.sqrt(1 - (fs / p["fp_hz"]) ** 2),
                "qm": p["qm"], "kt": p["kt"]}

    opts = {} if free else {"z_front": z_front, "z_back": z_back}
    circ, allnames = _with_branches(Block(zfun, names, label="plate"), names, modes)
    from kit.network.circuits import R, series

    circ = series(R("Rs"), circ)  # the contact, in series with the whole element
    allnames = names + ("Rs",) + allnames[len(names):]
    return PlateModel("plate", circ, allnames, _extra_branches(_plate_start, modes), derived,
                      bounds={"kt": (1e-4, 0.999), "tan_delta": (1e-7, 1.0), "qm": (1.0, 1e7),
                              "Rs": (0.0, np.inf)},
                      options=opts, analytic_jacobian=False,
                      description="thickness-mode plate, " + ("free faces" if free else
                                                             f"loads z_F={z_front}, z_B={z_back}")
                      + (f", {modes - 1} extra branch(es)" if modes > 1 else "")
                      + ", series contact Rs")


def _bar_start(f, z):
    f, z = clean_fz(f, z)
    fs, fp, q, y = _fs_fp_from_data(f, z)
    a = (np.pi / 2) * (fp / fs) * np.tan((np.pi / 2) * (fp - fs) / fs)
    k31 = float(np.sqrt(min(max(a / (1 + a), 1e-4), 0.9)))
    k = 0 if abs(f[0] - fs) > abs(f[-1] - fp) else len(f) - 1
    shape = bar_y(f[k:k + 1], 1.0, fs, k31)
    ct = float((y[k:k + 1] / shape).real[0])
    if not ct > 0:
        ct = float(abs(y.imag[0]) / (2 * np.pi * f[0]))
    tand = float(np.clip(y.real[0] / abs(y.imag[0]), 1e-4, 0.1))
    return {"CT": ct, "fs_hz": fs, "k31": k31, "qm": q, "tan_delta": tand}


def bar_model() -> Model:
    """Fittable length-extensional bar: "CT", "fs_hz", "k31", "qm", "tan_delta"."""
    names = ("CT", "fs_hz", "k31", "qm", "tan_delta")

    def zfun(f, CT, fs_hz, k31, qm, tan_delta):
        return bar_z(f, CT, fs_hz, k31, qm, tan_delta)

    def derived(p):
        fp = bar_fp_hz(p["k31"], p["fs_hz"])
        return {"fs_hz": p["fs_hz"], "fp_hz": fp, "k_eff": np.sqrt(1 - (p["fs_hz"] / fp) ** 2),
                "qm": p["qm"], "k31": p["k31"]}

    return Model("bar", Block(zfun, names, label="bar"), names, _bar_start, derived,
                 bounds={"k31": (1e-4, 0.999), "tan_delta": (1e-7, 1.0), "qm": (1.0, 1e7)},
                 analytic_jacobian=False, description="length-extensional bar (k31 mode)")
