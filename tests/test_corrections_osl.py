"""Open/short/load and open/short compensation against published formulas, scikit-rf and
real measured standards."""

from __future__ import annotations

import numpy as np
import pytest
import skrf as rf
from conftest import realdata_path
from hypothesis import assume, given, settings
from hypothesis import strategies as st

import kit
from kit.corrections import passivity

F = rf.Frequency(1e6, 10e6, 11, "Hz")
N = F.npoints

# Fixture of the methods sheet §4.1 (handbook check): ABCD terms
A, B, C, D = 1.02 + 0.01j, 0.8 + 3.1j, 1e-4 + 2e-3j, 0.97 + 0.02j


def one_port(z, freq=F, z0=50.0):
    """A one-port Network of impedance z (scalar or per point); inf gives an ideal open."""
    z = np.broadcast_to(np.asarray(z, dtype=complex), (freq.npoints,))
    with np.errstate(invalid="ignore"):
        g = np.where(np.isinf(z), 1.0 + 0j, (z - z0) / (z + z0))
    return rf.Network(frequency=freq, s=g.reshape(-1, 1, 1), z0=z0)


def gamma_net(g, freq=F):
    g = np.broadcast_to(np.asarray(g, dtype=complex), (freq.npoints,))
    return rf.Network(frequency=freq, s=g.reshape(-1, 1, 1).copy(), z0=50.0)


def handbook_osl(zo, zs, zsm, zxm, zstd):
    """Zdut = Zstd (Zs - Zxm)(Zsm - Zo) / ((Zxm - Zo)(Zs - Zsm)), handbook App. C eq. (14)."""
    return zstd * (zs - zxm) * (zsm - zo) / ((zxm - zo) * (zs - zsm))


def test_osl_handbook_check_values():
    """OSL recovers 10 + j20 ohm through the methods sheet §4.1 fixture (handbook App. C)."""
    # impedance measurement handbook, Appendix C eq. (14); check values of methods.md §4.1
    zx = lambda z: (A * z + B) / (C * z + D)  # noqa: E731
    zo, zs, zsm, zxm = A / C, B / D, zx(50.0), zx(10 + 20j)
    assert zo == pytest.approx(30.423940 - 508.478803j, abs=1e-6)
    assert zs == pytest.approx(0.890258 + 3.177520j, abs=1e-6)
    assert zsm == pytest.approx(52.783089 - 2.804072j, abs=1e-6)
    assert zxm == pytest.approx(12.718114 + 24.775337j, abs=1e-6)
    c = kit.osl(one_port(zo), one_port(zs), one_port(zsm), load_ohms=50.0)
    z = kit.impedance(c(one_port(zxm)))
    np.testing.assert_allclose(z, 10 + 20j, atol=1e-9)


finite_c = st.complex_numbers(max_magnitude=0.9, allow_nan=False, allow_infinity=False)


@settings(max_examples=40, deadline=None)
@given(e00=finite_c, e11=finite_c, t=st.complex_numbers(min_magnitude=0.2, max_magnitude=1.0),
       g_dut=finite_c, zstd=st.floats(10.0, 200.0))
def test_osl_equals_one_port_model_and_handbook(e00, e11, t, g_dut, zstd):
    """OSL equals scikit-rf OnePort and the handbook formula to 1e-9 for random error boxes."""
    # independent references: scikit-rf 2.2.0 skrf.calibration.OnePort, and the handbook
    # formula of Appendix C eq. (14) (methods.md §4.1)
    def meas(g):
        return e00 + t * g / (1 - e11 * g)

    g_load = (zstd - 50) / (zstd + 50)
    gm = [meas(1.0), meas(-1.0), meas(g_load), meas(g_dut)]
    # degenerate standards (indistinguishable): no calibration exists
    assume(min(abs(gm[0] - gm[1]), abs(gm[1] - gm[2]), abs(gm[0] - gm[2])) > 1e-3)
    nets = [gamma_net(x) for x in gm]
    ours = kit.osl(*nets[:3], load_ohms=zstd)(nets[3]).s[:, 0, 0]
    cal = rf.calibration.OnePort(measured=nets[:3],
                                 ideals=[gamma_net(1.0), gamma_net(-1.0), gamma_net(g_load)])
    cal.run()
    theirs = cal.apply_cal(nets[3]).s[:, 0, 0]
    np.testing.assert_allclose(ours, theirs, atol=1e-9)
    np.testing.assert_allclose(ours, g_dut, atol=1e-9)
    zm = [50 * (1 + x) / (1 - x) for x in gm]
    z_hb = handbook_osl(zm[0], zm[1], zm[2], zm[3], zstd)
    z_ours = kit.impedance(kit.osl(*nets[:3], load_ohms=zstd)(nets[3]))
    np.testing.assert_allclose(z_ours, z_hb, rtol=1e-9, atol=1e-9)


def test_osl_non_ideal_standards_match_scikit_rf():
    """Open C, short L and load R + L definitions agree with scikit-rf OnePort to 1e-9."""
    # reference: scikit-rf 2.2.0 OnePort with ideals built from skrf media lumped elements
    f = rf.Frequency(1e6, 500e6, 51, "Hz")
    m = rf.media.DefinedGammaZ0(f, z0=50)
    box = m.line(30, "deg") ** m.shunt_capacitor(3e-12) ** m.inductor(5e-9)
    ideals = [m.shunt_capacitor(40e-15) ** m.open(), m.inductor(20e-12) ** m.short(),
              m.resistor(49.5) ** m.inductor(0.1e-9) ** m.short()]
    measured = [box ** x for x in ideals]
    dut = m.resistor(12) ** m.shunt_capacitor(2e-12) ** m.short()
    c = kit.osl(*measured, load_ohms=49.5, open_c_f=40e-15, short_l_h=20e-12, load_l_h=0.1e-9)
    cal = rf.calibration.OnePort(measured=measured, ideals=ideals)
    cal.run()
    ours = c(box ** dut).s
    np.testing.assert_allclose(ours, cal.apply_cal(box ** dut).s, atol=1e-9)
    np.testing.assert_allclose(ours, dut.s, atol=1e-9)


# ------------------------------------------------------------------------- open/short
def test_open_short_symmetric_model_handbook_check():
    """The symmetric ABCD open/short model recovers 10 + j20 ohm (methods §4.2 fixture)."""
    # handbook Appendix B eq. (9); check fixture of methods.md §4.2 (A = D = 1.01 ...)
    a, b, c_ = 1.01, 0.5 + 2j, 2e-4 + 1e-3j
    zo, zs = a / c_, b / a
    zxm = (a * (10 + 20j) + b) / (c_ * (10 + 20j) + a)
    corr = kit.open_short(one_port(zo), one_port(zs), model="symmetric")
    np.testing.assert_allclose(kit.impedance(corr(one_port(zxm))), 10 + 20j, atol=1e-9)


def test_open_short_simple_model_handbook_check():
    """The series-shunt model recovers 10 + j20 ohm behind Zs = 0.1 + jw10nH, Yo = 1e-7 + jw2pF."""
    # handbook §4.3.2 / bench LCR meter manual §4.2 simple model; values of methods.md §4.2
    w = 2 * np.pi * F.f
    zs, yo = 0.1 + 1j * w * 10e-9, 1e-7 + 1j * w * 2e-12
    meas = lambda z: zs + 1.0 / (yo + 1.0 / z)  # noqa: E731
    corr = kit.open_short(one_port(zs + 1.0 / yo), one_port(zs), model="series-shunt")
    np.testing.assert_allclose(kit.impedance(corr(one_port(meas(10 + 20j)))), 10 + 20j,
                               atol=1e-9)


def test_open_short_shunt_series_matches_scikit_rf():
    """The shunt-series model equals scikit-rf's OpenShort de-embedding on a one-port."""
    # reference: scikit-rf 2.2.0 skrf.calibration.deembedding.OpenShort (Koolen et al. 1991)
    from skrf.calibration.deembedding import OpenShort

    f = rf.Frequency(1e6, 300e6, 31, "Hz")
    m = rf.media.DefinedGammaZ0(f, z0=50)
    box = m.shunt_capacitor(4e-12) ** m.inductor(8e-9) ** m.resistor(0.3)
    dut = m.resistor(30) ** m.inductor(2e-9) ** m.short()
    o, s, x = box ** m.open(), box ** m.short(), box ** dut
    ours = kit.open_short(o, s, model="shunt-series")(x).s
    np.testing.assert_allclose(ours, OpenShort(o, s).deembed(x).s, atol=1e-9)
    np.testing.assert_allclose(ours, dut.s, atol=1e-9)


def test_open_short_unknown_model_refused():
    """An unknown open/short model name is refused with the list of models."""
    with pytest.raises(kit.CaptureError, match="series-shunt"):
        kit.open_short(one_port(1e6), one_port(0.1), model="pi")


# ------------------------------------------------------------------------- real data
@pytest.mark.parametrize("port", ["P1", "P2"])
def test_microstrip_load_corrected_with_its_own_standards_is_matched(port):
    """Each port's load corrected with that port's OSL standards is matched to 1e-9."""
    # real data: ../shared/realdata/microstrip-standards (BSD-3-Clause, scikit-rf developers)
    folder = realdata_path("microstrip-standards")
    o, s, lo = (kit.load(folder / f"{port}-MSL_{k}_50.s1p") for k in ("Open", "Short", "Load"))
    c = kit.osl(o, s, lo)
    load_c = c(lo)
    assert np.max(np.abs(load_c.s[:, 0, 0])) < 1e-9
    open_c = c(o)
    np.testing.assert_allclose(open_c.s[:, 0, 0], 1.0, atol=1e-9)
    assert load_c.provenance[-1]["inputs"]["open"]["sha256"] == o.sha256


def test_microstrip_open_passivity_margin_reported():
    """The microstrip open's |S11| excess over 1 (about 0.004) is reported as a number."""
    # real data README: "|S11| of the open reaches about 1.004"
    folder = realdata_path("microstrip-standards")
    op = kit.load(folder / "P1-MSL_Open_50.s1p")
    p = passivity(op)
    assert 0.002 < p.excess < 0.006
    assert op.f_hz[0] <= p.f_hz <= op.f_hz[-1]
    out = kit.port_extension(0.0)(op)
    active = [x for x in out.findings if x.code == "active"]
    assert len(active) == 1 and active[0].severity == "warning"
    assert f"{p.worst:.6g}" in active[0].message
    assert out.provenance[-1]["passivity"]["excess"] == pytest.approx(p.excess, abs=1e-12)
    quiet = kit.port_extension(0.0, passivity_tol=0.01)(op)
    assert not [x for x in quiet.findings if x.code == "active"]
