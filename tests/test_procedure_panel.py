"""Procedure panel (kit.ui.procedure_panel): controls -> procedure file -> batch run.

The panel holds no computation of its own, so its checks are against the kit functions it
wires (a Procedure built in Python, kit.batch.run) and against the standard library's TOML
reader (tomllib) as an independent parser of the text it shows and saves.
"""

from __future__ import annotations

import shutil
import tomllib

import pandas as pd
import pytest

pytest.importorskip("ipywidgets")

import kit  # noqa: E402
from kit import batch  # noqa: E402
from kit.batch.procedure import Procedure, ProcedureError  # noqa: E402
from kit.ui.procedure_panel import ProcedurePanel, procedure_panel, summary_html  # noqa: E402

LIMITS = {"fs_hz": {"min": 1.8e6, "max": 1.9e6}, "k_eff": {"min": 0.4}}


def python_procedure(demo_dir):
    """The procedure the tests set in the panel, written directly in Python."""
    std = (demo_dir / "standards").resolve()
    return Procedure(import_={"method": "reflection", "port": 1, "name_pattern": "{lot}-{serial}"},
                     corrections=[{"kind": "osl", "open": str(std / "open.s1p"),
                                   "short": str(std / "short.s1p"),
                                   "load": str(std / "load.s1p"), "load_ohms": 50.0}],
                     fit={"model": "bvd", "span_hz": (1.6e6, 2.3e6), "modes": 1},
                     limits=LIMITS)


def set_controls(panel):
    """Set the panel as a user would for the demo lot."""
    panel.method.value = "reflection"
    panel.name_pattern.value = "{lot}-{serial}"
    panel.compensation.value = "open/short/load"
    panel.model.value = "bvd"
    panel.span_lo_mhz.value, panel.span_hi_mhz.value = 1.6, 2.3
    panel.modes.value = 1
    panel.limits["fs_hz"][0].value = "1.8e6"
    panel.limits["fs_hz"][1].value = "1.9e6"
    panel.limits["k_eff"][0].value = "0.4"


@pytest.fixture
def small_lot(demo_dir, tmp_path):
    """Two demo elements copied into a folder of their own (a short run)."""
    lot = tmp_path / "lot"
    lot.mkdir()
    for n in ("pzd7-01.s1p", "pzd7-04.s1p"):
        shutil.copy(demo_dir / "lot" / n, lot / n)
    return lot


@pytest.fixture
def panel(demo_dir, small_lot, tmp_path):
    """A panel over the small lot with the demo standards, no cache."""
    p = procedure_panel(small_lot, display=False, standards=demo_dir,
                        path=str(tmp_path / "saved" / "proc.toml"), use_cache=False)
    set_controls(p)
    return p


def comparable(summary):
    """A summary without the columns that name the run rather than the results."""
    return summary.drop(columns=[c for c in ("corrections",) if c in summary.columns])


def test_standards_are_preselected_from_their_file_names(demo_dir, small_lot):
    """Files named open, short and load under the standards folder are picked by default."""
    p = procedure_panel(small_lot, display=False, standards=demo_dir)
    assert p.compensation.value == "open/short/load"
    assert p.open.value.endswith("open.s1p") and p.load.value.endswith("load.s1p")


def test_controls_give_the_python_procedure(panel, demo_dir):
    """What the user set is the same procedure as one written in Python."""
    assert panel.procedure().to_dict() == python_procedure(demo_dir).to_dict()
    assert not panel.message.last


def test_shown_toml_parses_to_the_procedure(panel):
    """The TOML shown in the panel reads back (tomllib) to the procedure's data."""
    text = panel.toml_text()
    doc = tomllib.loads(text)
    assert doc["limits"] == LIMITS
    assert doc["fit"]["span_hz"] == [1.6e6, 2.3e6]
    assert "1600000.0" in panel.toml.value


def test_user_text_is_escaped_in_the_toml_view(panel):
    """A name pattern holding markup is shown as text, not as HTML."""
    panel.name_pattern.value = "<b>{lot}</b>-{serial}"
    assert "&lt;b&gt;" in panel.toml.value and "<b>{lot}" not in panel.toml.value


def test_save_then_load_gives_the_same_procedure(panel, demo_dir, small_lot, tmp_path):
    """Save writes the file; a fresh panel that loads it holds the same procedure."""
    panel.save_button.click()
    saved = tmp_path / "saved" / "proc.toml"
    assert saved.is_file() and not panel.message.last
    rel = tomllib.loads(saved.read_text())["correction"][0]["open"]
    assert (saved.parent / rel).resolve() == (demo_dir / "standards" / "open.s1p").resolve()
    other = procedure_panel(small_lot, display=False, standards=demo_dir, path=str(saved),
                            use_cache=False)
    other.compensation.value = "off"
    other.model.value = "(no fit)"
    other.load_button.click()
    assert not other.message.last or other.message.kind == "note"
    assert other.procedure().to_dict() == panel.procedure().to_dict()
    assert other.limits["k_eff"][0].value == "0.4" and other.limits["k_eff"][1].value == ""


def test_saved_file_runs_like_the_python_procedure(panel, demo_dir, small_lot):
    """kit.batch.run on the saved file gives the summary of the Python-built procedure."""
    saved = panel.save()
    from_file = batch.run(saved, small_lot, workers=1, use_cache=False, progress=False)
    direct = batch.run(python_procedure(demo_dir), small_lot, workers=1, use_cache=False,
                       progress=False)
    pd.testing.assert_frame_equal(comparable(from_file.summary), comparable(direct.summary))
    assert set(direct.summary["verdict"]) == {"pass", "fail"}  # pzd7-04 is the odd one out


def test_run_button_shows_the_batch_summary(panel, demo_dir, small_lot):
    """Run on folder calls kit.batch.run (in a background thread) and shows its summary,
    a status line and a full progress bar."""
    panel.run_button.click()
    assert panel.wait(timeout=300)
    assert not panel.message.last, panel.message.last
    assert panel.job.progress.value == panel.job.progress.max == 2
    assert panel.job.count.value == "2 / 2" and panel.job.state == "done"
    direct = batch.run(python_procedure(demo_dir), small_lot, workers=1, use_cache=False,
                       progress=False)
    pd.testing.assert_frame_equal(comparable(panel.result.summary), comparable(direct.summary))
    assert "2 capture(s), 0 error row(s)" in panel.status.value
    assert "pzd7-04" in panel.table.value and "<th>verdict</th>" in panel.table.value


def test_run_writes_the_outputs_when_a_folder_is_typed(panel, tmp_path):
    """With an output folder typed, the run writes summary, provenance and report there."""
    panel.out.value = str(tmp_path / "out")
    panel.run()
    names = {p.name for p in (tmp_path / "out").iterdir()}
    assert {"summary.csv", "provenance.json", "report.html"} <= names


def test_bad_bound_goes_to_the_message_bar_and_nothing_is_written(panel, tmp_path):
    """A bound that is not a number is a message in the panel; Save writes no file."""
    panel.limits["qm"][0].value = "about fifty"
    assert panel.message.kind == "error" and "qm min" in panel.message.last
    panel.save_button.click()
    assert panel.message.kind == "error"
    assert not (tmp_path / "saved" / "proc.toml").exists()


def test_missing_folder_and_missing_standard_are_messages(panel):
    """Running with no folder or saving with no open standard reports it, never raises."""
    panel.folder.value = ""
    panel.run_button.click()
    assert "folder to run on" in panel.message.last
    assert panel.job.state == "idle" and not panel.run_button.disabled
    panel.open.value = "(none)"
    assert "pick the open standard" in panel.message.last


def test_loading_a_procedure_the_panel_cannot_show_is_refused(panel, tmp_path):
    """A procedure with a fixture step is refused with a message; the controls stay."""
    bad = tmp_path / "fixture.toml"
    bad.write_text('[[correction]]\nkind = "port_extension"\ndelay_s = 1e-10\n')
    before = panel.procedure().to_dict()
    panel.path.value = str(bad)
    panel.load_button.click()
    assert panel.message.kind == "error" and "edit it as a file" in panel.message.last
    assert panel.procedure().to_dict() == before


def test_settings_without_a_control_are_kept(panel, tmp_path):
    """Loading keeps a resonance span, extra fit options and other limits in what is saved."""
    src = tmp_path / "extra.toml"
    src.write_text('name = "night run"\n[resonance]\nspan_hz = [1.5e6, 2.5e6]\n'
                   '[fit]\nmodel = "bvd"\nspan_hz = [1.7e6, 2.2e6]\nweighting = "uniform"\n'
                   '[limits]\nfp_hz = { min = 2.0e6 }\nl1_h = { max = 1e-4 }\n')
    proc = panel.load_file(src)
    again = panel.procedure()
    assert again.resonance == proc.resonance and again.name == "night run"
    assert again.fit["weighting"] == "uniform" and again.limits["l1_h"] == {"max": 1e-4}
    assert panel.limits["fp_hz"][0].value == "2000000.0"
    assert panel.message.kind == "note"


def test_description_and_limits_file_survive_load_and_save(panel, tmp_path):
    """A procedure with a description and a limits file (docs/procedure.md, top-level keys),
    loaded into the panel and saved, reads back equal: tomllib reads both files to the same
    document, and the limits file is still the one named."""
    (tmp_path / "limits.toml").write_text('[quantity.qm]\nmin = 50.0\n')
    first = panel.save(tmp_path / "first.toml")
    src = tmp_path / "src.toml"
    src.write_text('description = "lot B, after the fixture change"\n'
                   'limits_file = "limits.toml"\n' + first.read_text())
    loaded = panel.load_file(src)
    again = panel.save(tmp_path / "again.toml")
    assert tomllib.loads(again.read_text()) == tomllib.loads(src.read_text())
    back = Procedure.from_file(again)
    assert back.to_dict() == loaded.to_dict()
    assert back.description == "lot B, after the fixture change"
    assert back.limits_object().quantities == loaded.limits_object().quantities
    assert [q.name for q in back.limits_object().quantities] == ["qm", "fs_hz", "k_eff"]


def test_from_panels_takes_the_corrections_and_fit_settings(demo_dir, small_lot):
    """A panel built from a corrections panel and a fit panel holds their settings."""
    from kit.ui.corrections_panel import corrections_panel
    from kit.ui.fit_panel import fit_panel

    corr = corrections_panel(demo_dir, display=False, interactive=False)
    fitp = fit_panel([kit.load(small_lot / "pzd7-01.s1p")], display=False)
    fitp.set_span(1.7e6, 2.2e6)
    p = ProcedurePanel.from_panels(corrections=corr, fit=fitp, source=small_lot,
                                    use_cache=False)
    assert isinstance(p, ProcedurePanel)
    proc = p.procedure()
    c = proc.corrections[0]
    assert c["kind"] == "osl" and c["open"] == str((demo_dir / "standards" / "open.s1p").resolve())
    assert proc.fit["model"] == "bvd" and proc.fit["span_hz"] == pytest.approx((1.7e6, 2.2e6))
    assert proc.fit["weighting"] == fitp.weighting.value


def test_summary_table_escapes_names():
    """Capture names and errors in the summary table are escaped."""
    df = pd.DataFrame({"capture": ["<script>x</script>"], "status": ["error"],
                       "error": ["bad & worse"], "fs_hz": [float("nan")]})
    out = summary_html(df)
    assert "&lt;script&gt;" in out and "<script>" not in out and "bad &amp; worse" in out


# --------------------------------------------------------------------- the run in the background
class Gate:
    """Wraps kit.batch.engine.run so that the run's first progress report waits until the
    test opens the gate: the states while a run goes can then be looked at without a race.
    The run itself is the real one."""

    def __init__(self, monkeypatch):
        import threading

        from kit.batch import engine

        self.reached, self.open = threading.Event(), threading.Event()
        real = engine.run

        def gated(*args, on_progress=None, **kwargs):
            def report(done, total):
                self.reached.set()
                assert self.open.wait(timeout=120), "the test never opened the gate"
                on_progress(done, total)

            return real(*args, on_progress=report, **kwargs)

        monkeypatch.setattr(engine, "run", gated)


def test_the_button_returns_at_once_and_the_buttons_follow_the_run(panel, monkeypatch):
    """While the run goes, this thread (the kernel's) is free, Run is disabled, Cancel is
    enabled and a second start is refused with a message; afterwards both come back."""
    gate = Gate(monkeypatch)
    panel.run_button.click()
    assert gate.reached.wait(timeout=60)
    assert panel.job.running and panel.run_button.disabled
    assert not panel.job.cancel_button.disabled
    assert panel.result is None and not panel.wait(timeout=0.05)
    panel.run_button.click()  # a second start (a disabled button can still be clicked in code)
    assert "run is in progress" in panel.message.last
    panel.message.clear()
    gate.open.set()
    assert panel.wait(timeout=300)
    assert panel.job.state == "done" and not panel.message.last, panel.message.last
    assert not panel.run_button.disabled and panel.job.cancel_button.disabled
    assert list(panel.result.summary["capture"]) == ["pzd7-01", "pzd7-04"]


def test_cancel_keeps_no_result_and_writes_nothing(panel, monkeypatch, tmp_path):
    """Cancel while the run goes: the run stops (kit.io.pool.Cancelled), no result is kept,
    the output folder is not written, a note says so and the buttons come back."""
    gate = Gate(monkeypatch)
    panel.out.value = str(tmp_path / "out")
    panel.run_button.click()
    assert gate.reached.wait(timeout=60)
    panel.job.cancel_button.click()
    assert panel.job.cancel_button.disabled  # a second click has nothing to do
    gate.open.set()
    assert panel.wait(timeout=300)
    assert panel.job.state == "cancelled" and panel.result is None
    assert panel.message.kind == "note" and "cancelled after 0 of 2" in panel.message.last
    assert not (tmp_path / "out").exists()
    assert not panel.run_button.disabled and panel.job.cancel_button.disabled


def test_a_failing_run_is_a_message_and_the_buttons_come_back(panel, tmp_path):
    """A folder that does not exist fails inside the background run: the reason goes to
    the message bar (kit.batch.run's own words), nothing is kept."""
    panel.folder.value = str(tmp_path / "nowhere")
    panel.run_button.click()
    assert panel.wait(timeout=60)
    assert panel.job.state == "error" and panel.result is None
    assert panel.message.kind == "error" and "does not exist" in panel.message.last
    assert panel.status.value == "run failed" and not panel.run_button.disabled


def test_run_from_a_script_waits_and_raises(panel, tmp_path):
    """run() (block=True) returns the result as it always did; a failure raises there."""
    result = panel.run()
    assert result is panel.result and len(result.summary) == 2
    panel.folder.value = str(tmp_path / "nowhere")
    with pytest.raises(ProcedureError, match="does not exist"):
        panel.run()


# --------------------------------------------------------------------- starting from the data
def test_controls_start_from_the_folder(demo_dir):
    """Over the demo lot the pattern and the span come from its files
    (kit.resonators.starts.lot_start, tested against published crystal data), not from
    numbers written into the panel."""
    from kit.resonators.starts import lot_start

    p = procedure_panel(demo_dir / "lot", display=False, use_cache=False)
    s = lot_start(demo_dir / "lot")
    assert p.name_pattern.value == s.pattern == "{lot}-{serial}"
    lo, hi = (from_mhz(v) for v in (p.span_lo_mhz.value, p.span_hi_mhz.value))
    assert (lo, hi) == pytest.approx(s.span_hz, abs=50.0)  # shown to 100 Hz
    assert "around the resonance found" in p.start_note.value
    assert p.procedure().fit["span_hz"] == pytest.approx([lo, hi])


def test_other_names_give_another_pattern(demo_dir, tmp_path):
    """Files named batch_A_07 give {lot}_{field2}_{serial}, not the demo's pattern."""
    lot = tmp_path / "run"
    lot.mkdir()
    for i, n in enumerate(("pzd7-01.s1p", "pzd7-02.s1p", "pzd7-03.s1p")):
        shutil.copy(demo_dir / "lot" / n, lot / f"batch_{'AB'[i % 2]}_{i + 7:02d}.s1p")
    p = procedure_panel(lot, display=False, use_cache=False)
    assert p.name_pattern.value == "{lot}_{field2}_{serial}"
    fields, _ = kit.io.names.parse_name("batch_A_07", p.name_pattern.value)
    assert fields == {"lot": "batch", "field2": "A", "serial": "07"}


def test_without_a_folder_the_fit_takes_the_whole_sweep():
    """No folder: no pattern, the span 0 to 0, and the procedure fits the whole sweep."""
    p = procedure_panel(None, display=False, use_cache=False)
    assert p.name_pattern.value == "" and (p.span_lo_mhz.value, p.span_hi_mhz.value) == (0, 0)
    assert "span_hz" not in p.procedure().fit and "whole sweep" in p.start_note.value


def from_mhz(v):
    """MHz to Hz (the panel shows MHz)."""
    return float(v) * 1e6
