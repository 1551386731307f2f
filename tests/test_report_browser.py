"""The lot report of 10,000 parts in a real browser (headless Debian Chromium, Playwright).

The lot is invented and made directly with numpy (tests/lot_synth.py: no fits). The page
is opened from the file system as a reviewer would open it; the test checks that the
browser reports no error (a blocked resource or a Content-Security-Policy violation is a
console error), that the embedded pictures decode, and that the overview sits above the
parts table, which sits above the sections. Build time and size are printed, not
asserted. Launch recipe: /work/shared/reference/notebook-testing.md (section 4).
"""

from __future__ import annotations

import time
import urllib.parse

from test_browser import CHROMIUM, FLAGS, pw, pytestmark  # noqa: F401 - the one launch recipe

N_PARTS = 10_000

LAYOUT = """() => {
  const box = (el) => el.getBoundingClientRect();
  const ov = document.getElementById('overview');
  const table = document.querySelector('table.parts');
  const first = document.querySelector('section');
  const imgs = [...document.querySelectorAll('#overview img')];
  return {
    overviewBottom: box(ov).bottom + window.scrollY,
    tableTop: box(table).top + window.scrollY,
    tableBottom: box(table).bottom + window.scrollY,
    sectionTop: first ? box(first).top + window.scrollY : null,
    overviewBeforeTable: !!(ov.compareDocumentPosition(table) & Node.DOCUMENT_POSITION_FOLLOWING),
    rows: table.querySelectorAll('tr').length,
    sections: document.querySelectorAll('section').length,
    overviewImages: imgs.length,
    brokenImages: [...document.images].filter(i => !i.complete || i.naturalWidth === 0).length,
  };
}"""


def test_report_of_10000_parts_in_a_real_browser(tmp_path):
    """A 10,000-part report opens without a browser error; its pictures decode; the
    overview is above the parts table, the table above the part sections."""
    from lot_synth import one_port, synthetic_lot

    from kit.outputs.lot_report import report
    from kit.outputs.part_figure import PartPainter

    summ, traces, limits = synthetic_lot(N_PARTS)
    bad = summ.loc[summ["verdict"] != "pass", "sha256"].tolist()
    painter = PartPainter()
    drawn = [painter.png(one_port({"C0": 1e-9, "R1": 0.5, "L1": 3.63e-5 * (1 + 0.01 * k),
                                   "C1": 0.204e-9}, f"syn-{k}"), limits) for k in range(6)]
    pictures = {sha: drawn[i % len(drawn)] for i, sha in enumerate(bad)}
    t = time.perf_counter()
    out = report(tmp_path / "lot.html", [], summary=summ, limits=limits, traces=traces,
                 pictures=pictures)
    built = time.perf_counter() - t
    print(f"\n10,000-part report: built in {built:.1f} s, {out.stat().st_size / 1e6:.1f} MB, "
          f"{len(bad):,} part sections")

    errors: list[str] = []
    hosts: set[str] = set()
    with pw.sync_playwright() as p:
        ctx = p.chromium.launch_persistent_context(
            str(tmp_path / "profile"), executable_path=str(CHROMIUM), headless=True, args=FLAGS,
            viewport={"width": 1400, "height": 1000})
        try:
            page = ctx.pages[0] if ctx.pages else ctx.new_page()
            page.on("console", lambda m: m.type == "error" and errors.append(m.text))
            page.on("pageerror", lambda e: errors.append(str(e)))
            page.on("request", lambda r: r.url.startswith("http")
                    and hosts.add(urllib.parse.urlsplit(r.url).netloc))
            t = time.perf_counter()
            page.goto(out.as_uri(), wait_until="load", timeout=120_000)
            opened = time.perf_counter() - t
            layout = page.evaluate(LAYOUT)
            page.screenshot(path=str(tmp_path / "top.png"))
        finally:
            ctx.close()
    print(f"opened in Chromium in {opened:.1f} s; layout {layout}")
    assert errors == [], errors
    assert hosts == set(), hosts  # a self-contained page asks no server for anything
    assert layout["overviewBeforeTable"]
    assert layout["overviewBottom"] <= layout["tableTop"]
    assert layout["tableBottom"] <= layout["sectionTop"]
    assert layout["rows"] == N_PARTS + 1  # the header row and one row per part
    assert layout["sections"] == len(bad)
    assert layout["overviewImages"] >= 5  # 3 histograms, the scatter, the overlay
    assert layout["brokenImages"] == 0
