"""Every result of kit/resonators, kit/parts and kit/match follows the result protocol.

Built from data (demo_data, the NPL MAT 58 traces of ../shared/realdata, matching designs
as in test_match.py), each result is checked for: a dict round trip through JSON
(``from_dict(json(to_dict()))`` gives the same fields back), a text report naming every
``_ROWS`` label, an HTML view that escapes user text, and, for an analysis that cannot be
done, ``ok`` False with a plain reason and NaN (not None) for the missing values.

Outside references named beside the checks:
* JSON: RFC 8259 (objects, arrays, numbers, strings), as implemented by Python's ``json``
  module, which also writes IEEE 754 NaN and infinities as the tokens ``NaN``/``Infinity``
  (Python documentation, ``json`` module, "Infinite and NaN Number Values").
* HTML: WHATWG HTML Living Standard, section 13.1 (a ``<`` in text starts a tag, so text
  must carry it as the character reference ``&lt;``).
* IEEE 754-2019: NaN compares unequal to everything, itself included, hence the
  NaN-aware comparison below.
"""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import numpy as np
import pytest

import kit
import kit.match as m
from kit.capture import CaptureError, from_network
from kit.match.bode_fano import FanoLimit
from kit.match.circuit import MatchDesign
from kit.match.response import Bandwidth, MatchResponse
from kit.match.stress import PartStress, StressReport
from kit.parts.filters import ComponentFigures, FilterFigures
from kit.resonators.fitting import FitResult
from kit.resonators.frequencies import Resonance
from kit.resonators.qfactor import QFactor
from kit.results import Result

DEMO = Path(__file__).resolve().parents[1] / "demo_data"
SPAN = (1.6e6, 2.4e6)  # the main thickness mode of the demo lot (demo_data/README.md)
EVIL = "<b>pzd & co</b>"


def _same(a, b) -> bool:
    """Equal, with NaN equal to NaN (IEEE 754 NaN != NaN) and arrays compared by value."""
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_same(a[k], b[k]) for k in a)
    if isinstance(a, (list, tuple, np.ndarray)) and isinstance(b, (list, tuple, np.ndarray)):
        a, b = list(a), list(b)
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b))
    if isinstance(a, Result) and isinstance(b, Result):
        return type(a) is type(b) and _same(_fields(a), _fields(b))
    if isinstance(a, (float, complex, np.number)) and isinstance(b, (float, complex, np.number)):
        return a == b or (np.isnan(a) and np.isnan(b))
    return a == b


def _fields(r) -> dict:
    return {f.name: getattr(r, f.name) for f in dataclasses.fields(r)}


def _json(d: dict) -> dict:
    """The dict through JSON text and back (RFC 8259 plus Python's NaN/Infinity tokens)."""
    return json.loads(json.dumps(d))


@pytest.fixture(scope="module")
def lot_capture():
    if not (DEMO / "lot" / "pzd7-01.s1p").exists():
        pytest.skip("demo_data/ has not been generated")
    return kit.load(DEMO / "lot" / "pzd7-01.s1p")


@pytest.fixture(scope="module")
def results(lot_capture):
    """One real result of every class, keyed by class, with the field that holds user text."""
    res = kit.resonance(lot_capture, span_hz=SPAN)
    # the true element impedance (no fixture, cable or noise): a BVD fit that is ok
    fit = kit.fit(kit.load(DEMO / "truth" / "pzd7-01_dut.s1p"), span_hz=SPAN)
    band = kit.filter_figures(kit.load(DEMO / "parts" / "lc_bandpass.s2p"))
    comp = kit.component_figures(kit.load(DEMO / "parts" / "inductor.s2p"))
    design = m.tuned_transformer(lot_capture, res.fs_hz)
    resp = m.response(design, lot_capture)
    stress = m.stress(design, lot_capture, res.fs_hz, 10.0)
    limit = m.bode_fano(lot_capture, 1.75e6, 1.95e6, model="series-rlc")
    return {Resonance: (res, "name"), FitResult: (fit, "name"),
            FilterFigures: (band, "name"), ComponentFigures: (comp, "name"),
            MatchDesign: (design, "title"), MatchResponse: (resp, None),
            Bandwidth: (resp.bandwidth(10.0), "message"), StressReport: (stress, "assumptions"),
            PartStress: (stress.rows[0], "name"), FanoLimit: (limit, "flags")}


@pytest.fixture
def npl_q(realdata):
    """Q factor of NPL MAT 58 Table 6(c) trace 27 (as in test_qfactor.py)."""
    import skrf as rf

    path = realdata("npl-q-factor", "Table6c27.txt")
    data = np.loadtxt(path, comments="%")
    ntwk = rf.Network(frequency=rf.Frequency.from_f(data[:, 0] * 1e9, unit="Hz"),
                      s=(data[:, 1] + 1j * data[:, 2]).reshape(-1, 1, 1), name=path.stem)
    cap = from_network(ntwk)
    return cap, kit.q_factor(cap, "reflection-method2", fit="NLQFIT7", scale=1.0)


CLASSES = (Resonance, FitResult, FilterFigures, ComponentFigures, MatchDesign, MatchResponse,
           Bandwidth, StressReport, PartStress, FanoLimit)


@pytest.mark.parametrize("cls", CLASSES, ids=lambda c: c.__name__)
def test_round_trip_through_json(results, cls):
    """from_dict(JSON of to_dict()) gives every field back (NaN-aware, arrays by value)."""
    r, _ = results[cls]
    assert isinstance(r, Result) and r.ok, r.report()
    if cls is FitResult:  # f_hz and z are kept out of to_dict() unless include_data=True
        back = cls.from_dict(_json(r.to_dict(include_data=True)))
        assert back == r and _same(back.z, r.z)
    elif cls is ComponentFigures:  # the per-frequency arrays only with arrays=True
        back = cls.from_dict(_json(r.to_dict(arrays=True)))
        assert _same(_fields(back), _fields(r))
    else:
        back = cls.from_dict(_json(r.to_dict()))
        assert _same(_fields(back), _fields(r))
    assert _same(back.to_dict(), r.to_dict())


def test_round_trip_of_the_q_factor(npl_q):
    """The same for QFactor on real data (NPL MAT 58 Table 6(c) trace 27)."""
    _, q = npl_q
    assert q.ok
    back = QFactor.from_dict(_json(q.to_dict()))
    assert back == q  # no NaN in this result: plain equality holds


@pytest.mark.parametrize("cls", CLASSES, ids=lambda c: c.__name__)
def test_report_names_every_row_and_html_escapes(results, cls):
    """report() shows each _ROWS label; the HTML escapes user text (WHATWG HTML 13.1)."""
    r, text_field = results[cls]
    assert r._ROWS, "a result lists its rows"
    text = r.report()
    for _, label, _ in r._ROWS:
        assert label in text, (label, text)
    if text_field is None:  # the response shows its design's title
        evil = dataclasses.replace(r, design=dataclasses.replace(r.design, title=EVIL))
    else:
        value = (EVIL,) if isinstance(getattr(r, text_field), tuple) else EVIL
        evil = dataclasses.replace(r, **{text_field: value})
    if cls is Bandwidth:  # the message is shown as the reason of a band not found
        evil = dataclasses.replace(evil, found=False)
    page = evil._repr_html_()
    assert EVIL not in page and "&lt;b&gt;pzd &amp; co&lt;/b&gt;" in page


def test_q_factor_report_html_and_plot(npl_q):
    """QFactor: rows with standard errors, escaped name, the fitted circle through the data."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    cap, q = npl_q
    text = q.report()
    assert all(label in text for _, label, _ in q._ROWS) and "±" in text
    page = dataclasses.replace(q, name=EVIL)._repr_html_()
    assert EVIL not in page and "&lt;b&gt;" in page
    ax = q.plot(capture=cap)
    measured, circle = ax.lines[0], ax.lines[1]
    # the fitted circle passes through the measured trace: every measured point lies
    # within 2 % of the circle diameter of some model point (MAT 58 eq. (21) fit)
    s_meas = measured.get_xdata() + 1j * measured.get_ydata()
    s_fit = circle.get_xdata() + 1j * circle.get_ydata()
    gap = np.min(np.abs(s_meas[:, None] - s_fit[None, :]), axis=1)
    assert np.max(gap) < 0.02 * q.diameter
    plt.close("all")


def test_failed_resonance_is_not_ok_with_reason_and_nan():
    """A pure resistor has no resonance: ok False, a reason naming fs, NaN (never None)."""
    f = np.linspace(1e6, 3e6, 401)
    r = kit.resonance(f, np.full(f.size, 100.0 + 0j))
    assert not r.ok and "fs" in r.reason and "no conductance peak" in r.reason
    for key in ("fs_hz", "fp_hz", "k_eff", "qm", "f1_hz", "f2_hz"):
        assert isinstance(getattr(r, key), float) and math.isnan(getattr(r, key)), key
    d = r.to_dict()
    assert d["ok"] is False and d["reason"] == r.reason and math.isnan(d["fs_hz"])
    assert "not found" in r.report() and r.reason in r.report()
    assert _same(_fields(Resonance.from_dict(_json(d))), _fields(r))


def test_resonance_between_modes_is_not_ok(lot_capture):
    """Above the main mode of a demo element the half-power points are not in the span."""
    r = kit.resonance(lot_capture, span_hz=(2.1e6, 2.3e6))
    assert not r.ok and "qm" in r.reason and math.isnan(r.qm)


def test_failed_part_and_match_results(lot_capture):
    """Filter without an edge, component without a self-resonance, band not reached."""
    thru = kit.load(DEMO / "parts" / "rc_lowpass.s2p")
    ff = kit.filter_figures(thru, kind="band-pass")  # a low-pass read as band-pass
    assert not ff.ok and "edge not found" in ff.reason and math.isnan(ff.center_hz)
    ind = kit.load(DEMO / "parts" / "inductor.s2p")
    f = ind.network.frequency.f
    cf = kit.component_figures(ind, span_hz=(f[0], f[40]))
    assert not cf.ok and "self-resonance" in cf.reason and math.isnan(cf.srf_hz)
    assert _same(ComponentFigures.from_dict(_json(cf.to_dict())).to_dict(), cf.to_dict())
    resp = m.response(None, lot_capture)  # the bare element is far from 50 ohm
    bw = resp.bandwidth(40.0)
    assert not bw.ok and bw.reason == bw.message and math.isnan(bw.width_hz)
    failed_fit = kit.fit(f[:4], z=np.ones(4) * (1 + 1j))
    assert not failed_fit.ok and failed_fit.reason
    assert all(math.isnan(v) for v in (failed_fit.fs_hz, failed_fit.qm))


def test_bad_input_still_raises_capture_error(lot_capture):
    """Bad input raises CaptureError (the protocol's failure convention for input)."""
    with pytest.raises(CaptureError):
        kit.resonance(lot_capture, span_hz=(2.0e6, 1.0e6))
    with pytest.raises(CaptureError):
        kit.filter_figures(kit.load(DEMO / "parts" / "rc_lowpass.s2p"), level_db=3.0)


def test_plots_draw_on_given_axes(results, lot_capture):
    """plot(ax) draws on the axes given and returns them (Agg backend)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    res, _ = results[Resonance]
    _, ax = plt.subplots()
    assert res.plot(ax, data=lot_capture) is ax
    z_line = ax.lines[0]
    # the |Z| minimum of the curve drawn is where the result puts fm (within 2 samples)
    x, y = z_line.get_xdata(), z_line.get_ydata()
    step_mhz = res.step_hz * 1e-6
    assert abs(x[np.argmin(y)] - res.fm_hz * 1e-6) < 2 * step_mhz
    assert len(ax.lines) == 1 + 8  # |Z| and fm, fs, fr, fa, fp, fn, f1, f2
    ff, _ = results[FilterFigures]
    ax = ff.plot(capture=kit.load(DEMO / "parts" / "lc_bandpass.s2p"))
    x, y = ax.lines[0].get_xdata(), ax.lines[0].get_ydata()
    # the band edges are where |S21| is level_db below its maximum (common practice, no
    # source): the curve drawn, read at the marked edges, is at that level within 0.05 dB
    for edge in (ff.f_low_hz, ff.f_high_hz):
        assert np.interp(edge * 1e-6, x, y) == pytest.approx(y.max() + ff.level_db, abs=0.05)
    for cls in (ComponentFigures, MatchResponse, StressReport):
        r, _ = results[cls]
        _, ax = plt.subplots()
        assert r.plot(ax) is ax and ax.lines
    resp, _ = results[MatchResponse]
    ax = resp.plot()
    # the curve is the return loss -20 log10 |Gamma| (IEEE Std 100 definition, from memory)
    np.testing.assert_allclose(ax.lines[0].get_ydata(), -20 * np.log10(np.abs(resp.gamma)))
    plt.close("all")
