"""Fixture de-embedding (random round trips), IEEE 370 2x-thru and time gating."""

from __future__ import annotations

import numpy as np
import pytest
import skrf as rf
from hypothesis import given, settings
from hypothesis import strategies as st

import kit

C0 = 299_792_458.0
FREQ = rf.Frequency(1e6, 500e6, 51, "Hz")
W = 2 * np.pi * FREQ.f


def media(zc=50.0):
    """Lines with real Zc, embedded in 50 ohm ports (scikit-rf DefinedGammaZ0)."""
    return rf.media.DefinedGammaZ0(FREQ, z0_port=50, z0=zc, gamma=1j * W / (0.7 * C0))


fixtures = st.builds(
    lambda zc, length, c, l, r: (media(zc).line(length, "m") ** media().shunt_capacitor(c)
                                 ** media().inductor(l) ** media().resistor(r)),
    st.floats(20.0, 120.0), st.floats(0.0, 0.5), st.floats(0.0, 20e-12), st.floats(0.0, 30e-9),
    st.floats(0.0, 5.0))
duts_1 = st.builds(
    lambda r, l, c: media().resistor(r) ** media().inductor(l) ** media().shunt_capacitor(c)
    ** media().short(),
    st.floats(0.5, 500.0), st.floats(0.0, 50e-9), st.floats(0.0, 50e-12))
duts_2 = st.builds(
    lambda r, l, c, zc: (media().resistor(r) ** media().shunt_capacitor(c)
                         ** media(zc).line(0.05, "m") ** media().inductor(l)),
    st.floats(0.5, 300.0), st.floats(0.0, 50e-9), st.floats(0.0, 20e-12), st.floats(30.0, 90.0))


@settings(max_examples=30, deadline=None)
@given(fix=fixtures, dut=duts_1)
def test_one_port_round_trip_random_fixtures(fix, dut):
    """A one-port embedded by scikit-rf behind a random passive fixture is recovered to 1e-9."""
    # embedding: scikit-rf 2.2.0 cascade (**); independent of the kit's kernels
    out = kit.fixture(fix)(fix ** dut)
    np.testing.assert_allclose(out.s, dut.s, atol=1e-9)


@settings(max_examples=30, deadline=None)
@given(left=fixtures, right=fixtures, dut=duts_2)
def test_two_port_round_trip_random_fixtures(left, right, dut):
    """A two-port between two random fixtures is recovered to 1e-9 and equals skrf's // ."""
    # reference: scikit-rf 2.2.0 Network.__floordiv__ (meas // (A, B)), methods.md §4.4
    meas = left ** dut ** right
    out = kit.fixture(left, right)(meas)
    np.testing.assert_allclose(out.s, dut.s, atol=1e-9)
    np.testing.assert_allclose(out.s, (meas // (left, right)).s, atol=1e-9)


def test_methods_sheet_t_matrix_case():
    """The methods sheet §4.4 fixtures (30 deg line + 0.2 pF; 0.5 nH + 45 deg) de-embed exactly."""
    # methods.md §4.4 check: A = 30 deg line + 0.2 pF shunt, B = 0.5 nH series + 45 deg line,
    # DUT = 20 ohm series + 5 nH shunt, 1-3 GHz; scikit-rf gives 4.6e-16
    f = rf.Frequency(1e9, 3e9, 21, "Hz")
    m = rf.media.DefinedGammaZ0(f, z0=50)
    a = m.line(30, "deg") ** m.shunt_capacitor(0.2e-12)
    b = m.inductor(0.5e-9) ** m.line(45, "deg")
    dut = m.resistor(20) ** m.shunt_inductor(5e-9)
    out = kit.fixture(a, b)(a ** dut ** b)
    np.testing.assert_allclose(out.s, dut.s, atol=1e-12)


def test_fixture_from_touchstone_paths(tmp_path):
    """Fixture files given as paths are loaded, hashed in describe(), and de-embedded."""
    fix = media(70.0).line(0.2, "m") ** media().shunt_capacitor(5e-12)
    dut = media().resistor(33) ** media().short()
    fix.write_touchstone(str(tmp_path / "spring"))
    c = kit.fixture(tmp_path / "spring.s2p")
    desc = c.describe()
    assert desc["kind"] == "fixture"
    assert len(desc["inputs"]["left"]["sha256"]) == 64
    out = c(fix ** dut)
    np.testing.assert_allclose(out.s, dut.s, atol=1e-7)  # Touchstone text keeps ~12 digits


# --------------------------------------------------------------------------- 2x-thru
def _methods_sheet_2x_case():
    """Methods sheet §4.5 construction: 20 mm 50 ohm + 0.05 pF + 30 mm 55 ohm, mirrored."""
    f = rf.Frequency(10e6, 10e9, 1000, "Hz")
    g = 1j * 2 * np.pi * f.f / C0
    m = rf.media.DefinedGammaZ0(f, z0=50, gamma=g)
    m55 = rf.media.DefinedGammaZ0(f, z0_port=50, z0=55, gamma=g)
    m60 = rf.media.DefinedGammaZ0(f, z0_port=50, z0=60, gamma=g)
    a = m.line(20e-3, "m") ** m.shunt_capacitor(0.05e-12) ** m55.line(30e-3, "m")
    dut = m60.line(10e-3, "m") ** m.shunt_capacitor(0.1e-12)
    return f, m, m55, a, dut


def test_two_x_thru_matches_scikit_rf_and_recovers_dut():
    """2x-thru de-embedding equals scikit-rf's NZC result and recovers the DUT below 5 GHz."""
    # reference: scikit-rf 2.2.0 IEEEP370_SE_NZC_2xThru (IEEE Std 370-2020; Ellison, Smith &
    # Agili, MOTL 2020). The methods sheet reports max |dS| = 0.0026 below 5 GHz for its
    # construction; with the line model here scikit-rf itself gives about 0.012, so the
    # band-limited tolerance is 0.02.
    from skrf.calibration.deembedding import IEEEP370_SE_NZC_2xThru

    f, _, _, a, dut = _methods_sheet_2x_case()
    b = a.flipped()
    meas = a ** dut ** b
    c = kit.two_x_thru(a ** b)
    out = c(meas)
    ref = IEEEP370_SE_NZC_2xThru(dummy_2xthru=a ** b, z0=50).deembed(meas)
    np.testing.assert_allclose(out.s, ref.s, atol=1e-9)
    err = np.abs(out.s - dut.s).max(axis=(1, 2))
    assert err[f.f < 5e9].max() < 0.02
    assert c.symmetry["thru_s11_s22_db"] < -200  # a mirror-symmetric model thru
    assert out.provenance[-1]["kind"] == "two_x_thru"


def test_two_x_thru_symmetry_report_sees_asymmetry():
    """An asymmetric 2x-thru (0.2 pF vs 0.05 pF) reports S11-S22 far above a symmetric one."""
    # mirror symmetry is the 2x-thru method's assumption (IEEE Std 370-2020)
    f, m, m55, a, _ = _methods_sheet_2x_case()
    b = (m.line(20e-3, "m") ** m.shunt_capacitor(0.2e-12) ** m55.line(30e-3, "m")).flipped()
    sym = kit.two_x_thru(a ** b).symmetry
    assert sym["thru_s11_s22_db"] > -20
    assert f.f[0] <= sym["thru_s11_s22_f_hz"] <= f.f[-1]


def test_two_x_thru_refuses_one_port_and_non_uniform():
    """A one-port 2x-thru, or a non-uniform grid, is refused with a clear message."""
    f = rf.Frequency.from_f(np.array([1e6, 2e6, 4e6, 8e6, 9e6, 10e6]), unit="hz")
    m = rf.media.DefinedGammaZ0(f, z0=50)
    with pytest.raises(kit.CaptureError, match="two-port"):
        kit.two_x_thru(m.short())
    with pytest.raises(kit.CaptureError, match="non-uniform"):
        kit.two_x_thru(m.line(10, "deg"))


# --------------------------------------------------------------------------- time gate
def _two_echo(f):
    """Reflection of two echoes: 0.2 at 2 ns (fixture) and 0.5 at 30 ns (device)."""
    w = 2 * np.pi * f.f
    return 0.2 * np.exp(-1j * w * 2e-9), 0.5 * np.exp(-1j * w * 30e-9)


def test_time_gate_keeps_device_echo_and_matches_scikit_rf():
    """A band-pass gate around the device echo keeps it (mid-band) and equals skrf time_gate."""
    # reference: scikit-rf 2.2.0 skrf.time.time_gate; the echo model is the definition of a
    # delayed reflection (exp(-j w t)); band edges are left out (window roll-off)
    f = rf.Frequency(10e6, 2e9, 400, "Hz")
    fixture_echo, device_echo = _two_echo(f)
    n = rf.Network(frequency=f, s=fixture_echo + device_echo, z0=50)
    out = kit.time_gate(center_s=30e-9, span_s=10e-9)(n)
    mid = slice(40, -40)
    assert np.abs(out.s[mid, 0, 0] - device_echo[mid]).max() < 0.02
    ref = rf.time.time_gate(n, center=30e-9, span=10e-9, t_unit="s")
    np.testing.assert_allclose(out.s, ref.s, atol=1e-12)
    removed = kit.time_gate(center_s=2e-9, span_s=5e-9, mode="bandstop")(n)
    assert np.abs(removed.s[mid, 0, 0] - device_echo[mid]).max() < 0.02


def test_time_gate_refused_on_non_uniform_grid():
    """Gating a capture on a non-uniform grid is refused, naming the grid."""
    f = rf.Frequency.from_f(np.geomspace(1e6, 1e9, 64), unit="hz")
    n = rf.Network(frequency=f, s=np.full(64, 0.1 + 0j), z0=50)
    with pytest.raises(kit.CaptureError, match="non-uniform"):
        kit.time_gate(1e-9, 5e-9)(n)


@pytest.mark.parametrize("kwargs, match", [
    ({}, "either"), ({"start_s": 2e-9, "stop_s": 1e-9}, "before"),
    ({"center_s": 1e-9, "span_s": -1.0}, "span_s"), ({"start_s": 0, "stop_s": 1e-9,
                                                      "mode": "notch"}, "mode"),
    ({"start_s": 0, "stop_s": 1e-9, "which": ["z11"]}, "which"),
])
def test_time_gate_bad_parameters(kwargs, match):
    """Missing or impossible gate parameters are refused with a message naming them."""
    with pytest.raises(kit.CaptureError, match=match):
        kit.time_gate(**kwargs)
