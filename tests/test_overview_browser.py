"""Real browser: a click on a part of the lot overview opens it in the lot browser.

JupyterLab on loopback, headless Debian Chromium driven by Playwright, the fixtures and
helpers of tests/test_browser.py (recipe: /work/shared/reference/notebook-testing.md,
sections 4 and 6). The test writes a small notebook into the server's folder: the demo lot
in a lot browser and the overview cell on its summary, both on ipympl canvases. The kernel
says where one part is drawn (as fractions of the figure, :meth:`LotOverview.position`);
the test clicks that pixel of the canvas with the mouse and reads the lot browser's
selected capture back from the page (its ``<select>`` element and its status line).
The time from the click to the lot browser's changed canvas goes into the latency table;
nothing asserts on time.
"""

from __future__ import annotations

import re
import time

import pytest
from test_browser import (  # noqa: F401 - lab and latencies are fixtures used by name
    CHROMIUM,
    ROOT,
    _notebook_page,
    _settled_canvas,
    _shot,
    _until_changed,
    lab,
    latencies,
    pw,
    pytestmark,
)

CELLS = [
    "import warnings\n"
    'warnings.filterwarnings("ignore", category=DeprecationWarning)\n'
    "%matplotlib widget\n"
    "import numpy as np\n"
    "import kit\n"
    "from kit.review.limits import parse_limits\n"
    "from kit.ui.lot_browser import lot_browser\n"
    "from kit.ui.overview import overview_cell",
    'lot = kit.load_folder("demo_data/lot", pattern="{lot}-{serial}")\n'
    "caps = [kit.io.folder.capture_of(lot, i) for i in lot.index]\n"
    "res = {c.name: kit.resonance(c, span_hz=(1.6e6, 2.3e6)) for c in caps}\n"
    'limits = parse_limits("""format = \\"sweepbook-limits\\"\n'
    "version = 1\n"
    "[quantity.fs_hz]\n"
    "min = 1.80e6\n"
    "max = 1.90e6\n"
    "[quantity.k_eff]\n"
    'min = 0.40""")\n'
    "summary = kit.summary(caps, resonances=res, limits=limits)",
    "browser = lot_browser(lot)",
    "ov = overview_cell(summary, limits, browser=browser)",
    # the two most isolated parts: a click there cannot be taken for a neighbour
    "px = ov.scatter.positions_px()\n"
    "ok = np.isfinite(px).all(axis=1)\n"
    "gap = [np.sort(np.hypot(*(px[ok] - px[i]).T))[1] if ok[i] else -1 for i in range(len(px))]\n"
    "for target in np.argsort(gap)[::-1][:2]:\n"
    '    print("TARGET", ov.name_of(target), *(f"{v:.6f}" for v in ov.position(target)))',
]


def _write_notebook(path) -> None:
    nbformat = pytest.importorskip("nbformat")
    nb = nbformat.v4.new_notebook(metadata={"kernelspec": {
        "name": "python3", "display_name": "Python 3", "language": "python"}})
    nb.cells = [nbformat.v4.new_code_cell(c) for c in CELLS]
    nbformat.write(nb, str(path))


def test_click_on_a_part_selects_it_in_the_lot_browser(lab, tmp_path, latencies):  # noqa: F811
    """A real mouse click on a part's marker on the ipympl canvas selects that capture in
    the lot browser (its <select> and status line change, its figure redraws)."""
    root = lab[2]
    if not (ROOT / "demo_data" / "truth.json").exists():
        pytest.skip("demo_data/ has not been generated")
    (root / "demo_data").symlink_to(ROOT / "demo_data")  # read only
    _write_notebook(root / "overview.ipynb")
    expect = pw.expect
    panel, fig = ".sb-lot-browser", ".sb-overview-figure"
    timings: dict[str, float] = {}
    with _notebook_page(lab, tmp_path, "overview.ipynb") as page:
        lines = page.locator(".jp-OutputArea-output", has_text="TARGET")
        expect(lines).to_have_count(1, timeout=90_000)
        targets = re.findall(r"TARGET (\S+) ([0-9.]+) ([0-9.]+)", lines.inner_text())
        assert len(targets) == 2, lines.inner_text()
        status = page.locator(f"{panel} .sb-status")
        expect(status).to_contain_text("0 captures", timeout=30_000)
        before = _settled_canvas(page, ".sb-lot-figure")
        _settled_canvas(page, fig)
        for k, (name, fx, fy) in enumerate(targets):
            canvas = page.locator(f"{fig} canvas").first
            canvas.scroll_into_view_if_needed()
            box = canvas.bounding_box()
            assert box and box["width"] > 300, box
            t0 = time.perf_counter()
            page.mouse.click(box["x"] + float(fx) * box["width"],
                             box["y"] + float(fy) * box["height"])
            expect(page.locator(".sb-overview-status")).to_contain_text(name, timeout=30_000)
            expect(status).to_contain_text("1 capture ·", timeout=30_000)
            chosen = page.locator(f"{panel} .sb-select select").evaluate(
                "s => [...s.selectedOptions].map(o => o.textContent.replace(/\\s+/g, ' '))")
            assert len(chosen) == 1 and chosen[0].split(" · ")[0] == name, (name, chosen)
            before = _until_changed(page, ".sb-lot-figure", before, t0,
                                    f"open from overview {k + 1}", timings)
        assert page.locator(".sb-overview .sb-message").inner_text() == ""
        page.locator(".sb-overview").scroll_into_view_if_needed()
        _shot(page, tmp_path, "lot_overview", page.locator(".sb-overview"))
    latencies += [(1601, k, v) for k, v in timings.items()]
