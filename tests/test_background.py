"""A panel's run in a background thread (kit.ui.background), checked inside a real kernel.

pytest alone cannot show that the kernel stays free: a test calls the panel from its own
thread. Here a real IPython kernel (ipykernel, driven with jupyter_client as a notebook
frontend would) runs the procedure panel on a lot of 208 captures with two worker
processes. While the run goes, the kernel must execute other cells, the progress bar's new
values must reach the frontend as widget comm messages (the Jupyter widget message
protocol: a "comm_msg" with method "update" and the changed state), and a click sent the
way a browser sends it (a "comm_msg" with method "custom" and content {"event": "click"}
to the Cancel button's model) must stop the run with nothing written.
"""

from __future__ import annotations

import json
import os
import queue
import shutil
import time
from pathlib import Path

import pytest

pytest.importorskip("ipywidgets")
jc = pytest.importorskip("jupyter_client", reason="the kernel check needs jupyter_client")
pytest.importorskip("ipykernel", reason="the kernel check needs ipykernel")

ROOT = Path(__file__).resolve().parents[1]


class Frontend:
    """The little of a notebook frontend this check needs: run a cell, collect comm updates."""

    def __init__(self, cwd: Path) -> None:
        from jupyter_client.manager import start_new_kernel

        env = {**os.environ, "PYTHONPATH": str(ROOT)}
        self.km, self.kc = start_new_kernel(kernel_name="python3", env=env, cwd=str(cwd))
        self.updates: list[tuple[str, dict]] = []

    def _take(self, m: dict) -> None:
        if m["msg_type"] == "comm_msg" and m["content"]["data"].get("method") == "update":
            self.updates.append((m["content"]["comm_id"], m["content"]["data"]["state"]))

    def run(self, code: str, timeout: float = 120) -> str:
        msg_id = self.kc.execute(code)
        out = []
        while True:
            m = self.kc.get_iopub_msg(timeout=timeout)
            self._take(m)
            if m["parent_header"].get("msg_id") != msg_id:
                continue
            if m["msg_type"] == "stream":
                out.append(m["content"]["text"])
            elif m["msg_type"] == "error":
                raise AssertionError("\n".join(m["content"]["traceback"]))
            elif m["msg_type"] == "status" and m["content"]["execution_state"] == "idle":
                return "".join(out).strip()

    def click(self, model_id: str) -> None:
        msg = self.kc.session.msg("comm_msg", {"comm_id": model_id, "data": {
            "method": "custom", "content": {"event": "click"}}})
        self.kc.session.send(self.kc.shell_channel.socket, msg)

    def drain(self, seconds: float) -> None:
        end = time.monotonic() + seconds
        while time.monotonic() < end:
            try:
                self._take(self.kc.get_iopub_msg(timeout=0.1))
            except queue.Empty:
                pass

    def close(self) -> None:
        self.kc.stop_channels()
        self.km.shutdown_kernel(now=True)


def test_the_kernel_stays_free_and_cancel_arrives_as_a_click(demo_dir, tmp_path):
    lot = tmp_path / "lot"
    lot.mkdir()
    for k in range(16):  # 208 captures: the demo lot 16 times under new lot names
        for src in sorted((demo_dir / "lot").glob("*.s1p")):
            shutil.copy(src, lot / src.name.replace("pzd7-", f"pzd{k + 10}-").replace(
                "check_resistor", f"check_resistor{k:02d}"))
    fe = Frontend(tmp_path)
    try:
        ids = fe.run(f"""
import json
from kit.ui.procedure_panel import procedure_panel
p = procedure_panel({str(lot)!r}, display=False, standards={str(demo_dir)!r}, use_cache=False)
p.workers.value = 2
p.out.value = {str(tmp_path / "out")!r}
print(json.dumps([p.job.progress.model_id, p.job.cancel_button.model_id, p.run_button.model_id]))
""")
        bar, cancel, run = json.loads(ids)
        fe.click(run)  # the user presses Run on folder
        deadline = time.monotonic() + 300
        while True:  # cells keep running while the lot runs
            state = json.loads(fe.run("print(json.dumps([p.job.state, p.job.progress.value]))"))
            if state[0] == "running" and state[1] >= 16:
                break
            assert state[0] in ("idle", "running") and time.monotonic() < deadline, state
            fe.drain(0.3)
        fe.click(cancel)  # the user presses Cancel
        fe.drain(1.0)
        end = json.loads(fe.run("p.wait(120); print(json.dumps([p.job.state, p.result is None, "
                                "p.message.last]))"))
        assert end[0] == "cancelled" and end[1] and "of 208 capture(s)" in end[2], end
        assert not (tmp_path / "out").exists()
        values = [s["value"] for cid, s in fe.updates if cid == bar and "value" in s]
        assert values and max(values) >= 16, fe.updates  # the bar moved in the frontend
    finally:
        fe.close()
