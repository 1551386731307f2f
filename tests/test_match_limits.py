"""Bode-Fano limit, E-series rounding and stress of matching designs (kit.match).

Sources beside each check: R. M. Fano, J. Franklin Inst. 249 (1950) and Pozar, *Microwave
Engineering*, 4th ed., section 5.9 (from memory for the section); IEC 60063 (series values
from memory); available power of a source, Pozar 4th ed. ch. 2 (from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kit

m = kit.match

R, C, F0 = 200.0, 1e-9, 1e6  # parallel RC load for the Bode-Fano checks


def rc_z(f_hz):
    """Parallel RC impedance, Z = 1/(1/R + jwC)."""
    return 1.0 / (1.0 / R + 2j * np.pi * np.asarray(f_hz, dtype=float) * C)


# wide log grid for integrals over "all" frequencies: truncation only lowers the integral.
# Shifted by half a step so that no node falls on a design frequency, where a perfect match
# puts the integrable log singularity of ln(1/|Gamma|) on a node and the trapezoid rule
# over-counts it.
F_ALL = np.geomspace(F0 * 1e-5, F0 * 1e5, 100001) * 10 ** 5e-5


def all_designs(load, f0, f_lo, f_hi):
    """Every design kind the module offers, at f0 or over the band, plus their E12 roundings."""
    z0 = complex(load(f0))
    ds = [m.tuning_inductor(load(f0), f0, "shunt"), m.tuning_inductor(load(f0), f0, "series"),
          m.transformer(z0, 50.0, f_hz=f0), m.tuned_transformer(z0, f0, "shunt"),
          m.tuned_transformer(z0, f0, "series"), m.band(load, f_lo, f_hi, 50.0)]
    ds += m.l_network(z0, f0, 50.0, topology="all")
    ds += [m.round_design(d, "E12") for d in ds]
    return ds


# ----------------------------------------------------------------------------- Bode-Fano


def test_fano_integral_reaches_the_bound_for_rc_on_matched_resistor():
    """A parallel RC with R = R0 connected directly uses exactly pi/(RC) (the bound is tight)."""
    # Fano (1950); Pozar 4th ed. 5.9 (from memory): integral of ln(1/|Gamma|) dw <= pi/(RC);
    # for R = R0, |Gamma|^2 = (wRC)^2/(4 + (wRC)^2) and the integral is pi/(RC) exactly.
    r = m.response(None, lambda f: 1 / (1 / 50.0 + 2j * np.pi * f * C), F_ALL, r_source_ohm=50.0)
    lim = m.bode_fano(None, 0.9e6, 1.1e6, r_ohm=50.0, c_f=C)
    ratio = lim.ratio(r, band_only=False)
    assert ratio == pytest.approx(1.0, abs=2e-3)
    assert ratio <= 1.0


def test_fano_integral_reaches_the_bound_for_series_rl():
    """A series RL with R = R0 connected directly uses exactly pi R/L."""
    # Fano (1950); Pozar 4th ed. 5.9 (from memory): series RL, integral <= pi R / L.
    L = 1e-6
    r = m.response(None, lambda f: 50.0 + 2j * np.pi * f * L, F_ALL * 10, r_source_ohm=50.0)
    i1 = m.fano_integral(r.f_hz, r.gamma)
    assert i1 / (np.pi * 50.0 / L) == pytest.approx(1.0, abs=2e-3)


def test_no_design_exceeds_the_bode_fano_bound_on_parallel_rc():
    """For every design the integral of ln(1/|Gamma|) dw over all frequencies stays within pi/(RC)."""
    # Fano (1950); Pozar 4th ed. 5.9 (from memory). Numerical trapezoid on a 1e-5..1e5 f0 log
    # grid; tolerance 1e-3 for the quadrature (the truncated tails only lower the integral).
    lim = m.bode_fano(rc_z, 0.9e6, 1.1e6)
    assert lim.r_ohm == pytest.approx(R, rel=1e-9)
    assert lim.c_f == pytest.approx(C, rel=1e-9)
    assert lim.bound_rad_s == pytest.approx(np.pi / (R * C), rel=1e-9)
    ratios = {}
    for d in all_designs(rc_z, F0, 0.9e6, 1.1e6):
        g = m.response(d, rc_z, F_ALL).gamma
        full = m.fano_integral(F_ALL, g) / lim.bound_rad_s
        ratios[d.title] = full
        assert full <= 1.0 + 1e-3, d.title
        assert lim.ratio(F_ALL, g) <= full + 1e-12  # the band is part of the whole
    # the ideal transformer is the bound-reaching case (R scaled to R0, RC unchanged)
    assert max(ratios.values()) == pytest.approx(1.0, abs=2e-3)


def test_no_design_exceeds_the_series_rlc_bound_on_bvd():
    """On the BVD element every design stays within the motional branch's pi R1/L1 limit."""
    # Fano (1950); Pozar 4th ed. 5.9 (from memory): series RL limit pi R/L; C0 belongs to the
    # matching network, so the motional branch bounds the whole element. BVD of methods 2.1.
    fs, c0, c1, qm = 1e6, 1e-9, 0.2e-9, 100.0
    ws = 2 * np.pi * fs
    l1, r1 = 1 / (ws**2 * c1), 1 / (ws * qm * c1)

    def bvd(f):
        w = 2 * np.pi * np.asarray(f)
        return 1 / (1j * w * c0 + 1 / (r1 + 1j * w * l1 + 1 / (1j * w * c1)))

    lim = m.bode_fano(bvd, 0.98e6, 1.02e6, model="series-rlc", n_points=4001)
    assert lim.r_ohm == pytest.approx(r1, rel=1e-6)
    assert lim.l_h == pytest.approx(l1, rel=1e-3)
    assert lim.l_std_h > 0
    f = np.concatenate([np.geomspace(1e2, 0.9e6, 5000), np.linspace(0.9e6, 1.1e6, 40001)[1:] + 2.5,
                        np.geomspace(1.1e6, 1e10, 5000)[1:]])
    for d in all_designs(bvd, fs, 0.995e6, 1.005e6):
        g = m.response(d, bvd, f).gamma
        assert m.fano_integral(f, g) <= np.pi * r1 / l1 * (1 + 1e-3), d.title
        assert m.fano_integral(f, g, "1/w2") <= np.pi * r1 * c1 * (1 + 1e-3), d.title


def test_bode_fano_from_capture_fits_rc_and_rlc():
    """From a capture the parallel RC / RLC equivalents are recovered with near-zero residual."""
    # Least squares on Y = G + j(wC - 1/(wL)); parallel RLC limits pi/(RC) and pi L/R
    # (Fano 1950; Pozar 4th ed. 5.9, from memory).
    import skrf

    from kit.capture import from_network

    lp = 30e-6
    f = np.linspace(0.5e6, 2e6, 301)

    def rlc(f):
        w = 2 * np.pi * f
        return 1 / (1 / R + 1j * w * C + 1 / (1j * w * lp))

    cap = from_network(skrf.Network.from_z(rlc(f).reshape(-1, 1, 1),
                                           frequency=skrf.Frequency.from_f(f, unit="Hz")))
    lim = m.bode_fano(cap, 0.8e6, 1.2e6, model="parallel-rlc")
    assert (lim.r_ohm, lim.c_f, lim.l_h) == pytest.approx((R, C, lp), rel=1e-9)
    assert lim.fit_residual < 1e-9 and not lim.flags
    assert lim.bound_low_s == pytest.approx(np.pi * lp / R, rel=1e-9)
    # constant-|Gamma| budget: the tighter of the two limits over the band
    w1, w2 = 2 * np.pi * 0.8e6, 2 * np.pi * 1.2e6
    budget = min(np.pi / (R * C) / (w2 - w1), np.pi * lp / R / (1 / w1 - 1 / w2))
    assert lim.gamma_min == pytest.approx(np.exp(-budget), rel=1e-12)
    rc = m.bode_fano(cap, 0.8e6, 1.2e6, model="parallel-rc")
    assert rc.flags and "poorly" in rc.flags[0]


# ----------------------------------------------------------------------------- E-series


def test_e_series_values_follow_the_geometric_definition():
    """E12/E24 hold 12/24 increasing values within 5 % of 10^(k/n); E12 is every other E24."""
    # IEC 60063 (values from memory): E-n values approximate 10^(k/n) rounded to two
    # figures, with kept historical deviations (e.g. 2.7, 3.0, 3.3) of up to about 4.5 %.
    for name, n in (("E12", 12), ("E24", 24)):
        v = np.array(m.series_values(name))
        assert v.size == n and np.all(np.diff(v) > 0)
        np.testing.assert_allclose(v, 10 ** (np.arange(n) / n), rtol=0.05)
    assert m.E24[::2] == m.E12


@settings(max_examples=100, deadline=None)
@given(x=st.floats(1e-13, 1e-2), series=st.sampled_from(["E12", "E24"]))
def test_round_to_series_gives_the_nearest_series_value(x, series):
    """The rounded value is in the series and no series value is nearer (in ratio)."""
    # IEC 60063 (values from memory); nearest in log distance (common practice, no source).
    v = m.round_to_series(x, series)
    dec = np.floor(np.log10(v) + 1e-9)
    assert round(v / 10**dec, 6) in m.series_values(series)
    cands = np.array(m.series_values(series) + (10.0,))
    cands = np.concatenate([cands / 10, cands, cands * 10]) * 10 ** np.floor(np.log10(x))
    best = cands[np.argmin(np.abs(np.log(cands / x)))]
    assert abs(np.log(v / x)) <= abs(np.log(best / x)) + 1e-9


def test_round_design_to_e24_reevaluates_response():
    """Rounding the Pozar Example 5.1 parts to E24 keeps a usable match and records the changes."""
    # Pozar 4th ed. Example 5.1 values (from memory, methods sheet 8.1); IEC 60063 E24
    # (from memory): 38.98 nH -> 39 nH, 0.9228 pF -> 0.91 pF.
    s1 = m.l_network(200 - 100j, 500e6, 100.0)[0]
    r = m.round_design(s1, "E24")
    assert r.values["L1"] == pytest.approx(39e-9)
    assert r.values["C2"] == pytest.approx(0.91e-12)
    assert r.info["rounding"]["L1"]["change"] == pytest.approx(39 / 38.98484 - 1, rel=1e-4)
    rl = m.response(r, 200 - 100j, [500e6], r_source_ohm=100.0).return_loss_db[0]
    assert 20.0 < rl < 200.0  # no longer perfect, still a good match
    assert "E24" in r.describe()["notes"][-1]
    x = m.round_design(m.transformer(7.9577, 50.0), "E12")
    assert x.values["T1"] == pytest.approx(5 / 2)  # whole turns 5:2 for n = 2.507


# ----------------------------------------------------------------------------- stress


def test_stress_into_matched_resistor_is_the_available_power():
    """1 W available from 50 ohm into 50 ohm: 7.071 V RMS and 0.1414 A, 1 W delivered."""
    # Available power Vs^2/(4 R0) (maximum power transfer; Pozar 4th ed. ch. 2, from memory).
    s = m.stress(None, 50.0, 1e6, 1.0)
    e = s.row("element")
    assert e.v_rms_v == pytest.approx(np.sqrt(50.0), rel=1e-12)
    assert e.i_rms_a == pytest.approx(1 / np.sqrt(50.0), rel=1e-12)
    assert e.power_w == pytest.approx(1.0, rel=1e-12)
    assert e.v_peak_v == pytest.approx(10.0, rel=1e-12)
    assert "available power" in s.assumptions


def test_stress_of_tuned_transformer_on_bvd_at_fs():
    """Matched BVD at fs, 100 W: V = sqrt(P R1) on the element, V/(wL) in the tuning inductor."""
    # At fs the shunt-tuned element is R1 (methods sheet 8.2); all available power reaches it;
    # the transformer primary sees sqrt(P R0) (ideal transformer, common practice, no source).
    fs, c0, c1, qm = 1e6, 1e-9, 0.2e-9, 100.0
    ws = 2 * np.pi * fs
    l1, r1 = 1 / (ws**2 * c1), 1 / (ws * qm * c1)

    def bvd(f):
        w = 2 * np.pi * np.asarray(f)
        return 1 / (1j * w * c0 + 1 / (r1 + 1j * w * l1 + 1 / (1j * w * c1)))

    d = m.tuned_transformer(bvd(fs), fs)
    s = m.stress(d, bvd, fs, 100.0)
    v = np.sqrt(100.0 * r1)
    assert s.row("element").v_rms_v == pytest.approx(v, rel=1e-9)
    assert s.row("element").power_w == pytest.approx(100.0, rel=1e-9)
    assert s.row("L1").v_rms_v == pytest.approx(v, rel=1e-9)
    assert s.row("L1").i_rms_a == pytest.approx(v / (ws * d.values["L1"]), rel=1e-9)
    assert s.row("T1 primary").v_rms_v == pytest.approx(np.sqrt(100.0 * 50.0), rel=1e-9)
    assert s.row("T1 secondary").v_rms_v == pytest.approx(v, rel=1e-9)
    # a high-resistance element (a 2 kohm parallel resonance) at 100 W: hundreds of volts
    hv = m.stress(m.transformer(2000.0, 50.0), 2000.0, fs, 100.0)
    assert hv.row("element").v_rms_v == pytest.approx(np.sqrt(100.0 * 2000.0), rel=1e-9)
    assert hv.row("element").v_peak_v > 600.0
    assert "element" in str(s)
    assert list(s.to_frame()["name"])[0] == "element"


def test_cautions_are_stated():
    """The module documentation and constants carry the high-voltage and dry-drive cautions."""
    text = (m.__doc__ or "") + " ".join(m.CAUTIONS) + m.NOTEBOOK_SECTION
    for word in ("hundreds of volts", "unloaded", "dry", "ratings", "local codes", "qualified"):
        assert word in text


def test_fano_integral_counts_a_perfect_match_on_a_grid_node_correctly():
    """A perfect match exactly on a grid node does not inflate the integral (tight case = 1)."""
    # Shunt-tuned parallel RC behind a matching transformer is a parallel RLC with R = R0,
    # whose integral equals pi/(RC) exactly (Fano 1950; Pozar 4th ed. 5.9, from memory;
    # the w <-> w0^2/w symmetry of the lowpass-to-bandpass map, checked numerically here).
    d = m.tuned_transformer(rc_z(F0), F0, "shunt")
    f = np.geomspace(F0 * 1e-5, F0 * 1e5, 100001)  # F0 is a node; |Gamma(F0)| ~ 1e-16
    g = m.response(d, rc_z, f).gamma
    assert np.min(np.abs(g)) < 1e-12
    assert m.fano_integral(f, g) / (np.pi / (R * C)) == pytest.approx(1.0, abs=2e-3)
    assert m.fano_integral(f, g) / (np.pi / (R * C)) <= 1.0 + 1e-4
