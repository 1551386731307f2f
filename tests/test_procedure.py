"""Procedure files (kit.batch.procedure): reading, writing, validation."""

from __future__ import annotations

import pytest

import kit
from kit.batch.procedure import Procedure, ProcedureError, dumps_toml

EXAMPLE = """
name = "incoming discs"
[import]
method = "reflection"
name_pattern = "{lot}-{serial}"
[[correction]]
kind = "osl"
open = "standards/open.s1p"
short = "standards/short.s1p"
load = "standards/load.s1p"
load_ohms = 50.0
[fit]
model = "bvd"
span_hz = [1.8e6, 2.4e6]
modes = 1
[limits]
fs_hz = { min = 1.9e6, max = 2.1e6 }
"""


def test_the_documented_example_reads(tmp_path):
    """The example of the issue's procedure format reads, with paths relative to the file."""
    p = tmp_path / "proc.toml"
    p.write_text(EXAMPLE)
    proc = kit.Procedure.from_file(p)
    assert proc.import_["name_pattern"] == "{lot}-{serial}"
    assert proc.corrections[0]["kind"] == "osl"
    assert proc.resolve(proc.corrections[0]["open"]) == tmp_path / "standards" / "open.s1p"
    assert proc.fit == {"model": "bvd", "span_hz": (1.8e6, 2.4e6), "modes": 1}
    lim = proc.limits_object()
    assert lim.quantities[0].name == "fs_hz" and lim.quantities[0].min == 1.9e6


def test_round_trip_through_a_file_in_another_folder(tmp_path):
    """to_file then from_file gives the same procedure; standard paths follow the file's folder."""
    src = tmp_path / "a" / "proc.toml"
    src.parent.mkdir()
    src.write_text(EXAMPLE)
    proc = Procedure.from_file(src)
    dst = proc.to_file(tmp_path / "b" / "c" / "saved.toml")
    again = Procedure.from_file(dst)
    assert again.to_dict()["fit"] == proc.to_dict()["fit"]
    assert again.limits == proc.limits
    assert again.resolve(again.corrections[0]["short"]) .resolve() == (tmp_path / "a" / "standards" / "short.s1p").resolve()


@pytest.mark.parametrize("text, match", [
    ("[import]\nmethod = 'sideways'\n", "sideways"),
    ("[[correction]]\nkind = 'magic'\n", "unknown kind 'magic'"),
    ("[fit]\nspan_hz = [3e6, 1e6]\n", "low < high"),
    ("[limits]\nfs_hz = 3\n", "fs_hz must be a table with min and/or max"),
    ("[extras]\na = 1\n", "unknown key 'extras'"),
    ("[import\n", "not valid TOML"),
])
def test_bad_procedures_are_refused_with_the_file_named(tmp_path, text, match):
    """A bad procedure raises ProcedureError naming the file and the entry."""
    p = tmp_path / "bad.toml"
    p.write_text(text)
    with pytest.raises(ProcedureError, match=match) as info:
        Procedure.from_file(p)
    assert info.value.path == str(p)


def test_missing_standard_is_named(tmp_path):
    """A correction whose standard file is missing says which file."""
    p = tmp_path / "proc.toml"
    p.write_text(EXAMPLE)
    with pytest.raises(ProcedureError, match="open standard .*open.s1p does not exist"):
        Procedure.from_file(p).build_corrections()


def test_toml_writer_escapes_text():
    """Strings with quotes, backslashes and newlines survive the TOML writer (read back by tomllib)."""
    import tomllib

    doc = {"name": 'a "b" \\ c\nd', "import": {"method": "reflection"}, "fit": {"span_hz": [1.0, 2.5]}}
    assert tomllib.loads(dumps_toml(doc)) == doc


def test_fit_keys_follow_kit_fit():
    """The [fit] keys a procedure accepts are exactly kit.fit's settings (no drift)."""
    import inspect

    from kit.batch.procedure import FIT_KEYS
    from kit.resonators.fitting import fit

    named = [n for n, p in inspect.signature(fit).parameters.items()
             if p.kind not in (p.VAR_KEYWORD, p.VAR_POSITIONAL)
             and n not in ("capture", "z", "method", "port", "keep_data", "name")]
    assert set(FIT_KEYS) - {"z_front", "z_back"} == set(named)
