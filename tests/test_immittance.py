"""Impedance and admittance from captures (kit.impedance), against closed forms and scikit-rf."""

from __future__ import annotations

import json
import warnings

import numpy as np
import pytest
import skrf
from hypothesis import given, settings
from hypothesis import strategies as st

import kit
from kit.capture import CaptureError, from_network
from kit.network.immittance import SingularPointsWarning

F = skrf.Frequency(1, 100, 41, unit="MHz")
Z0 = 50.0


def series_z_s(z):
    """Two-port of a series impedance: Pozar, Microwave Engineering 4th ed., Table 4.2 (ABCD
    [[1, Z], [0, 1]]), converted to S with Z0 (from memory for the table number)."""
    s = np.empty((z.size, 2, 2), complex)
    s[:, 0, 0] = s[:, 1, 1] = z / (z + 2 * Z0)
    s[:, 0, 1] = s[:, 1, 0] = 2 * Z0 / (z + 2 * Z0)
    return s


def shunt_y_s(y):
    """Two-port of a shunt admittance: Pozar Table 4.2 (ABCD [[1, 0], [Y, 1]]) (from memory)."""
    s = np.empty((y.size, 2, 2), complex)
    s[:, 0, 0] = s[:, 1, 1] = -y * Z0 / (2 + y * Z0)
    s[:, 0, 1] = s[:, 1, 0] = 2 / (2 + y * Z0)
    return s


def rlc(f, r=3.0, l=1e-6, c=100e-12):
    w = 2 * np.pi * f
    return r + 1j * w * l + 1 / (1j * w * c)


def test_series_through_recovers_the_series_impedance():
    """Series-through Z = 2 Z0 (1 - S21)/S21 recovers a series RLC exactly (Pozar Table 4.2 closed form)."""
    z = rlc(F.f)
    cap = from_network(skrf.Network(frequency=F, s=series_z_s(z), z0=Z0))
    np.testing.assert_allclose(kit.impedance(cap, "series-through"), z, rtol=1e-10)


def test_shunt_through_recovers_the_shunt_impedance():
    """Shunt-through Z = Z0 S21 / (2 (1 - S21)) recovers a shunt RLC (Pozar Table 4.2 closed form)."""
    z = rlc(F.f, r=0.5)
    cap = from_network(skrf.Network(frequency=F, s=shunt_y_s(1 / z), z0=Z0))
    np.testing.assert_allclose(kit.impedance(cap, "shunt-through"), z, rtol=1e-10)
    np.testing.assert_allclose(kit.admittance(cap, "shunt-through"), 1 / z, rtol=1e-10)


def test_scikit_rf_agrees_with_the_closed_forms_on_a_t_network():
    """scikit-rf's general conversions agree with Pozar Table 4.2 for series, shunt and T networks
    (Z11 = Z1 + Z3, Z12 = Z3, Z22 = Z2 + Z3), so its full matrices can serve N-ports."""
    z1, z2, z3 = rlc(F.f, 2.0), rlc(F.f, 5.0, 2e-6), 30 - 10j + 0 * F.f
    sec = [skrf.Network(frequency=F, s=series_z_s(z1), z0=Z0),
           skrf.Network(frequency=F, s=shunt_y_s(1 / z3), z0=Z0),
           skrf.Network(frequency=F, s=series_z_s(z2), z0=Z0)]
    zt = (sec[0] ** sec[1] ** sec[2]).z
    np.testing.assert_allclose(zt[:, 0, 0], z1 + z3, rtol=1e-9)
    np.testing.assert_allclose(zt[:, 0, 1], z3, rtol=1e-9)
    np.testing.assert_allclose(zt[:, 1, 1], z2 + z3, rtol=1e-9)
    ser = skrf.Network(frequency=F, s=series_z_s(z1), z0=Z0)
    np.testing.assert_allclose(ser.a[:, 0, 1], z1, rtol=1e-9)
    np.testing.assert_allclose(ser.a[:, 0, 0], 1, atol=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.01, 1e5), st.floats(-1e5, 1e5), st.floats(1.0, 300.0))
def test_reflection_matches_scikit_rf(r, x, z0):
    """Reflection Z = Z0 (1 + S11)/(1 - S11) equals scikit-rf's Network.z for a one-port (independent implementation)."""
    z = np.full(F.npoints, complex(r, x))
    s = ((z - z0) / (z + z0)).reshape(-1, 1, 1)
    ntwk = skrf.Network(frequency=F, s=s, z0=z0)
    ours = kit.impedance(from_network(ntwk))
    np.testing.assert_allclose(ours, ntwk.z[:, 0, 0], rtol=1e-7, atol=1e-9 * z0)


def test_reflection_of_a_two_port_port_choice():
    """port=2 uses S22; a missing port is a CaptureError, not an IndexError."""
    z = rlc(F.f)
    cap = from_network(skrf.Network(frequency=F, s=series_z_s(z), z0=Z0))
    s22 = cap.s[:, 1, 1]
    np.testing.assert_allclose(kit.impedance(cap, port=2), Z0 * (1 + s22) / (1 - s22))
    with pytest.raises(CaptureError, match="port 3"):
        kit.impedance(cap, port=3)


def test_one_port_refuses_through_methods():
    """A through method on a one-port names the problem and the fix."""
    cap = from_network(skrf.Network(frequency=F, s=np.zeros((F.npoints, 1, 1)), z0=Z0))
    with pytest.raises(CaptureError, match="two-port"):
        kit.impedance(cap, "series-through")
    with pytest.raises(CaptureError, match="unknown method"):
        kit.impedance(cap, "sideways")


def test_singular_points_become_nan_with_a_warning():
    """An ideal open (S11 = 1) gives NaN at that point and a warning naming the count and frequency."""
    s = np.full((F.npoints, 1, 1), 0.2 + 0j)
    s[5] = 1.0
    cap = from_network(skrf.Network(frequency=F, s=s, z0=Z0))
    with pytest.warns(SingularPointsWarning, match=r"1 point\(s\) at f = 13\.375 MHz") as rec:
        z = kit.impedance(cap)
    assert len(rec) == 1
    assert np.isnan(z[5]) and np.all(np.isfinite(np.delete(z, 5)))
    # a shunt-through with S21 = 1 (nothing there) likewise
    s2 = np.zeros((F.npoints, 2, 2), complex)
    s2[:, 1, 0] = s2[:, 0, 1] = 1.0
    cap2 = from_network(skrf.Network(frequency=F, s=s2, z0=Z0))
    with pytest.warns(SingularPointsWarning, match=f"{F.npoints} point"):
        assert np.all(np.isnan(kit.impedance(cap2, "shunt-through")))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        kit.impedance(from_network(skrf.Network(frequency=F, s=np.zeros((F.npoints, 1, 1)), z0=Z0)))


def test_demo_inductor_self_resonance(demo_dir):
    """The demo inductor (10 uH, 2 pF) peaks in series-through |Z| at its self-resonance,
    35.588 MHz for L = 10 uH with 2 pF (methods sheet section 10, computed from SRF = 1/(2 pi sqrt(L C)))."""
    cap = kit.load(demo_dir / "parts" / "inductor.s2p")
    z = kit.impedance(cap, "series-through")
    f_peak = cap.f_hz[np.argmax(np.abs(z))]
    step = cap.f_hz[1] - cap.f_hz[0]
    assert abs(f_peak - 35_588_127.17) <= step
    truth = json.loads((demo_dir / "truth.json").read_text())
    assert abs(truth["inductor"]["srf_hz"] - 35_588_127.17) < 0.01
