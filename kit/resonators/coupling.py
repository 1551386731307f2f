r"""Electromechanical coupling factors from resonance frequency pairs, and their inverses.

Every function here is a closed form (or a one-dimensional root of one) taken from the
resonance relations of the piezoelectricity standard. Frequencies are in hertz; coupling
factors are dimensionless, between 0 and 1.

=====================  =======================================================  ===========
function               relation                                                 mode
=====================  =======================================================  ===========
:func:`k_eff`          k^2 = (fp^2 - fs^2) / fp^2                               any
:func:`kt`             k^2 = (pi/2)(fs/fp) tan[(pi/2)(fp - fs)/fp]              thickness
:func:`k33`            same tan form, bar resonance pair                        long bar
:func:`k31`            k^2/(1-k^2) = (pi/2)(fp/fs) tan[(pi/2)(fp - fs)/fs]      lateral bar
:func:`kp`             Bessel-root method for a given Poisson ratio             thin disc
:func:`kp_approx`      k^2 = 2.51 D - D^2, D = (fp - fs)/fp                     thin disc
=====================  =======================================================  ===========

Inverses (:func:`fs_from_kt`, :func:`fp_from_kt`, :func:`fp_from_k31`, :func:`fp_from_kp`)
give the frequency pair of a given coupling, and :func:`s11e_from_bar` the elastic compliance
of a length-extensional bar.

References
----------
.. [1] ANSI/IEEE Std 176-1987, *IEEE Standard on Piezoelectricity*, clauses on the
   determination of coupling factors from resonance measurements (clause and equation
   numbers from memory).
.. [2] Meitzler, O'Bryan & Tiersten, IEEE Trans. Sonics Ultrason. SU-20 (1973) 233, planar
   coupling of discs (citation from memory).
"""

from __future__ import annotations

import math

import numpy as np

from kit.units import eng

__all__ = [
    "k_eff", "kt", "k33", "k31", "kp", "kp_approx", "planar_root",
    "fs_from_kt", "fp_from_kt", "fp_from_k31", "fp_from_kp", "s11e_from_bar",
]


def _hz(f_hz) -> str:
    """Frequencies [Hz] for a message: "1.975127 MHz", an array as "[2 MHz, 1 MHz]"."""
    if np.ndim(f_hz) == 0:
        return eng(float(f_hz), "Hz", 7)
    return "[" + ", ".join(eng(float(x), "Hz", 7) for x in np.ravel(f_hz)) + "]"


def _pair(fs_hz, fp_hz, what: str, upper: float | None = None):
    fs = np.asarray(fs_hz, dtype=float)
    fp = np.asarray(fp_hz, dtype=float)
    if np.any(~np.isfinite(fs)) or np.any(~np.isfinite(fp)):
        raise ValueError(f"{what}: fs and fp must be finite numbers, "
                         f"got fs = {_hz(fs_hz)}, fp = {_hz(fp_hz)}")
    if np.any(fs <= 0) or np.any(fp <= fs):
        raise ValueError(
            f"{what}: needs 0 < fs < fp, got fs = {_hz(fs_hz)}, fp = {_hz(fp_hz)} "
            "(check that the two frequencies are not swapped)")
    if upper is not None and np.any(fp / fs >= upper):
        raise ValueError(
            f"{what}: fp/fs = {eng(np.max(fp / fs), '', 6)} is beyond the range of the formula "
            f"(fp/fs < {eng(upper, '', 6)}); the pair does not belong to this mode")
    return fs, fp


def _out(x):
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


def _check_k(k, what: str) -> float:
    k = float(k)
    if not 0.0 < k < 1.0:
        raise ValueError(f"{what}: coupling factor must lie in (0, 1), got {k!r}")
    return k


def k_eff(fs_hz, fp_hz):
    r"""Effective coupling factor from a resonance / anti-resonance pair.

    .. math:: k_{eff}^2 = \frac{f_p^2 - f_s^2}{f_p^2}

    Valid for any mode; for the Butterworth-Van Dyke circuit it equals C1/(C0 + C1).
    The same expression is often evaluated with (fm, fn) or (fr, fa) in place of (fs, fp).

    Parameters
    ----------
    fs_hz, fp_hz : float or array_like
        Series (motional) and parallel resonance frequencies [Hz], 0 < fs < fp.

    Returns
    -------
    float or numpy.ndarray
        k_eff [1].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987 (clause from memory); the classical formula is quoted in
       Lamberti & Pappalardo, IEEE Ultrasonics Symp. 1991, doi 10.1109/ULTSYM.1991.234236.
    """
    fs, fp = _pair(fs_hz, fp_hz, "k_eff")
    return _out(np.sqrt((fp**2 - fs**2) / fp**2))


def kt(fs_hz, fp_hz):
    r"""Thickness coupling factor of a plate from its resonance pair (tan form).

    .. math:: k_t^2 = \frac{\pi}{2}\frac{f_s}{f_p}
              \tan\left[\frac{\pi}{2}\frac{f_p - f_s}{f_p}\right]

    This is the exact inversion of the zero of the free thickness-mode plate impedance
    (k_t^2 tan(x)/x = 1 with x = pi fs / (2 fp)); it is not the BVD k_eff.

    Parameters
    ----------
    fs_hz, fp_hz : float or array_like
        Series and parallel resonance of the thickness mode [Hz], 0 < fs < fp.

    Returns
    -------
    float or numpy.ndarray
        k_t [1].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, thickness-extensional plate ("stiffened" mode) (clause
       and equation number from memory).
    """
    return _stiffened(*_pair(fs_hz, fp_hz, "kt"))


def k33(fs_hz, fp_hz):
    r"""Longitudinal coupling factor k33 [1] of a bar poled and electroded on its ends.

    The same "stiffened" tan form as :func:`kt`, applied to the series and parallel
    resonance ``fs_hz`` < ``fp_hz`` [Hz] (floats or arrays) of the bar's length mode:
    :math:`k_{33}^2 = (\pi/2)(f_s/f_p)\tan[(\pi/2)(f_p - f_s)/f_p]`.

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, length-extensional bar, stiffened mode (clause from
       memory).
    """
    return _stiffened(*_pair(fs_hz, fp_hz, "k33"))


def _stiffened(fs, fp):
    """The tan form shared by :func:`kt` and :func:`k33` (same equation, other mode)."""
    k2 = (np.pi / 2) * (fs / fp) * np.tan((np.pi / 2) * (fp - fs) / fp)
    return _out(np.sqrt(k2))


def k31(fs_hz, fp_hz):
    r"""Transverse coupling factor of a bar in its length-extensional mode (unstiffened form).

    .. math:: \frac{k_{31}^2}{1 - k_{31}^2} = \frac{\pi}{2}\frac{f_p}{f_s}
              \tan\left[\frac{\pi}{2}\frac{f_p - f_s}{f_s}\right]

    For a bar poled through its thickness and vibrating along its length, from the series
    and parallel resonance ``fs_hz``, ``fp_hz`` [Hz] (floats or arrays) of that mode; valid
    for fs < fp < 2 fs. Returns k31 [1].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, length-extensional bar, unstiffened mode (clause from
       memory).
    """
    fs, fp = _pair(fs_hz, fp_hz, "k31", upper=2.0)
    a = (np.pi / 2) * (fp / fs) * np.tan((np.pi / 2) * (fp - fs) / fs)
    return _out(np.sqrt(a / (1.0 + a)))


def s11e_from_bar(length_m: float, fs_hz: float, density_kg_m3: float) -> float:
    r"""Elastic compliance s11^E of a length-extensional bar from its series resonance.

    .. math:: s_{11}^E = \frac{1}{4 \rho l^2 f_s^2}

    Parameters
    ----------
    length_m : float
        Bar length l [m].
    fs_hz : float
        Series (motional) resonance of the length mode [Hz].
    density_kg_m3 : float
        Density rho [kg/m^3].

    Returns
    -------
    float
        s11^E [m^2/N].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, length-extensional bar (clause from memory).
    """
    vals = {"length_m": length_m, "fs_hz": fs_hz, "density_kg_m3": density_kg_m3}
    for name, v in vals.items():
        if not (math.isfinite(float(v)) and float(v) > 0):
            raise ValueError(f"s11e_from_bar: {name} must be a positive number, got {v!r}")
    return 1.0 / (4.0 * density_kg_m3 * length_m**2 * fs_hz**2)


def _thickness_ratio(k: float) -> float:
    """fs/fp of the tan form for a coupling factor k (root of k^2 tan x / x = 1)."""
    from scipy.optimize import brentq

    k2 = k * k
    # x cot x falls from 1 (x -> 0) to 0 (x = pi/2): one root in (0, pi/2).
    x = brentq(lambda x: x / math.tan(x) - k2, 1e-12, math.pi / 2 - 1e-15, xtol=1e-15,
               rtol=4 * np.finfo(float).eps)
    return 2.0 * x / math.pi


def fs_from_kt(kt_value: float, fp_hz: float) -> float:
    r"""Series resonance of a thickness mode with coupling ``kt`` and parallel resonance ``fp_hz``.

    Solves :math:`k_t^2 \tan x / x = 1` for :math:`x = \pi f_s / (2 f_p)` (the inverse of
    :func:`kt`); the same holds for :func:`k33`.

    Parameters
    ----------
    kt_value : float
        Thickness coupling factor, 0 < kt < 1 [1].
    fp_hz : float
        Parallel resonance [Hz].

    Returns
    -------
    float
        fs [Hz].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, thickness-extensional plate (clause from memory).
    """
    return _thickness_ratio(_check_k(kt_value, "fs_from_kt")) * float(fp_hz)


def fp_from_kt(kt_value: float, fs_hz: float) -> float:
    """Parallel resonance fp [Hz] from the thickness coupling ``kt_value`` (0 < kt < 1) [1] and
    the series resonance ``fs_hz`` [Hz]: the inverse of :func:`kt` for fp, fp = fs / (fs/fp),
    with the ratio fs/fp from the same root as :func:`fs_from_kt`.

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, as for :func:`fs_from_kt` (clause from memory).
    """
    return float(fs_hz) / _thickness_ratio(_check_k(kt_value, "fp_from_kt"))


def fp_from_k31(k31_value: float, fs_hz: float) -> float:
    """Parallel resonance fp [Hz] of a length-extensional bar from its transverse coupling
    ``k31_value`` (0 < k31 < 1) [1] and series resonance ``fs_hz`` [Hz]: the inverse of
    :func:`k31` for fp.

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, length-extensional bar, unstiffened mode (clause from
       memory).
    """
    from scipy.optimize import brentq

    k = _check_k(k31_value, "fp_from_k31")
    target = k * k / (1.0 - k * k)

    def g(r: float) -> float:  # r = fp/fs in (1, 2)
        return (math.pi / 2) * r * math.tan((math.pi / 2) * (r - 1.0)) - target

    r = brentq(g, 1.0, 2.0 - 1e-12, xtol=1e-15, rtol=4 * np.finfo(float).eps)
    return r * float(fs_hz)


def planar_root(poisson: float = 0.31) -> float:
    r"""Lowest positive root eta1 of :math:`x J_0(x) = (1 - \sigma) J_1(x)` (radial mode of a disc).

    Parameters
    ----------
    poisson : float
        Planar Poisson ratio sigma^E = -s12^E / s11^E [1], between 0 and 0.5.

    Returns
    -------
    float
        eta1 [1]; the series resonance of a disc of radius a is fs = eta1 v_p / (2 pi a).

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, thin disc, radial mode; Meitzler, O'Bryan & Tiersten,
       IEEE Trans. Sonics Ultrason. SU-20 (1973) 233 (both from memory).
    """
    from scipy.optimize import brentq
    from scipy.special import j0, j1

    s = float(poisson)
    if not 0.0 <= s < 0.5:
        raise ValueError(f"planar_root: Poisson ratio must lie in [0, 0.5), got {poisson!r}")
    # x J0 - (1-s) J1 is > 0 at x = 1 and < 0 at the first zero of J1 (3.8317), one root between.
    return float(brentq(lambda x: x * j0(x) - (1.0 - s) * j1(x), 1.0, 3.8317,
                        xtol=1e-15, rtol=4 * np.finfo(float).eps))


def _kp_one(ratio: float, eta1: float, s: float) -> float:
    from scipy.special import j0, j1

    xa = eta1 * ratio
    num = (1.0 - s) * j1(xa) - xa * j0(xa)
    den = (1.0 + s) * j1(xa)
    a = max(num / den, 0.0)
    return math.sqrt(a / (1.0 + a))


_J1_ZERO = 3.831705970207512  # first positive zero of J1


def kp(fs_hz, fp_hz, poisson: float = 0.31):
    r"""Planar coupling factor of a thin disc, exact Bessel-root method.

    With :math:`\eta_1` the lowest root of :math:`x J_0(x) = (1-\sigma) J_1(x)` and
    :math:`x_a = \eta_1 f_p / f_s`:

    .. math:: \frac{k_p^2}{1 - k_p^2} =
              \frac{(1-\sigma) J_1(x_a) - x_a J_0(x_a)}{(1+\sigma) J_1(x_a)}

    from the lossless disc admittance
    :math:`Y = j\omega C^T[(1 - k_p^2) + k_p^2 (1+\sigma) J_1(x)/(x J_0(x) - (1-\sigma) J_1(x))]`.

    Parameters
    ----------
    fs_hz, fp_hz : float or array_like
        Series and parallel resonance of the radial mode [Hz].
    poisson : float
        Planar Poisson ratio sigma [1] (0.31 is a common value for PZT).

    Returns
    -------
    float or numpy.ndarray
        kp [1].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, thin disc, radial mode (clause from memory).
    .. [2] Meitzler, O'Bryan & Tiersten, IEEE Trans. Sonics Ultrason. SU-20 (1973) 233
       (from memory).
    """
    eta1 = planar_root(poisson)
    fs, fp = _pair(fs_hz, fp_hz, "kp", upper=_J1_ZERO / eta1)
    ratio = np.broadcast_to(fp / fs, np.broadcast(fs, fp).shape)
    out = np.vectorize(lambda r: _kp_one(float(r), eta1, float(poisson)), otypes=[float])(ratio)
    return _out(out)


def kp_approx(fs_hz, fp_hz, factor: float = 2.51):
    r"""Planar coupling factor, ratio approximation.

    .. math:: k_p^2 \approx 2.51 \frac{f_p - f_s}{f_p} - \left(\frac{f_p - f_s}{f_p}\right)^2

    The factor 2.51 belongs to a Poisson ratio near 0.31; the result tracks :func:`kp`
    within about 0.5 % there.

    ``fs_hz``, ``fp_hz`` are the radial-mode resonance pair [Hz] (floats or arrays) and
    ``factor`` the slope [1]; returns the approximate kp [1].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, thin disc (approximation and factor from memory).
    """
    fs, fp = _pair(fs_hz, fp_hz, "kp_approx")
    d = (fp - fs) / fp
    k2 = factor * d - d * d
    if np.any(k2 >= 1.0):
        raise ValueError("kp_approx: the approximation gives kp >= 1 for this pair; use kp()")
    return _out(np.sqrt(k2))


def fp_from_kp(kp_value: float, fs_hz: float, poisson: float = 0.31) -> float:
    """Parallel resonance of a disc with planar coupling ``kp`` (inverse of :func:`kp`).

    Parameters
    ----------
    kp_value : float
        Planar coupling factor, 0 < kp < 1 [1].
    fs_hz : float
        Series resonance of the radial mode [Hz].
    poisson : float
        Planar Poisson ratio [1].

    Returns
    -------
    float
        fp [Hz].

    References
    ----------
    .. [1] ANSI/IEEE Std 176-1987, thin disc, radial mode (clause from memory).
    """
    from scipy.optimize import brentq

    k = _check_k(kp_value, "fp_from_kp")
    eta1 = planar_root(poisson)
    hi = _J1_ZERO / eta1 * (1.0 - 1e-12)
    r = brentq(lambda r: _kp_one(r, eta1, float(poisson)) - k, 1.0 + 1e-12, hi,
               xtol=1e-15, rtol=4 * np.finfo(float).eps)
    return r * float(fs_hz)
