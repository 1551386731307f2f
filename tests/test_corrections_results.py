"""Result objects of kit.corrections (Residual, Passivity) follow the kit.results protocol."""

from __future__ import annotations

import json
import math
import warnings

import numpy as np
import pytest
import skrf as rf
from conftest import realdata_path

import kit
from kit.corrections import Passivity, Residual, passivity

FREQ = rf.Frequency(1, 100, 51, unit="MHz")


def _same(a, b) -> bool:
    """Equal dicts, with NaN equal to NaN and lists compared element-wise."""
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_same(a[k], b[k]) for k in a)
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b))
    if isinstance(a, float) and isinstance(b, float) and math.isnan(a) and math.isnan(b):
        return True
    return a == b


def _resistor(r_ohm, spread=0.0):
    z = r_ohm * (1 + spread * np.linspace(-1, 1, FREQ.npoints))
    return rf.Network(frequency=FREQ, s=(z - 50) / (z + 50), z0=50, name="r<100>")


def test_residual_round_trip_report_and_html():
    """to_dict is JSON data and from_dict gives the same result back (arrays included); the
    text view has the rows with units, the HTML view escapes the capture's name."""
    r = kit.residual(_resistor(100.0, 0.01), 100.0, limit=0.02)
    back = Residual.from_dict(json.loads(json.dumps(r.to_dict())))
    assert _same(back.to_dict(), r.to_dict())
    assert isinstance(back.rel, np.ndarray) and back.z_ohm.dtype == complex
    np.testing.assert_array_equal(back.z_ohm, r.z_ohm)
    text = r.report()
    assert "worst relative error" in text and "Hz" in text and "margin" in text
    html = r._repr_html_()
    assert "r<100>" not in html and "r&lt;100&gt;" in html


def test_residual_without_limit_has_nan_limit_and_margin():
    """Missing values are NaN, not None; the report says 'not found' for them."""
    r = kit.residual(_resistor(100.0, 0.01), 100.0)
    assert math.isnan(r.limit) and math.isnan(r.margin)
    # |Z - 100| / 100 with Z = 100 (1 +- 0.01): worst 0.01 by construction of the part
    assert r.worst_rel == pytest.approx(0.01, rel=1e-9)
    assert "not found" in r.report()


def test_residual_of_an_ideal_open_is_not_ok_with_a_reason():
    """A capture with no finite impedance (Gamma = 1 everywhere) gives ok False and a reason,
    without a warning; bad input (expected 0 ohm) still raises CaptureError."""
    open_ = rf.Network(frequency=FREQ, s=np.ones(FREQ.npoints), z0=50, name="open")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        r = kit.residual(open_, 100.0)
    assert not r.ok and "finite impedance" in r.reason
    assert r.invalid_points == FREQ.npoints and math.isnan(r.worst_rel)
    assert "not computed" in r.report()
    with pytest.raises(kit.CaptureError, match="non-zero"):
        kit.residual(_resistor(100.0), 0.0)


def test_passivity_matches_scikit_rf_and_round_trips():
    """The worst gain of the real microstrip open (../shared/realdata) is what scikit-rf's
    Network.passivity gives (sqrt(S^H S), i.e. |S11| for a one-port, scikit-rf 2.2.0); the result
    round-trips through JSON."""
    cap = kit.load(realdata_path("microstrip-standards") / "P1-MSL_Open_50.s1p")
    p = passivity(cap)
    worst_skrf = float(np.max(cap.network.passivity[:, 0, 0].real))
    assert p.worst == pytest.approx(worst_skrf, rel=1e-9)
    assert p.ok and p.name == cap.name
    back = Passivity.from_dict(json.loads(json.dumps(p.to_dict())))
    assert back == p
    assert "largest gain of S" in p.report()


def test_passivity_with_no_finite_point_is_not_ok():
    """All-NaN S gives NaN figures, ok False and a reason (no exception)."""
    bad = rf.Network(frequency=FREQ, s=np.full(FREQ.npoints, np.nan + 0j), z0=50)
    p = passivity(bad)
    assert not p.ok and "finite" in p.reason and math.isnan(p.worst)
