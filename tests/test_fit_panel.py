"""The fit panel widget cell (kit.ui.fit_panel), built without display (Agg backend)."""

from __future__ import annotations

import html

import matplotlib
import numpy as np
import pytest

matplotlib.use("Agg")

from kit.resonators.registry import get_model  # noqa: E402
from kit.ui.fit_panel import fit_panel  # noqa: E402

FIX_A = {"C0": 1e-9, "R1": 7.9577471546, "L1": 1.2665147955e-4, "C1": 2e-10}


def _pair(seed, c0=1e-9):
    f = np.linspace(0.9e6, 1.5e6, 601)
    rng = np.random.default_rng(seed)
    z = get_model("bvd").z(f, dict(FIX_A, C0=c0))
    return f, z * (1 + 2e-3 * rng.standard_normal(f.shape))


@pytest.fixture
def panel():
    p = fit_panel({"disc <1>": _pair(1), "disc 2": _pair(2, 1.2e-9)}, display=False,
                  interactive=False)
    yield p
    import matplotlib.pyplot as plt

    plt.close("all")


def test_panel_fits_on_build_and_shows_table(panel):
    """The panel fits the first capture at once and tables values, errors and flags escaped."""
    # Fixture A of the methods sheet 1.2 (IEEE 176 BVD): the fit must find C0 = 1 nF.
    r = panel.result
    assert r.ok and r.params["C0"] == pytest.approx(1e-9, rel=1e-3)
    assert "standard uncertainty" in panel.table.value and html.escape("disc <1>") in panel.table.value
    assert "<1>" not in panel.table.value
    assert panel.host.renders >= 1 and panel.host.widget.value[:4] == b"\x89PNG"
    assert len(panel.ax_circle.lines) == 2  # measured circle and model


def test_panel_controls_refit(panel):
    """Choosing a capture, a span and a model refits with those settings."""
    panel.selector.value = 1
    assert panel.result.params["C0"] == pytest.approx(1.2e-9, rel=1e-3)
    panel.set_span(0.95e6, 1.2e6)
    assert panel.result.span_hz == pytest.approx((0.95e6, 1.2e6), rel=1e-6)
    assert panel.result.n_points < 601
    panel.model.value = "bvd-loss"
    assert panel.result.model == "bvd-loss" and "R0" in panel.table.value
    panel.model.value = "multi"
    panel.modes.value = 1
    assert panel.result.model == "multi"


def test_panel_failed_fit_and_callback_error(panel):
    """A fit that cannot start shows its reason; a callback error lands in the message bar."""
    panel.set_span(1.3e6, 1.5e6)  # no resonance inside: the fit says so, nothing raises
    assert not panel.result.ok and "NOT ok" in panel.table.value
    bad = fit_panel({"missing": "/nonexistent/file.s1p"}, display=False)
    assert bad.message.kind == "error" and "not found" in bad.message.last
    assert "Error:" not in bad.message.last  # plain message, no Python class name
    assert "not found" in bad.message.widget.value


def test_panel_method_error_is_shown_not_raised():
    """Asking series-through of a one-port capture shows the CaptureError in the message bar."""
    import skrf

    import kit

    f, z = _pair(3)
    ntwk = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="Hz"),
                        s=((z - 50) / (z + 50)).reshape(-1, 1, 1), z0=50, name="one-port")
    p = fit_panel([kit.from_network(ntwk, {})], display=False)
    assert p.result.ok
    p.method.value = "series-through"
    assert p.message.kind == "error" and "two-port" in p.message.last
    assert not p.message.last.startswith("CaptureError")


def test_panel_fits_with_the_capture_reference():
    """A 75 ohm capture is fitted in its own reference: C0 = 1 nF found (IEEE 176 BVD fixture A)."""
    import skrf

    import kit

    f, z = _pair(4)
    ntwk = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="Hz"),
                        s=((z - 75) / (z + 75)).reshape(-1, 1, 1), z0=75, name="ref75")
    p = fit_panel([kit.from_network(ntwk, {})], display=False)
    assert p.result.ok and p.result.params["C0"] == pytest.approx(1e-9, rel=1e-3)
    p.weighting.value = "reflection"  # the weighting that uses the reference impedance
    assert p.result.ok and p.result.params["C0"] == pytest.approx(1e-9, rel=1e-3)
    own = kit.fit(p._data(0)[1], weighting="reflection", span_hz=p.result.span_hz)
    # the same impedance weighted in a 50 ohm reference (a capture refuses a contradicting z0)
    at50 = kit.fit(f, z=z, weighting="reflection", span_hz=p.result.span_hz, z0_ohm=50)
    assert p.result.params["L1"] == pytest.approx(own.params["L1"], rel=1e-9)
    assert p.result.params["L1"] != pytest.approx(at50.params["L1"], rel=1e-6)  # 50 ohm differs
