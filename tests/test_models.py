"""Resonator models (kit.resonators.models, kit.resonators.physical) against the methods sheet."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kit.resonators.circle import circle_start, kasa_circle
from kit.resonators.models import bvd_figures, estimate_bvd
from kit.resonators.noise import difference_variance, noise_rms
from kit.resonators.physical import (
    bar_fp_hz,
    bar_y,
    klm_plate_z,
    mason_plate_z,
    plate_fs_hz,
    plate_z,
)
from kit.resonators.plate import free_plate_z
from kit.resonators.registry import MODEL_NAMES, get_model

FIX_A = {"C0": 1e-9, "R1": 7.9577471546, "L1": 1.2665147955e-4, "C1": 2e-10}


def test_bvd_identities_fixture_a():
    """fs, fp, k_eff^2 = 1/6 and Qm = 100 of fixture A (IEEE 176-1987; IEC 60050-561)."""
    # Sources: ANSI/IEEE Std 176-1987 (k_eff, Qm; clause from memory), IEC 60050-561:2014
    # IEV 561-01-66 (fp); values from the methods sheet sections 1.2, 1.3, 1.7.
    fig = bvd_figures(**{k.lower(): v for k, v in FIX_A.items()})
    assert fig["fs_hz"] == pytest.approx(1e6, rel=1e-10)
    assert fig["fp_hz"] == pytest.approx(1_095_445.115010, rel=5e-11)  # L1, R1 given to 11 digits
    assert fig["k_eff"] ** 2 == pytest.approx(1 / 6, rel=1e-12)
    assert fig["qm"] == pytest.approx(100, rel=1e-9)
    # k_eff^2 also equals (fp^2 - fs^2)/fp^2 (IEEE 176 classical formula)
    assert (fig["fp_hz"] ** 2 - fig["fs_hz"] ** 2) / fig["fp_hz"] ** 2 == pytest.approx(1 / 6)


def test_bvd_characteristic_frequencies_fixture_a():
    """The model's G max, R max and min/max |Z| sit at the tabulated frequencies (sheet 1.2)."""
    # Source: methods sheet section 1.2 table (fixture A), computed from the BVD formulas.
    m = get_model("bvd")
    f = np.arange(999_000.0, 1_001_000.0, 0.01)
    z = m.z(f, FIX_A)
    g = (1 / z).real
    assert f[np.argmax(g)] == pytest.approx(1_000_000.0, abs=0.02)
    assert g.max() == pytest.approx(0.1256637061, rel=1e-9)
    assert f[np.argmin(np.abs(z))] == pytest.approx(999_750.84, abs=0.02)
    f2 = np.arange(1_095_000.0, 1_096_000.0, 0.01)
    z2 = m.z(f2, FIX_A)
    assert f2[np.argmax(z2.real)] == pytest.approx(1_095_422.29, abs=0.02)
    assert f2[np.argmax(np.abs(z2))] == pytest.approx(1_095_672.51, abs=0.02)
    assert np.abs(z2).max() == pytest.approx(2659.304807, rel=1e-8)


def test_half_power_points_fixture_a():
    """G falls to Gmax/2 at 995 012.4999 Hz and 1 005 012.4999 Hz (methods sheet 1.7 b)."""
    m = get_model("bvd")
    g = (1 / m.z(np.array([995_012.499922, 1e6, 1_005_012.499922]), FIX_A)).real
    # tolerance from the 11-digit L1 and R1 of the sheet
    assert g[0] / g[1] == pytest.approx(0.5, abs=5e-9)
    assert g[2] / g[1] == pytest.approx(0.5, abs=5e-9)


def test_closed_form_start_fixture_a():
    """The closed-form estimates of the methods sheet 2.2 land near fixture A's values."""
    # Source: methods sheet section 2.2 (common practice, no source); a 2001-point sweep.
    f = np.linspace(0.9e6, 1.2e6, 2001)
    p = estimate_bvd(f, get_model("bvd").z(f, FIX_A))
    for k, v in FIX_A.items():
        assert p[k] == pytest.approx(v, rel=0.05), k


def test_admittance_circle_start_fixture_a():
    """The admittance-circle start gives fixture A: diameter 1/R1, Qm = 100, C0 (sheet 2.3)."""
    # Source: methods sheet section 2.3 (circle of diameter 1/R1, quadrant points give
    # Qm = fs/(f2 - f1)) and the fixture A values of section 1.2 (R1 = 7.9577471546 ohm,
    # Qm = 100, C0 = 1 nF). The circle is distorted only by the slow j omega C0 drift across
    # the band (about 1e-3 of the diameter here), the Qm slope by the curvature of
    # X1(f) over +-60 degrees: tolerances 0.2 % (R1) and 1 % (Qm, C0).
    f = np.linspace(0.9e6, 1.2e6, 2001)
    p = circle_start(f, get_model("bvd").z(f, FIX_A))
    assert p["R1"] == pytest.approx(FIX_A["R1"], rel=2e-3)
    qm = bvd_figures(p["C0"], p["R1"], p["L1"], p["C1"])["qm"]
    assert qm == pytest.approx(100, rel=1e-2)
    assert p["C0"] == pytest.approx(1e-9, rel=1e-2)
    # no conductance peak inside the span: no start value
    assert circle_start(f[:200], 1 / (2j * np.pi * f[:200] * 1e-9)) is None


def test_kasa_circle_recovers_a_known_circle():
    """The algebraic circle fit returns the centre and radius of exact points on a circle."""
    # Source: Kasa, IEEE Trans. Instrum. Meas. IM-25(1), 1976 (from memory): exact for
    # points on a circle, whatever arc they cover; the circle here is chosen, not computed.
    t = np.linspace(-0.7, 1.9, 9)
    xc, yc, rad = kasa_circle(3.0 + 1.5 * np.cos(t), -2.0 + 1.5 * np.sin(t))
    assert (xc, yc, rad) == pytest.approx((3.0, -2.0, 1.5), rel=1e-12)
    assert np.isnan(kasa_circle([0.0, 1.0], [0.0, 1.0])[2])  # two points make no circle


def test_difference_noise_estimate_of_known_noise():
    """Fourth differences read the variance of added noise, not the smooth curve under it."""
    # Sources: the variance of the k-th difference of white noise is C(2k, k) sigma^2
    # (Vandermonde's identity; the variate difference method, Tintner 1940, from memory);
    # a cubic has a zero fourth difference (finite-difference calculus, common practice).
    x = np.linspace(-1, 1, 4001)
    cubic = 2 + 3 * x - x**2 + 5 * x**3
    assert np.allclose(difference_variance(cubic + 0j), 0.0, atol=1e-20)
    rng = np.random.default_rng(4)
    sigma = 1e-3 * (1 + x**2)           # noise that grows towards the ends
    y = np.exp(4j * x) + sigma * (rng.standard_normal(x.size)
                                  + 1j * rng.standard_normal(x.size)) / np.sqrt(2)
    v = difference_variance(y, sigma)   # per part, in units of sigma^2: 1/2
    assert np.mean(v) == pytest.approx(0.5, rel=0.05)
    assert noise_rms(v, sigma, np.ones_like(y)) == pytest.approx(
        np.sqrt(np.mean(sigma**2)), rel=0.05)


def test_multi_single_branch_and_mbvd_reduce_to_bvd():
    """multi with one branch, and mBVD with R0, Rs -> 0, equal the BVD (sheet 2.1)."""
    f = np.linspace(0.5e6, 2e6, 301)
    z = get_model("bvd").z(f, FIX_A)
    np.testing.assert_allclose(get_model("multi", modes=1).z(f, FIX_A), z, rtol=1e-13)
    zl = get_model("bvd-loss").z(f, dict(FIX_A, R0=1e-12, Rs=1e-12))
    np.testing.assert_allclose(zl, z, rtol=1e-9)
    two = get_model("bvd", modes=2)
    assert two.name == "multi" and two.params == ("C0", "R1", "L1", "C1", "R2", "L2", "C2")


def test_plate_closed_form_table_and_networks():
    """Free plate Im Z at six frequencies equals the sheet 3.4 table; Mason = KLM = closed form."""
    # Sources: ANSI/IEEE Std 176-1987 (closed form, from memory); Mason 1948 and
    # Krimholtz-Leedom-Matthaei 1970 networks; values from the methods sheet section 3.4.
    f = np.array([0.5e6, 1.0e6, 1.5e6, 1.9e6, 2.5e6, 3.3e6])
    expect = [-234.372669, -108.494351, -51.745301, 94.545557, -83.230855, -51.079537]
    for fn in (plate_z, mason_plate_z, klm_plate_z):
        np.testing.assert_allclose(fn(f, 0.5, 2e6, 1e-9).imag, expect, atol=1e-6)
    np.testing.assert_allclose(plate_z(f, 0.5, 2e6, 1e-9), free_plate_z(f, 0.5, 2e6, 1e-9),
                               rtol=1e-13)


def test_loaded_and_lossy_plate_values():
    """Loaded and lossy plates give the sheet 3.4 check values in all three forms."""
    # Source: methods sheet section 3.4 (Mason examples; lossy plate with c(1 + j/100),
    # eps(1 - 0.02j) and real h33, i.e. complex kt^2 = 0.25 (1 - 0.02j)/(1 + 0.01j)).
    for fn in (plate_z, mason_plate_z, klm_plate_z):
        assert fn([1.8e6], 0.5, 2e6, 1e-9, z_front=150 / 3000)[0] == pytest.approx(
            15.222145 + 7.959865j, abs=2e-6)
        assert fn([1.0e6], 0.5, 2e6, 1e-9, z_front=1, z_back=1)[0] == pytest.approx(
            25.330296 - 133.824647j, abs=2e-6)
        kt = np.sqrt(0.25 * (1 - 0.02j) / (1 + 0.01j))
        # the sheet prints the frequency rounded; it is the kt = 0.5 fs, 1 773 939.818 Hz (1.4)
        z = fn([1_773_939.818, 2e6], kt, 2e6, 1e-9, 100, 0.02)
        assert z[0] == pytest.approx(5.828740 - 0.151600j, abs=2e-6)
        assert z[1] == pytest.approx(1614.210866 - 75.514676j, abs=2e-6)


@settings(max_examples=60, deadline=None)
@given(kt=st.floats(0.05, 0.75), qm=st.floats(5, 1e4), tand=st.floats(0, 0.1),
       zf=st.floats(0, 30), zb=st.floats(0, 30), ktloss=st.floats(0, 0.05))
def test_plate_closed_form_equals_mason_and_klm(kt, qm, tand, zf, zb, ktloss):
    """Closed-form loaded lossy plate equals the Mason and KLM networks (Sherrit et al. 1999)."""
    # Source: Sherrit, Leary, Dolgin, Bar-Cohen, IEEE Ultrasonics Symp. 1999: Mason = KLM =
    # analytic solution with complex constants; checked numerically here.
    f = np.linspace(0.2e6, 6.1e6, 157)
    k = kt * (1 - 1j * ktloss)
    z = plate_z(f, k, 2e6, 1e-9, qm, tand, zf, zb)
    for fn in (mason_plate_z, klm_plate_z):
        np.testing.assert_allclose(fn(f, k, 2e6, 1e-9, qm, tand, zf, zb), z, rtol=1e-8)


def test_plate_fs_reproduces_kt_table():
    """plate_fs_hz gives the fs/fp of the sheet 1.4 table and kt = 0.5 -> 1 773 939.818 Hz."""
    # Source: IEEE 176-1987 tan formula (from memory); values from methods sheet 1.4.
    table = {0.1: 0.99593065, 0.3: 0.96213353, 0.5: 0.88696991, 0.7: 0.74866960}
    for kt, ratio in table.items():
        assert plate_fs_hz(kt, 1.0) == pytest.approx(ratio, abs=1e-8)
    assert plate_fs_hz(0.5, 2e6) == pytest.approx(1_773_939.818, abs=1e-3)
    f = np.array([plate_fs_hz(0.5, 2e6)])
    assert abs(free_plate_z(f, 0.5, 2e6, 1e-9)[0]) < 1e-6  # the zero of the free plate


def test_bar_k31_frequency_pair():
    """k31 = 0.35 gives fp/fs = 1.05357437 and the bar admittance vanishes there (sheet 1.5)."""
    # Source: IEEE 176-1987 k31 formula (from memory); value from methods sheet 1.5.
    assert bar_fp_hz(0.35, 1.0) == pytest.approx(1.05357437, abs=1e-8)
    y = bar_y([1.05357437e5, 1.0], 1e-9, 1e5, 0.35)
    assert abs(y[0]) < 1e-6 * abs(2j * np.pi * 1.05e5 * 1e-9)
    # low-frequency limit Y -> j w C^T (sheet 1.5 derivation)
    assert y[1] == pytest.approx(2j * np.pi * 1e-9, rel=1e-9)
    # loss makes the conductance positive at fs (passivity, common practice)
    assert bar_y([1e5], 1e-9, 1e5, 0.35, qm=200, tan_delta=0.01)[0].real > 0


def test_component_models_and_figures():
    """Inductor and capacitor models give the self-resonance of the sheet section 10."""
    ind = get_model("inductor")
    assert ind.derived({"L": 10e-6, "Rs": 0.5, "Cp": 2e-12})["srf_hz"] == pytest.approx(
        35_588_127.17, abs=0.01)
    cap = get_model("capacitor")
    assert cap.derived({"C": 100e-9, "ESR": 0.01, "ESL": 1e-9})["srf_hz"] == pytest.approx(
        15_915_494.31, abs=0.01)


def test_registry_and_invalid_arguments():
    """Every registered name builds; unknown names, bad modes and options raise ValueError."""
    for name in MODEL_NAMES:
        m = get_model(name)
        assert m.params and m.name == name
    assert get_model("plate", modes=2).params[-3:] == ("R2", "L2", "C2")
    with pytest.raises(ValueError, match="unknown model"):
        get_model("nonesuch")
    with pytest.raises(ValueError):
        get_model("bvd", modes=0)
    with pytest.raises(ValueError):
        get_model("bar", modes=2)
    with pytest.raises(ValueError):
        get_model("bvd", z_front=1.0)
