"""Real browser: JupyterLab on loopback, headless Debian Chromium driven by Playwright.

Runs the lot review notebook top to bottom, then uses the workbench as a person would
(select a capture, switch the chart, move the span, place a marker) and checks that the
readout and the figure change. Screenshots go to the test's tmp folder, and also to
``$SWEEPBOOK_SCREENSHOTS`` when that variable names a folder. Recipe:
/work/shared/reference/notebook-testing.md (sections 4 and 6).
"""

from __future__ import annotations

import json
import os
import secrets
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.parse
import urllib.request
from pathlib import Path

import pytest

pw = pytest.importorskip("playwright.sync_api", reason="the playwright package is not installed")
CHROMIUM = Path(os.environ.get("CHROMIUM", "/usr/bin/chromium"))
ROOT = Path(__file__).resolve().parents[1]
pytestmark = [
    pytest.mark.browser,
    pytest.mark.slow,
    pytest.mark.skipif(not CHROMIUM.exists(),
                       reason=f"Chromium not installed at {CHROMIUM} (apt-get install chromium)"),
]
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--host-resolver-rules=MAP * ~NOTFOUND , EXCLUDE 127.0.0.1"]
LAB = ["--no-browser", "--allow-root", "--ServerApp.ip=127.0.0.1",
       "--LabApp.expose_app_in_browser=True", "--LabApp.news_url=None",
       "--LabApp.extension_manager=readonly",
       "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate"]
RUN_ALL = """async () => { const nb = window.jupyterapp.shell.currentWidget; await nb.context.ready;
  await nb.sessionContext.ready; return window.jupyterapp.commands.execute('notebook:run-all-cells'); }"""
CANVAS = """(sel) => [...document.querySelectorAll(sel + ' canvas')].map(c => c.toDataURL()).join('|')"""
CHANGED = """([sel, before]) => { const s = [...document.querySelectorAll(sel + ' canvas')]
  .map(c => c.toDataURL()).join('|'); return s.length > 0 && s !== before; }"""


@pytest.fixture
def lab(tmp_path):
    """A private JupyterLab serving a copy of the notebooks folder and the demo data."""
    if not (ROOT / "demo_data" / "truth.json").exists():
        pytest.skip("demo_data/ has not been generated")
    root, cfg, log = tmp_path / "root", tmp_path / "cfg", tmp_path / "lab.log"
    (root / "notebooks").mkdir(parents=True)
    for nb in (ROOT / "notebooks").glob("*.ipynb"):
        shutil.copy(nb, root / "notebooks" / nb.name)          # never the originals
    (root / "demo_data").symlink_to(ROOT / "demo_data")          # read only by the notebooks
    tracker = cfg / "settings" / "@jupyterlab" / "notebook-extension"
    tracker.mkdir(parents=True)
    (tracker / "tracker.jupyterlab-settings").write_text(json.dumps({"windowingMode": "none"}))
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    token = secrets.token_hex(16)
    env = {**os.environ, "JUPYTER_CONFIG_DIR": str(cfg), "JUPYTER_RUNTIME_DIR": str(cfg / "rt"),
           "JUPYTERLAB_SETTINGS_DIR": str(cfg / "settings"),
           "JUPYTERLAB_WORKSPACES_DIR": str(cfg / "ws")}
    cmd = [sys.executable, "-m", "jupyter", "lab", f"--port={port}",
           f"--ServerApp.token={token}", f"--ServerApp.root_dir={root}", *LAB]
    with log.open("wb") as out:
        proc = subprocess.Popen(cmd, env=env, stdout=out, stderr=subprocess.STDOUT,
                                start_new_session=True)
        try:
            for _ in range(600):
                try:
                    urllib.request.urlopen(f"http://127.0.0.1:{port}/api/status?token={token}",
                                           timeout=1)
                    break
                except OSError:
                    assert proc.poll() is None, log.read_text()
                    time.sleep(0.2)
            else:
                pytest.fail("JupyterLab never answered:\n" + log.read_text())
            yield port, token, root
        finally:
            proc.terminate()
            try:
                proc.wait(20)
            except subprocess.TimeoutExpired:
                os.killpg(proc.pid, signal.SIGKILL)
                proc.wait()


def _shot(page, tmp_path, name, locator=None):
    path = tmp_path / f"{name}.png"
    (locator or page).screenshot(path=str(path))
    extra = os.environ.get("SWEEPBOOK_SCREENSHOTS")
    if extra:
        Path(extra).mkdir(parents=True, exist_ok=True)
        shutil.copy(path, Path(extra) / path.name)
    return path


def _until_changed(page, sel, before, what, timings):
    t0 = time.perf_counter()
    page.wait_for_function(CHANGED, arg=[sel, before], timeout=30_000)
    timings[what] = time.perf_counter() - t0
    return page.evaluate(CANVAS, sel)


def test_lot_review_notebook_in_a_real_browser(lab, tmp_path):
    """Run-all works; selecting, chart choice, span and marker each redraw the figure."""
    (port, token, root), hosts, expect = lab, set(), pw.expect
    fig = ".sb-lot-figure"
    timings: dict[str, float] = {}
    with pw.sync_playwright() as p:
        ctx = p.chromium.launch_persistent_context(
            str(tmp_path / "profile"), executable_path=str(CHROMIUM), headless=True, args=FLAGS,
            viewport={"width": 1400, "height": 1700})
        try:
            page = ctx.pages[0] if ctx.pages else ctx.new_page()
            page.on("request", lambda r: r.url.startswith("http")
                    and hosts.add(urllib.parse.urlsplit(r.url).netloc))
            page.goto(f"http://127.0.0.1:{port}/lab/tree/notebooks/01_lot_review.ipynb"
                      f"?token={token}")
            page.wait_for_function("window.jupyterapp?.shell.currentWidget?.sessionContext",
                                   timeout=90_000)
            assert page.evaluate(RUN_ALL) is True
            errors = page.locator(".jp-OutputArea-output[data-mime-type="
                                  "'application/vnd.jupyter.stderr']")
            assert "Error" not in " ".join(errors.all_inner_texts())
            expect(page.locator(f"{fig} canvas").first).to_be_visible(timeout=60_000)
            page.locator(".sb-workbench").scroll_into_view_if_needed()
            page.wait_for_timeout(800)  # ipympl settles its first frame
            before = page.evaluate(CANVAS, fig)

            status = page.locator(".sb-lot-browser .sb-status")
            expect(status).to_contain_text("3 captures", timeout=30_000)

            # select one capture in the list
            page.locator(".sb-lot-browser .sb-select select").select_option(label="pzd7-05 · 1601 pts")
            expect(status).to_contain_text("1 capture ·", timeout=30_000)
            before = _until_changed(page, fig, before, "select capture", timings)

            # switch the right-hand chart to R
            page.locator(".sb-lot-browser .sb-chart select").select_option(label="R")
            expect(status).to_contain_text("· R ·", timeout=30_000)
            before = _until_changed(page, fig, before, "switch chart", timings)

            # move the lower end of the span: one key press is one step of the slider
            readout = page.locator(".sb-lot-browser .sb-span .widget-readout")
            old_span = readout.inner_text()
            page.locator(".sb-lot-browser .sb-span .noUi-handle").first.focus()
            page.keyboard.press("PageUp")  # a large step (noUiSlider keyboard support)
            expect(readout).not_to_have_text(old_span, timeout=10_000)
            expect(status).not_to_contain_text(f"span {old_span.split()[0]}", timeout=30_000)
            before = _until_changed(page, fig, before, "move span", timings)

            # place a marker: the readout appears and the figure shows it
            page.locator(".sb-marker-kind select").select_option(label="minimum |Z|")
            page.locator("button.sb-marker-place").click()
            expect(page.locator(".sb-readout")).to_contain_text("M1", timeout=15_000)
            expect(status).to_contain_text("1 marker", timeout=15_000)
            text = page.locator(".sb-readout").inner_text()
            assert "MHz" in text and "Ω" in text and "VSWR" in text
            assert "pzd7-05" in page.locator(".sb-marker-table").inner_text()
            _until_changed(page, fig, before, "place marker", timings)
            assert page.locator(".sb-marker-target select").input_value() == "pzd7-05"
            page.locator(".sb-lot-figure").scroll_into_view_if_needed()
            shot = _shot(page, tmp_path, "lot_review_workbench", page.locator(".sb-workbench"))
            assert shot.stat().st_size > 20_000
            assert page.locator(".sb-message").first.inner_text() == ""
        finally:
            ctx.close()
    print("interaction -> figure updated [ms]:",
          {k: round(1e3 * v) for k, v in timings.items()})
    assert hosts == {f"127.0.0.1:{port}"}, hosts
