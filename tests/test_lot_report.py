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
    """One file: images are base64 PNG data URIs, nothing refers to an outside resource."""
    lot, caps = _lot(tmp_path)
    lim = parse_limits("[[mask]]\nname='z'\ncurve='z_mag_ohm'\nf_min_hz=1e6\nf_max_hz=3e6\n"
                       "upper=1000.0\n")
    out = report(tmp_path / "r.html", caps, limits=lim)
    doc = out.read_text()
    parsed = _parse(doc)
    srcs = [v for k, v in parsed.attrs if k in ("src", "href")]
    assert len(srcs) == 2 and all(s.startswith("data:image/png;base64,") for s in srcs)
    for s in srcs:
        png = base64.b64decode(s.split(",", 1)[1])
        assert png[:8] == bytes([137, 80, 78, 71, 13, 10, 26, 10])
    assert not re.search(r"(src|href)\s*=\s*[\"']?https?:", doc)
    assert "Content-Security-Policy" in doc and "default-src 'none'" in doc


def test_summary_and_verdicts_shown(tmp_path):
    """The summary table, the limits verdict with reasons and the reviewer verdict appear."""
    lot, caps = _lot(tmp_path)
    log = ReviewLog.for_folder(lot)
    log.add(caps[1], "verdict", value="accept", author="k.m")
    lim = parse_limits("[quantity.fs_hz]\nmin = 1e6\n")
    summ = summary(caps, resonances=[{"fs_hz": 2e6}, {"fs_hz": 0.5e6}], limits=lim,
                   review_log=log)
    out = report(tmp_path / "r.html", caps, summary=summ, review_log=log, title="Lot <7>")
    text = "".join(_parse(out.read_text()).text)
    assert "Lot <7>" in text
    assert "below the minimum" in text and "2,000,000.0" in text
    assert re.search(r"reviewer verdict: (accept 1, none 1|none 1, accept 1)", text)


def test_report_refuses_input_folder_and_writes_atomically(tmp_path):
    """The report is never written beside the raw captures; a rewrite leaves no temp file."""
    lot, caps = _lot(tmp_path)
    with pytest.raises(ExportError, match="never written"):
        report(lot / "r.html", caps)
    out = report(tmp_path / "r.html", caps, figures=False)
    report(out, caps, figures=False)
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
