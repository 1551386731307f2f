"""The thickness-plate model's series contact resistance Rs (issue 12, item 7).

Sources: the demo lot's generator parameters in demo_data/truth.json (secondary check, our
own data: element pzd7-10 has a 3 ohm contact, the others none), corrected at the fixture by
the open/short/load compensation of kit.osl with the standards in demo_data/standards
(methods sheet 4.1), as in tests/test_fitting.py; and the Mason network of the plate
(W. P. Mason, 1948, from memory; kit.resonators.physical.mason_plate_z), an independent
realisation of the closed form the model fits.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import kit
from kit.resonators.physical import CONTACT_FRACTION, mason_plate_z
from kit.resonators.registry import get_model

PLATE = {"kt": 0.47, "fp_hz": 2.05e6, "C0": 1.9e-9, "qm": 85.0, "tan_delta": 0.018}


def _noisy_reflection(rng, z, sigma, z0=50.0):
    """Complex white noise of rms sigma on S11 at z0 (as the demo generator's noise)."""
    g = (z - z0) / (z + z0)
    g = g + sigma * (rng.standard_normal(len(z)) + 1j * rng.standard_normal(len(z))) / np.sqrt(2)
    return z0 * (1 + g) / (1 - g)


@pytest.fixture(scope="module")
def demo_fits(demo_dir):
    truth = json.loads((demo_dir / "truth.json").read_text())["elements"]
    corr = kit.osl(demo_dir / "standards" / "open.s1p", demo_dir / "standards" / "short.s1p",
                   demo_dir / "standards" / "load.s1p")
    fits = {name: kit.fit(corr(kit.load(demo_dir / "lot" / f"{name}.s1p")), model="plate",
                          modes=2, weighting="reflection") for name in truth}
    return truth, fits


def test_bad_contact_of_the_demo_lot_is_found_and_flagged(demo_fits):
    """pzd7-10: "contact-resistance", not "poor-fit", Rs = truth.json contact within 3 sigma."""
    truth, fits = demo_fits
    bad = [n for n, t in truth.items() if t["contact_ohm"]]
    assert bad == ["pzd7-10"]  # the lot as described in demo_data/README.md
    r = fits["pzd7-10"]
    assert r.ok and "contact-resistance" in r.flags and "poor-fit" not in r.flags, r.report()
    rs, err = r.params["Rs"], r.stderr["Rs"]
    assert abs(rs - truth["pzd7-10"]["contact_ohm"]) < 3 * err, r.report()


def test_well_contacted_elements_have_no_contact(demo_fits):
    """Every other element: Rs consistent with zero (0, or below 3 sigma) and no contact flag."""
    truth, fits = demo_fits
    for name, t in truth.items():
        if t["contact_ohm"]:
            continue
        r = fits[name]
        assert r.ok, (name, r.report())
        assert "contact-resistance" not in r.flags, (name, r.report())
        rs, err = r.params["Rs"], r.stderr["Rs"]
        assert rs == 0.0 or rs < 3 * err, (name, rs, err)


@pytest.mark.parametrize("rs_ohm", [0.0, 1.5])
def test_contact_on_a_mason_plate(rs_ohm):
    """A Mason-network plate plus Rs, noise 1e-3 on S11: Rs recovered and flagged only if there."""
    rng = np.random.default_rng(12)
    f = np.linspace(1.5e6, 2.4e6, 801)
    z_true = mason_plate_z(f, PLATE["kt"], PLATE["fp_hz"], PLATE["C0"], PLATE["qm"],
                           PLATE["tan_delta"]) + rs_ohm
    r = kit.fit(f, z=_noisy_reflection(rng, z_true, 1e-3), model="plate",
                weighting="reflection")
    assert r.ok, r.report()
    rs, err = r.params["Rs"], r.stderr["Rs"]
    if rs_ohm:
        assert abs(rs - rs_ohm) < 3 * err, r.report()
        assert "contact-resistance" in r.flags
        # the flag's relevance threshold: a fraction of |Z| at fs (of the fitted model)
        assert rs > CONTACT_FRACTION * abs(r.model_z(np.array([r.fs_hz]))[0])
    else:
        assert rs == 0.0 or rs < 3 * err, r.report()
        assert "contact-resistance" not in r.flags, r.report()
    for k, v in PLATE.items():
        assert abs(r.params[k] - v) < 4 * r.stderr[k], (k, r.report())


def test_contact_start_value_reads_the_excess_resistance():
    """The start value of Rs is the excess of min Re Z near fs over the plate's own."""
    f = np.linspace(1.5e6, 2.4e6, 801)
    m = get_model("plate")
    z = m.z(f, {**PLATE, "Rs": 2.0})
    start = m.start(f, z)
    # noiseless data; the start plate is not the truth, so the excess is only near 2 ohm
    assert start["Rs"] == pytest.approx(2.0, rel=0.25)
    assert m.start(f, m.z(f, PLATE))["Rs"] < 0.2  # no contact: a small positive start


def test_plate_without_rs_keeps_working():
    """Parameter sets from before Rs (no "Rs" key) give the same Z as Rs = 0."""
    m = get_model("plate")
    f = np.linspace(1.5e6, 2.4e6, 11)
    np.testing.assert_array_equal(m.z(f, PLATE), m.z(f, {**PLATE, "Rs": 0.0}))
    assert m.params[:6] == ("kt", "fp_hz", "C0", "qm", "tan_delta", "Rs")
