"""Cable and port-extension corrections against the terminated-line formula and scikit-rf."""

from __future__ import annotations

import numpy as np
import pytest
import skrf as rf
from hypothesis import given, settings
from hypothesis import strategies as st

import kit

C0 = 299_792_458.0


def one_port_z(z, freq, z0=50.0):
    z = np.broadcast_to(np.asarray(z, dtype=complex), (freq.npoints,))
    return rf.Network(frequency=freq, s=((z - z0) / (z + z0)).reshape(-1, 1, 1), z0=z0)


def pozar_zin(zl, zc, gamma_l):
    """Zin = Z0 (ZL + Z0 tanh(gl)) / (Z0 + ZL tanh(gl)), Pozar ch. 2 (from memory)."""
    t = np.tanh(gamma_l)
    return zc * (zl + zc * t) / (zc + zl * t)


def test_quarter_wave_50_ohm_line_turns_25_into_100_ohm():
    """De-embedding a lambda/4 50 ohm cable from a 100 ohm reading gives 25 ohm."""
    # Pozar ch. 2 (from memory): quarter-wave Zin = Z1^2 / ZL = 2500/25 = 100 ohm;
    # methods.md §7 check value (zl_2_zin(50, 25, 1j*pi/2) = 100.000 ohm)
    vf, length = 0.66, 1.5
    f0 = C0 * vf / (4 * length)
    freq = rf.Frequency.from_f(np.array([0.5 * f0, f0, 1.5 * f0]), unit="hz")
    zin = pozar_zin(25.0, 50.0, 1j * 2 * np.pi * freq.f / (C0 * vf) * length)
    assert zin[1] == pytest.approx(100.0, abs=1e-9)
    out = kit.cable(length, vf, 50.0)(one_port_z(zin, freq))
    np.testing.assert_allclose(kit.impedance(out), 25.0, atol=1e-9)
    assert rf.tlineFunctions.zl_2_zin(50, 25, 1j * np.pi / 2) == pytest.approx(100.0)


def test_lossy_line_check_value_methods_sheet():
    """A 0.3 m line (alpha 0.1 Np/m, beta 2 pi rad/m) loaded by 100 ohm reads 28.057 + j11.486."""
    # methods.md §7 check value (Pozar ch. 2 formula = scikit-rf): gamma_l fixed at one point
    gl = (0.1 + 2j * np.pi) * 0.3
    assert pozar_zin(100.0, 50.0, gl) == pytest.approx(28.05674343 + 11.48586725j, abs=1e-8)
    # the same line as a cable: beta = 2 pi f / (c VF) = 2 pi rad/m at f = c VF
    vf = 0.7
    f = C0 * vf
    loss_db_per_m = 0.1 * 20 / np.log(10)  # 0.1 Np/m in dB/m at the reference frequency
    freq = rf.Frequency.from_f(np.array([f]), unit="hz")
    c = kit.cable(0.3, vf, 50.0, loss_db_per_m=loss_db_per_m, loss_ref_hz=f)
    out = c(one_port_z(28.05674343 + 11.48586725j, freq))
    assert kit.impedance(out)[0] == pytest.approx(100.0, abs=1e-6)


@settings(max_examples=30, deadline=None)
@given(length=st.floats(0.05, 5.0), vf=st.floats(0.5, 1.0), zc=st.floats(25.0, 120.0),
       loss=st.floats(0.0, 0.5), r=st.floats(1.0, 2000.0), x=st.floats(-2000.0, 2000.0))
def test_cable_inverts_terminated_line_formula(length, vf, zc, loss, r, x):
    """For random lossy cables and loads, removing the cable inverts Pozar's Zin to 1e-9."""
    # Pozar ch. 2 terminated lossy line (from memory); alpha scaled as sqrt(f) (ch. 3)
    freq = rf.Frequency(0.1e6, 30e6, 41, "Hz")
    fref = 10e6
    alpha = loss * np.log(10) / 20 * np.sqrt(freq.f / fref)
    gl = (alpha + 2j * np.pi * freq.f / (C0 * vf)) * length
    zl = r + 1j * x
    zin = pozar_zin(zl, zc, gl)
    c = kit.cable(length, vf, zc, loss_db_per_m=loss, loss_ref_hz=fref if loss else None)
    z = kit.impedance(c(one_port_z(zin, freq)))
    np.testing.assert_allclose(z, zl, rtol=1e-9, atol=1e-9 * abs(zl))


def test_cable_model_equals_scikit_rf_media():
    """The cable's line S equals scikit-rf DefinedGammaZ0 and Coaxial.from_attenuation_VF."""
    # references: scikit-rf 2.2.0 skrf.media.DefinedGammaZ0 and Coaxial.from_attenuation_VF
    freq = rf.Frequency(1e6, 100e6, 201, "Hz")
    fref, loss, vf, length, zc = 10e6, 0.3, 0.66, 1.5, 75.0
    c = kit.cable(length, vf, zc, loss_db_per_m=loss, loss_ref_hz=fref)
    att = loss * np.sqrt(freq.f / fref)
    coax = rf.media.Coaxial.from_attenuation_VF(frequency=freq, z0_port=50, z0=zc, att=att,
                                                unit="dB/m", VF=vf)
    np.testing.assert_allclose(c.box(freq.f, 50.0), coax.line(length, "m").s, atol=1e-12)
    m = rf.media.DefinedGammaZ0(freq, z0_port=50, z0=zc, gamma=c.gamma(freq.f))
    line = m.line(length, "m")
    np.testing.assert_allclose(c.box(freq.f, 50.0), line.s, atol=1e-12)
    # removing it from a cascade made by scikit-rf recovers the load
    load = rf.media.DefinedGammaZ0(freq, z0=50).resistor(20) ** \
        rf.media.DefinedGammaZ0(freq, z0=50).shunt_capacitor(1e-9) ** \
        rf.media.DefinedGammaZ0(freq, z0=50).short()
    np.testing.assert_allclose(c(line ** load).s, load.s, atol=1e-9)


def test_cable_on_both_ports_of_two_port():
    """A two-port between two cables is recovered by cable(..., port=(1, 2))."""
    # reference: scikit-rf 2.2.0 cascade (**) builds the measurement; T-matrix inverse removes
    freq = rf.Frequency(1e6, 100e6, 101, "Hz")
    c = kit.cable(0.8, 0.7, 50.0, loss_db_per_m=0.2, loss_ref_hz=50e6, port=(1, 2))
    m = rf.media.DefinedGammaZ0(freq, z0_port=50, z0=50.0, gamma=c.gamma(freq.f))
    line = m.line(0.8, "m")
    m50 = rf.media.DefinedGammaZ0(freq, z0=50)
    dut = m50.inductor(100e-9) ** m50.shunt_capacitor(20e-12) ** m50.resistor(5)
    out = c(line ** dut ** line)
    np.testing.assert_allclose(out.s, dut.s, atol=1e-9)
    one = kit.cable(0.8, 0.7, 50.0, loss_db_per_m=0.2, loss_ref_hz=50e6, port=2)
    np.testing.assert_allclose(one(dut ** line).s, dut.s, atol=1e-9)


def test_port_extension_matches_scikit_rf_delay():
    """port_extension(tau) undoes scikit-rf's Network.delay(2 tau) on a one-port."""
    # scikit-rf 2.2.0 Network.delay(d) adds d as a round trip for a one-port (methods §4.3)
    freq = rf.Frequency(10e6, 2e9, 101, "Hz")
    m = rf.media.DefinedGammaZ0(freq, z0=50)
    dut = m.resistor(20) ** m.inductor(3e-9) ** m.short()
    tau = 0.37e-9
    delayed = dut.delay(2 * tau, "s")
    np.testing.assert_allclose(kit.port_extension(tau)(delayed).s, dut.s, atol=1e-12)
    # an open behind 50 ps round trip: angle -360 f d (methods §4.3: -36 deg at 1 GHz)
    op = m.open().delay(100e-12, "s")
    back = kit.port_extension(50e-12)(op)
    np.testing.assert_allclose(back.s[:, 0, 0], 1.0, atol=1e-12)


def test_port_extension_two_port_transmission_gets_one_way():
    """On a two-port, port extension at port 1 removes tau once from S21 and twice from S11."""
    # methods §4.3: S21_DUT = S21_m exp(+j w tau); Gamma_DUT = Gamma_m exp(+j 2 w tau)
    freq = rf.Frequency(10e6, 2e9, 51, "Hz")
    m = rf.media.DefinedGammaZ0(freq, z0=50)
    dut = m.resistor(30) ** m.shunt_capacitor(1e-12)
    tau = 0.2e-9
    w = 2 * np.pi * freq.f
    # a matched line of one-way delay tau at port 1 (scikit-rf Media.line in time units;
    # Network.delay(port=0) on a two-port returns the ports swapped, so it is not used here)
    air = rf.media.DefinedGammaZ0(freq, z0=50, gamma=1j * w / C0)
    meas = air.line(tau, "s") ** dut
    out = kit.port_extension(tau, port=1)(meas)
    np.testing.assert_allclose(out.s, dut.s, atol=1e-12)
    np.testing.assert_allclose(out.s[:, 1, 0], meas.s[:, 1, 0] * np.exp(1j * w * tau),
                               atol=1e-12)


def test_port_extension_loss_scales_as_sqrt_f():
    """A one-way loss of 1 dB at f_ref raises |Gamma| by 2 dB there and by 2 sqrt(4) dB at 4 f_ref."""
    # definition of the loss model (methods §4.3: alpha(f) = alpha(f0) sqrt(f/f0))
    freq = rf.Frequency.from_f(np.array([1e8, 4e8]), unit="hz")
    meas = rf.Network(frequency=freq, s=np.full((2, 1, 1), 0.5 + 0j), z0=50)
    out = kit.port_extension(0.0, loss_db=1.0, loss_ref_hz=1e8)(meas)
    gain_db = 20 * np.log10(np.abs(out.s[:, 0, 0]) / 0.5)
    np.testing.assert_allclose(gain_db, [2.0, 4.0], atol=1e-12)


@pytest.mark.parametrize("call, match", [
    (lambda: kit.cable(0.0, 0.66), "length_m"),
    (lambda: kit.cable(1.0, 1.5), "velocity_factor"),
    (lambda: kit.cable(1.0, 0.66, loss_db_per_m=0.1), "loss_ref_hz"),
    (lambda: kit.port_extension(1e-9, loss_db=0.5), "loss_ref_hz"),
    (lambda: kit.port_extension(float("nan")), "delay_s"),
    (lambda: kit.port_extension(1e-9, port=3), "port"),
])
def test_bad_line_parameters_are_refused(call, match):
    """Impossible cable or port-extension parameters get a CaptureError naming the parameter."""
    with pytest.raises(kit.CaptureError, match=match):
        call()


def test_port_two_on_one_port_capture_refused():
    """A line at port 2 of a one-port capture is refused and the input is unchanged."""
    freq = rf.Frequency(1e6, 2e6, 3, "Hz")
    cap = kit.from_network(one_port_z(10.0, freq))
    before = cap.s.copy()
    with pytest.raises(kit.CaptureError, match="one-port"):
        kit.cable(1.0, 0.66, port=2)(cap)
    np.testing.assert_array_equal(cap.s, before)
