"""kit.resonators.starts: the fit span and name pattern a lot's analysis starts from."""

from __future__ import annotations

import numpy as np
import pytest
import skrf
from conftest import realdata_path

from kit.resonators.starts import WIDEN, lot_start, suggest_span


def test_crystal_span_holds_the_published_maximum_of_s21():
    """On the published crystal sweeps (../shared/realdata/crystal-series-through, README
    table: maximum |S21| of C100 at 3.388438-3.388594 MHz over 20-65 degC) the span is
    built around fs at that maximum, and the other sweep ranges are left out."""
    folder = realdata_path("crystal-series-through")
    s = lot_start(folder, method="series-through", sample=21)
    assert s.files == 21 and s.pattern == "{lot}_{serial}"
    assert s.read >= 3 and "other sweep ranges left out" in s.basis
    # the larger group of one sweep range is C100 or B100; fs lies on its published row
    published = {"C100": (3.388438e6, 3.388594e6), "B100": (3.723906e6, 3.728594e6)}
    lo_pub, hi_pub = min(published.values(), key=lambda r: abs(r[0] - s.fs_hz))
    step = 200e3 / 6400  # 6401 points over 200 kHz (README)
    assert lo_pub - step <= s.fs_hz <= hi_pub + step
    assert s.span_hz[0] < lo_pub and s.span_hz[1] > s.fp_hz > s.fs_hz
    d = s.fp_hz - s.fs_hz
    assert s.span_hz == pytest.approx((s.fs_hz - WIDEN * d, s.fp_hz + WIDEN * d))


def test_span_is_clipped_to_the_range_every_capture_covers(demo_dir):
    """Each end of the span is inside the captures' common range (two sweeps cut apart)."""
    from kit.io.touchstone import load

    a = load(demo_dir / "lot" / "pzd7-01.s1p")
    f = a.network.f
    cut = a.network[(f >= 1.7e6) & (f <= 2.6e6)]
    s = suggest_span([a.network, cut])
    assert s.common_hz == (pytest.approx(cut.f[0]), pytest.approx(cut.f[-1]))
    assert s.common_hz[0] <= s.span_hz[0] < s.fs_hz < s.fp_hz < s.span_hz[1] <= s.common_hz[1]


def test_without_a_resonance_the_span_is_the_common_range():
    """A 100 ohm resistor has no fs and fp: the span is the whole common range, said so."""
    freq = skrf.Frequency(1, 3, 201, "MHz")
    gamma = np.full((201, 1, 1), (100 - 50) / (100 + 50), dtype=complex)  # Γ = (Z - Z0)/(Z + Z0)
    s = suggest_span([skrf.Network(frequency=freq, s=gamma, name="r100")])
    assert s.span_hz == (1e6, 3e6) and "no resonance pair" in s.basis


def test_no_capture_and_an_empty_folder_are_plain_errors(tmp_path):
    """Nothing to read is a sentence naming what to do, not a traceback deep inside."""
    with pytest.raises(ValueError, match="give at least one"):
        suggest_span([])
    with pytest.raises(ValueError, match="no Touchstone file"):
        lot_start(tmp_path)


def test_demo_folder_gives_its_pattern_and_a_span_around_the_lot(demo_dir):
    """The demo lot's names give {lot}-{serial}; the span holds every part's fs and fp
    (demo_data/truth.json, invented data: a plausibility check beside the crystal one)."""
    import json

    truth = json.loads((demo_dir / "truth.json").read_text())["elements"]
    s = lot_start(demo_dir / "lot", sample=13)
    assert s.pattern == "{lot}-{serial}"
    fs = [v["lossless_fs_hz"] for v in truth.values() if "lossless_fs_hz" in v]
    fp = [v["fp_hz"] for v in truth.values() if "fp_hz" in v]
    assert len(fs) == len(fp) == 12
    assert s.span_hz[0] < min(fs) and s.span_hz[1] > max(fp)
