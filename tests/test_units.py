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
    """3.9e-8 H is 39 nH; 3.316e-6 H is 3.316 µH (BIPM SI brochure, 9th ed., Table 7); eng
    is quantity without trailing zeros: same prefix, rounding, minus sign (U+2212) and
    missing text."""
    assert eng(3.9e-8, "H") == "39 nH"
    assert eng(3.316e-6, "H") == "3.316 µH"
    assert eng(-4.7e-12, "F") == "\u22124.7 pF"
    assert eng(0.0, "Ω") == "0 Ω"
    assert eng(1.5e-7, "") == "1.5 × 10\u207b\u2077"
    assert eng(999.96, "Hz") == "1 kHz"  # rounds up into the next prefix, as quantity does
    assert eng(math.nan, "H") == "not available"


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


# -- the number formatter (kit.units.quantity, delta, percent, table) ----------------------------
#
# Sources: BIPM, The International System of Units (SI), 9th ed., 2019: decimal prefixes
# (Table 7); a space between number and unit, none before the degree of plane angle
# (section 5.4.3; 8th ed. section 5.3.3). JCGM 100:2008 (GUM) section 7.2.2: a result with
# its standard uncertainty; section 7.2.6: the uncertainty to at most two significant digits.
# The true minus sign is U+2212 (Unicode, "MINUS SIGN").

import re  # noqa: E402

from hypothesis import given  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from kit.units import PREFIXES, column_label, delta, percent, quantity, table  # noqa: E402

_PREFIX_OF = {p: e for e, p in PREFIXES.items() if p}
_NUMBER = re.compile(r"^([+−]?)(\d+)(?:\.(\d+))? ?(\S*)$")


def _last_place(x: float, digits: int) -> float:
    """Half of the last significant digit of x, by Python's own rounding ("e" format)."""
    exp = int(f"{abs(x):.{digits - 1}e}".split("e")[1])
    return 0.5 * 10.0 ** (exp - digits + 1)


def _read(text: str, unit: str) -> tuple[float, float]:
    """(value, half of the last printed digit) of a printed quantity, both in SI units."""
    m = _NUMBER.match(text)
    assert m, text
    sign, whole, frac, shown = m.groups()
    assert shown.endswith(unit), (text, unit)
    prefix = shown[: len(shown) - len(unit)]
    exp = _PREFIX_OF[prefix] if prefix else 0
    number = float(f"{whole}.{frac or 0}") * (-1 if sign == "−" else 1)
    return number * 10.0 ** exp, 0.5 * 10.0 ** (exp - len(frac or ""))


def test_quantity_prints_the_issue_examples():
    """The strings the issue asks for, to the character."""
    assert quantity(1975126.7, "Hz") == "1.975 MHz"
    assert quantity(2.05e6, "Hz") == "2.050 MHz"           # trailing zeros kept
    assert quantity(2.03226e-9, "F", stderr=1.5e-12) == "2.032 nF ± 1.5 pF"
    assert delta(-75126.7, "Hz", relative_to=1.95e6) == "−75.1 kHz (−3.9 %)"
    assert percent(75126.7 / 2.05e6) == "3.7 %"


def test_quantity_spacing_follows_the_si_brochure():
    """A space before every unit symbol, % and °C included, none before ° (SI brochure 5.4.3)."""
    assert quantity(30.123, "°") == "30.12°"
    assert quantity(21.5, "°C") == "21.50 °C"
    assert percent(0.5) == "50 %"
    assert quantity(12.3, "dB") == "12.30 dB"             # no prefix on dB: never "mdB"
    assert quantity(0.0123, "dB") == "0.01230 dB"
    assert quantity(1234.6, "") == "1235"


def test_uncertainty_rounds_the_value_to_its_last_digit():
    """u to two significant digits (GUM 7.2.6); the value not printed finer than u."""
    assert quantity(2.03226e-9, "F", stderr=3.1e-10) == "2.03 nF ± 310 pF"
    assert quantity(1.5, "", stderr=0.02) == "1.500 ± 0.020"
    assert quantity(1975126.7, "Hz", stderr=12.0) == "1.975 MHz ± 12 Hz"
    assert quantity(1975126.7, "Hz", stderr=math.nan) == "1.975 MHz ± not available"


@pytest.mark.parametrize("value", [None, math.nan, float("nan")])
def test_missing_values_read_not_available(value):
    assert quantity(value, "Hz") == "not available"
    assert delta(value, "Hz") == "not available"
    assert percent(value) == "not available"


def test_infinities_and_zero_have_clear_text():
    assert quantity(math.inf, "Hz") == "∞ Hz"
    assert quantity(-math.inf, "Ω") == "−∞ Ω"
    assert quantity(0.0, "Hz") == "0.000 Hz"
    assert quantity(-1e-30, "Hz", digits=2).startswith("−")


finite = st.floats(min_value=-1e14, max_value=1e14, allow_nan=False).filter(
    lambda x: abs(x) > 1e-16)


@given(finite, st.sampled_from(["Hz", "F", "Ω", "H", "S", "V"]), st.integers(1, 7))
def test_printed_number_reads_back_within_its_precision(x, unit, digits):
    """Parsing the print gives the value back within half its last digit; the sign is kept
    and the prefix puts the number between 1 and 1000 (inside the prefix range)."""
    text = quantity(x, unit, digits=digits)
    back, half = _read(text, unit)
    # "10 Hz" for 11 Hz at one digit: the printed decimals understate the rounding, which
    # is then that of the significant digits
    assert abs(back - x) <= max(half, _last_place(x, digits)) * (1 + 1e-9), text
    assert text.startswith("−") == (x < 0)
    assert "-" not in text  # never the hyphen-minus
    mantissa = abs(float(_NUMBER.match(text).group(2)))
    if 1e-15 <= abs(x) < 1e12:
        assert 1 <= mantissa < 1000, text


@given(finite, st.floats(min_value=1e-16, max_value=1e14))
def test_value_with_uncertainty_reads_back(x, u):
    """Both parts read back within their printed precision; u keeps two significant digits."""
    text = quantity(x, "F", stderr=u)
    value_text, u_text = text.split(" ± ")
    back, half = _read(value_text, "F")
    tol = max(half, _last_place(x, 4), _last_place(u, 2))  # never finer than u's last digit
    assert abs(back - x) <= tol * (1 + 1e-9), text
    ub, uhalf = _read(u_text, "F")
    assert abs(ub - u) <= max(uhalf, _last_place(u, 2)) * (1 + 1e-9), text
    assert abs(ub - u) <= 0.05 * u  # two significant digits: within 5 %


@given(st.floats(min_value=-1e9, max_value=1e9, allow_nan=False).filter(lambda x: x != 0),
       st.floats(min_value=1.0, max_value=1e10))
def test_delta_always_carries_its_sign(x, ref):
    text = delta(x, "Hz", relative_to=ref)
    assert text[0] == ("+" if x > 0 else "−")
    assert text.endswith("%)") and text.count("(") == 1
    assert text[text.index("(") + 1] == ("+" if x > 0 else "−")


def test_table_puts_units_in_the_headers():
    """fs_hz becomes "fs [MHz]" with the numbers in MHz; C0 in capitals; text kept."""
    import pandas as pd

    df = pd.DataFrame({"capture": ["a", "b"], "serial": ["01", "02"],
                       "fs_hz": [1975126.7, 1990000.0], "c0_f": [2.032e-9, math.nan],
                       "r1_ohm": [1.0, 2000.0], "n_points": [1601, 801]})
    out = table(df)
    assert list(out.columns) == ["capture", "serial", "fs [MHz]", "C0 [nF]", "R1", "n points"]
    assert list(out["fs [MHz]"]) == ["1.975", "1.990"]
    assert list(out["C0 [nF]"]) == ["2.032", ""]
    assert list(out["R1"]) == ["1.000 Ω", "2.000 kΩ"]  # a factor 2000 apart: own prefixes
    assert list(out["serial"]) == ["01", "02"]
    assert list(df.columns) == ["capture", "serial", "fs_hz", "c0_f", "r1_ohm", "n_points"]
    assert column_label("fs_stderr_hz") == ("fs stderr", "Hz")
    # symbols keep their spelling (common practice, no source): k_eff, Cp, ESR
    assert column_label("k_eff") == ("k_eff", "")
    assert column_label("Cp") == ("Cp", "F") and column_label("ESR") == ("ESR", "Ω")
    # also inside a longer name: the symbol stays whole
    assert column_label("k_eff_stderr") == ("k_eff stderr", "")
    assert column_label("fit_k_eff") == ("fit k_eff", "")
    assert column_label("fit_k_eff_stderr") == ("fit k_eff stderr", "")
    assert column_label("tan_delta_stderr") == ("tan_delta stderr", "")


@given(st.floats(min_value=-1e13, max_value=1e13, allow_nan=False).filter(lambda v: v != 0),
       st.sampled_from(["Hz", "F", "Ω", "dB", ""]), st.integers(1, 7))
def test_eng_is_quantity_without_trailing_zeros(value, unit, digits):
    """One SI-prefix formatter: eng's text is quantity's with the zeros after the decimal
    point dropped (same number: common practice, no source)."""
    q, e = quantity(value, unit, digits=digits), eng(value, unit, digits)
    q_num, _, q_rest = q.partition(" ")
    e_num, _, e_rest = e.partition(" ")
    assert q_rest == e_rest
    if "." in q_num:
        assert q_num.rstrip("0").rstrip(".") == e_num
    else:
        assert q_num == e_num


def test_tick_text_is_eng_without_the_unit():
    """Tick and grid labels: the SI prefix stays, the unit goes to the axis label (BIPM SI
    brochure, Table 7)."""
    from kit.units import tick_text

    assert tick_text(2500.0, "Ω") == "2.5k" and tick_text(5e-5, "S") == "50µ"
    assert tick_text(25.0, "Ω") == "25" and tick_text(-0.5, "") == "\u22120.5"
    assert [tick_text(v, "Ω") for v in (1e-3, 0.47, 4.7e4, 2.2e6)] == ["1m", "470m", "47k",
                                                                        "2.2M"]
