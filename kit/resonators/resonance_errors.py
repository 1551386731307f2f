r"""Standard errors of the characteristic frequencies of :func:`kit.resonance`.

The method is described in :mod:`kit.resonators.frequencies` ("Uncertainties"); the
trace-level helpers (noise scale, vertex and crossing errors) are in
:mod:`kit.resonators.peak_errors`. This module carries the noise of the measured
S-parameter to the impedance and to each quantity read, and propagates to k_eff and Qm.

References
----------
.. [1] JCGM 100:2008 (GUM), sections 5.1.2 (first-order propagation) and 4.3.7 (a reading
   known to within one step: step/sqrt(12)).
.. [2] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, Table 4.2 (S21 of a series
   and of a shunt impedance between two ports); from memory for the table number.
"""

from __future__ import annotations

import math

import numpy as np

from kit.network.reflection import gamma_from_z
from kit.resonators.peak_errors import (
    GRID_FACTOR,
    crossing_stderr,
    noise_scale,
    vertex_spread,
    vertex_stderr,
)

__all__ = ["NOISE_LIMIT", "STDERR_FIELDS", "UNCERTAINTY", "noise_on_z", "spread",
           "uncertainties"]

#: Relative noise of the quantity read above which a reading is flagged "noise-limited:<f>":
#: the first-order propagation behind its standard error no longer holds (common practice,
#: no source; the coverage test in tests/test_resonance_errors.py shows where it fails).
NOISE_LIMIT = 0.05
#: How the standard errors are obtained (see the module docstring).
UNCERTAINTY = ("noise from second differences (MAD), delta method at the vertex, "
               "noise/slope at crossings, step/sqrt(12) where grid-limited")
#: figure -> the field of its standard error (module docstring, "Uncertainties").
STDERR_FIELDS = {"fs_hz": "fs_stderr_hz", "fp_hz": "fp_stderr_hz", "fm_hz": "fm_stderr_hz",
                 "fn_hz": "fn_stderr_hz", "fr_hz": "fr_stderr_hz", "fa_hz": "fa_stderr_hz",
                 "k_eff": "k_eff_stderr", "qm": "qm_stderr"}

#: |dZ/dS| = |a Z + b Z0|^2 / (2 Z0) for the S-parameter each method reads (a, b).
_SENSITIVITY = {"reflection": (1.0, 1.0), "series-through": (1.0, 2.0),
                "shunt-through": (2.0, 1.0)}


def noise_on_z(zz, method: str, z0: float) -> tuple[float, np.ndarray]:
    """Noise rms of the measured S-parameter [1] and its image on Z per component [ohm].

    The measured S-parameter is rebuilt from Z (S11 = (Z - Z0)/(Z + Z0) for "reflection",
    S21 = 2 Z0/(2 Z0 + Z) for "series-through", S21 = 2 Z/(2 Z + Z0) for "shunt-through";
    bare arrays as "reflection"), its noise is read from second differences
    (:func:`kit.resonators.peak_errors.noise_scale`), and carried to Z by
    \\|dZ/dS\\| = \\|a Z + b Z0\\|^2/(2 Z0), (a, b) = (1, 1), (1, 2), (2, 1) respectively (the
    derivative of the inverse maps; a holomorphic map keeps complex noise isotropic).

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., Wiley, 2012, Table 4.2 (S21 of a
       series and of a shunt impedance between two ports of reference Z0) and eq. 2.35
       (reflection coefficient); equation numbers from memory.
    """
    a, b = _SENSITIVITY.get(method, _SENSITIVITY["reflection"])
    if (a, b) == (1.0, 1.0):
        s = gamma_from_z(zz, z0)
    else:  # the inverse of kit.network.immittance.z_from_series_through / _shunt_through
        with np.errstate(divide="ignore", invalid="ignore"):
            s = 2 * z0 / (2 * z0 + zz) if b == 2.0 else 2 * zz / (2 * zz + z0)
    sigma_s = noise_scale(s)
    return sigma_s, sigma_s * np.abs(a * zz + b * z0) ** 2 / (2 * z0)


def spread(fun, zz, sigma_z):
    """Per-point noise rms of fun(Z) for isotropic noise sigma_z on each part of Z."""
    h = 1e-7 * np.abs(zz)
    with np.errstate(divide="ignore", invalid="ignore"):
        d_re = (fun(zz + h) - fun(zz - h)) / (2 * h)
        d_im = (fun(zz + 1j * h) - fun(zz - 1j * h)) / (2 * h)
    return sigma_z * np.hypot(d_re, d_im)


def uncertainties(f, zz, found: dict, where: dict, flags: list[str], method: str,
                   z0: float) -> dict[str, float]:
    """Standard errors of the figures of :func:`resonance` (module docstring, "Uncertainties").

    Parameters
    ----------
    f : numpy.ndarray
        Increasing frequencies [Hz].
    zz : numpy.ndarray of complex
        Impedance [ohm].
    found : dict
        The figures read (None where not found): fm_hz ... fa_hz, f1_hz, f2_hz, k_eff, qm.
    where : dict
        Index of the discrete extremum (fm, fn, fs, fp) or of the left sample of the
        crossing (fr, fa), None where not found.
    flags : list of str
        The reading's flags ("not-interpolated:fs" marks a grid-limited reading).
    method : str
        How Z was obtained (the S-parameter whose noise is estimated, see
        :func:`noise_on_z`).
    z0 : float
        Reference impedance of that S-parameter [ohm].

    Returns
    -------
    dict
        ``<figure>_stderr_hz``, ``k_eff_stderr``, ``qm_stderr`` and ``noise_rms``; NaN where
        the figure was not found.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), 5.1.2 (first-order propagation) and 4.3.7 (step/sqrt(12));
       see :mod:`kit.resonators.peak_errors` for the noise scale and the vertex.
    .. [2] k_eff^2 = 1 - (fs/fp)^2 (ANSI/IEEE Std 176-1987, from memory), so
       dk/dfs = -fs/(fp^2 k) and dk/dfp = fs^2/(fp^3 k); Qm = fs/(f2 - f1).
    """
    nan = math.nan
    out = {v: nan for v in STDERR_FIELDS.values()}
    funs = {"fs_hz": lambda z: 1.0 / (1.0 / z).real, "fp_hz": lambda z: 1.0 / z.real,
            "fm_hz": lambda z: np.abs(z) ** 2, "fn_hz": lambda z: 1.0 / np.abs(z) ** 2}
    with np.errstate(divide="ignore", invalid="ignore"):
        traces = {key: fun(zz) for key, fun in funs.items()}
    sigma_s, sigma_z = noise_on_z(zz, method, z0)
    out["noise_rms"] = math.sqrt(2.0) * sigma_s  # complex rms, both parts
    level_err = nan  # standard error of 1/G at fs, for the half-power level
    for key, t in traces.items():
        i = where[key]
        if found[key] is None or i is None:
            continue
        sigma = spread(funs[key], zz, sigma_z)
        if not sigma[i] <= NOISE_LIMIT * abs(t[i]):
            flags.append(f"noise-limited:{key.removesuffix('_hz')}")
        err, t_err = np.fmax(vertex_stderr(f, t, i, sigma), vertex_spread(f, t, i, sigma))
        if f"not-interpolated:{key.removesuffix('_hz')}" in flags:
            # the sample itself: the grid part, step/sqrt(12)
            err = GRID_FACTOR * float(np.mean(np.diff(f[max(i - 1, 0):i + 2])))
        out[STDERR_FIELDS[key]] = err
        if key == "fs_hz":
            level_err = 2.0 * t_err
    for key in ("fr_hz", "fa_hz"):
        i = where[key]
        if found[key] is not None and i is not None:
            out[STDERR_FIELDS[key]] = crossing_stderr(f, zz.imag, i, sigma_z[i])
            if not sigma_z[i] <= NOISE_LIMIT * abs(zz[i]):
                flags.append(f"noise-limited:{key.removesuffix('_hz')}")
    fs, fp, f1, f2 = (found[k] for k in ("fs_hz", "fp_hz", "f1_hz", "f2_hz"))
    if found["k_eff"] is not None:
        k = found["k_eff"]
        out["k_eff_stderr"] = math.hypot(fs / (fp * fp * k) * out["fs_stderr_hz"],
                                         fs * fs / (fp**3 * k) * out["fp_stderr_hz"])
    if found["qm"] is not None:
        t, sig = traces["fs_hz"], spread(funs["fs_hz"], zz, sigma_z)
        il, ir = (int(np.searchsorted(f, v)) - 1 for v in (f1, f2))
        e1 = crossing_stderr(f, t, il, sig[il])
        e2 = crossing_stderr(f, t, ir, sig[ir])
        lvl = crossing_stderr(f, t, il, level_err) + crossing_stderr(f, t, ir, level_err)
        width_err = math.sqrt(e1 * e1 + e2 * e2 + lvl * lvl)
        qm, width = found["qm"], f2 - f1
        out["qm_stderr"] = math.hypot(qm / fs * out["fs_stderr_hz"], qm / width * width_err)
    return out
