"""The contract every correction keeps: new capture, input untouched, provenance, refusals."""

from __future__ import annotations

import json

import numpy as np
import pytest
import skrf as rf

import kit
from kit.corrections import Correction

FREQ = rf.Frequency(1e6, 10e6, 21, "Hz")
M = rf.media.DefinedGammaZ0(FREQ, z0=50)


def standards(freq=FREQ):
    m = rf.media.DefinedGammaZ0(freq, z0=50)
    box = m.inductor(10e-9) ** m.shunt_capacitor(5e-12)
    return box, [box ** m.open(), box ** m.short(), box ** m.match()]


def all_one_port_corrections():
    """One instance of every correction that takes a one-port capture."""
    box, (o, s, lo) = standards()
    return {
        "port_extension": kit.port_extension(1e-9),
        "cable": kit.cable(1.5, 0.66, 50.0, 0.1, 10e6),
        "fixture": kit.fixture(box),
        "osl": kit.osl(o, s, lo),
        "open_short": kit.open_short(o, s),
        "time_gate": kit.time_gate(0.0, 1e-6),
        "chain": kit.chain(kit.cable(1.0, 0.7), kit.osl(o, s, lo)),
    }


@pytest.mark.parametrize("name", list(all_one_port_corrections()))
def test_contract_new_capture_input_unchanged(name):
    """Each correction returns a new Capture with one more step and leaves the input as it was."""
    # contract of the brief (common practice, no source): immutability and provenance
    c = all_one_port_corrections()[name]
    assert isinstance(c, Correction)
    raw = kit.from_network(M.resistor(20) ** M.inductor(30e-9) ** M.short())
    before = raw.s.copy()
    out = c(raw)
    assert isinstance(out, kit.Capture) and out is not raw
    assert out.network is not raw.network
    np.testing.assert_array_equal(raw.s, before)
    assert raw.provenance == ()
    assert len(out.provenance) >= 1
    desc = c.describe()
    assert desc["kind"] == name
    json.dumps(desc)  # plain data, serialisable
    assert out.provenance[-1]["passivity"]["tol"] == pytest.approx(1e-3)


def test_network_input_accepted_and_paths_loaded(tmp_path):
    """Standards given as Touchstone paths are read and their file hashes recorded."""
    _, stds = standards()
    paths = []
    for name, n in zip(("open", "short", "load"), stds):
        n.write_touchstone(str(tmp_path / name))
        paths.append(tmp_path / f"{name}.s1p")
    c = kit.osl(*paths)
    inputs = c.describe()["inputs"]
    assert {k: len(v["sha256"]) for k, v in inputs.items()} == {"open": 64, "short": 64,
                                                                 "load": 64}
    assert inputs["open"]["path"].endswith("open.s1p")


def test_missing_standard_file_named(tmp_path):
    """A missing standard file is refused at once, naming the file and the standard."""
    _, (o, s, _) = standards()
    missing = tmp_path / "load.s1p"
    with pytest.raises(kit.CaptureError, match="load standard file was not found") as err:
        kit.osl(o, s, missing)
    assert err.value.path == str(missing)


def test_two_port_where_one_port_needed():
    """A two-port capture given to OSL or as a standard is refused; nothing is changed."""
    box, (o, s, lo) = standards()
    two = kit.from_network(box)
    before = two.s.copy()
    with pytest.raises(kit.CaptureError, match="2-port capture; a 1-port is needed"):
        kit.osl(o, s, lo)(two)
    with pytest.raises(kit.CaptureError, match="short standard"):
        kit.osl(o, box, lo)
    with pytest.raises(kit.CaptureError, match="a 2-port is needed"):
        kit.fixture(o)
    np.testing.assert_array_equal(two.s, before)


def test_grid_mismatch_names_both_grids_then_resample_is_recorded():
    """Different grids are refused naming both; resample=True interpolates and says so."""
    _, stds = standards(rf.Frequency(1e6, 10e6, 11, "Hz"))
    dut = kit.from_network(M.resistor(20) ** M.short())
    c = kit.osl(*stds)
    with pytest.raises(kit.CaptureError) as err:
        c(dut)
    msg = str(err.value)
    # 1e6 Hz and 1e7 Hz in SI prefixes (BIPM SI brochure, 9th ed., Table 7)
    assert "1 MHz to 10 MHz, 21 points" in msg
    assert "1 MHz to 10 MHz, 11 points" in msg
    assert "resample=True" in msg
    out = kit.osl(*stds, resample=True)(dut)
    step = out.provenance[-1]
    assert step["parameters"]["resample"] is True
    assert {r["what"] for r in step["resampled"]} == {"open standard", "short standard",
                                                      "load standard"}
    assert step["resampled"][0]["from"].endswith("11 points")
    # the box is smooth, so linear interpolation of the standards is close but not exact
    assert np.abs(out.s[:, 0, 0] - (M.resistor(20) ** M.short()).s[:, 0, 0]).max() < 0.05


def test_resample_never_extrapolates():
    """Resampling refuses a capture that reaches outside the standards' range."""
    _, stds = standards(rf.Frequency(2e6, 5e6, 11, "Hz"))
    dut = kit.from_network(M.resistor(20) ** M.short())
    with pytest.raises(kit.CaptureError, match="outside"):
        kit.osl(*stds, resample=True)(dut)


def test_standards_on_different_grids_refused():
    """Standards measured on different grids are refused when the correction is made."""
    _, (o, s, _) = standards()
    _, (_, _, lo) = standards(rf.Frequency(1e6, 10e6, 5, "Hz"))
    with pytest.raises(kit.CaptureError, match="5 points"):
        kit.osl(o, s, lo)


def test_reference_impedance_mismatch_refused():
    """A capture on 75 ohm with standards on 50 ohm is refused."""
    _, stds = standards()
    dut = M.resistor(20) ** M.short()
    dut.renormalize(75)
    with pytest.raises(kit.CaptureError, match="reference impedances differ"):
        kit.osl(*stds)(dut)


def test_chain_applies_in_order_and_refuses_before_computing():
    """chain(c1, c2) equals c2(c1(x)), records both steps, and refuses a bad grid up front."""
    box, stds = standards()
    m = rf.media.DefinedGammaZ0(FREQ, z0=50)
    dut = m.resistor(12) ** m.short()
    cab = kit.cable(2.0, 0.7, 50.0)
    line = rf.media.DefinedGammaZ0(FREQ, z0=50, gamma=cab.gamma(FREQ.f)).line(2.0, "m")
    meas = line ** box ** dut
    c = kit.chain(cab, kit.fixture(box))
    out = c(meas)
    np.testing.assert_allclose(out.s, dut.s, atol=1e-9)
    assert [p["kind"] for p in out.provenance] == ["cable", "fixture"]
    np.testing.assert_allclose(out.s, kit.fixture(box)(cab(meas)).s, atol=0)
    assert c.describe()["steps"][0]["kind"] == "cable"
    other = rf.Frequency(1e6, 10e6, 7, "Hz")
    bad = kit.from_network(rf.media.DefinedGammaZ0(other, z0=50).short())
    with pytest.raises(kit.CaptureError, match="grids differ"):
        c(bad)
    with pytest.raises(kit.CaptureError, match="corrections"):
        kit.chain(cab, "osl")


def test_active_result_reported_with_margin():
    """A correction that makes a part active adds an 'active' warning with frequency and margin."""
    # passivity criterion |S11| <= 1 (scikit-rf Network.passivity, same criterion)
    g = np.full(FREQ.npoints, 0.99 + 0j)
    meas = rf.Network(frequency=FREQ, s=g, z0=50)
    out = kit.port_extension(0.0, loss_db=0.5, loss_ref_hz=10e6)(meas)
    gain = 0.99 * 10 ** (2 * 0.5 * np.sqrt(FREQ.f / 10e6) / 20)
    found = [x for x in out.findings if x.code == "active"]
    assert len(found) == 1 and found[0].severity == "warning"
    step = out.provenance[-1]["passivity"]
    assert step["worst"] == pytest.approx(gain.max(), rel=1e-12)
    assert step["f_hz"] == pytest.approx(10e6)
    assert step["excess"] == pytest.approx(gain.max() - 1, rel=1e-9)
    assert "above 1" in found[0].message


def test_residual_of_known_part():
    """residual() gives the worst relative error, where it is, and a signed margin to a limit."""
    z = 100.0 * (1 + 0.01 * np.linspace(-1, 1, FREQ.npoints))
    n = rf.Network(frequency=FREQ, s=((z - 50) / (z + 50)), z0=50)
    r = kit.residual(n, 100.0, limit=0.02)
    assert r.worst_rel == pytest.approx(0.01, rel=1e-9)
    assert r.f_hz in (FREQ.f[0], FREQ.f[-1])
    assert r.margin == pytest.approx(0.01, rel=1e-6)
    assert r.rel.shape == (FREQ.npoints,)
    assert r.to_dict()["worst_rel"] == r.worst_rel
    r2 = kit.residual(n, lambda f: np.full_like(f, 100.0))
    assert r2.worst_rel == pytest.approx(r.worst_rel)
    with pytest.raises(kit.CaptureError, match="frequency points"):
        kit.residual(n, np.ones(3))


def test_corrections_import_stays_light():
    """Importing kit.corrections loads neither scikit-rf, matplotlib nor ipywidgets."""
    # project rule (helper_rules.md): `import kit` must stay light; common practice, no source
    import subprocess
    import sys

    code = ("import sys, kit, kit.corrections; "
            "print(sorted(m for m in ('skrf', 'matplotlib', 'ipywidgets') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "[]"
