"""Limits files, verdicts with margins, masks on curves, drawing."""

from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest
import skrf
from hypothesis import given, settings
from hypothesis import strategies as st

from kit.capture import from_network
from kit.review.drawing import draw_limits
from kit.review.limits import Limits, LimitsError, Mask, QuantityLimit, load_limits, parse_limits
from kit.review.verdicts import Check, Verdict, check_mask, verdict

EXAMPLE = """\
# acceptance limits for a lot of 2 MHz discs (invented example)
format = "sweepbook-limits"
version = 1
name = "disc lot acceptance"

[quantity.fs_hz]
min = 1.95e6
max = 2.05e6
label = "series resonance"

[quantity.k_eff]
min = 0.40

[quantity.qm]
min = 50
required = false

[[mask]]
name = "match"
curve = "s11_db"
f_min_hz = 1.0e6
f_max_hz = 2.0e6
upper = -9.0
"""


def _resistor(r_ohm: float, f0=0.5e6, f1=3e6, n=26, ports=1):
    """A resistor terminating a port; skrf builds S from Z (independent of the kit)."""
    freq = skrf.Frequency(f0, f1, n, unit="Hz")
    z = np.full((n, 1, 1), r_ohm + 0j)
    return from_network(skrf.Network(frequency=freq, z=z, z0=50, name=f"r{r_ohm:g}"))


def test_example_parses(tmp_path):
    """The documented example reads into two required quantities, one optional and one mask."""
    p = tmp_path / "lot.toml"
    p.write_text(EXAMPLE)
    lim = load_limits(p)
    assert [q.name for q in lim.quantities] == ["fs_hz", "k_eff", "qm"]
    assert lim.quantities[0] == QuantityLimit("fs_hz", 1.95e6, 2.05e6, "series resonance", True)
    assert not lim.quantities[2].required
    assert lim.masks[0].curve == "s11_db" and lim.masks[0].upper == -9.0
    assert lim.name == "disc lot acceptance" and lim.source == str(p)


def test_quantity_margins_and_words():
    """Margins are signed distances to the nearest bound, absolute and relative (definition:
    common practice, no source; numbers worked by hand)."""
    lim = parse_limits(EXAMPLE)
    v = verdict({"fs_hz": 2.04e6, "k_eff": 0.45, "qm": 80}, lim, capture=_resistor(25))
    assert v.status == "pass"
    fs = next(c for c in v.checks if c.name == "fs_hz")
    assert fs.margin == pytest.approx(0.01e6) and fs.bound == 2.05e6
    assert fs.margin_rel == pytest.approx(0.01e6 / 2.05e6)
    assert "within limits" in fs.reason and "Hz" in fs.reason
    v = verdict({"fs_hz": 1.90e6, "k_eff": 0.45}, lim, capture=_resistor(25))
    status, reasons = v
    assert status == "fail"
    assert any("below the minimum" in r and "series resonance" in r for r in reasons)
    assert v.margins["fs_hz"] == pytest.approx(-0.05e6)
    assert v.worst.name == "fs_hz"


def test_reason_reads_like_the_issue_example():
    """Numbers in words by kit.units.quantity: SI prefix, four significant digits, the
    margin to three, the relative margin in percent (BIPM SI brochure, Table 7; the space
    before % by its section 5.4.7, from memory). 2.05 MHz - 1975126.7 Hz = 74 873.3 Hz,
    3.7 % of 2.05 MHz (worked by hand)."""
    from kit.review.limits import QuantityLimit
    from kit.review.verdicts import check_quantity

    c = check_quantity(QuantityLimit("fs_hz", min=2.05e6, max=2.4e6, label="fs"),
                       {"fs_hz": 1975126.7})
    assert c.reason == ("fs = 1.975 MHz is below the minimum 2.050 MHz by 74.9 kHz "
                        "(3.7 % of the bound)")
    assert dict(c.view_rows())["relative margin"] == "−3.7 %"


def test_incomplete_and_fail_precedence():
    """Missing values give 'incomplete'; a failing check makes the verdict 'fail' anyway."""
    lim = parse_limits(EXAMPLE)
    v = verdict({"fs_hz": 2.0e6, "k_eff": float("nan")}, lim, capture=_resistor(25))
    assert v.status == "incomplete"
    assert any("k_eff" in r and "could not be computed" in r for r in v.reasons)
    assert math.isnan(v.margins["k_eff"])
    # qm is optional: missing qm alone does not make the verdict incomplete
    assert verdict({"fs_hz": 2.0e6, "k_eff": 0.5}, lim, capture=_resistor(25)).status == "pass"
    v = verdict({"fs_hz": 3.0e6}, lim, capture=_resistor(25))
    assert v.status == "fail"
    # without a capture the mask cannot be checked
    v = verdict({"fs_hz": 2.0e6, "k_eff": 0.5}, lim)
    assert v.status == "incomplete" and any("no capture" in r for r in v.reasons)


def test_s11_db_mask_against_skrf():
    """A 25 ohm load in 50 ohm: |S11| = 1/3, -9.542425 dB (methods sheet section 8.3 check
    values; also skrf 2.2.0 Network.s_db). Upper -9 dB passes by 0.542425 dB, -10 dB fails
    by 0.457575 dB."""
    cap = _resistor(25)
    assert cap.network.s_db[0, 0, 0] == pytest.approx(-9.542425, abs=1e-6)
    ok = check_mask(Mask("m", "s11_db", 1e6, 2e6, upper=-9.0), cap)
    assert ok.status == "pass" and ok.margin == pytest.approx(0.542425, abs=1e-6)
    assert ok.unit == "dB"
    bad = check_mask(Mask("m", "s11_db", 1e6, 2e6, upper=-10.0), cap)
    assert bad.status == "fail" and bad.margin == pytest.approx(-0.457575, abs=1e-6)
    assert "above the upper bound" in bad.reason and "points outside" in bad.reason


def test_z_mask_with_sloped_bound():
    """|Z| of a 25 ohm load from reflection (Z = Z0(1+G)/(1-G), methods sheet section 0) against
    a lower bound sloping 20 -> 30 ohm over 1..2 MHz: tightest at 2 MHz, margin 25 - 30 = -5 ohm."""
    cap = _resistor(25, f0=1e6, f1=2e6, n=11)
    c = check_mask(Mask("z", "z_mag_ohm", 1e6, 2e6, lower=(20.0, 30.0)), cap)
    assert c.status == "fail"
    assert c.margin == pytest.approx(-5.0, abs=1e-9) and c.f_hz == pytest.approx(2e6)
    assert c.margin_rel == pytest.approx(-5 / 30)
    c = check_mask(Mask("z", "z_mag_ohm", 1e6, 2e6, lower=(20.0, 24.0), upper=26.0), cap)
    assert c.status == "pass" and c.margin == pytest.approx(1.0, abs=1e-9)


def test_mask_span_not_covered():
    """A capture that does not cover the mask's span gives 'incomplete', saying what it covers."""
    cap = _resistor(25, f0=1.5e6, f1=3e6)
    c = check_mask(Mask("m", "s11_db", 1e6, 2e6, upper=0.0), cap)
    assert c.status == "incomplete" and "covers 1.5..3 MHz" in c.reason


def test_s21_mask_on_one_port_is_incomplete():
    """A mask on S21 of a one-port cannot be checked and says why."""
    c = check_mask(Mask("m", "s21_db", 1e6, 2e6, upper=0.0), _resistor(25))
    assert c.status == "incomplete" and "1 port" in c.reason


@pytest.mark.parametrize("text,needle,line", [
    ("format = 'other'\n", "expected 'sweepbook-limits'", 1),
    ("[quantity.fs_hz]\nmin = 2e6\nmax = 1e6\n", "swap them", 1),
    ("\n\n[quantity.qm]\nlow = 3\n", "unknown key", 3),
    ("[quantity.qm]\nmin = 'fifty'\n", "finite number", 1),
    ("[[mask]]\ncurve = 'phase'\nf_min_hz = 1\nf_max_hz = 2\nupper = 1\n", "unknown curve", 1),
    ("[[mask]]\ncurve = 's11_db'\nf_min_hz = 2\nf_max_hz = 1\nupper = 1\n", "f_min_hz <", 1),
    ("[quantity.qm]\nmin = 1\n[quantity.qm]\n", "not valid TOML", None),
    ("colour = 'red'\n", "unknown entry 'colour'", 1),
])
def test_bad_files_named_with_line(tmp_path, text, needle, line):
    """Errors in a limits file name the file, the line where known, and the problem."""
    p = tmp_path / "bad.toml"
    p.write_text(text)
    with pytest.raises(LimitsError) as exc:
        load_limits(p)
    msg = str(exc.value)
    assert needle in msg and str(p) in msg
    if line is not None:
        assert f"{p}:{line}:" in msg


_names = st.from_regex(r"[a-z][a-z0-9_]{0,12}", fullmatch=True)
_floats = st.floats(min_value=-1e12, max_value=1e12, allow_nan=False, allow_infinity=False)


@settings(max_examples=60, deadline=None)
@given(name=st.text(max_size=40), label=st.text(max_size=40), qname=_names,
       a=_floats, b=_floats, pair=st.booleans())
def test_written_toml_reads_back(name, label, qname, a, b, pair):
    """to_toml escapes any text so that Python's tomllib (TOML 1.0 reader) reads the same
    limits back; labels with quotes, backslashes and control characters included."""
    lo, hi = min(a, b), max(a, b)
    lim = Limits((QuantityLimit(qname, lo, hi, label),),
                 (Mask(name or "m", "s21_db", 1.0, 2.0, lower=(lo, lo) if pair else lo,
                       upper=hi),), name=name)
    text = lim.to_toml()
    doc = tomllib.loads(text)  # independent parser
    assert doc["quantity"][qname]["min"] == lo
    back = parse_limits(text)
    clean = "".join("\ufffd" if 0xD800 <= ord(c) <= 0xDFFF else c for c in label)
    assert back.quantities[0] == QuantityLimit(qname, lo, hi, clean)
    assert back.masks[0].lower == lim.masks[0].lower and back.masks[0].upper == hi
    assert back.name == "".join("\ufffd" if 0xD800 <= ord(c) <= 0xDFFF else c for c in name)


def test_save_is_atomic_and_reloads(tmp_path):
    """save() writes through a temporary file; nothing else is left in the folder."""
    lim = parse_limits(EXAMPLE)
    p = lim.save(tmp_path / "out.toml")
    assert [x.name for x in tmp_path.iterdir()] == ["out.toml"]
    again = load_limits(p)
    assert again.quantities == lim.quantities and again.masks == lim.masks


def test_draw_limits_on_axes():
    """Mask bounds and frequency bounds are drawn at their values on the given axes."""
    from matplotlib.figure import Figure

    lim = parse_limits(EXAMPLE)
    ax = Figure().add_subplot()
    artists = draw_limits(ax, lim, curve="s11_db", f_scale=1e6)
    lines = [a for a in artists if a.get_label() == "match upper"]
    assert len(lines) == 1
    np.testing.assert_allclose(lines[0].get_xdata(), [1.0, 2.0])
    np.testing.assert_allclose(lines[0].get_ydata(), [-9.0, -9.0])
    vlines = [a for a in artists if a not in lines and a.get_label() != "match lower"]
    assert sorted(v.get_xdata()[0] for v in vlines) == [1.95, 2.05]
    assert [v.get_label() for v in vlines].count("series resonance limit") == 1
    assert lim.draw(ax, curve="z_mag_ohm", quantities=False) == []
    # a bound without its own label is named by its column's label, not the column name
    bare = parse_limits("[quantity.fs_hz]\nmin = 1.9e6\n")
    ax = Figure().add_subplot()
    assert [a.get_label() for a in draw_limits(ax, bare, f_scale=1e6)] == ["fs limit"]


def test_documented_example_parses():
    """The example in docs/limits.md is a valid limits file (keeps the documentation true)."""
    import re
    from pathlib import Path

    doc = (Path(__file__).resolve().parents[1] / "docs" / "limits.md").read_text()
    block = re.search(r"```toml\n(.*?)```", doc, re.S).group(1)
    lim = parse_limits(block, "docs/limits.md")
    assert [q.name for q in lim.quantities] == ["fs_hz", "k_eff", "qm", "c0_f"]
    assert lim.masks[1].upper == (-3.0, -6.0)


def test_limits_from_dict_same_checks():
    """A parsed table (as embedded in another TOML file) gets the same validation."""
    from kit.review.limits import limits_from_dict

    lim = limits_from_dict({"quantity": {"qm": {"min": 10}},
                            "mask": [{"curve": "s11_db", "f_min_hz": 1, "f_max_hz": 2,
                                      "upper": [0, -1]}]}, "proc.toml")
    assert lim.masks[0].name == "mask1" and lim.masks[0].upper == (0.0, -1.0)
    with pytest.raises(LimitsError, match="proc.toml: .*neither min nor max"):
        limits_from_dict({"quantity": {"qm": {"label": "x"}}}, "proc.toml")


def test_verdict_and_checks_follow_the_result_protocol():
    """Check and Verdict round-trip through to_dict/from_dict and JSON text (Python's json
    module writes NaN as the token NaN and reads it back, per its documentation), show a
    text report and escaped HTML (html.escape); missing values are NaN."""
    import json

    lim = parse_limits(EXAMPLE)
    v = verdict({"fs_hz": 2.04e6, "k_eff": float("nan")}, lim, capture=_resistor(25))
    back = Verdict.from_dict(json.loads(json.dumps(v.to_dict())))
    assert back.status == v.status and len(back.checks) == len(v.checks)
    for a, b in zip(v.checks, back.checks):
        assert isinstance(b, Check) and a.name == b.name and a.reason == b.reason
        for key in ("value", "bound", "margin", "margin_rel", "f_hz"):
            x, y = getattr(a, key), getattr(b, key)
            assert (math.isnan(x) and math.isnan(y)) or x == y, key
    k = next(c for c in v.checks if c.name == "k_eff")
    assert math.isnan(k.value) and math.isnan(k.margin) and math.isnan(k.f_hz)
    assert v.to_dict()["reasons"] == v.reasons
    assert "Verdict: incomplete" in v.report() and "fs_hz" in v.report()
    fs = next(c for c in v.checks if c.name == "fs_hz")
    assert "10.00 kHz" in fs.report()  # margin 2.05 MHz - 2.04 MHz, printed with an SI prefix
    hostile = Check("<script>", "quantity", "pass", "a < b & c")
    assert "<script>" not in hostile._repr_html_() and "&lt;script&gt;" in hostile._repr_html_()


def test_check_units_come_from_the_suffix_rule():
    """The unit of a check is that of its column or curve by kit.units.unit_of: Hz for fs_hz,
    ohm (symbol from the SI brochure, 9th ed., Table 4) for |Z|, dB for |S11|."""
    lim = parse_limits(EXAMPLE)
    v = verdict({"fs_hz": 2.04e6, "k_eff": 0.45}, lim, capture=_resistor(25))
    assert {c.name: c.unit for c in v.checks}["fs_hz"] == "Hz"
    cap = _resistor(25, f0=1e6, f1=2e6, n=11)
    assert check_mask(Mask("z", "z_mag_ohm", 1e6, 2e6, lower=20.0), cap).unit == "Ω"
