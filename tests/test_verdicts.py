"""Reading a summary's joined verdict reasons back: reasons and kinds of reason.

The reasons are made by kit.review.verdicts itself (its wording is the one home), so the
check is the round trip: verdict() -> "; ".join(reasons) -> split_reasons / reason_kinds.
"""

from __future__ import annotations

import pytest

from kit.review.limits import parse_limits
from kit.review.verdicts import reason_kinds, split_reasons, verdict

LIMITS = parse_limits("[quantity.fs_hz]\nmin = 1.8e6\nmax = 1.9e6\n"
                      "[quantity.k_eff]\nmin = 0.1\nlabel = 'k (coupling)'\n"
                      "[[mask]]\nname = \"z'band\"\ncurve = 'z_mag_ohm'\nf_min_hz = 1.6e6\n"
                      "f_max_hz = 2.4e6\nupper = 1e4\n")


@pytest.mark.parametrize("row, kinds", [
    ({"fs_hz": 2.0e6, "k_eff": 0.2}, ["fs: above the maximum"]),
    ({"fs_hz": 1.7e6, "k_eff": 0.05}, ["fs: below the minimum", "k (coupling): below the minimum"]),
    ({"fs_hz": 1.85e6}, ["k (coupling): missing"]),
])
def test_round_trip_of_reasons(row, kinds):
    """The joined reasons split back into the verdict's reasons, and give one kind per
    failed or incomplete check (masks without a capture: "no capture")."""
    v = verdict(row, LIMITS)
    text = "; ".join(v.reasons)
    assert split_reasons(text) == v.reasons
    mask = "mask \"z'band\": no capture"
    assert reason_kinds(text) == kinds + [mask]


def test_passing_reasons_give_no_kind():
    """Reasons of checks that passed ("within limits") are not kinds of failure."""
    lim = parse_limits("[quantity.fs_hz]\nmin = 1.8e6\n")
    v = verdict({"fs_hz": 1.85e6}, lim)
    assert v.status == "pass" and reason_kinds("; ".join(v.reasons)) == []
    assert reason_kinds(None) == [] and reason_kinds(float("nan")) == []


def test_unknown_words_are_kept():
    """A reason in words the kit does not write is counted as "other", not lost."""
    assert reason_kinds("checked by hand: cracked electrode") == [
        "other: checked by hand: cracked electrode"]
