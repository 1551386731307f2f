"""Interaction latency of the lot browser in a real browser (JupyterLab, ipympl, Chromium).

For captures of 1601 and of 100,001 points the script starts a private JupyterLab on
loopback, opens a notebook with one lot browser and pin panel per length, and drives each
browser from headless Chromium (Playwright): span slider, right-view change, capture change
and pin placement. The first three are measured twice: going somewhere new each time (a
span, a view or a part not shown before, so that the chart's band of the figure is drawn)
and going back and forth between two states with nothing else changing (the band's kept
picture is restored, :class:`kit.views.blit.BlitLayers`). Each interaction is timed in the
page itself, from the first DOM event of the action (pointer, key, input or change, caught
in the capture phase) to the last frame that ipympl painted into the figure's canvas
before the figure stayed quiet for ``QUIET_MS`` (``drawImage`` on the visible canvas,
hooked before the page loads). The median and 95th percentile per interaction are
printed; nothing is asserted on time.

Run: ``PYTHONPATH=$PWD .venv/bin/python bench/bench_browser.py [--repeat 15]``
(needs Chromium at /usr/bin/chromium or ``$CHROMIUM``, and the playwright package; no
browser download: Playwright drives the Debian binary). The browser test
``tests/test_browser.py::test_lot_browser_latency_benchmark`` runs a short version.
Recipe: /work/shared/reference/notebook-testing.md (sections 4 and 6).
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import secrets
import signal
import socket
import subprocess
import sys
import tempfile
import time
import urllib.parse
import urllib.request
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
CHROMIUM = Path(os.environ.get("CHROMIUM", "/usr/bin/chromium"))
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--host-resolver-rules=MAP * ~NOTFOUND , EXCLUDE 127.0.0.1"]
LAB = ["--no-browser", "--allow-root", "--ServerApp.ip=127.0.0.1",
       "--LabApp.expose_app_in_browser=True", "--LabApp.news_url=None",
       "--LabApp.extension_manager=readonly",
       "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate"]
RUN_ALL = """async () => { const nb = window.jupyterapp.shell.currentWidget; await nb.context.ready;
  await nb.sessionContext.ready; return window.jupyterapp.commands.execute('notebook:run-all-cells'); }"""
LENGTHS = (1601, 100_001)
QUIET_MS = 350  # the figure counts as updated when no frame followed for this long
INTERACTIONS = ("capture change, next", "capture change, back and forth", "view change, next",
                "view change, back and forth", "span slider, new span",
                "span slider, back and forth", "pin placement")

#: Installed before any page script: frames painted into a lot-browser canvas, and the
#: first user event of an action, both on the page's clock (performance.now()).
HOOK = """
(() => {
  window.__frames = [];
  window.__t0 = null;
  const draw = CanvasRenderingContext2D.prototype.drawImage;
  CanvasRenderingContext2D.prototype.drawImage = function (...args) {
    const c = this.canvas;
    const area = c && c.isConnected && c.closest && c.closest('[data-bench]');
    if (area && c.closest('.sb-lot-figure')) {
      window.__frames.push([area.getAttribute('data-bench'), performance.now()]);
    }
    return draw.apply(this, args);
  };
  for (const kind of ['pointerdown', 'mousedown', 'keydown', 'input', 'change', 'click']) {
    document.addEventListener(kind, (e) => {
      if (window.__t0 === null && e.target.closest && e.target.closest('[data-bench]')) {
        window.__t0 = performance.now();
      }
    }, true);
  }
})();
"""
#: Frames of one browser after an action, and the action's start: resolves once the
#: figure stayed quiet for QUIET_MS after at least one new frame.
SETTLED = """([bench, n0, quiet]) => {
  const f = window.__frames.slice(n0).filter(x => x[0] === bench);
  if (!f.length || window.__t0 === null) return null;
  const last = f[f.length - 1][1];
  if (performance.now() - last < quiet) return null;
  return {t0: window.__t0, first: f[0][1], last: last, frames: f.length};
}"""


def write_long_lot(folder: Path, n: int, count: int = 3) -> None:
    """``count`` invented BVD disc elements, ``n`` points each, as one-port Touchstone files."""
    import skrf

    from kit.capture import from_network
    from kit.io.writer import write_touchstone
    from kit.resonators.registry import get_model

    folder.mkdir(parents=True, exist_ok=True)
    f = np.linspace(1.5e6, 2.5e6, n)
    bvd = get_model("bvd").circuit
    for k in range(count):
        c1, r1 = 0.20e-9 * (1 + 0.05 * k), 9.0 + 3.0 * k
        l1 = 1.0 / ((2 * np.pi * 1.95e6) ** 2 * c1)           # series resonance near 1.95 MHz
        z = bvd.z(f, {"C0": 1.1e-9, "R1": r1, "L1": l1, "C1": c1})
        s11 = (z - 50.0) / (z + 50.0)
        name = f"long-{k + 1:02d}"
        ntwk = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=s11, z0=50.0,
                            name=name)
        write_touchstone(from_network(ntwk), folder / f"{name}.s1p")


#: Kernel side of each interaction: the browser's redraw (or pin update) is timed in the
#: kernel and appended to a log file, one line per call: "<points> <seconds>".
KERNEL_LOG = """
import time as _time
def _timed_calls(b, n, path):
    for name in ("redraw", "set_pins"):
        f = getattr(b, name)
        def timed(*a, _f=f, **k):
            t = _time.perf_counter()
            try:
                return _f(*a, **k)
            finally:
                with open(path, "a") as out:
                    out.write(f"{n} {_time.perf_counter() - t:.6f}\\n")
        setattr(b, name, timed)
"""


def write_notebook(path: Path, folders: dict[int, str], kernel_log: Path | None = None
                   ) -> None:
    """A notebook with one lot browser and pin panel per capture length, each in a box
    tagged ``data-bench=<points>`` (set from the kernel through a CSS class); with
    ``kernel_log``, each browser's redraws are timed in the kernel (:data:`KERNEL_LOG`)."""
    import nbformat

    cells = ["import warnings\n"
             'warnings.filterwarnings("ignore", category=DeprecationWarning)\n'
             "%matplotlib widget\n"
             "import ipywidgets as w\n"
             "from IPython.display import display\n"
             "from kit.ui.lot_browser import lot_browser\n"
             "from kit.ui.pins import pin_panel\n"
             "panels = {}"]
    if kernel_log is not None:
        cells.append(KERNEL_LOG)
    for n, folder in folders.items():
        timing = "" if kernel_log is None else f"_timed_calls(b, {n}, {str(kernel_log)!r})\n"
        cells.append(f"b = lot_browser({folder!r}, select=0, display=False)\n" + timing +
                     "p = pin_panel(b, display=False)\n"
                     f"panels[{n}] = (b, p)\n"
                     f"display(w.VBox([b.widget, p.widget]).add_class('bench-{n}'))")
    nb = nbformat.v4.new_notebook(metadata={"kernelspec": {
        "name": "python3", "display_name": "Python 3", "language": "python"}})
    nb.cells = [nbformat.v4.new_code_cell(c) for c in cells]
    nbformat.write(nb, str(path))


@contextlib.contextmanager
def lab_server(root: Path, scratch: Path, python_path: str | None = None):
    """A private JupyterLab on a free loopback port serving ``root``; yields (port, token)."""
    cfg, log = scratch / "cfg", scratch / "lab.log"
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
    if python_path:
        env["PYTHONPATH"] = python_path
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
                    if proc.poll() is not None:
                        raise RuntimeError("JupyterLab stopped:\n" + log.read_text()) from None
                    time.sleep(0.2)
            else:
                raise RuntimeError("JupyterLab never answered:\n" + log.read_text())
            yield port, token
        finally:
            proc.terminate()
            try:
                proc.wait(20)
            except subprocess.TimeoutExpired:
                os.killpg(proc.pid, signal.SIGKILL)
                proc.wait()


#: The actions driven, in order, as (capture length, interaction or "settle").
ORDER: list[tuple[int, str]] = []


def _timed(page, bench: str, action) -> float:
    """Run ``action()``; the time [s] from its first DOM event to the figure's last frame."""
    n0 = page.evaluate("() => { window.__t0 = null; return window.__frames.length; }")
    action()
    r = page.wait_for_function(SETTLED, arg=[bench, n0, QUIET_MS], timeout=60_000,
                               polling=20).json_value()
    if os.environ.get("BENCH_FRAMES"):
        print(f"{bench}: first frame {r['first'] - r['t0']:.0f} ms, last {r['last'] - r['t0']:.0f}"
              f" ms, {r['frames']} frames", file=sys.stderr)
    return (r["last"] - r["t0"]) / 1e3


def _settle(page, bench: str, action) -> None:
    _timed(page, bench, action)


def drive(page, n: int, repeat: int) -> dict[str, list[float]]:
    """Each interaction ``repeat`` times on the browser of length ``n``: latencies [s].

    Every interaction is measured two ways: going somewhere new (the next part of the lot,
    the next of the ten views, a span not shown before: the figure's band is drawn) and
    going back and forth between two states (the band's kept picture is restored)."""
    expect = __import__("playwright.sync_api", fromlist=["expect"]).expect
    area = f".bench-{n}"
    page.evaluate("(a) => document.querySelector(a).setAttribute('data-bench', a)", area)
    box = page.locator(area)
    fig = box.locator(".sb-lot-figure canvas").first
    expect(fig).to_be_visible(timeout=60_000)
    box.locator(".sb-lot-figure").scroll_into_view_if_needed()
    page.wait_for_timeout(800)  # ipympl settles its first frame
    select = box.locator(".sb-select select")
    labels = [o.strip() for o in select.locator("option").all_inner_texts()]
    chart = box.locator(".sb-chart select")
    views = [o.strip() for o in chart.locator("option").all_inner_texts()]
    handle = box.locator(".sb-span .noUi-handle").first
    out: dict[str, list[float]] = {k: [] for k in INTERACTIONS}
    parts = labels[1:] if len(labels) > 2 else labels
    for k in range(repeat):  # somewhere new each time: a new span, then a view and a part
        handle.focus()
        ORDER.extend([(n, "span slider, new span"), (n, "view change, next"),
                      (n, "capture change, next"), (n, "pin placement"), (n, "settle")])
        out["span slider, new span"].append(_timed(
            page, area, lambda: page.keyboard.press("ArrowRight")))
        out["view change, next"].append(_timed(
            page, area, lambda: chart.select_option(label=views[(k + 1) % len(views)])))
        out["capture change, next"].append(_timed(
            page, area, lambda: select.select_option(label=parts[(k + 1) % len(parts)])))
        out["pin placement"].append(_timed(
            page, area, lambda: box.locator("button.sb-pin-place").click()))
        _settle(page, area, lambda: box.locator("button.sb-pin-clear").click())
    ORDER.extend((n, what) for what in ["capture change, back and forth"] * repeat
                 + ["view change, back and forth"] * repeat
                 + ["span slider, back and forth"] * repeat)
    shown = "s => s.options[s.selectedIndex] ? s.options[s.selectedIndex].text.trim() : ''"
    pair = labels[:2] if select.evaluate(shown) != labels[0] else labels[1::-1]
    for k in range(repeat):  # back and forth between two parts, nothing else changing
        out["capture change, back and forth"].append(_timed(
            page, area, lambda: select.select_option(label=pair[k % 2])))
    pair = ["R", "|Z|"] if chart.evaluate(shown) != "R" else ["|Z|", "R"]
    for k in range(repeat):  # (each pair starts away from the state shown)
        out["view change, back and forth"].append(_timed(
            page, area, lambda: chart.select_option(label=pair[k % 2])))
    handle.focus()
    for k in range(repeat):
        out["span slider, back and forth"].append(_timed(
            page, area, lambda: page.keyboard.press(["PageUp", "PageDown"][k % 2])))
    return out


def kernel_times(log: Path) -> dict[int, dict[str, list[float]]]:
    """Kernel time [s] per length and interaction from the kernel log, paired in order
    with :data:`ORDER` (empty when the counts do not match)."""
    calls: dict[int, list[float]] = {}
    for line in log.read_text().splitlines():
        n, sec = line.split()
        calls.setdefault(int(n), []).append(float(sec))
    out: dict[int, dict[str, list[float]]] = {}
    for n, secs in calls.items():
        names = [what for m, what in ORDER if m == n]
        if len(names) != len(secs):
            continue
        for what, sec in zip(names, secs):
            if what != "settle":
                out.setdefault(n, {}).setdefault(what, []).append(sec)
    return out


def run(repeat: int = 15, lengths=LENGTHS, python_path: str | None = None,
        workdir: Path | None = None, screenshot: Path | None = None,
        kernel: dict | None = None) -> dict[int, dict[str, list[float]]]:
    """Latencies [s] per length and interaction (see :func:`drive`); a dict given as
    ``kernel`` receives the kernel's share of each (:func:`kernel_times`)."""
    from playwright.sync_api import sync_playwright

    with contextlib.ExitStack() as stack:
        if workdir is None:
            workdir = Path(stack.enter_context(tempfile.TemporaryDirectory()))
        root = workdir / "root"
        root.mkdir()
        folders: dict[int, str] = {}
        for n in lengths:
            if n == 1601 and (ROOT / "demo_data" / "lot").is_dir():
                (root / "demo_lot").symlink_to(ROOT / "demo_data" / "lot")  # read only
                folders[n] = "demo_lot"
            else:
                write_long_lot(root / f"lot_{n}", n)
                folders[n] = f"lot_{n}"
        log = workdir / "kernel.log" if kernel is not None else None
        write_notebook(root / "bench.ipynb", folders, log)
        ORDER.clear()
        port, token = stack.enter_context(lab_server(root, workdir, python_path))
        hosts: set[str] = set()
        results: dict[int, dict[str, list[float]]] = {}
        with sync_playwright() as p:
            ctx = p.chromium.launch_persistent_context(
                str(workdir / "profile"), executable_path=str(CHROMIUM), headless=True,
                args=FLAGS, viewport={"width": 1400, "height": 1700})
            try:
                ctx.add_init_script(HOOK)
                page = ctx.pages[0] if ctx.pages else ctx.new_page()
                page.on("request", lambda r: r.url.startswith("http")
                        and hosts.add(urllib.parse.urlsplit(r.url).netloc))
                page.goto(f"http://127.0.0.1:{port}/lab/tree/bench.ipynb?token={token}")
                page.wait_for_function("window.jupyterapp?.shell.currentWidget?.sessionContext"
                                       "?.session?.kernel", timeout=90_000)
                if page.evaluate(RUN_ALL) is not True:
                    raise RuntimeError("the benchmark notebook did not run")
                for n in lengths:
                    results[n] = drive(page, n, repeat)
                if screenshot is not None:
                    page.locator(f".bench-{lengths[0]}").screenshot(path=str(screenshot))
            finally:
                ctx.close()
        if hosts != {f"127.0.0.1:{port}"}:
            raise RuntimeError(f"the page contacted other hosts: {sorted(hosts)}")
        if log is not None and log.exists():
            kernel.update(kernel_times(log))
        return results


def table(results: dict[int, dict[str, list[float]]]) -> str:
    """Median and 95th percentile [ms] per length and interaction, as a Markdown table."""
    lines = ["| points | interaction | median [ms] | 95th percentile [ms] | runs |",
             "|---:|---|---:|---:|---:|"]
    for n, rows in results.items():
        for what, sec in rows.items():
            ms = 1e3 * np.asarray(sec)
            lines.append(f"| {n:,} | {what} | {np.median(ms):.0f} | "
                         f"{np.percentile(ms, 95):.0f} | {ms.size} |")
    return "\n".join(lines)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=15, help="runs of each interaction")
    ap.add_argument("--points", default=",".join(map(str, LENGTHS)),
                    help="capture lengths, comma separated")
    ap.add_argument("--kit", default=None,
                    help="folder put on the kernel's PYTHONPATH (default: this checkout)")
    args = ap.parse_args()
    if not CHROMIUM.exists():
        sys.exit(f"Chromium not found at {CHROMIUM}; install it (apt-get install chromium)")
    lengths = tuple(int(v) for v in args.points.split(","))
    kernel: dict = {}
    res = run(args.repeat, lengths, python_path=args.kit or str(ROOT), kernel=kernel)
    print("lot browser in JupyterLab + ipympl + headless Chromium: interaction -> figure "
          "updated (goal: median < 100 ms, 95th percentile < 150 ms)")
    print(table(res))
    if kernel:
        print("\nof which in the kernel (the browser's redraw, timed inside the kernel):")
        print(table(kernel))


if __name__ == "__main__":
    main()
