"""Match panel widget cell (kit.ui.match_panel), built without display under Agg."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
import pytest  # noqa: E402

from kit.capture import from_network  # noqa: E402

FS, C0, C1, QM = 1e6, 1e-9, 0.2e-9, 100.0
WS = 2 * np.pi * FS
L1, R1 = 1 / (WS**2 * C1), 1 / (WS * QM * C1)


def bvd_capture():
    """A BVD element (methods sheet 2.1 fixture A) as a Capture, via scikit-rf Network.from_z."""
    import skrf

    f = np.linspace(0.9e6, 1.1e6, 801)
    w = 2 * np.pi * f
    z = 1 / (1j * w * C0 + 1 / (R1 + 1j * w * L1 + 1 / (1j * w * C1)))
    return from_network(skrf.Network.from_z(z.reshape(-1, 1, 1),
                                            frequency=skrf.Frequency.from_f(f, unit="Hz"),
                                            name="disc <b>7</b>"))


def test_panel_designs_every_kind_without_error():
    """Every design choice builds, draws and lists parts with their stress and the cautions."""
    from kit.ui.match_panel import DESIGNS, match_panel

    p = match_panel(bvd_capture(), display=False)
    # default frequency = fs of a BVD fit (kit.match.design_frequency); for the BVD circuit
    # fs = 1/(2 pi sqrt(L1 C1)) exactly (ANSI/IEEE Std 176-1987, from memory; methods
    # sheet 1.2), here 1 MHz; the bound is that of a 3-point vertex reading of 1/G, of
    # order (step/fs)^2 = (250 Hz / 1 MHz)^2 (derived here, no source), which the fit meets.
    assert p.f_mhz.value == pytest.approx(1.0, rel=(250.0 / 1e6) ** 2)
    assert "hundreds of volts" in p.cautions.value and "qualified" in p.cautions.value
    for _label, key in DESIGNS:
        p.design_kind.value = key
        assert p.message.kind != "error", (key, p.message.last)
        assert p.design is not None and p.stress is not None
        assert "element" in p.parts_html.value
        assert p.host.renders > 0
    # at fs the shunt inductor + transformer with bought values still matches well
    p.design_kind.value = "tuned-shunt"
    k = int(np.argmin(np.abs(p.response_after.f_hz - FS)))
    assert p.response_after.return_loss_db[k] > 15.0
    assert p.limit is not None and "series-rlc" in p.summary_html.value
    assert "<b>7</b>" not in p.summary_html.value  # user text is escaped


def test_panel_reports_an_impossible_design():
    """A design that cannot exist at the chosen frequency shows a message instead of failing."""
    from kit.ui.match_panel import match_panel

    p = match_panel(bvd_capture(), display=False)
    # between fs and fp the element is inductive: a tuning inductor cannot cancel it
    p.f_mhz.value = 1.05
    p.design_kind.value = "tune-series"
    assert p.message.kind == "error" and "inductive" in p.message.last
    assert p.design is None


def test_a_design_that_moves_with_the_frequency_is_warned_about():
    """At fs of a high-Q element the shunt inductor cancels a susceptance that changes sign
    within 0.1 % (kit.match.design_sensitivity): the panel warns and keeps the cautions;
    below the resonance (0.95 MHz, mostly C0) it does not."""
    from kit.ui.match_panel import match_panel

    p = match_panel(bvd_capture(), display=False)
    p.design_kind.value = "tune-shunt"
    assert p.sensitivity is not None and p.sensitivity.sensitive
    assert p.message.kind == "warning" and "0.10 %" in p.message.last
    assert 'data-kind="warning"' in p.message.widget.value
    assert "hundreds of volts" in p.cautions.value
    assert "Butterworth-Van Dyke fit" in p.summary_html.value
    p.f_mhz.value = 0.95
    assert not p.sensitivity.sensitive and p.message.kind == ""
    assert "typed" in p.summary_html.value
    p.design_kind.value = "band"
    assert p.sensitivity is None


def test_the_return_loss_chart_is_zoomed_to_the_band():
    """The design band fills the middle third of the return-loss chart by default."""
    from kit.ui.common import span_hz
    from kit.ui.match_panel import match_panel

    p = match_panel(bvd_capture(), display=False)
    lo, hi = span_hz(p.band_mhz)
    x0, x1 = p.ax_rl.get_xlim()
    # the view axis may be in MHz: compare as fractions of the view
    scale = (x1 - x0) / (p.view_hz()[1] - p.view_hz()[0])
    assert scale * (hi - lo) == pytest.approx((x1 - x0) / 3, rel=1e-6)


def test_errors_are_plain_sentences_in_the_message_bar():
    """An impossible design is one sentence with a fix, without a Python class name."""
    from kit.ui.match_panel import match_panel

    p = match_panel(bvd_capture(), display=False)
    p.f_mhz.value = 1.05
    p.design_kind.value = "tune-series"
    assert p.message.kind == "error"
    assert "Error" not in p.message.last and "choose a frequency" in p.message.last
