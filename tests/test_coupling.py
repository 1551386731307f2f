"""Coupling factors from resonance pairs (kit.resonators.coupling).

Check values are the tables of the methods sheet (shared/reference/methods.md, sections 1.3 to
1.6), computed there from the formulas of ANSI/IEEE Std 176-1987 (clause numbers from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kit.resonators import coupling
from kit.resonators.plate import free_plate_z

# methods sheet section 1.4 table: kt -> fs/fp of the lossless free plate
KT_TABLE = [
    (0.10, 0.99593065), (0.20, 0.98352066), (0.30, 0.96213353), (0.40, 0.93059443),
    (0.50, 0.88696991), (0.60, 0.82811604), (0.70, 0.74866960),
]
# methods sheet section 1.6 table: fp/fs -> kp exact (Poisson 0.31), sqrt(2.51 D - D^2)
KP_TABLE = [
    (1.01, 0.158038, 0.157332), (1.05, 0.343636, 0.342427), (1.10, 0.470151, 0.468953),
    (1.20, 0.625769, 0.624944), (1.30, 0.726016, 0.725242),
]


def _plate_zero_and_pole(kt: float, fp_hz: float) -> tuple[float, float]:
    """Zero and pole of the lossless free plate impedance, found numerically on Z itself."""
    from scipy.optimize import brentq

    def im_z(f):
        return float(free_plate_z(np.array([f]), kt, fp_hz, 1e-9).imag[0])

    def im_y(f):
        return float((1.0 / free_plate_z(np.array([f]), kt, fp_hz, 1e-9)).imag[0])

    fs = brentq(im_z, 0.5 * fp_hz, fp_hz * (1 - 1e-9), xtol=1e-9, rtol=1e-15)
    fp = brentq(im_y, fs * (1 + 1e-9), 1.2 * fp_hz, xtol=1e-9, rtol=1e-15)
    return fs, fp


@pytest.mark.parametrize("k, ratio", KT_TABLE)
def test_free_plate_zeros_and_poles_reproduce_kt_table(k, ratio):
    """The free plate's impedance zero/pole give the sheet's fs/fp, and kt() inverts them."""
    # Source: methods sheet section 1.4 table (IEEE Std 176-1987 tan form, from memory for
    # the clause); the plate model is that of section 3.1.
    fs, fp = _plate_zero_and_pole(k, 2.0e6)
    assert fs / fp == pytest.approx(ratio, abs=5e-9)
    assert coupling.kt(fs, fp) == pytest.approx(k, abs=1e-8)
    assert coupling.fs_from_kt(k, 2.0e6) / 2.0e6 == pytest.approx(ratio, abs=5e-9)


def test_kt_anchor_and_k33_same_form():
    """kt = 0.5 at fp = 2 MHz gives fs = 1 773 939.818 Hz; k33 = 0.7 gives fs/fp = 0.74866960."""
    # Source: methods sheet section 1.4 anchors (IEEE Std 176-1987, from memory for clause).
    assert coupling.fs_from_kt(0.5, 2e6) == pytest.approx(1_773_939.818, abs=1e-3)
    assert coupling.k33(0.74866960, 1.0) == pytest.approx(0.7, abs=1e-8)
    assert coupling.fp_from_kt(0.5, 1_773_939.818) == pytest.approx(2e6, abs=1e-3)


def test_tan_form_on_bvd_pair_is_not_keff():
    """On the BVD fixture A pair the tan form gives 0.197486, k_eff^2 gives 1/6."""
    # Source: methods sheet sections 1.3 and 1.4 (IEEE Std 176-1987 formulas).
    fs, fp = 1.0e6, 1.0e6 * math.sqrt(1.2)
    assert coupling.k_eff(fs, fp) ** 2 == pytest.approx(1 / 6, abs=1e-12)
    assert coupling.kt(fs, fp) ** 2 == pytest.approx(0.197486, abs=1e-6)


def test_k31_anchor():
    """k31 = 0.35 has fp/fs = 1.05357437 (both directions)."""
    # Source: methods sheet section 1.5 (IEEE Std 176-1987 unstiffened form, from memory).
    assert coupling.fp_from_k31(0.35, 1.0) == pytest.approx(1.05357437, abs=5e-9)
    assert coupling.k31(1.0, 1.05357437) == pytest.approx(0.35, abs=1e-7)


@pytest.mark.parametrize("sigma, eta", [(0.30, 2.048850), (0.31, 2.055062),
                                        (0.33, 2.067364), (0.36, 2.085521)])
def test_planar_root_table(sigma, eta):
    """eta1 of x J0(x) = (1 - sigma) J1(x) matches the sheet's table."""
    # Source: methods sheet section 1.6 (IEEE Std 176-1987 / Meitzler et al. 1973, from memory).
    assert coupling.planar_root(sigma) == pytest.approx(eta, abs=5e-7)


@pytest.mark.parametrize("ratio, exact, approx", KP_TABLE)
def test_kp_bessel_table(ratio, exact, approx):
    """kp exact (Poisson 0.31) and the 2.51 ratio approximation match the sheet's table."""
    # Source: methods sheet section 1.6 table (IEEE Std 176-1987, from memory).
    assert coupling.kp(1.0e5, ratio * 1.0e5, poisson=0.31) == pytest.approx(exact, abs=5e-7)
    assert coupling.kp_approx(1.0e5, ratio * 1.0e5) == pytest.approx(approx, abs=5e-7)


def test_kp_inverse_anchor_and_arrays():
    """kp = 0.60 gives fp/fs = 1.1795673163; kp() accepts arrays."""
    # Source: methods sheet section 1.6 inverse anchor.
    assert coupling.fp_from_kp(0.60, 1.0) == pytest.approx(1.1795673163, abs=1e-9)
    ks = coupling.kp(np.ones(5), np.array([r for r, _, _ in KP_TABLE]))
    assert np.allclose(ks, [e for _, e, _ in KP_TABLE], atol=5e-7)


def test_s11e_from_bar_formula():
    """s11E = 1/(4 rho l^2 fs^2) for a 12 mm PZT-like bar at 128.1 kHz."""
    # Source: IEEE Std 176-1987 length-extensional bar (from memory); value by hand:
    # 1/(4 * 7850 * 0.012^2 * 128100^2) = 1.3478e-11 m^2/N.
    assert coupling.s11e_from_bar(0.012, 128_100.0, 7850.0) == pytest.approx(1.3478e-11,
                                                                               rel=1e-4)


@pytest.mark.parametrize("fn, args", [
    (coupling.kt, (2e6, 1e6)), (coupling.k_eff, (1e6, 1e6)), (coupling.k31, (1e6, 2.5e6)),
    (coupling.kp, (1e6, 3e6)), (coupling.fs_from_kt, (1.2, 1e6)),
    (coupling.s11e_from_bar, (0.0, 1e5, 7800.0)), (coupling.planar_root, (0.6,)),
])
def test_bad_input_is_refused_with_a_message(fn, args):
    """Swapped pairs, out-of-range ratios and couplings raise ValueError naming the function."""
    with pytest.raises(ValueError, match=fn.__name__):
        fn(*args)


@settings(max_examples=60, deadline=None)
@given(k=st.floats(0.02, 0.95))
def test_round_trips(k):
    """Every inverse gives back the coupling factor it was given (kt, k31, kp)."""
    # Identity check of the IEEE Std 176-1987 relations (computed, no outside value).
    assert coupling.kt(coupling.fs_from_kt(k, 1e6), 1e6) == pytest.approx(k, abs=1e-9)
    assert coupling.k31(1e6, coupling.fp_from_k31(k, 1e6)) == pytest.approx(k, abs=1e-9)
    assert coupling.kp(1e6, coupling.fp_from_kp(k, 1e6)) == pytest.approx(k, abs=1e-9)


def test_swapped_arrays_are_refused_with_their_frequencies_written_out():
    """A refused pair of arrays is named with SI-prefixed frequencies, not an array repr."""
    import numpy as np

    from kit.resonators.coupling import k_eff

    with pytest.raises(ValueError) as err:
        k_eff(np.array([2e6, 1e6]), np.array([1e6, 2e6]))
    assert "fs = [2 MHz, 1 MHz], fp = [1 MHz, 2 MHz]" in str(err.value)
    assert "array(" not in str(err.value)
