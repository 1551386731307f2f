"""Matching designs and their predicted response (kit.match).

Sources beside each check: Pozar, *Microwave Engineering*, 4th ed., Wiley 2012, section 5.1
(Example 5.1; section and example numbers from memory); the methods sheet
(shared/reference/methods.md) sections 8.1-8.3; scikit-rf 2.2.0 as an independent
implementation of lumped two-ports and cascading.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import kit
from kit.capture import CaptureError, from_network
from kit.match.response import ladder_waves

m = kit.match

# BVD fixture A of the methods sheet (section 2.1): fs = 1 MHz, C0 = 1 nF, C1 = 0.2 nF, Qm = 100
FS, C0, C1, QM = 1e6, 1e-9, 0.2e-9, 100.0
WS = 2 * np.pi * FS
L1 = 1 / (WS**2 * C1)
R1 = 1 / (WS * QM * C1)


def bvd_z(f_hz):
    """BVD impedance from its formula, Y = jwC0 + 1/(R1 + jwL1 + 1/(jwC1)) (methods sheet 2.1)."""
    w = 2 * np.pi * np.asarray(f_hz, dtype=float)
    return 1.0 / (1j * w * C0 + 1.0 / (R1 + 1j * w * L1 + 1.0 / (1j * w * C1)))


def capture_of(z_fn, f_hz, z0=50.0, name="element"):
    """A Capture of a one-port with impedance z_fn(f), made with scikit-rf's Network.from_z."""
    import skrf

    f = np.asarray(f_hz, dtype=float)
    ntwk = skrf.Network.from_z(z_fn(f).reshape(-1, 1, 1),
                               frequency=skrf.Frequency.from_f(f, unit="Hz"), z0=z0, name=name)
    return from_network(ntwk)


# ----------------------------------------------------------------------------- L-network


def test_pozar_example_5_1_both_solutions():
    """L-network on 200 - j100 ohm, 100 ohm, 500 MHz gives Pozar Example 5.1's two solutions."""
    # Pozar 4th ed. Example 5.1 (from memory); values from the methods sheet section 8.1.
    sols = m.l_network(200 - 100j, 500e6, r_source_ohm=100.0)
    assert len(sols) == 2
    s1, s2 = sols
    assert s1.info["B_S"] == pytest.approx(2.898979e-3, rel=1e-6)
    assert s1.info["X_ohm"] == pytest.approx(122.474487, rel=1e-8)
    assert s1.values["C2"] == pytest.approx(0.92277e-12, rel=1e-5)
    assert s1.values["L1"] == pytest.approx(38.98484e-9, rel=1e-6)
    assert s2.info["B_S"] == pytest.approx(-6.898979e-3, rel=1e-6)
    assert s2.info["X_ohm"] == pytest.approx(-122.474487, rel=1e-8)
    assert s2.values["L2"] == pytest.approx(46.13869e-9, rel=1e-6)
    assert s2.values["C1"] == pytest.approx(2.59899e-12, rel=1e-5)
    # shunt element next to the load, series element toward the source (RL > Z0)
    assert [p.placement for p in s1.parts] == ["series", "shunt"]
    for s in sols:
        zin = s.z_in(200 - 100j, 500e6)[0]
        assert abs(zin - 100.0) < 1e-9 * 100.0


def test_l_network_against_scikit_rf_cascade():
    """The design's input reflection equals scikit-rf's cascade of its lumped two-port and the load."""
    # scikit-rf 2.2.0 (Circuit.SeriesImpedance/ShuntAdmittance, Network.__pow__) as reference.
    import skrf

    f = np.linspace(300e6, 700e6, 41)
    zl = np.full(f.size, 200 - 100j)
    freq = skrf.Frequency.from_f(f, unit="Hz")
    load = skrf.Network.from_z(zl.reshape(-1, 1, 1), frequency=freq, z0=100.0)
    for d in m.l_network(200 - 100j, 500e6, r_source_ohm=100.0):
        ref = (d.network(f) ** load).s[:, 0, 0]
        ours = m.response(d, zl, f).gamma
        np.testing.assert_allclose(ours, ref, atol=1e-12)
        # and at 500 MHz the match is perfect
        assert abs(ours[20]) < 1e-9


def test_l_network_12_5_ohm_to_50():
    """12.5 ohm to 50 ohm: X = +-21.650635 ohm, B = +-0.034641 S, loaded Q = sqrt(3)."""
    # Methods sheet section 8.1 check values (Q = sqrt(R_high/R_low - 1)).
    sols = m.l_network(12.5, 10e6, 50.0)
    xs = sorted(s.info["X_ohm"] for s in sols)
    bs = sorted(s.info["B_S"] for s in sols)
    np.testing.assert_allclose(xs, [-21.650635, 21.650635], rtol=1e-7)
    np.testing.assert_allclose(bs, [-0.034641, 0.034641], rtol=1e-5)
    for s in sols:
        assert s.info["loaded_q"] == pytest.approx(np.sqrt(3.0), rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(rl=st.floats(0.5, 2000.0), xl=st.floats(-2000.0, 2000.0), r0=st.floats(5.0, 200.0))
def test_l_network_matches_any_resistive_load(rl, xl, r0):
    """Every L-network solution of every topology presents exactly R0 at the design frequency."""
    # Definition of a conjugate match; formulas of Pozar 4th ed. section 5.1 (from memory).
    sols = m.l_network(complex(rl, xl), 2e6, r0, topology="all")
    assert sols  # one design (no parts) when the load is already R0
    for s in sols:
        zin = s.z_in(complex(rl, xl), 2e6)[0]
        assert abs(zin - r0) < 1e-7 * r0


def test_l_network_from_capture_uses_measured_impedance():
    """A capture as load: the design matches the measured impedance at f and names the capture."""
    # Same L-section formulas (Pozar 4th ed. section 5.1, from memory); BVD from methods 2.1.
    f = np.linspace(0.9e6, 1.1e6, 801)
    cap = capture_of(bvd_z, f, name="disc-07")
    sols = m.l_network(cap, FS, 50.0)
    for s in sols:
        assert abs(s.z_in(bvd_z, FS)[0] - 50.0) < 1e-6
        d = s.describe()
        assert "disc-07" in d["params"]["load"]
        json.dumps(d)  # provenance is plain data
    np.testing.assert_array_equal(sols[0].f_grid_hz, f)


def test_frequency_outside_capture_names_the_file():
    """Asking for a frequency outside the capture gives a CaptureError that says what to do."""
    cap = capture_of(bvd_z, np.linspace(0.9e6, 1.1e6, 101))
    with pytest.raises(CaptureError, match="outside the capture's range"):
        m.l_network(cap, 2e6)


# ----------------------------------------------------------------------------- tuning


def test_shunt_tuning_leaves_r1_at_fs():
    """Shunt L = 1/(w^2 C0) on the BVD element leaves a purely resistive R1 at fs."""
    # Methods sheet section 8.2 check values (fixture A): Lp = 25.330296 uH, Z = 7.9577472 + j0.
    y = 1 / bvd_z(FS)
    assert y.real == pytest.approx(0.1256637, rel=1e-6)
    assert y.imag == pytest.approx(0.0062832, rel=1e-5)
    d = m.tuning_inductor(C0, FS, kind="shunt")
    assert d.values["L1"] == pytest.approx(25.330296e-6, rel=1e-7)
    z = d.z_in(bvd_z, FS)[0]
    assert z.real == pytest.approx(7.9577472, rel=1e-7)
    assert abs(z.imag) < 1e-9 * abs(z)
    assert z.real == pytest.approx(R1, rel=1e-12)


def test_tuning_from_measured_reactance():
    """From a capture, shunt tuning cancels Im Y and series tuning Im Z at the chosen frequency."""
    # Methods sheet section 8.2: series tuning at fs gives Ls = 63.1678 nH and Z = 7.937902 ohm.
    cap = capture_of(bvd_z, np.linspace(0.95e6, 1.05e6, 1001))
    sh = m.tuning_inductor(cap, FS, kind="shunt")
    assert sh.values["L1"] == pytest.approx(25.330296e-6, rel=1e-6)
    se = m.tuning_inductor(cap, FS, kind="series")
    assert se.values["L1"] == pytest.approx(63.1678e-9, rel=1e-5)
    z = se.z_in(bvd_z, FS)[0]
    assert z.real == pytest.approx(7.937902, rel=1e-6)
    assert abs(z.imag) < 1e-9


def test_tuning_refuses_an_inductive_load():
    """A shunt tuning inductor on an inductive load is refused with a message saying why."""
    with pytest.raises(ValueError, match="inductive"):
        m.tuning_inductor(10 + 50j, 1e6, kind="shunt")


# ----------------------------------------------------------------------------- transformer


@settings(max_examples=40, deadline=None)
@given(re=st.floats(0.1, 1e4), im=st.floats(-1e4, 1e4))
def test_transformer_6_to_4_scales_by_2_25(re, im):
    """An ideal 6:4 transformer presents (6/4)^2 = 2.25 times the load impedance."""
    # Zp = (Np/Ns)^2 Zs, common practice, no source (methods sheet section 8.2).
    t = m.Part("T1", "T", "transformer", 6 / 4)
    d = m.MatchDesign("transformer", "6:4", (t,))
    zl = complex(re, im)
    assert d.z_in(zl, 1e6)[0] == pytest.approx(2.25 * zl, rel=1e-12)


def test_transformer_2_to_1_on_12_5_ohm():
    """A 12.5 ohm load behind a 2:1 transformer presents 50 ohm; the design picks n = 2."""
    # Common practice, no source (methods sheet section 8.2).
    d = m.transformer(12.5, 50.0)
    assert d.values["T1"] == pytest.approx(2.0, rel=1e-15)
    assert d.parts[0].turns == (2, 1)
    assert d.z_in(12.5, 1e6)[0] == pytest.approx(50.0, rel=1e-15)


def test_tuned_transformer_matches_bvd_at_fs():
    """Shunt tuning plus transformer present exactly the source resistance at fs."""
    # Methods sheet 8.2 (tuning leaves R1; transformer ratio sqrt(R0/R)).
    d = m.tuned_transformer(bvd_z(FS), FS, kind="shunt")
    assert d.values["T1"] == pytest.approx(np.sqrt(50.0 / R1), rel=1e-9)
    assert abs(d.z_in(bvd_z, FS)[0] - 50.0) < 1e-9
    assert [p.kind for p in d.parts] == ["T", "L"]


def test_transformer_network_matches_impedance_ratio():
    """The scikit-rf two-port of a transformer terminated by R presents n^2 R."""
    # scikit-rf 2.2.0 (a2s, Network.__pow__); Zp = n^2 Zs common practice, no source.
    import skrf

    d = m.transformer(12.5, 50.0)
    f = np.array([1e6, 2e6])
    load = skrf.Network.from_z(np.full((2, 1, 1), 12.5 + 0j),
                               frequency=skrf.Frequency.from_f(f, unit="Hz"), z0=50.0)
    z = (d.network(f) ** load).z[:, 0, 0]
    np.testing.assert_allclose(z, 50.0, rtol=1e-12)


# ----------------------------------------------------------------------------- response


def test_vswr_return_loss_mismatch_loss_definitions():
    """VSWR 1.5 gives |Gamma| 0.2, return loss 13.979400 dB, mismatch loss 0.177288 dB."""
    # Methods sheet section 8.3 check values (ECSS glossary for return loss).
    g = m.gamma_from_vswr(1.5)
    assert g == pytest.approx(0.2, rel=1e-15)
    assert m.return_loss_db(g) == pytest.approx(13.979400, abs=1e-6)
    assert m.mismatch_loss_db(g) == pytest.approx(0.177288, abs=1e-6)
    assert m.vswr(g) == pytest.approx(1.5, rel=1e-14)


def test_unmatched_25_ohm_against_scikit_rf():
    """25 ohm in 50 ohm: VSWR 2 and return loss 9.542425 dB, as scikit-rf's s_vswr and s_db."""
    # Methods sheet 8.3; scikit-rf 2.2.0 Network.s_vswr and Network.s_db as reference.
    f = np.linspace(1e6, 2e6, 5)
    r = m.response(None, 25.0, f)
    ntwk = r.network()
    np.testing.assert_allclose(r.vswr, ntwk.s_vswr[:, 0, 0], rtol=1e-12)
    np.testing.assert_allclose(r.return_loss_db, -ntwk.s_db[:, 0, 0], rtol=1e-12)
    np.testing.assert_allclose(r.return_loss_db, 9.542425, atol=1e-6)
    np.testing.assert_allclose(r.mismatch_loss_db, 0.511525, atol=1e-6)


def test_delivered_power_balances():
    """Lossless parts deliver 1 - |Gamma|^2 of the available power; with Q the part losses close the sum."""
    # Energy conservation, P_in = P_load + P_parts (common practice, no source).
    f = np.linspace(0.98e6, 1.02e6, 81)
    d = m.tuned_transformer(bvd_z(FS), FS)
    r = m.response(d, bvd_z, f)
    np.testing.assert_allclose(r.delivered, 1 - np.abs(r.gamma) ** 2, atol=1e-12)
    np.testing.assert_allclose(r.parts_loss_db, 0.0, atol=1e-9)
    rq = m.response(d, bvd_z, f, q_inductor=50.0)
    # 1 W available: open-circuit source 2 sqrt(P R0)
    _, nodes, per = ladder_waves(d, bvd_z(f), f, 2 * np.sqrt(50.0), 50.0, 50.0, None)
    p_in = np.real(nodes[0][0] * np.conj(nodes[0][1]))
    p_load = np.real(nodes[-1][0] * np.conj(nodes[-1][1]))
    np.testing.assert_allclose(p_in, 1.0 * (1 - np.abs(rq.gamma) ** 2), rtol=1e-9)
    np.testing.assert_allclose(p_in, p_load + sum(w["p_loss"] for w in per), rtol=1e-9)
    np.testing.assert_allclose(p_load, rq.delivered, rtol=1e-9)
    assert np.all(rq.delivered < r.delivered)


def test_bandwidth_of_shunt_tuned_rc_against_closed_form():
    """The return-loss bandwidth of a shunt-tuned parallel RC equals the closed-form edges."""
    # Derived here from Gamma = -jBR/(2 + jBR) for R = R0 (common practice, no source):
    # |Gamma| = g where |B| R = 2g/sqrt(1 - g^2), B = wC - 1/(wL).
    r, c, f0 = 50.0, 2e-9, 1e6
    w0 = 2 * np.pi * f0
    lp = 1 / (w0**2 * c)
    d = m.tuning_inductor(c, f0)
    assert d.values["L1"] == pytest.approx(lp)
    f = np.linspace(0.3e6, 2.5e6, 22001)
    resp = m.response(d, lambda f: 1 / (1 / r + 2j * np.pi * f * c), f)
    bw = resp.bandwidth(10.0)
    g = 10 ** (-10 / 20)
    bmax = 2 * g / np.sqrt(1 - g * g) / r
    # wC - 1/(wL) = +-bmax  ->  C w^2 -+ bmax w - 1/L = 0
    w_hi = (bmax + np.sqrt(bmax**2 + 4 * c / lp)) / (2 * c)
    w_lo = (-bmax + np.sqrt(bmax**2 + 4 * c / lp)) / (2 * c)
    assert bw.found
    assert bw.f_lo_hz == pytest.approx(w_lo / 2 / np.pi, abs=5.0)  # grid step 100 Hz, edges interpolated
    assert bw.f_hi_hz == pytest.approx(w_hi / 2 / np.pi, abs=5.0)
    assert m.response(None, 1e6, f).bandwidth(10.0).found is False


def test_band_design_beats_point_designs():
    """The band design's worst in-band return loss is no worse than any point L-network's."""
    # Starting points from Pozar 4th ed. section 5.1 (from memory); scipy Nelder-Mead.
    def load(f):
        return 1 / (1 / 200.0 + 2j * np.pi * np.asarray(f) * 1e-9)

    f_lo, f_hi = 0.8e6, 1.2e6
    b = m.band(load, f_lo, f_hi, 50.0)
    f = np.linspace(f_lo, f_hi, 101)
    worst = np.min(m.response(b, load, f).return_loss_db)
    assert worst == pytest.approx(b.info["worst_rl_db"], abs=1e-9)
    for s in m.l_network(load, 1e6, 50.0, topology="all"):
        assert worst >= np.min(m.response(s, load, f).return_loss_db) - 1e-9
    bg = m.band(load, f_lo, f_hi, 50.0, objective="gain", q_inductor=30.0)
    rg = m.response(bg, load, f, q_inductor=30.0)
    assert np.min(rg.delivered_db) == pytest.approx(bg.info["min_gain_db"], abs=1e-9)
    assert np.all(rg.delivered < 1.0)


def test_design_network_is_lossless_and_reciprocal():
    """The scikit-rf two-port of every design is lossless and reciprocal."""
    # scikit-rf 2.2.0 Network.is_lossless / is_reciprocal as the reference checks.
    designs = m.l_network(bvd_z(FS), FS, topology="all") + [
        m.tuned_transformer(bvd_z(FS), FS), m.band(bvd_z, 0.99e6, 1.01e6)]
    f = np.linspace(0.9e6, 1.1e6, 21)
    for d in designs:
        n = d.network(f)
        assert n.is_reciprocal()
        assert n.is_lossless()


def test_from_demo_capture(demo_dir):
    """From a demo element: a tuned-transformer design is matched at the conductance peak."""
    cap = kit.load(sorted((demo_dir / "truth").glob("*_dut.s1p"))[0])
    z = kit.impedance(cap)
    f = cap.f_hz
    k = int(np.argmax((1 / z).real))
    d = m.tuned_transformer(cap, f[k])
    r = m.response(d, cap)
    assert r.return_loss_db[k] > 40.0
    assert cap.name in d.describe()["params"]["load"]


def test_transformer_ratio_is_written_without_a_prefix():
    """A turns ratio is a number: a 500 Ω load seen as 50 Ω needs Np/Ns = sqrt(50/500) =
    0.3162 (ideal transformer, Zp = (Np/Ns)^2 Zs, common practice, no source), never
    "316.2 mNp/Ns"."""
    from kit.match.designs import transformer

    d = transformer(500.0, 50.0)
    texts = [repr(d), d.parts[0].label(), d.parts[0].value_text()] + [v for _, v in
                                                                      d.view_rows()]
    assert "Np/Ns = 0.316228" in repr(d) and "Np/Ns = 0.3162" in d.parts[0].label()
    assert not any("mNp" in t or "kNp" in t for t in texts), texts
