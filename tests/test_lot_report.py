"""Lot report: self-contained HTML, user text escaped, figures embedded, atomic write.

Independent references: Python's html.parser (a tokenizer following the HTML standard)
decides what is markup and what is text; the PNG signature is from the PNG specification
(ISO/IEC 15948, section 5.2: bytes 137 80 78 71 13 10 26 10).
"""

from __future__ import annotations

import base64
import re
from html.parser import HTMLParser

import numpy as np
import pytest
import skrf

import kit
from kit.io.writer import ExportError
from kit.outputs.lot_report import report
from kit.outputs.summary import summary
from kit.review.limits import parse_limits
from kit.review.log import ReviewLog

EVIL = '<script>alert("x")</script><img src=x onerror=alert(1)> & "quotes"'


class _Collect(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags: list[str] = []
        self.attrs: list[tuple[str, str | None]] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs += attrs

    def handle_data(self, data):
        self.text.append(data)


def _parse(text: str) -> _Collect:
    p = _Collect()
    p.feed(text)
    p.close()
    return p


def _lot(tmp_path, names=("pz-01", "pz-02")):
    lot = tmp_path / "lot"
    lot.mkdir()
    f = skrf.Frequency(1, 3, 41, unit="MHz")
    for i, n in enumerate(names):
        z = (10 + 5 * i + 1j * np.linspace(-50, 50, 41)).reshape(-1, 1, 1)
        skrf.Network(frequency=f, z=z, z0=50).write_touchstone(str(lot / n))
    return lot, [kit.load(p) for p in sorted(lot.glob("*.s1p"))]


def test_note_with_script_is_text(tmp_path):
    """A note with HTML/script text appears as text in the report, never as markup; the page
    has no script element and no event-handler attribute (HTML parsed by html.parser)."""
    lot, caps = _lot(tmp_path)
    log = ReviewLog.for_folder(lot)
    log.add(caps[0], "note", text=EVIL, author="<b>eve</b>")
    log.add(caps[0], "verdict", value="reject", text=EVIL)
    out = report(tmp_path / "out" / "lot.html", caps, review_log=log)
    doc = out.read_text(encoding="utf-8")
    parsed = _parse(doc)
    assert "script" not in parsed.tags
    assert not any(name.startswith("on") for name, _ in parsed.attrs)
    text = "".join(parsed.text)
    assert EVIL in text and "<b>eve</b>" in text  # shown literally, as the reviewer typed it
    assert "&lt;script&gt;" in doc


def test_names_from_files_are_escaped(tmp_path):
    """A capture whose file name holds markup characters is shown as text."""
    lot, caps = _lot(tmp_path, names=("a<i>b&c",))
    out = report(tmp_path / "r.html", caps)
    parsed = _parse(out.read_text())
    assert "i" not in parsed.tags
    assert "a<i>b&c" in "".join(parsed.text)


def test_self_contained_with_embedded_png(tmp_path):
    """One file: images are base64 PNG data URIs, links stay inside the page, nothing
    refers to an outside resource, and the CSP forbids scripts and outside requests."""
    lot, caps = _lot(tmp_path)
    lim = parse_limits("[[mask]]\nname='z'\ncurve='z_mag_ohm'\nf_min_hz=1e6\nf_max_hz=3e6\n"
                       "upper=1000.0\n")
    out = report(tmp_path / "r.html", caps, limits=lim, figures="all")
    doc = out.read_text()
    parsed = _parse(doc)
    srcs = [v for k, v in parsed.attrs if k == "src"]
    hrefs = [v for k, v in parsed.attrs if k == "href"]
    assert len(srcs) == 3  # the overlay and one picture per part
    assert all(s.startswith("data:image/png;base64,") for s in srcs)
    assert hrefs and all(h.startswith("#part-") for h in hrefs)
    for s in srcs:
        png = base64.b64decode(s.split(",", 1)[1])
        assert png[:8] == bytes([137, 80, 78, 71, 13, 10, 26, 10])
    assert not re.search(r"(src|href)\s*=\s*[\"']?https?:", doc)
    assert "Content-Security-Policy" in doc and "default-src 'none'" in doc
    assert "script-src" not in doc and "<script" not in doc


def _judged(tmp_path):
    """Two parts, one passing and one failing a bound on fs_hz."""
    lot, caps = _lot(tmp_path)
    lim = parse_limits("[quantity.fs_hz]\nmin = 1e6\n")
    summ = summary(caps, resonances=[{"fs_hz": 2e6}, {"fs_hz": 0.5e6}], limits=lim)
    return lot, caps, lim, summ


def _sections(doc: str) -> list[str]:
    return re.findall(r'<section id="(part-\d+)"', doc)


@pytest.mark.parametrize("figures, expected", [("flagged", ["part-2"]),
                                               ("all", ["part-1", "part-2"]), ("none", [])])
def test_sections_follow_the_figures_rule(tmp_path, figures, expected):
    """By default only the part that did not pass has a section (with its picture); "all"
    gives every part one, "none" gives none."""
    lot, caps, lim, summ = _judged(tmp_path)
    doc = report(tmp_path / "r.html", caps, summary=summ, limits=lim,
                 figures=figures).read_text()
    assert _sections(doc) == expected
    pictures = len(re.findall(r'<section id="part-\d+"><h3>[^\n]*\n[^\n]*\n<img', doc))
    assert pictures == len(expected)


def test_needs_figure_rule():
    """The one rule: not passed or flagged -> a picture with "flagged"; always with "all",
    never with "none"; an unknown choice is refused."""
    from kit.outputs.part_figure import needs_figure

    good = {"status": "ok", "verdict": "pass", "fit_ok": True, "fit_flags": "",
            "resonance_flags": float("nan"), "review_verdict": None, "retest_requested": False}
    assert not needs_figure(good, "flagged") and needs_figure(good, "all")
    for change in ({"verdict": "fail"}, {"verdict": "incomplete"}, {"status": "error"},
                   {"fit_ok": False}, {"fit_flags": "at-bound:R1"}, {"review_verdict": "reject"},
                   {"retest_requested": True}, {"review_notes": 1}, {"review_tags": "odd"}):
        assert needs_figure({**good, **change}, "flagged"), change
        assert not needs_figure({**good, **change}, "none")
    notes = {**good, "fit_flags": "errors-inflated; systematic-residual"}
    assert not needs_figure(notes, "flagged")  # notes on the error estimate, not a problem
    with pytest.raises(ValueError, match="flagged"):
        needs_figure(good, "some")


def test_summary_and_verdicts_shown(tmp_path):
    """The parts table (units in the headers), the limits verdict with its reasons, the
    reason kinds, yield, Cp/Cpk row and the reviewer verdict appear."""
    lot, caps, lim, _ = _judged(tmp_path)
    log = ReviewLog.for_folder(lot)
    log.add(caps[1], "verdict", value="accept", author="k.m")
    summ = summary(caps, resonances=[{"fs_hz": 2e6}, {"fs_hz": 0.5e6}], limits=lim,
                   review_log=log)
    out = report(tmp_path / "r.html", caps, summary=summ, review_log=log, limits=lim,
                 title="Lot <7>")
    doc = out.read_text()
    text = "".join(_parse(doc).text)
    assert "Lot <7>" in text
    assert "below the minimum" in text and "fs [MHz]" in text
    # 0.5 MHz and 2 MHz share the header's prefix, 7 significant digits of the largest
    # (kit.units.table; BIPM SI brochure, 9th ed., Table 7 for the prefix)
    assert re.search(r"<td>0\.500000</td>", doc) and re.search(r"<td>2\.000000</td>", doc)
    assert "fs_hz" not in "".join(re.findall(r"<th>[^<]*</th>", doc))  # labels, not names
    assert "fs: below the minimum" in text  # kind of reason, counted in the overview
    assert "Yield: 1 of 2 part(s) passed" in text
    assert "Cpk" in text and "Cp" in text
    assert "accept" in text and "k.m" in text


def test_capability_shown_against_independent_numbers(tmp_path):
    """n, mean, std (numpy, ddof=1) and Cpk of a one-sided limit appear for the judged
    quantity (Cpk = (mean - LSL) / 3s, NIST/SEMATECH e-Handbook 6.1.6)."""
    import pandas as pd

    fs = np.array([1.84e6, 1.85e6, 1.86e6, 1.87e6])
    lim = parse_limits("[quantity.fs_hz]\nmin = 1.8e6\n")
    summ = pd.DataFrame({"capture": [f"p{i}" for i in range(4)], "sha256": list("abcd"),
                         "status": "ok", "fs_hz": fs, "verdict": "pass",
                         "verdict_reasons": ""})
    doc = report(tmp_path / "r.html", [], summary=summ, limits=lim).read_text()
    cpk = (fs.mean() - 1.8e6) / (3 * np.std(fs, ddof=1))
    assert f"<td class=num>{cpk:.3g}</td>" in doc
    assert "12.91 kHz" in doc  # std 12,910 Hz by numpy (ddof=1), written by kit.units.eng


def test_works_without_captures(tmp_path):
    """captures=[] with summary, pictures and traces gives the whole page: the overview
    (overlay from the traces), the table and the sections with the given pictures."""
    from kit.outputs.part_figure import PartPainter

    lot, caps, lim, summ = _judged(tmp_path)
    painter = PartPainter()
    pictures = {c.sha256: painter.png(c, lim) for c in caps}
    traces = {c.sha256: painter.trace(c) for c in caps}
    doc = report(tmp_path / "r.html", [], summary=summ, limits=lim, pictures=pictures,
                 traces=traces, figures="all").read_text()
    assert _sections(doc) == ["part-1", "part-2"]
    assert doc.count("data:image/png;base64,") == 2 + 2  # overlay + histogram, 2 pictures
    assert "All curves" in doc


def test_report_refuses_input_folder_and_writes_atomically(tmp_path):
    """The report is never written beside the raw captures; a rewrite leaves no temp file."""
    lot, caps = _lot(tmp_path)
    with pytest.raises(ExportError, match="never written"):
        report(lot / "r.html", caps)
    out = report(tmp_path / "r.html", caps, figures="none")
    report(out, caps, figures=False)  # the former switch still means no figures
    assert sorted(p.name for p in tmp_path.iterdir()) == ["lot", "r.html"]


def test_kit_report_callable():
    """kit.report is the report function, also after its module was imported."""
    assert kit.report is report


def test_figure_curves_against_skrf():
    """The report's figure draws |Z| of a one-port and |S21|, |S11| in dB of a two-port as
    scikit-rf 2.2.0 computes them (Network.z, Network.s_db), over frequency in MHz."""
    from kit.capture import from_network
    from kit.outputs.lot_report import lot_figure

    freq = skrf.Frequency(1, 3, 21, unit="MHz")
    rng = np.random.default_rng(3)
    z = 20 + 30 * rng.random(21) + 1j * (rng.random(21) - 0.5) * 40
    one = skrf.Network(frequency=freq, z=z.reshape(-1, 1, 1), z0=50, name="one")
    ax = lot_figure(from_network(one)).axes[0]
    x, y = ax.lines[0].get_data()
    np.testing.assert_allclose(x, freq.f / 1e6)
    np.testing.assert_allclose(y, np.abs(one.z[:, 0, 0]), rtol=1e-12)
    assert ax.get_xlabel() == "frequency [MHz]"
    s = 0.5 * (rng.normal(size=(21, 2, 2)) + 1j * rng.normal(size=(21, 2, 2)))
    two = skrf.Network(frequency=freq, s=s, z0=50, name="two")
    ax = lot_figure(from_network(two)).axes[0]
    np.testing.assert_allclose(ax.lines[0].get_data()[1], two.s_db[:, 1, 0], rtol=1e-12)
    np.testing.assert_allclose(ax.lines[1].get_data()[1], two.s_db[:, 0, 0], rtol=1e-12)
