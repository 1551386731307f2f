"""Process capability (Cp, Cpk) of a lot's values against their limits.

Source: NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6 "What is Process
Capability?" (definitions Cp = (USL - LSL) / 6s, Cpk = min(USL - mean, mean - LSL) / 3s).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kit.review.capability import Capability, capability


def _with_mean_std(mean: float, s: float) -> np.ndarray:
    """Four values with exactly this sample mean and sample standard deviation (ddof=1)."""
    z = np.array([-1.0, -1.0, 1.0, 1.0])
    z = z / np.std(z, ddof=1)
    return mean + s * z


def test_handbook_example():
    """NIST/SEMATECH e-Handbook 6.1.6 example (from memory: the page could not be looked
    up here): USL = 20, LSL = 8, mean = 16, s = 2 give Cp = 1.0, Cpl = 1.3333, Cpu =
    0.6667 and Cpk = 0.6667."""
    c = capability(_with_mean_std(16.0, 2.0), lower=8.0, upper=20.0)
    assert c.ok and c.n == 4
    assert c.mean == pytest.approx(16.0) and c.std == pytest.approx(2.0)
    assert c.cp == pytest.approx(1.0)
    assert c.cpl == pytest.approx(4 / 3)
    assert c.cpu == pytest.approx(0.6667, abs=5e-5)
    assert c.cpk == pytest.approx(0.6667, abs=5e-5)


def test_sample_std_matches_numpy_and_counts_beyond():
    """std is the sample standard deviation (numpy ddof=1); values beyond each bound and
    missing values are counted."""
    v = [1.0, 2.0, 3.0, 10.0, -4.0, math.nan, None]
    c = capability(v, lower=0.0, upper=5.0)
    finite = np.array([1.0, 2.0, 3.0, 10.0, -4.0])
    assert c.n == 5 and c.n_missing == 2
    assert c.std == pytest.approx(np.std(finite, ddof=1))
    assert (c.n_below, c.n_above) == (1, 1)


def test_one_sided_gives_cpk_only():
    """A lower bound alone gives Cpl = Cpk and no Cp (NIST 6.1.6: one-sided indices)."""
    c = capability(_with_mean_std(16.0, 2.0), lower=8.0)
    assert math.isnan(c.cp) and math.isnan(c.cpu)
    assert c.cpk == pytest.approx(4 / 3) == c.cpl
    assert "one-sided" in c.reason
    c = capability(_with_mean_std(16.0, 2.0), upper=20.0)
    assert c.cpk == pytest.approx(2 / 3) and math.isnan(c.cpl)


@pytest.mark.parametrize("values, why", [([], "at least two"), ([3.0], "at least two"),
                                         ([2.0, 2.0, 2.0], "standard deviation 0")])
def test_not_computable_gives_nan_with_reason(values, why):
    """Fewer than two values or no spread: NaN indices and a reason, no exception."""
    c = capability(values, lower=1.0, upper=4.0)
    assert not c.ok and math.isnan(c.cp) and math.isnan(c.cpk) and why in c.reason


def test_bounds_in_wrong_order_refused():
    """A lower bound above the upper one is an input error."""
    with pytest.raises(ValueError, match="above the upper"):
        capability([1.0, 2.0], lower=3.0, upper=1.0)


def test_result_round_trip():
    """Capability follows the result protocol: to_dict/from_dict and a text view."""
    c = capability([1.0, 2.0, 4.0], lower=0.0, upper=6.0, name="fs_hz")
    assert Capability.from_dict(c.to_dict()) == c
    assert "Cpk" in c.report()


finite = st.floats(-1e6, 1e6, allow_nan=False)


@settings(max_examples=60, deadline=None)
@given(st.lists(finite, min_size=2, max_size=40), finite, st.floats(1e-3, 1e6), finite)
def test_shift_invariance_and_cpk_below_cp(values, lo, width, shift):
    """Shifting values and bounds together leaves Cp and Cpk unchanged, and Cpk <= Cp for a
    two-sided limit (both follow from the definitions of NIST 6.1.6)."""
    v = np.array(values)
    hi = lo + width
    a = capability(v, lo, hi)
    b = capability(v + shift, lo + shift, hi + shift)
    if not a.ok or not b.ok or a.std < 1e-6 * (1 + np.max(np.abs(v))):
        return  # no spread (or lost to rounding): nothing to compare
    assert b.cp == pytest.approx(a.cp, rel=1e-6)
    assert b.cpk == pytest.approx(a.cpk, rel=1e-6, abs=1e-6 * abs(a.cp))
    assert a.cpk <= a.cp * (1 + 1e-12) + 1e-12
