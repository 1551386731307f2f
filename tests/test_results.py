"""The result protocol (kit.results): dict round trip, missing values as NaN, escaped HTML."""

from __future__ import annotations

import json
import math
from dataclasses import dataclass

import numpy as np

from kit.results import Result, nan_if_none, plain


@dataclass(frozen=True)
class _Toy(Result):
    fs_hz: float
    z_ohm: complex = 0j
    flags: tuple[str, ...] = ()
    name: str = "toy"
    ok: bool = True
    reason: str = ""
    _ROWS = (("fs_hz", "fs", "Hz"), ("z_ohm", "Z", "ohm"))


def test_round_trip_through_json():
    """to_dict is JSON data and from_dict gives back an equal object (tuples, complex kept)."""
    r = _Toy(1.5e6, 3 - 4j, ("poor-fit", "multi"), "pzd<1>")
    again = _Toy.from_dict(json.loads(json.dumps(r.to_dict())))
    assert again == r


def test_missing_values_are_nan_and_say_not_found():
    """None and non-numbers become NaN; a NaN row reads 'not found'; a failed result gives its reason."""
    assert math.isnan(nan_if_none(None)) and math.isnan(nan_if_none("x"))
    r = _Toy(math.nan, ok=False, reason="no conductance peak in the span")
    text = r.report()
    assert "not found" in text and "no conductance peak in the span" in text


def test_html_is_escaped():
    """User text (a capture name) is escaped in the HTML view."""
    html = _Toy(1.0, name="<script>x</script>")._repr_html_()
    assert "<script>" not in html and "&lt;script&gt;" in html


def test_plain_converts_numpy():
    """numpy scalars and arrays become Python numbers and lists."""
    assert plain({"a": np.float64(2.0), "b": np.arange(3), "c": (1, 2)}) == {
        "a": 2.0, "b": [0, 1, 2], "c": [1, 2]}
