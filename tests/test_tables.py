"""Delimited impedance-analyser tables (kit.load_table)."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import realdata_path

import kit
from kit import CaptureError

PZT_COLUMNS = {"f": "f (Hz)", "re": "G (S)", "im": "B (S)"}


def test_reads_the_pzt_bar_admittance_table():
    """The PZT bar G/B table (shared/realdata/pzt-bar-admittance, MIT; values read off Tsurumi et al.,
    J. Am. Ceram. Soc. 85 (2002), Fig. 1) loads with 301 points, 110-140 kHz, as admittance."""
    p = realdata_path("pzt-bar-admittance", "admittance_measurements.txt")
    cap = kit.load_table(p, columns=PZT_COLUMNS, quantity="Y")
    assert cap.points == 301 and cap.f_hz[0] == 110e3 and cap.f_hz[-1] == 140e3
    y = kit.admittance(cap)
    assert abs(y[0] - (1.47e-5 + 3.57e-4j)) < 1e-15
    # conductance peak of the length-extensional mode lies inside the sweep
    f_gmax = cap.f_hz[np.argmax(y.real)]
    assert 110e3 < f_gmax < 140e3
    assert cap.meta["source"] == "table" and cap.meta["header"] == ["f (Hz)", "G (S)", "B (S)"]


def test_index_mapping_polar_and_units(tmp_path):
    """Columns by index, |Z| and phase in degrees, frequency in kHz."""
    p = tmp_path / "z.csv"
    p.write_text("# exported table\n1,100,0\n2,100,90\n3,50,-90\n")
    cap = kit.load_table(p, columns={"f": 0, "mag": 1, "deg": 2}, quantity="Z", f_unit="kHz")
    np.testing.assert_allclose(cap.f_hz, [1e3, 2e3, 3e3])
    np.testing.assert_allclose(kit.impedance(cap), [100, 100j, -50j], atol=1e-9)
    assert cap.meta["comments"] == ["# exported table"]


@pytest.mark.parametrize("text, columns, match", [
    ("f;R;X\n1;2;3\n", {"f": "f", "re": "R", "im": "Y"}, "no column named 'Y'"),
    ("f,R,X\n1,2,oops\n", {"f": "f", "re": "R", "im": "X"}, "not a number"),
    ("f,R,X\n2,2,3\n1,2,3\n", {"f": "f", "re": "R", "im": "X"}, "must rise"),
    ("f,R,X\n1,2,nan\n", {"f": "f", "re": "R", "im": "X"}, "NaN"),
    ("f,R,X\n", {"f": "f", "re": "R", "im": "X"}, "no data rows"),
    ("f,R,X\n1,2,3\n", {"f": "f", "re": "R"}, "lacks im"),
])
def test_bad_tables_name_file_line_and_fix(tmp_path, text, columns, match):
    """A bad table raises CaptureError naming the file (and the line where there is one)."""
    p = tmp_path / "t.csv"
    p.write_text(text)
    with pytest.raises(CaptureError, match=match) as info:
        kit.load_table(p, columns=columns, quantity="Z")
    assert info.value.path == str(p)
