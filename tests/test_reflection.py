"""Z from Gamma, the one home (kit.network.reflection.z_from_gamma), against scikit-rf."""

from __future__ import annotations

import numpy as np
import pytest
import skrf
from conftest import realdata_path
from skrf import tlineFunctions

import kit
from kit.network.immittance import SingularPointsWarning, z_from_reflection
from kit.network.reflection import gamma_from_z, z_from_gamma

RNG = np.random.default_rng(11)
# reflection coefficients inside the unit circle, plus a few on its rim
GAMMA = np.concatenate([RNG.uniform(0, 0.99, 200) * np.exp(2j * np.pi * RNG.uniform(size=200)),
                        np.exp(1j * np.linspace(0.1, 6.0, 5))])


@pytest.mark.parametrize("z0", [50.0, 75.0, 12.5])
def test_agrees_with_scikit_rf_s2z(z0):
    """Z of a one-port equals scikit-rf's s2z on a real reference (scikit-rf 2.2.0,
    power waves, which coincide with pseudo-waves on a real reference)."""
    ref = skrf.network.s2z(GAMMA.reshape(-1, 1, 1), z0=z0)[:, 0, 0]
    np.testing.assert_allclose(z_from_gamma(GAMMA, z0), ref, rtol=1e-10, atol=1e-9)


def test_agrees_with_scikit_rf_line_function_and_network_z():
    """Same values as scikit-rf's tlineFunctions.Gamma0_2_zl and Network.z (independent code)."""
    np.testing.assert_allclose(z_from_gamma(GAMMA, 50.0), tlineFunctions.Gamma0_2_zl(50.0, GAMMA),
                               rtol=1e-10)
    freq = skrf.Frequency(1, 10, GAMMA.size, unit="MHz")
    ntwk = skrf.Network(frequency=freq, s=GAMMA, z0=75.0)
    np.testing.assert_allclose(z_from_gamma(ntwk.s[:, 0, 0], 75.0), ntwk.z[:, 0, 0], rtol=1e-10)


def test_per_point_reference_broadcasts():
    """A reference per frequency point [ohm] is used point by point (scikit-rf s2z with an
    array z0 as the reference)."""
    z0 = np.linspace(25.0, 100.0, GAMMA.size)
    ref = skrf.network.s2z(GAMMA.reshape(-1, 1, 1), z0=z0.reshape(-1, 1))[:, 0, 0]
    np.testing.assert_allclose(z_from_gamma(GAMMA, z0), ref, rtol=1e-10, atol=1e-9)


def test_inverse_of_gamma_from_z_and_the_ideal_terminations():
    """z_from_gamma undoes gamma_from_z; short (Gamma -1) is 0 ohm, open (Gamma 1) is inf
    (methods sheet section 0: Gamma = (Z - Z0)/(Z + Z0) and Z = Z0 (1 + Gamma)/(1 - Gamma))."""
    np.testing.assert_allclose(gamma_from_z(z_from_gamma(GAMMA[:200], 50.0), 50.0), GAMMA[:200],
                               atol=1e-12)
    z = z_from_gamma(np.array([-1.0, 1.0, np.nan]), 50.0)
    assert z[0] == 0 and np.isinf(z[1]) and np.isnan(z[2])
    assert gamma_from_z(z[1], 50.0) == 1.0


def test_reflection_impedance_keeps_nan_and_warning_at_an_open():
    """kit's impedance path marks an ideal open as NaN with a SingularPointsWarning, and
    agrees with z_from_gamma elsewhere."""
    g = np.array([0.2, 1.0, -0.5j])
    with pytest.warns(SingularPointsWarning, match="1 point"):
        z = z_from_reflection(g, 50.0, np.array([1e6, 2e6, 3e6]))
    assert np.isnan(z[1])
    np.testing.assert_allclose(z[[0, 2]], z_from_gamma(g[[0, 2]], 50.0), rtol=1e-14)


def test_real_capture_matches_scikit_rf_network_z():
    """On a real one-port capture (../shared/realdata microstrip standards), kit.impedance
    equals scikit-rf's Network.z."""
    cap = kit.load(realdata_path("microstrip-standards") / "P1-MSL_Open_50.s1p")
    np.testing.assert_allclose(kit.impedance(cap), cap.network.z[:, 0, 0], rtol=1e-9)
