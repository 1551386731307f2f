"""Demo lot: after the corrections every element matches the generator's true impedance."""

from __future__ import annotations

import json

import numpy as np
import pytest
import skrf as rf

import kit


def _truth(demo_dir):
    return json.loads((demo_dir / "truth.json").read_text())


def _osl(demo_dir):
    std = demo_dir / "standards"
    return kit.osl(std / "open.s1p", std / "short.s1p", std / "load.s1p")


def _cable_fixture(demo_dir):
    """Cable from the stated parameters, then the fixture (series R-L, shunt C) built with
    scikit-rf media from truth.json, not with the generator's code."""
    t = _truth(demo_dir)
    f = kit.load(demo_dir / "standards" / "open.s1p").network.frequency
    m = rf.media.DefinedGammaZ0(f, z0=50)
    fx = t["fixture"]
    box = (m.resistor(fx["series_r_ohm"]) ** m.inductor(fx["series_l_h"])
           ** m.shunt_capacitor(fx["shunt_c_f"]))
    return kit.chain(kit.cable(**t["cable"]), kit.fixture(box))


@pytest.mark.parametrize("which", ["osl", "cable+fixture"])
def test_demo_lot_matches_true_dut_within_noise(demo_dir, which):
    """Corrected elements match truth/<name>_dut.s1p within the stated added noise."""
    # the generator adds complex Gaussian noise of sigma per part on the raw S11 (truth.json);
    # the corrected reflection may differ from the truth by that noise: rms below 1.5 sigma,
    # worst point below 6 sigma (standards' own noise included)
    t = _truth(demo_dir)
    corr = _osl(demo_dir) if which == "osl" else _cable_fixture(demo_dir)
    for name, p in t["elements"].items():
        raw = kit.load(demo_dir / "lot" / f"{name}.s1p")
        true = kit.load(demo_dir / "truth" / f"{name}_dut.s1p")
        out = corr(raw)
        g = out.s[:, 0, 0]
        if p.get("contact_ohm"):  # a bad contact adds series resistance outside the DUT
            z = kit.impedance(out) - p["contact_ohm"]
            g = (z - 50) / (z + 50)
        err = np.abs(g - true.s[:, 0, 0])
        sigma = p["noise_sigma"]
        assert np.sqrt(np.mean(err**2)) < 1.5 * sigma, name
        assert err.max() < 6 * sigma, name
        assert not [f for f in out.findings if f.code == "active"], name


def test_demo_check_resistor_residual_small(demo_dir):
    """The 100 ohm check resistor (1 nH) reads within 1 % after OSL, with a positive margin."""
    # truth.json check_resistor: R and series L; limit 1 % (common practice, no source)
    t = _truth(demo_dir)["check_resistor"]
    raw = kit.load(demo_dir / "lot" / "check_resistor.s1p")
    r = kit.residual(_osl(demo_dir)(raw),
                     lambda f: t["r_ohm"] + 2j * np.pi * f * t["l_h"], limit=0.01)
    assert r.worst_rel < 0.01 and r.margin > 0
    assert raw.f_hz[0] <= r.f_hz <= raw.f_hz[-1]
    uncorrected = kit.residual(raw, t["r_ohm"])
    assert uncorrected.worst_rel > 10 * r.worst_rel
