"""The procedure format's keys and its file-free checks (kit.batch.schema)."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st

from kit.batch.schema import accepted_keys, key_lines, structure_problems

DOC = Path(__file__).resolve().parents[1] / "docs" / "procedure.md"


def documented_keys() -> dict[str, set[str]]:
    """Keys of every table of docs/procedure.md marked ``<!-- keys: NAME -->``."""
    text = DOC.read_text(encoding="utf-8")
    out = {}
    for m in re.finditer(r"<!-- keys: (\S+) -->\n((?:\|.*\n)+)", text):
        rows = m.group(2).splitlines()[2:]  # header and rule
        out[m.group(1)] = {re.match(r"\|\s*`([^`]+)`", r).group(1) for r in rows}
    return out


def test_every_accepted_key_is_documented_and_nothing_else():
    """docs/procedure.md documents exactly the keys the validator accepts, table by table
    (so neither can drift from the other)."""
    assert documented_keys() == {k: set(v) for k, v in accepted_keys().items()}


#: kit.osl's arguments as documented in docs/procedure.md ([[correction]] kind "osl").
OSL_KEYS = {"open", "short", "load", "load_ohms", "open_c_f", "short_l_h", "load_l_h",
            "resample", "passivity_tol"}


def test_correction_keys_are_the_kit_functions_arguments():
    """The keys of an "osl" correction are the arguments of kit.osl, written out here (the
    schema reads them off the signature, so a test against the signature would check it
    against itself): the three standards, the load's resistance, the standards' parasitics."""
    assert set(accepted_keys()["correction.osl"]) - {"kind"} == OSL_KEYS


def test_every_problem_at_once_with_lines():
    """Several problems of one document are all reported, each at the line of its key
    (lines counted by hand in the text below)."""
    text = ('[import]\nmethod = "reflekshun"\n'          # 1-2
            '[[correction]]\nkind = "osl"\nopen = "o.s1p"\n'  # 3-5
            '[[correction]]\nkind = "cabel"\n'            # 6-7
            '[fit]\nmodel = "bvd"\nmodez = 2\nspan_hz = [2.4e6, 1.6e6]\n')  # 8-11
    probs = structure_problems(tomllib.loads(text), "p.toml", text)
    where = {(p.code, p.line) for p in probs}
    assert ("bad-value", 2) in where                      # method, with the nearest one
    assert ("missing-key", 3) in where                    # osl needs short and load
    assert ("unknown-kind", 7) in where
    assert ("unknown-key", 10) in where
    assert ("span-reversed", 11) in where
    assert all(p.path == "p.toml" and p.fix for p in probs)
    said = " ".join(f"{p.message} {p.fix}" for p in probs)
    assert "did you mean 'reflection'" in said and "did you mean 'modes'" in said
    assert "did you mean 'cable'" in said and "swap the ends: [1.6e+06, 2.4e+06]" in said


_NAME = st.from_regex(r"[a-z][a-z0-9_]{0,8}", fullmatch=True)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(_NAME, st.lists(_NAME, min_size=1, max_size=4, unique=True)),
                min_size=1, max_size=4, unique_by=lambda t: t[0]),
       st.integers(0, 2))
def test_key_lines_find_every_key(tables, blank):
    """key_lines gives the line of each table header and key of TOML text that tomllib reads
    (TOML v1.0: [table] headers, [[array]] tables, bare keys); blank lines and comments vary."""
    lines, where = [], {}
    for i, (name, keys) in enumerate(tables):
        lines += [""] * blank + ["# a comment", f"[[{name}]]" if i % 2 else f"[{name}]"]
        where[(name,) + ((0,) if i % 2 else ())] = len(lines)
        for k in keys:
            lines.append(f"{k} = 1  # value")
            where[(name,) + ((0,) if i % 2 else ()) + (k,)] = len(lines)
    text = "\n".join(lines) + "\n"
    tomllib.loads(text)  # the text is valid TOML
    found = key_lines(text)
    for path, line in where.items():
        assert found[path] == line


def test_nearest_key_counts_a_swap_as_one_edit():
    """A swap of neighbouring letters is one edit (Damerau, Comm. ACM 7(3), 1964): 'modle'
    suggests 'model', not 'modes' (difflib alone scores both alike)."""
    from kit.batch.procedure import FIT_KEYS
    from kit.batch.schema import nearest

    assert nearest("modle", FIT_KEYS) == "model" and nearest("mode", FIT_KEYS) == "modes"
    assert nearest("zzzz", FIT_KEYS) is None
