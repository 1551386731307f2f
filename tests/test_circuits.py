"""Composable circuits (kit.network.circuits) against published values and scikit-rf."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from kit.network.circuits import Block, C, L, R, parallel, series

# Fixture A of the methods sheet section 1.2: fs = 1 MHz, C0 = 1 nF, C1 = 0.2 nF, Qm = 100.
FIX_A = {"C0": 1e-9, "R1": 7.9577471546, "L1": 1.2665147955e-4, "C1": 2e-10}
BVD = parallel(C("C0"), series(R("R1"), L("L1"), C("C1")))


def test_bvd_point_values_fixture_a():
    """BVD built from R, L, C reproduces the point values of fixture A (methods sheet 1.2)."""
    # Source: BVD circuit per ANSI/IEEE Std 176-1987 / IEC 60050-561; check values computed
    # from the formulas in the methods sheet section 1.2 (printed to 8 decimals).
    f = np.array([0.5e6, 1e6, 1.05e6, 2e6])
    expect = np.array([0.35268817 - 251.29913482j, 7.93790240 - 0.39689512j,
                       33.10038852 + 155.78461425j, 0.04059868 - 85.26128667j])
    z = BVD.z(f, FIX_A)
    assert np.max(np.abs(z - expect)) < 2e-7 * np.max(np.abs(expect)), z - expect


def test_real_capacitor_self_resonance():
    """ESR-ESL-C in series resonates at 1/(2 pi sqrt(ESL C)) with |Z| = ESR (methods sheet 10)."""
    # Source: methods sheet section 10, C = 100 nF, ESL = 1 nH -> SRF = 15 915 494.31 Hz.
    cap = series(R("ESR"), L("ESL"), C("C"))
    z = cap.z([15_915_494.31], {"ESR": 0.02, "ESL": 1e-9, "C": 100e-9})
    assert abs(z[0].imag) < 1e-6 and z[0].real == pytest.approx(0.02, rel=1e-12)


def test_real_inductor_peak():
    """(Rs + L) || Cp peaks at 35 588 127.15 Hz with |Z| = 1.00000002e7 (methods sheet 10)."""
    # Source: methods sheet section 10 (L = 10 uH, Cp = 2 pF, Rs = 0.5 ohm), computed values.
    ind = parallel(series(R("Rs"), L("L")), C("Cp"))
    f = np.linspace(35_588_127.15 - 50, 35_588_127.15 + 50, 2001)
    z = np.abs(ind.z(f, {"Rs": 0.5, "L": 10e-6, "Cp": 2e-12}))
    i = int(np.argmax(z))
    assert abs(f[i] - 35_588_127.15) < 0.2
    assert z[i] == pytest.approx(1.00000002e7, rel=2e-8)


def test_parallel_rc_matches_scikit_rf_capacitor_q():
    """C || R with R = Q/(2 pi f0 C) equals scikit-rf's capacitor_q element (methods sheet 10)."""
    # Independent reference: scikit-rf Media.capacitor_q (a series two-port of C || R);
    # the element admittance is Y = 1/Z with Z = 2 Z0 (1 - S21)/S21.
    import skrf

    freq = skrf.Frequency(0.5, 2, 7, unit="MHz")
    media = skrf.media.DefinedGammaZ0(freq, z0=50)
    ntwk = media.capacitor_q(C=1e-9, f_0=1e6, q_factor=100)
    s21 = ntwk.s[:, 1, 0]
    z_ref = 2 * 50 * (1 - s21) / s21
    rc = parallel(R("R"), C("C"))
    z = rc.z(freq.f, {"R": 100 / (2 * np.pi * 1e6 * 1e-9), "C": 1e-9})
    np.testing.assert_allclose(z, z_ref, rtol=1e-9)
    # and the published admittance at f0 (methods sheet section 10, [V-skrf])
    y0 = 1 / rc.z([1e6], {"R": 100 / (2 * np.pi * 1e6 * 1e-9), "C": 1e-9})[0]
    assert y0 == pytest.approx(6.283185e-5 + 6.283185e-3j, rel=1e-6)


@settings(max_examples=40, deadline=None)
@given(st.floats(-1, 1), st.floats(-1, 1), st.floats(-1, 1), st.floats(-1, 1),
       st.floats(-1, 1), st.floats(-1, 1))
@example(0.0, 0.0, 1.0, 0.0, -1.0, -1.0)  # once failed on the rounding floor alone
def test_analytic_derivatives_match_differences(a, b, c, d, e, g):
    """dZ/dp of a nested series/parallel circuit equals central differences (calculus)."""
    # Chain rule through Y = sum 1/Z_i (common practice, no source); checked against
    # finite differences, which do not use the analytic formulas.
    circ = series(R("Rs"), parallel(series(R("R0"), C("C0")),
                                    series(R("R1"), L("L1"), C("C1")), L("Lp")))
    vals = {"Rs": 0.5 * 10**a, "R0": 0.2 * 10**b, "C0": 1e-9 * 10**c, "R1": 8 * 10**d,
            "L1": 1.27e-4 * 10**e, "C1": 2e-10 * 10**g, "Lp": 1e-3}
    f = np.linspace(0.3e6, 3e6, 37)
    z, jac = circ.z_and_jac(f, vals)
    for p, v in vals.items():
        h = 1e-6 * v
        up = circ.z(f, dict(vals, **{p: v + h}))
        dn = circ.z(f, dict(vals, **{p: v - h}))
        num = (up - dn) / (2 * h)
        scale = np.max(np.abs(num)) + 1e-300
        # central differences carry a rounding floor of about eps |Z| / h: allow 100 times it
        floor = 100 * np.finfo(float).eps * np.max(np.abs(z)) / h
        assert np.max(np.abs(jac[p] - num)) < 1e-5 * scale + floor, p


def test_shared_name_is_one_parameter():
    """A name used by two elements is one parameter whose derivative is the sum (chain rule)."""
    circ = series(C("C"), C("C"))
    z, jac = circ.z_and_jac([1e6], {"C": 1e-9})
    assert circ.params == ("C",)
    assert z[0] == pytest.approx(2 / (2j * np.pi * 1e6 * 1e-9))
    assert jac["C"][0] == pytest.approx(-z[0] / 1e-9)


def test_block_numeric_jacobian_and_operators():
    """A Block's central-difference derivative is right; + and | build series and parallel."""
    blk = Block(lambda f, K: K * np.asarray(f) ** 2 + 0j, ["K"], label="quadratic")
    z, jac = blk.z_and_jac(np.array([2.0, 3.0]), {"K": 5.0})
    np.testing.assert_allclose(jac["K"], [4.0, 9.0], rtol=1e-8)
    assert (R("a") + R("b")).z([1.0], {"a": 1, "b": 2})[0] == pytest.approx(3)
    assert (R("a") | R("b")).z([1.0], {"a": 2, "b": 2})[0] == pytest.approx(1)
    assert BVD(np.array([1e6]), **FIX_A).shape == (1,)


def test_invalid_construction_and_missing_parameters():
    """Empty series, unnamed elements and missing parameters raise ValueError with the name."""
    with pytest.raises(ValueError):
        series()
    with pytest.raises(ValueError):
        parallel(R("a"), 3.0)
    with pytest.raises(ValueError):
        R("")
    with pytest.raises(ValueError, match="R1"):
        BVD(np.array([1e6]), C0=1e-9, L1=1e-4, C1=2e-10)
