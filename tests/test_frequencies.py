"""Characteristic frequencies, k_eff and Qm (kit.resonance).

Main source: the methods sheet (shared/reference/methods.md) section 1.2 fixture A, whose table
was computed from the Butterworth-Van Dyke circuit (IEEE Std 176-1987 / IEEE Std 177-1966 for
the symbols, definitions from memory; IEC 60050-561:2014 IEV 561-01-66 for fp), plus real
measurements from shared/realdata (see its README).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kit.capture import CaptureError, from_network
from kit.resonators import coupling
from kit.resonators.frequencies import resonance

# Fixture A: fs = 1 MHz, C0 = 1 nF, C1 = 0.2 nF, Qm = 100 (methods sheet section 1.2)
FS, C0, C1, QM = 1.0e6, 1.0e-9, 0.2e-9, 100.0
L1 = 1.0 / ((2 * math.pi * FS) ** 2 * C1)
R1 = 1.0 / (2 * math.pi * FS * QM * C1)
TABLE = dict(fm_hz=999_750.84, fs_hz=1_000_000.00, fr_hz=1_000_250.72, fa_hz=1_095_170.53,
             fp_hz=1_095_422.29, fn_hz=1_095_672.51)


def bvd_z(f, c0=C0, c1=C1, l1=L1, r1=R1):
    """Impedance of C0 parallel to R1-L1-C1 (methods sheet section 2.1)."""
    w = 2 * np.pi * np.asarray(f, dtype=float)
    return 1.0 / (1j * w * c0 + 1.0 / (r1 + 1j * w * l1 + 1.0 / (1j * w * c1)))


@pytest.fixture(scope="module")
def fixture_a():
    f = np.linspace(0.9e6, 1.2e6, 6001)  # 50 Hz step
    return resonance(f, bvd_z(f))


@pytest.mark.parametrize("key", list(TABLE))
def test_fixture_a_frequencies(fixture_a, key):
    """fm, fs, fr, fa, fp, fn of BVD fixture A match the sheet's table to its last digit."""
    # Source: methods sheet section 1.2, fixture A table (values printed to 0.01 Hz; the
    # tolerance of 0.05 Hz is 1/1000 of the 50 Hz grid step).
    assert getattr(fixture_a, key) == pytest.approx(TABLE[key], abs=0.05)


def test_fixture_a_values_at_the_extrema(fixture_a):
    """|Z(fm)|, |Z(fn)|, G(fs) = 1/R1 and R(fp) match the sheet's table."""
    # Source: methods sheet section 1.2 fixture A table, |Z| column and R = 2652.637648 ohm.
    assert fixture_a.zm_ohm == pytest.approx(7.937961, abs=2e-6)
    assert fixture_a.zn_ohm == pytest.approx(2659.304807, rel=1e-6)
    assert fixture_a.g_max_siemens == pytest.approx(0.1256637061, rel=1e-8)
    assert fixture_a.r_max_ohm == pytest.approx(2652.637648, rel=1e-6)


def test_fixture_a_half_power_points_and_qm(fixture_a):
    """Half-power points 995 012.50 / 1 005 012.50 Hz give Qm = 100."""
    # Source: methods sheet section 1.7 (b), fixture A: f1 = 995 012.499922 Hz,
    # f2 = 1 005 012.499922 Hz, Qm = 100.00000000.
    assert fixture_a.f1_hz == pytest.approx(995_012.499922, abs=0.01)
    assert fixture_a.f2_hz == pytest.approx(1_005_012.499922, abs=0.01)
    assert fixture_a.qm == pytest.approx(100.0, rel=1e-6)


def test_fixture_a_k_eff(fixture_a):
    """k_eff uses the measured (fs, fp = max R) pair; with the lossless fp it is 1/6."""
    # Source: methods sheet section 1.3 (k_eff^2 = 1/6 with lossless fp = fs sqrt(1.2));
    # the max-R fp (1 095 422.29 Hz, section 1.2) lies 22.8 Hz below it.
    assert fixture_a.k_eff == pytest.approx(coupling.k_eff(1.0e6, 1_095_422.29), abs=1e-8)
    assert fixture_a.k_eff**2 == pytest.approx(1 / 6, abs=5e-5)
    assert coupling.k_eff(1.0e6, 1_095_445.115010) ** 2 == pytest.approx(1 / 6, abs=1e-10)
    assert fixture_a.flags == () and fixture_a.ok


def test_interpolation_beats_the_grid_step():
    """On a 1 kHz grid every frequency is within 1 % of a step of the table value."""
    # Source: methods sheet section 1.2 fixture A table.
    f = np.linspace(0.9e6, 1.2e6, 301)
    r = resonance(f, bvd_z(f))
    step = 1000.0
    for key, want in TABLE.items():
        assert abs(getattr(r, key) - want) < 0.01 * step, key
        # and the interpolation really moved off the grid where the true value is off-grid
    assert abs(r.fm_hz - TABLE["fm_hz"]) < abs(f[np.argmin(abs(f - TABLE["fm_hz"]))] - 999_000)


def test_capture_input_matches_arrays():
    """A one-port reflection capture gives the same answer as the (f, Z) arrays."""
    import skrf as rf

    f = np.linspace(0.9e6, 1.2e6, 3001)
    z = bvd_z(f)
    ntwk = rf.Network.from_z(z.reshape(-1, 1, 1), frequency=rf.Frequency.from_f(f, unit="Hz"))
    ntwk.name = "fixture <A>"
    cap = from_network(ntwk)
    s_before = cap.s.copy()
    r = resonance(cap)
    ra = resonance(f, z)
    for key in TABLE:
        assert getattr(r, key) == pytest.approx(getattr(ra, key), abs=1e-3)
    assert r.name == "fixture <A>" and r.method == "reflection"
    assert "fixture &lt;A&gt;" in r._repr_html_() and "<A>" not in r._repr_html_()
    assert np.array_equal(cap.s, s_before)
    json.dumps(r.to_dict())
    assert "fs (max G)" in repr(r) and "flags: none" in repr(r)


@settings(max_examples=60, deadline=None)
@given(fs=st.floats(1e3, 3e9), r=st.floats(2.0, 20.0), m=st.floats(4.0, 40.0),
       c0=st.floats(1e-12, 1e-8))
def test_random_bvd_order_and_recovery(fs, r, m, c0):
    """Random BVD circuits: fm < fs < fr and fa < fp < fn; fs, Qm, k_eff recovered."""
    # Orderings and the exact fs = 1/(2 pi sqrt(L1 C1)), Qm = fs/(f2 - f1): methods sheet
    # sections 1.2 and 1.7(b) (BVD identities per IEEE Std 176-1987, from memory).
    q = m * r
    c1 = c0 / r
    l1 = 1 / ((2 * np.pi * fs) ** 2 * c1)
    r1 = 1 / (2 * np.pi * fs * q * c1)
    fp0 = fs * math.sqrt(1 + c1 / c0)
    step = fs / (40 * q)
    f = np.arange(fs * max(0.3, 1 - 8 / q), fp0 * (1 + 8 / q), step)
    res = resonance(f, bvd_z(f, c0, c1, l1, r1))
    assert res.fm_hz < res.fs_hz < res.fr_hz
    assert res.fa_hz < res.fp_hz < res.fn_hz
    assert abs(res.fs_hz - fs) < 0.01 * step
    assert res.qm == pytest.approx(q, rel=1e-4)
    # max-R fp differs from the lossless fp by O(1/Q^2), so k_eff^2 does too
    assert abs(res.k_eff**2 - c1 / (c0 + c1)) < 1.0 / q**2
    assert res.flags == ()


def test_low_figure_of_merit_has_no_zero_reactance():
    """With M = Qm C1/C0 = 1 X never crosses zero: fr, fa are NaN and flagged."""
    # Source: methods sheet section 1.2: fr and fa exist only if M >= ~2.
    c1 = C0 / 5
    l1 = 1 / ((2 * np.pi * FS) ** 2 * c1)
    r1 = 1 / (2 * np.pi * FS * 5.0 * c1)
    f = np.linspace(0.5e6, 1.6e6, 4001)
    res = resonance(f, bvd_z(f, C0, c1, l1, r1))
    assert math.isnan(res.fr_hz) and math.isnan(res.fa_hz)
    assert "no-zero-reactance" in res.flags
    assert res.fs_hz == pytest.approx(FS, abs=1.0)  # still found from the G peak


def test_span_cuts_peaks_and_half_power_points():
    """A span that stops below fp gives fp NaN; one narrower than the peak gives Qm NaN."""
    f = np.linspace(0.9e6, 1.2e6, 6001)
    z = bvd_z(f)
    r = resonance(f, z, span_hz=(0.95e6, 1.05e6))
    assert math.isnan(r.fp_hz) and math.isnan(r.fn_hz) and math.isnan(r.k_eff)
    assert "no-peak:fp" in r.flags and r.fs_hz == pytest.approx(FS, abs=0.05)
    r2 = resonance(f, z, span_hz=(0.998e6, 1.002e6))
    assert math.isnan(r2.qm) and "half-power-outside-span" in r2.flags
    assert not r2.ok and "qm" in r2.reason and "half-power point" in r2.reason


def test_nan_and_repeated_points_are_flagged_not_hidden():
    """NaN samples are dropped and repeated frequencies averaged, both flagged."""
    f = np.linspace(0.9e6, 1.2e6, 6001)
    z = bvd_z(f)
    z[100] = np.nan
    f2 = np.concatenate([f, f[:50]])
    z2 = np.concatenate([z, z[:50]])
    z2_before = z2.copy()
    r = resonance(f2, z2)
    assert "nan-points:1" in r.flags
    assert "repeated-frequencies:50" in r.flags
    assert r.fs_hz == pytest.approx(FS, abs=0.05)
    assert np.array_equal(z2, z2_before, equal_nan=True)


def test_bad_input_raises_clear_errors():
    """Too few points, a reversed span and mismatched arrays are refused with a message."""
    f = np.linspace(0.9e6, 1.2e6, 6001)
    with pytest.raises(CaptureError, match="at least 7"):
        resonance(f, bvd_z(f), span_hz=(1e6, 1e6 + 100))
    with pytest.raises(CaptureError, match="low edge"):
        resonance(f, bvd_z(f), span_hz=(1.1e6, 1.0e6))
    with pytest.raises(ValueError, match="same length"):
        resonance(f, bvd_z(f)[:-1])
    with pytest.raises(TypeError, match="Capture"):
        resonance([1.0, 2.0])


def _read_pzt_table(path: Path) -> tuple[np.ndarray, np.ndarray]:
    data = np.loadtxt(path, skiprows=1)
    return data[:, 0], data[:, 1] + 1j * data[:, 2]


def test_pzt_bar_s11e_and_k31(realdata):
    """Real PZT bar: s11E from fs and the 12 mm length is PZT-like; k31 from (fs, fp)."""
    # Data: shared/realdata/pzt-bar-admittance (MIT), read off Fig. 1 of Tsurumi et al.,
    # J. Am. Ceram. Soc. 85(8) 1993-1996 (2002); bar 12 x 3 x 1 mm, 7850 kg/m^3.
    # s11E = 1/(4 rho l^2 fs^2) per IEEE Std 176-1987 (from memory); the 1.2e-11 to
    # 1.8e-11 m^2/N range typical of PZT is the (common practice, no source).
    f, y = _read_pzt_table(realdata("pzt-bar-admittance", "admittance_measurements.txt"))
    res = resonance(f, 1.0 / y)
    assert res.fs_hz == pytest.approx(128_100, abs=200)  # G peak of the published curve
    s11e = coupling.s11e_from_bar(0.012, res.fs_hz, 7850.0)
    assert 1.2e-11 < s11e < 1.8e-11, f"s11E = {s11e:.4g} m^2/N"
    k31 = coupling.k31(res.fs_hz, res.fp_hz)
    # PZT ceramics have k31 of about 0.3 to 0.4 (from memory); the (fm, fn) pair agrees.
    assert 0.28 < k31 < 0.42, f"k31 = {k31:.4f}"
    assert coupling.k31(res.fm_hz, res.fn_hz) == pytest.approx(k31, abs=0.02)
    assert 20 < res.qm < 500


# Source: shared/realdata/crystal-series-through/README (CC-BY-SA-4.0, Sultanovic & Osmic):
# the published frequency of maximum |S21| per mode and temperature.
CRYSTAL_TABLE = {
    20: (3.388594, 3.728594), 25: (3.388594, 3.727969), 30: (3.388594, 3.727813),
    35: (3.388594, 3.726875), 40: (3.388594, 3.726094), 45: (3.388594, 3.726250),
    50: (3.388594, 3.725469), 55: (3.388438, 3.724688), 60: (3.388438, 3.723906),
    65: (3.388438, 3.723906),
}


def test_real_crystals_resonance_and_flags(realdata):
    """Real quartz crystals behind their fixture: resonance() reads |S21| and says so."""
    import warnings

    import kit

    folder = realdata("crystal-series-through")
    cases = [(mode, t, pub) for t, (c_mhz, b_mhz) in CRYSTAL_TABLE.items()
             for mode, pub in (("C100", c_mhz), ("B100", b_mhz))] + [("C300", 25, 10.004000)]
    fm_b100 = []
    for mode, t, pub in cases:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # the importer's findings are not tested here
            cap = kit.load(folder / f"{mode}_{t}C.s2p")
        res = resonance(cap, method="series-through")
        # README: fixture not de-embedded, so the complex impedance is not the crystal's
        # (R < 0 or a resistive path off resonance): fs is read from max |S21|, which the
        # source's table gives on the same grid (one step; the C300 value is rounded to 1 kHz)
        assert "magnitude-extrema" in res.flags, f"{mode} {t} degC: {res.flags}"
        tol = 1e3 if mode == "C300" else res.step_hz
        margin = abs(res.fs_hz - pub * 1e6)
        assert margin <= tol, f"{mode} {t} degC: fs off by {margin:.0f} Hz"
        if mode != "C300":
            assert any(fl.startswith("negative-resistance") or fl == "resistive-off-resonance"
                       for fl in res.flags), res.flags
        if mode == "B100":
            fm_b100.append(res.fs_hz)
    # temperature drift of B100 from 20 to 65 degC: published -4688 Hz
    drift = fm_b100[-1] - fm_b100[0]
    assert drift == pytest.approx((3.723906 - 3.728594) * 1e6, rel=0.15)


def test_kit_resonance_is_callable_after_submodule_import():
    """kit.resonance(f, z) works after every analysis module has been imported."""
    import importlib

    import kit

    importlib.import_module("kit.resonators.frequencies")
    importlib.import_module("kit.parts.filters")
    f = np.linspace(0.9e6, 1.2e6, 3001)
    r = kit.resonance(f, bvd_z(f))
    assert r.fs_hz == pytest.approx(FS, abs=0.05)
    assert kit.q_factor.__name__ == "q_factor"
