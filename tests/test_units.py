"""Units by name and engineering scaling (kit.units), against the SI brochure's prefixes."""

from __future__ import annotations

import math

import numpy as np
import pytest

from kit.units import eng, from_unit, scale_for, to_unit, unit_of


@pytest.mark.parametrize("name, unit", [
    ("fs_hz", "Hz"), ("zm_ohm", "Ω"), ("g_max_siemens", "S"), ("c0_f", "F"), ("l1_h", "H"),
    ("start_s", "s"), ("return_loss_db", "dB"), ("phase_deg", "°"), ("C0", "F"), ("R1", "Ω"),
    ("L1", "H"), ("ESR", "Ω"), ("ESL", "H"), ("Cp", "F"), ("Rs", "Ω"), ("k_eff", ""),
    ("qm", ""), ("kt", ""), ("tan_delta", ""),
])
def test_unit_of_follows_the_suffix_rule(name, unit):
    """One suffix, one unit: `_s` is seconds and siemens is `_siemens` (docs/nomenclature.md)."""
    assert unit_of(name) == unit


def test_scale_for_uses_si_prefixes():
    """Prefixes by powers of 1000 (BIPM SI brochure, 9th ed., Table 7)."""
    assert scale_for([1.6e6, 2.4e6], "Hz") == (1e-6, "MHz")
    assert scale_for([2e-3, 5e-4], "S") == (1e3, "mS")
    assert scale_for([math.nan], "Hz") == (1.0, "Hz")


def test_eng_prints_prefixed_values():
    """3.9e-8 H is 39 nH; 3.316e-6 H is 3.316 µH; NaN reads 'not found'."""
    assert eng(3.9e-8, "H") == "39 nH"
    assert eng(3.316e-6, "H") == "3.316 µH"
    assert eng(math.nan, "H") == "not found"


def test_display_units_follow_the_si_prefixes():
    """mS, MHz, ns and ps scale by 1e3, 1e-6, 1e9 and 1e12 (BIPM SI brochure, 9th ed., Table 7)."""
    assert to_unit(2e-3, "mS") == pytest.approx(2.0)
    assert to_unit(3.2e-9, "ns") == pytest.approx(3.2)
    assert np.allclose(to_unit([1.5e6, 2e6], "MHz"), [1.5, 2.0])
    assert from_unit(1.5, "MHz") == pytest.approx(1.5e6)
    assert from_unit(12.0, "ps") == pytest.approx(12e-12)
    assert to_unit(7.0, "Hz") == 7.0
    with pytest.raises(ValueError, match="unit"):
        to_unit(1.0, "Mhz")
