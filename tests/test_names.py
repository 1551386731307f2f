"""kit.io.names: name patterns, their fields, and the pattern guessed from a folder's names.

No standard governs file names; the checks are that a guessed pattern reads every name of
the shape back into its parts (kit.io.names.parse_name), on invented names, on generated
ones (hypothesis) and on the names of a published dataset (../shared/realdata).
"""

from __future__ import annotations

import pytest
from conftest import realdata_path
from hypothesis import given, settings
from hypothesis import strategies as st

from kit.io.names import guess_pattern, parse_name, stem_of


def test_lot_and_serial_are_told_and_an_odd_name_is_left_out():
    """Part names of one shape give {lot}-{serial}; a check resistor's name is left out."""
    names = ["pzd7-01", "pzd7-02", "pzd7-12", "check_resistor"]
    pattern = guess_pattern(names)
    assert pattern == "{lot}-{serial}"
    fields, finding = parse_name("pzd7-01", pattern)
    assert fields == {"lot": "pzd7", "serial": "01"} and finding is None


def test_parts_that_do_not_differ_stay_literal_and_others_become_fields():
    """A constant middle or last part stays text; a differing middle part is a field."""
    assert guess_pattern(["lotA-01-raw", "lotA-02-raw"]) == "{lot}-{serial}-raw"
    assert guess_pattern(["a_x_1", "a_y_2", "a_x_3"]) == "{lot}_{field2}_{serial}"


@pytest.mark.parametrize("names", [[], ["pzd7-01"], ["x", "y"], ["a-1", "a-1"],
                                   ["-01", "-02"]])
def test_no_pattern_when_none_can_be_told(names):
    """One name, names without separators, or names that never differ give None."""
    assert guess_pattern(names) is None


def test_braces_in_a_name_do_not_become_pattern_syntax():
    """A constant part holding braces is read as a field, not as pattern text."""
    pattern = guess_pattern(["x-{t}-1", "x-{t}-2"])
    assert pattern == "{lot}-{field2}-{serial}"
    assert parse_name("x-{t}-2", pattern)[0]["field2"] == "{t}"


_part = st.text(alphabet="abcXYZ0123456789", min_size=1, max_size=5)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(_part, _part, _part), min_size=2, max_size=12, unique=True),
       st.sampled_from(["-", "_", " ", "-_"]))
def test_a_guessed_pattern_reads_every_name_back(rows, sep):
    """For any names of one shape, each part comes back as a field or as the literal text."""
    names = [sep.join(r) for r in rows]
    pattern = guess_pattern(names)
    assert pattern is not None  # the rows are unique, so some part differs
    for name, parts in zip(names, rows):
        fields, finding = parse_name(name, pattern)
        assert finding is None, (name, pattern)
        assert pattern.format(**fields) == name
        last = max(i for i in range(3) if len({r[i] for r in rows}) > 1)
        assert fields["serial"] == parts[last]


def test_the_published_crystal_files_give_mode_and_temperature():
    """The crystal dataset's names (C100_25C, B100_40C, ...) give a pattern that reads the
    mode and the temperature of every file (../shared/realdata/crystal-series-through,
    README: "the temperature and the mode are only in the file name")."""
    folder = realdata_path("crystal-series-through")
    stems = [stem_of(p) for p in sorted(folder.glob("*.s2p"))]
    pattern = guess_pattern(stems)
    assert pattern == "{lot}_{serial}"
    read = [parse_name(s, pattern)[0] for s in stems]
    assert {r["lot"] for r in read} == {"B100", "C100", "C300"}
    assert {r["serial"] for r in read} >= {f"{t}C" for t in range(20, 70, 5)}
