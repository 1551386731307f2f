"""The demo scenario (kit.batch.demo): deterministic, small, physically consistent."""

from __future__ import annotations

import json

import numpy as np

import kit
from kit.batch import demo


def test_regenerating_reproduces_the_committed_files(tmp_path, demo_dir):
    """python -m kit.batch.demo with fixed seeds writes the same numbers as the committed demo_data/."""
    demo.generate(tmp_path)
    committed = sorted(p.relative_to(demo_dir) for p in demo_dir.rglob("*.s?p"))
    fresh = sorted(p.relative_to(tmp_path) for p in tmp_path.rglob("*.s?p"))
    assert committed == fresh and len(committed) >= 12 + 12 + 3 + 1 + 3
    for rel in committed:
        a, b = kit.load(demo_dir / rel), kit.load(tmp_path / rel)
        np.testing.assert_array_equal(a.f_hz, b.f_hz)
        np.testing.assert_allclose(a.s, b.s, rtol=1e-9, atol=1e-12)
    assert json.loads((demo_dir / "truth.json").read_text()) == json.loads(
        (tmp_path / "truth.json").read_text())


def test_demo_is_small(demo_dir):
    """The demo data stay under 5 MB."""
    assert sum(p.stat().st_size for p in demo_dir.rglob("*") if p.is_file()) < 5e6


def test_plate_elements_have_the_lossless_resonance(demo_dir):
    """Each element's true impedance has its |Z| minimum near the lossless fs from
    kt^2 tan(x)/x = 1, x = pi fs/(2 fp) (IEEE Std 176-1987, from memory for the clause)."""
    truth = json.loads((demo_dir / "truth.json").read_text())
    for name, p in truth["elements"].items():
        cap = kit.load(demo_dir / "truth" / f"{name}_dut.s1p")
        z = kit.impedance(cap)
        f_min = cap.f_hz[np.argmin(np.abs(z))]
        # losses move the minimum by a fraction of the half-power width 1/(2 Qm)
        assert abs(f_min - p["lossless_fs_hz"]) / p["lossless_fs_hz"] < 0.5 / p["qm"], name


def test_lossless_pair_reproduces_the_kt_table():
    """kt = 0.5, fp = 2 MHz gives fs = 1 773 939.818 Hz (methods sheet section 1.4, computed from IEEE 176's relation)."""
    fs, fp = demo.lossless_pair(0.5, 2e6)
    assert abs(fs - 1_773_939.818) < 0.01 and fp == 2e6
