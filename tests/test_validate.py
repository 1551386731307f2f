"""Procedure validation against files and inputs (kit.batch.validate), limits files in a
procedure (kit.batch.procedure.Procedure.limits_object)."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

from kit.batch.procedure import Procedure, ProcedureError
from kit.batch.validate import validate

DOC = Path(__file__).resolve().parents[1] / "docs" / "procedure.md"


def doc_example() -> str:
    """The complete example of docs/procedure.md (its first TOML block)."""
    return re.search(r"```toml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.S).group(1)


@pytest.fixture
def demo_proc(tmp_path, demo_dir):
    """The documented example saved next to a copy of the demo standards."""
    shutil.copytree(demo_dir / "standards", tmp_path / "standards")
    p = tmp_path / "proc.toml"
    p.write_text(doc_example())
    return p


def line_of(text: str, needle: str) -> int:
    """1-based line where ``needle`` starts in ``text`` (counted, not guessed)."""
    return text[:text.index(needle)].count("\n") + 1


def codes(problems):
    return [p.code for p in problems]


def test_the_documented_example_is_clean_and_judges_the_demo_lot(demo_proc, demo_dir):
    """The example of docs/procedure.md validates clean against the demo lot, and its limits
    fail exactly the parts demo_data/README.md describes as damaged (04 cracked, 07 de-poled,
    10 bad contact) and the check resistor, passing the others."""
    from kit.batch.engine import run

    assert validate(demo_proc, [demo_dir / "lot"]) == []
    s = run(demo_proc, demo_dir / "lot", workers=1, use_cache=False).summary
    failed = set(s.loc[s["verdict"] != "pass", "capture"])
    assert failed == {"pzd7-04", "pzd7-07", "pzd7-10", "check_resistor"}


def test_a_span_in_mhz_or_khz_is_refused_against_the_demo_lot(demo_proc, demo_dir):
    """Spans written in MHz or kHz where hertz are meant are refused; with the inputs the
    message states their range, 1 to 3 MHz by demo_data/README.md, and the fix."""
    text = demo_proc.read_text()
    demo_proc.write_text(text.replace("[resonance]\nspan_hz = [1.6e6, 2.3e6]",
                                      "[resonance]\nspan_hz = [1.6, 2.3]")
                         .replace("[fit]\nmodel = \"bvd\"\nspan_hz = [1.6e6, 2.3e6]",
                                  "[fit]\nmodel = \"bvd\"\nspan_hz = [1600.0, 2300.0]"))
    probs = validate(demo_proc, [demo_dir / "lot"])
    assert codes(probs) == ["span-in-mhz", "span-outside-inputs"]
    mhz, khz = probs
    now = demo_proc.read_text()
    assert mhz.line == line_of(now, "span_hz = [1.6, 2.3]")
    assert "write [1.6e6, 2.3e6] for MHz" in mhz.fix
    assert khz.line == line_of(now, "span_hz = [1600.0") and "1 MHz to 3 MHz" in khz.message
    assert "kHz written for Hz: write [1.6e+06, 2.3e+06]" in khz.fix
    # a span in hertz but beside the captures' range is named too
    demo_proc.write_text(text.replace("span_hz = [1.6e6, 2.3e6]\nmodes", "span_hz = [5e6, 6e6]\nmodes"))
    (p,) = validate(demo_proc, [demo_dir / "lot"])
    assert p.code == "span-outside-inputs" and "inside the captures' range" in p.fix
    assert validate(demo_proc) == []  # without inputs the range is unknown


def test_missing_standard_and_unknown_model_and_unproduced_column(demo_proc):
    """A missing standard (path taken from the procedure's folder), a fit model that does not
    exist (the valid ones listed) and limits on columns the run does not fill
    (docs/nomenclature.md) are each named, at their line, in one pass."""
    (demo_proc.parent / "standards" / "short.s1p").unlink()
    text = doc_example().replace('model = "bvd"', 'model = "bvd-lossy"').replace(
        "qm = { min = 50 }", "qn = { min = 50 }")
    demo_proc.write_text(text)
    probs = validate(demo_proc)
    by = {p.code: p for p in probs}
    assert set(by) == {"missing-file", "unknown-model", "limit-column"}
    assert by["missing-file"].line == line_of(text, "short =") and str(demo_proc.parent / "standards" / "short.s1p") in \
        by["missing-file"].message
    assert "did you mean 'bvd-loss'" in by["unknown-model"].fix
    assert "bvd, bvd-loss, multi, plate, bar, inductor, capacitor" in by["unknown-model"].fix
    assert by["limit-column"].line == line_of(text, "qn =") and "did you mean 'qm'" in by["limit-column"].fix
    # c0_f is filled only by a fit: without [fit] a bound on it is refused
    no_fit = re.sub(r"\[fit\]\n(.*\n){3}", "", doc_example())
    demo_proc.write_text(no_fit)
    (p,) = [p for p in validate(demo_proc) if p.code == "limit-column"]
    assert "c0_f" in p.message and "add a [fit] table" in p.fix


def test_toml_syntax_error_names_its_line(tmp_path):
    """A TOML syntax error (TOML v1.0: a table header must close) is one problem with its line."""
    p = tmp_path / "p.toml"
    p.write_text('name = "x"\n\n[fit\nmodel = "bvd"\n')
    (prob,) = validate(p)
    assert prob.code == "toml-syntax" and prob.line == 3 and prob.path == str(p)


def test_a_procedure_object_and_its_limits_file(tmp_path, demo_dir):
    """limits_file (top level, relative to the procedure) is merged with [limits]; the file's
    own problems name the limits file and line; a column in both is refused (docs/procedure.md)."""
    (tmp_path / "limits.toml").write_text(
        'name = "lot B"\n[quantity.fs_hz]\nmin = 1.8e6\nmax = 1.9e6\n'
        '[[mask]]\nname = "low"\ncurve = "z_mag_ohm"\nf_min_hz = 1e6\nf_max_hz = 1.5e6\nlower = 20.0\n')
    p = tmp_path / "proc.toml"
    p.write_text('limits_file = "limits.toml"\n[limits]\nk_eff = { min = 0.4 }\n')
    proc = Procedure.from_file(p)
    lim = proc.limits_object()
    assert [q.name for q in lim.quantities] == ["fs_hz", "k_eff"] and lim.masks[0].name == "low"
    assert lim.name == "lot B"
    assert validate(proc, [demo_dir / "lot"]) == []
    # written elsewhere, the path follows the file
    again = Procedure.from_file(proc.to_file(tmp_path / "sub" / "saved.toml"))
    assert again.limits_file == "../limits.toml" and again.limits_object() == lim.__class__(
        lim.quantities, lim.masks, lim.name, again.limits_object().source)
    # a changed limits file is a changed procedure (cached verdicts are not reused)
    before = proc.digest()
    (tmp_path / "limits.toml").write_text('[quantity.fs_hz]\nmin = 1.7e6\n')
    assert proc.digest() != before
    # a bound in both places is refused, by the validator and when read
    (tmp_path / "limits.toml").write_text('[quantity.k_eff]\nmin = 0.3\n[quantity.qmm]\nmin = 5\n')
    probs = validate(p)
    assert {(Path(x.path).name, x.code, x.line) for x in probs} == {
        ("proc.toml", "duplicate-limit", 3), ("limits.toml", "limit-column", 3)}
    with pytest.raises(ProcedureError, match="k_eff limited both"):
        Procedure.from_file(p)
    # a missing limits file is refused at once
    p.write_text('limits_file = "nowhere.toml"\n')
    (prob,) = validate(p)
    assert prob.code == "missing-file" and prob.line == 1
    with pytest.raises(ProcedureError, match="limits file not found"):
        Procedure.from_file(p)


def test_missing_inputs_are_problems(tmp_path, demo_proc):
    """Inputs that do not exist, or a folder without captures, are problems naming them."""
    (tmp_path / "empty").mkdir()
    probs = validate(demo_proc, [tmp_path / "nope", tmp_path / "empty"])
    assert codes(probs) == ["no-inputs", "no-inputs"]
    assert probs[0].path == str(tmp_path / "nope") and "holds no Touchstone" in probs[1].message


def test_only_number_fields_of_the_name_pattern_take_limits(tmp_path):
    """A plain ``{serial}`` field is text (kit/io/names.py: "{serial} keeps '01'"), so a bound
    on it is refused as a column the summary has no number in; ``{serial:int}`` gives an
    integer column, which a bound may judge."""
    p = tmp_path / "proc.toml"
    p.write_text('[import]\nname_pattern = "{lot}-{serial}"\n[limits]\nserial = { min = 1 }\n')
    (prob,) = validate(p)
    assert prob.code == "limit-column" and "'serial'" in prob.message and prob.line == 4
    p.write_text('[import]\nname_pattern = "{lot}-{serial:int}"\n[limits]\nserial = { min = 1 }\n')
    assert validate(p) == []


def test_the_validator_and_the_reader_say_the_same_of_standards_and_double_limits(tmp_path):
    """One check each (common practice, no source: one rule must not say two things): every
    missing standard the validator lists is in the error of building the correction, and
    every bound or mask it finds both inline and in the limits file (a mask without a name
    is "mask1", docs/limits.md) is in the error of reading the limits, in the same words."""
    p = tmp_path / "proc.toml"
    p.write_text('[[correction]]\nkind = "osl"\nopen = "o.s1p"\nshort = "s.s1p"\n'
                 'load = "l.s1p"\n')
    proc = Procedure.from_file(p)
    probs = validate(p)
    assert [x.code for x in probs] == ["missing-file"] * 3
    with pytest.raises(ProcedureError) as err:
        proc.build_corrections()
    assert all(f"{x.message} ({x.fix})" in str(err.value) for x in probs)

    (tmp_path / "limits.toml").write_text(
        '[quantity.k_eff]\nmin = 0.3\n[quantity.fs_hz]\nmin = 1e6\n'
        '[[mask]]\ncurve = "z_mag_ohm"\nf_min_hz = 1e6\nf_max_hz = 2e6\nlower = 1.0\n')
    p.write_text('limits_file = "limits.toml"\n[limits]\nk_eff = { min = 0.4 }\n'
                 'fs_hz = { max = 2e6 }\n[[limits.mask]]\nname = "mask1"\ncurve = "z_mag_ohm"\n'
                 'f_min_hz = 1e6\nf_max_hz = 2e6\nupper = 1e3\n')
    probs = validate(p)
    assert [(x.code, x.line) for x in probs] == [("duplicate-limit", 3), ("duplicate-limit", 4),
                                                 ("duplicate-limit", 5)]
    with pytest.raises(ProcedureError) as err:
        Procedure.from_file(p)
    assert all(f"{x.message} ({x.fix})" in str(err.value) for x in probs)
    assert "mask 'mask1'" in str(err.value)


def test_python_callers_are_refused_limits_on_columns_the_run_will_not_fill(tmp_path):
    """Procedure.from_dict (what kit.batch.run takes from Python) refuses a bound on a column
    the summary will not have (docs/procedure.md, "[limits]"), inline or in the limits file,
    with the validator's message."""
    from kit.batch.engine import run

    doc = {"limits": {"qn": {"min": 50}, "c0_f": {"max": 1e-9}}}
    (want_qn, want_c0) = validate(doc)
    with pytest.raises(ProcedureError) as err:
        Procedure.from_dict(doc)
    assert want_qn.message in str(err.value) and want_c0.message in str(err.value)
    assert "did you mean 'qm'" in str(err.value) and "add a [fit] table" in str(err.value)
    with pytest.raises(ProcedureError, match="'qn'"):  # a Procedure made directly, too
        run(Procedure(limits=doc["limits"]), tmp_path, use_cache=False)
    (tmp_path / "limits.toml").write_text('[quantity.fs_hz]\nmin = 1e6\n[quantity.qmm]\nmin = 5\n')
    (tmp_path / "proc.toml").write_text('limits_file = "limits.toml"\n')
    (prob,) = validate(tmp_path / "proc.toml")
    with pytest.raises(ProcedureError) as err:
        Procedure.from_dict({"limits_file": "limits.toml"}, base_dir=tmp_path)
    assert prob.message in str(err.value) and "did you mean 'qm'" in str(err.value)


def test_a_checked_procedure_with_problems_does_not_run(tmp_path, demo_proc, demo_dir):
    """kit.batch.run refuses a Checked that did not pass, with the validator's problems, and
    runs one that did (the documented example on the demo lot, docs/procedure.md)."""
    from kit.batch.engine import run
    from kit.batch.validate import check

    ok = check(demo_proc, [demo_dir / "lot"])
    assert ok.problems == [] and ok.procedure.source == str(demo_proc)
    assert len(ok.inputs) == len(list((demo_dir / "lot").glob("*.s1p")))
    assert run(ok, ok.inputs, workers=1, use_cache=False).stats["errors"] == 0
    demo_proc.write_text(demo_proc.read_text().replace('model = "bvd"', 'model = "bdv"'))
    bad = check(demo_proc)
    assert bad.procedure is None and [p.code for p in bad.problems] == ["unknown-model"]
    with pytest.raises(ProcedureError, match="'bdv' does not exist"):
        run(bad, [demo_dir / "lot"], use_cache=False)
