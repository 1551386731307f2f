"""The reusable part painter: curves as scikit-rf computes them, no state carried from one
part to the next, the fitted model from the model's own evaluation, decimated traces."""

from __future__ import annotations

import numpy as np
import pytest
import skrf

from kit.capture import from_network
from kit.outputs.part_figure import PartPainter, needs_figure
from kit.resonators.registry import get_model
from kit.review.limits import parse_limits

PARAMS = {"C0": 1e-9, "R1": 0.5, "L1": 3.63e-5, "C1": 0.204e-9}


def _bvd(name="p", points=1601, scale=1.0):
    f = np.linspace(1e6, 3e6, points)
    p = dict(PARAMS, L1=PARAMS["L1"] * scale)
    z = get_model("bvd").z(f, p).reshape(-1, 1, 1)
    net = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="Hz"), z=z, z0=50, name=name)
    return from_network(net), p


def test_reuse_leaves_no_trace_of_the_previous_part():
    """A painter that drew a one-port, a two-port (with limits) and then part B gives the
    same picture of B as a fresh painter."""
    a, _ = _bvd("a", scale=1.1)
    b, _ = _bvd("b")
    two = from_network(skrf.Network(frequency=skrf.Frequency(1, 3, 51, unit="MHz"),
                                    s=np.full((51, 2, 2), 0.3 + 0.1j), z0=50, name="t"))
    lim = parse_limits("[[mask]]\nname='z'\ncurve='z_mag_ohm'\nf_min_hz=1.6e6\n"
                       "f_max_hz=2.4e6\nupper=1e4\n")
    used = PartPainter()
    used.png(a, lim)
    used.png(two, lim)
    assert used.png(b, lim) == PartPainter().png(b, lim)


def test_model_curve_is_the_models_own(tmp_path):
    """The dashed model line is |Z| of FitResult.model_z for the fit dict (the registry's
    BVD), and fs/fp are marked where the resonance dict says."""
    from kit.resonators.fit_result import FitResult

    cap, p = _bvd()
    fit = FitResult("bvd", p, {k: 0.0 for k in p}, ok=True).to_dict()
    painter = PartPainter(dpi=200)  # wide enough that 1601 points are not decimated
    painter.draw(cap, fit=fit, resonance={"fs_hz": 1.85e6, "fp_hz": 2.03e6})
    x, y = painter._model.get_data()
    np.testing.assert_allclose(y, np.abs(get_model("bvd").z(cap.f_hz, p)), rtol=1e-12)
    assert painter._fs.get_xdata()[0] == pytest.approx(1.85) and painter._fp.get_visible()


def test_trace_keeps_the_envelope():
    """trace() keeps at most 2n + 2 points, including the largest and smallest |Z|
    (min/max per column, kit.outputs.decimate)."""
    cap, _ = _bvd(points=20001)
    f, y = PartPainter.trace(cap, n=128)
    z = np.abs(cap.network.z[:, 0, 0])  # scikit-rf's Network.z as the independent |Z|
    assert y.size <= 2 * 128 + 2
    assert np.isclose(y.max(), z.max(), rtol=1e-9) and np.isclose(y.min(), z.min(), rtol=1e-9)
    assert np.all(np.diff(f) > 0)


def test_needs_figure_reads_dataframe_rows():
    """Rows straight from pandas (NaN for missing text and flags) are read right."""
    import pandas as pd

    df = pd.DataFrame({"status": ["ok", "ok", "ok"], "verdict": ["pass", None, "fail"],
                       "fit_flags": [np.nan, np.nan, np.nan], "fit_ok": [True, np.nan, True]})
    rows = df.to_dict("records")
    assert [needs_figure(r, "flagged") for r in rows] == [False, False, True]
