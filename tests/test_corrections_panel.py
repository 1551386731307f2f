"""The corrections widget cell, built without display (plain pytest, Agg backend)."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
import pytest  # noqa: E402
import skrf as rf  # noqa: E402

import kit  # noqa: E402

pytest.importorskip("ipywidgets")
from kit.ui.corrections_panel import NONE, corrections_panel  # noqa: E402


@pytest.fixture
def folder(tmp_path):
    """A small folder: standards behind a fixture, a part, a 100 ohm check part, a fixture file."""
    f = rf.Frequency(1e6, 10e6, 41, "Hz")
    m = rf.media.DefinedGammaZ0(f, z0=50)
    box = m.inductor(20e-9) ** m.shunt_capacitor(10e-12)
    for name, term in (("open", m.open()), ("short", m.short()), ("load", m.match()),
                       ("part-01", m.resistor(12) ** m.inductor(50e-9) ** m.short()),
                       ("check_resistor", m.resistor(100) ** m.short())):
        (box ** term).write_touchstone(str(tmp_path / name))
    box.write_touchstone(str(tmp_path / "spring_fixture"))
    return tmp_path


def test_panel_builds_with_standards_preselected(folder):
    """Built from a folder, the panel picks the standards and the check part by name."""
    p = corrections_panel(folder, display=False, interactive=False)
    assert (p.open.value, p.short.value, p.load.value) == ("open.s1p", "short.s1p", "load.s1p")
    assert p.check.value == "check_resistor.s1p"
    assert p.dut.value == "part-01.s1p"
    assert p.compensation.value == "open/short/load"
    assert p.chain is not None and p.host.renders >= 1
    assert p.residual is not None and p.residual.worst_rel < 1e-6  # 100 ohm after OSL
    assert p.residual_text.value.startswith("check part ")  # the residual, named, in words
    assert "worst |Z" in p.residual_text.value and " MHz (median " in p.residual_text.value
    assert p.message.last == ""


def test_toggles_change_the_correction(folder):
    """Switching corrections on and off changes the chain and the corrected capture."""
    p = corrections_panel(folder, display=False, interactive=False)
    osl_z = kit.impedance(p.corrected)
    np.testing.assert_allclose(osl_z, 12 + 2j * np.pi * p.raw.f_hz * 50e-9,
                               rtol=1e-6)  # Touchstone text keeps ~12 digits
    p.compensation.value = "off"
    assert p.chain is None and p.corrected is p.raw
    assert p.residual.worst_rel > 1e-3  # uncorrected check part
    p.use_fixture.value = True
    assert "pick a fixture file" in p.message.last  # error shown, not raised
    p.fixture_file.value = "spring_fixture.s2p"
    assert p.message.last == ""
    assert [s["kind"] for s in p.chain.describe()["steps"]] == ["fixture"]
    np.testing.assert_allclose(kit.impedance(p.corrected), osl_z, rtol=1e-6)
    p.use_cable.value = True
    p.compensation.value = "open/short/load"
    assert [s["kind"] for s in p.chain.describe()["steps"]] == ["cable", "fixture", "osl"]
    np.testing.assert_allclose(kit.impedance(p.corrected), osl_z, rtol=1e-6)
    p.compensation.value = "open/short"
    assert p.chain.describe()["steps"][-1]["kind"] == "open_short"


def test_callback_error_becomes_message(folder):
    """A bad value (negative cable length) shows a message and keeps the panel alive."""
    p = corrections_panel(folder, display=False, interactive=False)
    p.use_cable.value = True
    p.cable_length_m.value = -1.0
    assert "length_m" in p.message.last and p.message.kind == "error"
    p.cable_length_m.value = 1.0
    assert p.message.last == "" or p.message.kind == "note"
    p.load.value = NONE
    assert "load" in p.message.last


def test_panel_from_captures_in_memory():
    """A list of Captures works as the source (names become the options)."""
    f = rf.Frequency(1e6, 10e6, 11, "Hz")
    m = rf.media.DefinedGammaZ0(f, z0=50)
    caps = []
    for name, n in (("open", m.open()), ("short", m.short()), ("load", m.match()),
                    ("dut", m.resistor(20) ** m.short())):
        n.name = name
        caps.append(kit.from_network(n))
    p = corrections_panel(caps, display=False, interactive=False)
    assert p.dut.value == "dut"
    np.testing.assert_allclose(kit.impedance(p.corrected), 20.0, rtol=1e-9)


def test_panel_on_demo_lot(demo_dir):
    """On the demo folder the OSL-corrected check resistor is within 1 % of 100 ohm."""
    # truth.json: check resistor 100 ohm with 1 nH; 1 % is the demo's noise-limited level
    p = corrections_panel(demo_dir, display=False, interactive=False)
    assert p.dut.value.startswith("lot")
    assert p.residual is not None and p.residual.worst_rel < 0.01
