"""Every number a user reads carries its unit with an SI prefix (issue 14, part 3).

The stored outputs of every notebook (text/plain, text/html and stream outputs, and the
text of its saved widgets: tables, status lines, read-outs) and a lot report built here
are scanned for

(a) scientific notation ("1.97513e+06", "2.03e-09"): the kit writes an SI prefix, or a
    power of ten for a dimensionless number ("1.5 × 10⁻⁷");
(b) unit-suffixed names shown raw ("fs_hz", "c0_f", "z_re_ohm"): a reader gets "fs [MHz]";
(c) the word "ohm" or "[ohm]": the unit symbol is Ω;
(d) long unprefixed frequencies ("1975126.7 Hz", "4688 Hz"): 1000 Hz and more take k, M, G.

Sources: BIPM, *The International System of Units (SI)*, 9th ed., 2019: the unit symbol Ω
(Table 4) and the decimal prefixes (Table 7); the suffix rule of docs/nomenclature.md.
What is allowed is listed below, each with its reason; nothing else is.
"""

from __future__ import annotations

import html
import json
import re
from pathlib import Path

import pytest

NOTEBOOKS = sorted((Path(__file__).resolve().parents[1] / "notebooks").glob("*.ipynb"))

_SUFFIXES = "hz|ohm|siemens|f|h|s|m|db|deg|degc|v|a|w|ppm|pct"
RULES = {
    "scientific notation": re.compile(r"(?<![\w.])[-+−]?\d+(?:\.\d+)?[eE][-+]?\d+\b"),
    "raw unit-suffixed name": re.compile(rf"\b[a-z][a-z0-9]*(?:_[a-z0-9]+)*_(?:{_SUFFIXES})\b"),
    "ohm spelled out": re.compile(r"\bohms?\b", re.IGNORECASE),
    "unprefixed Hz of 1000 or more": re.compile(r"(?<![\d.,])\d{4,}(?:\.\d+)?\s?Hz\b"),
}

#: Allowed everywhere: (rule, pattern the match and its surroundings must meet, reason).
ALLOWED_FORMS = [
    ("raw unit-suffixed name", re.compile(r"\b(?P<hit>[a-z][a-z0-9_]*)=[^\s,)]"),
     "a Python repr shows keyword arguments as they are typed (OSL(load_ohms=50.0, ...))"),
]

#: Allowed in one notebook cell, found by a piece of its source: (notebook, source, reason).
ALLOWED_CELLS = [
    ("04_export_and_report.ipynb", "print(list(sweeps.columns))",
     "the cell lists the column names of the sweeps file on purpose (a file format, "
     "docs/nomenclature.md)"),
    ("07_batch_procedure.ipynb", "print(proc_file.read_text())",
     "the procedure file printed as it is stored: its keys and numbers are the file "
     "format (docs/procedure.md)"),
]

#: Widgets whose text is allowed as it is, by CSS class: (class, reason).
ALLOWED_WIDGETS = [
    ("sb-proc-toml", "the procedure panel previews the procedure file it will write: keys "
                     "and numbers are the file format (docs/procedure.md)"),
]


def findings(text: str) -> list[tuple[str, str]]:
    """(rule, text around the match) for every breach in ``text`` not allowed above."""
    out = []
    for rule, rx in RULES.items():
        for m in rx.finditer(text):
            if any(r == rule and any(f.start("hit") == m.start() for f in form.finditer(text))
                   for r, form, _ in ALLOWED_FORMS):
                continue
            out.append((rule, text[max(0, m.start() - 50): m.end() + 30]))
    return out


def visible_text(markup: str) -> str:
    """The text a reader sees of an HTML output: no style, script, tags or data URIs."""
    markup = re.sub(r"<(style|script)\b.*?</\1>", " ", markup, flags=re.S | re.I)
    markup = re.sub(r"<[^>]+>", " ", markup)
    return html.unescape(markup)


def output_texts(nb: dict):
    """(cell index, cell source, mime type, text) of every readable output of a notebook."""
    for i, cell in enumerate(nb.get("cells", [])):
        src = "".join(cell.get("source", ""))
        for out in cell.get("outputs", []):
            if out.get("output_type") == "stream":
                yield i, src, "stream", "".join(out.get("text", ""))
            for mime in ("text/plain", "text/html"):
                data = out.get("data", {}).get(mime)
                if data:
                    text = "".join(data)
                    yield i, src, mime, visible_text(text) if mime == "text/html" else text


def widget_texts(nb: dict):
    """(model id, text) of the value and description of every saved widget."""
    state = (nb.get("metadata", {}).get("widgets", {})
             .get("application/vnd.jupyter.widget-state+json", {}).get("state", {}))
    for key, model in state.items():
        st = model.get("state", {})
        if any(c in st.get("_dom_classes", ()) for c, _ in ALLOWED_WIDGETS):
            continue
        for field in ("value", "description"):
            v = st.get(field)
            if isinstance(v, str) and v:
                yield key, visible_text(v)


def notebook_findings(nb: dict, name: str) -> list[str]:
    found = []
    for i, src, mime, text in output_texts(nb):
        if any(n == name and piece in src for n, piece, _ in ALLOWED_CELLS):
            continue
        found += [f"{name} cell {i} ({mime}): {rule}: {ctx!r}" for rule, ctx in findings(text)]
    for key, text in widget_texts(nb):
        found += [f"{name} widget {key}: {rule}: {ctx!r}" for rule, ctx in findings(text)]
    return found


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_notebook_outputs_write_units_with_prefixes(path):
    """No stored output of the notebook breaks one of the four rules (see the module)."""
    nb = json.loads(path.read_text(encoding="utf-8"))
    found = notebook_findings(nb, path.name)
    assert not found, "\n".join(found)


def test_every_allowed_cell_still_exists():
    """An allow-list entry whose cell is gone is removed, not kept as dead weight."""
    for name, piece, _ in ALLOWED_CELLS:
        path = next(p for p in NOTEBOOKS if p.name == name)
        assert piece in path.read_text(encoding="utf-8"), (name, piece)


@pytest.mark.parametrize("text, rule", [
    ("Capture('x', ports=1, points=21, 1e+06..1e+07 Hz)", "scientific notation"),
    ("C0 = 2.03e-09 F", "scientific notation"),
    ("limit on the integral = 4.213e+05 rad/s", "scientific notation"),
    ("<th>fs_hz</th>", "raw unit-suffixed name"),
    ("c0_f 2.03 nF", "raw unit-suffixed name"),
    ("same fs_hz: True", "raw unit-suffixed name"),
    ("fs_hz = 1.975 MHz is above the maximum 1.900 MHz", "raw unit-suffixed name"),
    ("fs_hz: below the minimum", "raw unit-suffixed name"),
    ("R [ohm]", "ohm spelled out"),
    ("50 Ohms", "ohm spelled out"),
    ("at f = 1975126.7 Hz", "unprefixed Hz of 1000 or more"),
    ("{'B100': '4688 Hz'}", "unprefixed Hz of 1000 or more"),
])
def test_the_scan_has_teeth(text, rule):
    """Each rule catches the forms the kit printed before (taken from earlier outputs of
    notebooks 03, 05, 06 and 07 and of kit messages)."""
    assert rule in [r for r, _ in findings(text)], text


@pytest.mark.parametrize("text", [
    "fs = 1.975 MHz", "1.5 × 10⁻⁷", "R1 [Ω]", "−75.13 kHz", "156 Hz", "999.9 Hz", "points: 561",
    "fs = 1.975 MHz is above the maximum 1.900 MHz by 75.1 kHz",
    "fs: above the maximum", "k_eff: missing", "fs: is missing; no check possible",
    "OSL(load_ohms=50.0, open_c_f=0.0)", "pzd7-01.s1p",
    "sha256 48e7145592ccee2ebf2dd7dad68189eebb3f4ca7a502524b90b1988276ad46f7",
])
def test_the_scan_passes_what_the_kit_writes(text):
    """Prefixed values, powers of ten, labels with units and the allowed forms pass."""
    assert findings(text) == [], text


def test_an_old_notebook_output_fails():
    """A cell as notebook 05 stored it before (e-notation in the Bode-Fano text) fails, and
    so does a saved widget with a raw column name; the procedure preview is allowed."""
    nb = {"cells": [{"source": "print(limit)", "outputs": [{"output_type": "stream", "text": [
        "  limit on the integral of ln(1/|Gamma|) d omega = 4.213e+05 rad/s\n"]}]}]}
    assert notebook_findings(nb, "05_matching.ipynb")
    state = {"a": {"state": {"value": "<table><tr><th>fs_hz</th></tr></table>"}},
             "b": {"state": {"value": "<pre>span_hz = [1600000.0, 2300000.0]</pre>",
                             "_dom_classes": ["sb-proc-toml"]}}}
    nb = {"cells": [], "metadata": {"widgets": {
        "application/vnd.jupyter.widget-state+json": {"state": state}}}}
    assert [f.split(":")[0] for f in notebook_findings(nb, "x.ipynb")] == ["x.ipynb widget a"]


def test_lot_report_writes_units_with_prefixes(batch_lot, tmp_path):
    """The whole lot report of the demo lot's run (batch_lot: OSL, BVD fit, limits on fs
    and k_eff, a truncated file) passes the four rules; every part pictured."""
    from kit.batch import run

    root, lot, proc = batch_lot
    res = run(proc, lot, workers=1, use_cache=False)
    out = tmp_path / "out"
    res.write(out, figures="all")
    doc = (out / "report.html").read_text(encoding="utf-8")
    text = visible_text(doc)
    assert "fs [MHz]" in text and "C0 [nF]" in text  # the table is there to be scanned
    found = [f"report: {rule}: {ctx!r}" for rule, ctx in findings(text)]
    assert not found, "\n".join(found)
