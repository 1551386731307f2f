"""kit.load against scikit-rf's own Touchstone reader (``skrf.Network(path)``, scikit-rf 2.2).

kit.load builds the network from the numbers its pre-flight scan read (kit.io.touchstone,
kit.io.records); scikit-rf's reader parses the file itself. The reference is scikit-rf:
every file both read must give the same frequency, S, z0 (and noise data), compared with
``np.array_equal`` -- exactly, not within a tolerance -- because both sides turn each token
into the same correctly rounded double (CPython's ``PyOS_string_to_double``, behind Python's
``float`` that scikit-rf uses and behind ``numpy.loadtxt`` that the scan uses) and then apply
the same numpy operations in the same order (``Touchstone.load_file``).
"""

from __future__ import annotations

import re
import warnings

import numpy as np
import pytest
from conftest import REALDATA, realdata_path
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import kit
from kit import CaptureError
from kit.io import touchstone as ts_module
from kit.io.preflight import read_bytes, scan_bytes

TOUCHSTONE_NAME = re.compile(r"\.(s\d+p|ts)$", re.IGNORECASE)


def _skrf_network(path):
    """scikit-rf's reader (the reference), warnings silenced."""
    import skrf

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return skrf.Network(str(path))


def _keep_first(f):
    """kit.load keeps the first of repeated frequencies (a warning finding says so);
    scikit-rf keeps them all: the rows kit keeps."""
    return np.concatenate(([True], np.diff(f) > 0)) if f.size else np.ones(0, bool)


def assert_same_as_skrf(cap, ref, label):
    """Frequency, S, z0 and noise of a Capture equal to scikit-rf's network, bit for bit."""
    keep = _keep_first(ref.f)
    assert np.array_equal(cap.f_hz, ref.f[keep]), f"{label}: frequency differs from scikit-rf"
    assert np.array_equal(cap.s, ref.s[keep]), f"{label}: S differs from scikit-rf"
    z0_ref = np.asarray(ref.z0)[keep]
    assert np.array_equal(np.broadcast_to(cap.network.z0, z0_ref.shape), z0_ref), \
        f"{label}: z0 differs from scikit-rf"
    assert cap.network.s_def == ref.s_def, label
    if ref.noisy:
        assert cap.network.noisy, f"{label}: scikit-rf keeps noise data, kit.load did not"
        assert np.array_equal(cap.network.noise_freq.f, ref.noise_freq.f), label
        assert np.array_equal(cap.network.noise, ref.noise), label
    else:
        assert not cap.network.noisy, label


def _realdata_files():
    if not REALDATA.exists():
        return []
    return sorted(p for p in REALDATA.rglob("*") if p.is_file() and TOUCHSTONE_NAME.search(p.name))


def test_every_realdata_file_reads_as_scikit_rf_reads_it():
    """Every Touchstone file under shared/realdata (crystal sweeps, microstrip standards,
    scikit-rf's own test files; see its README for sources and licences) that kit.load
    accepts gives exactly scikit-rf's frequency, S and z0 (skrf.Network(path) as the reference)."""
    root = realdata_path()
    files = _realdata_files()
    assert files, f"no Touchstone file under {root}"
    compared = []
    for p in files:
        try:
            cap = kit.load(p)
        except CaptureError:
            continue  # refused with a finding; tests/test_touchstone.py checks why
        assert_same_as_skrf(cap, _skrf_network(p), p.name)
        compared.append(p.name)
    # 21 crystal sweeps, 9 microstrip standards, all but one of scikit-rf's 24 examples
    assert len(compared) >= 50, compared


def test_common_captures_take_the_direct_route(monkeypatch):
    """1- and 2-port S-parameter captures (Touchstone 1 and 2) are built from the scan's numbers,
    their data lines read in one pass, never by scikit-rf's reader: that route is made to fail."""
    folder = realdata_path()

    def no_reader(scan, path):
        raise AssertionError(f"{path}: went through scikit-rf's reader")

    monkeypatch.setattr(ts_module, "_reader_network", no_reader)
    names = ["crystal-series-through/C100_25C.s2p", "microstrip-standards/P1-MSL_Open_50.s1p",
             "microstrip-standards/P1-MSL_Thru_100-P2.s2p"]
    for name in names:
        p = folder / name
        if not p.exists():
            pytest.skip(f"outside reference data not available: {p}")
        scan = scan_bytes(read_bytes(p), p)
        assert scan.bulk_spans, f"{name}: data lines were read one by one"
        assert len(scan.freqs) == kit.load(p).points
    # Touchstone 2 and a small file (read line by line) take the direct route too
    for p in [folder / "touchstone-cases" / "ex_4.ts", folder / "touchstone-cases" / "ex_8.s1p"]:
        if p.exists():
            kit.load(p)


# --------------------------------------------------------------------- generated files
FORMATS = ("RI", "MA", "DB")
UNITS = {"HZ": "Hz", "KHZ": "kHz", "MHZ": "MHz", "GHZ": "GHz"}


def _pair(fmt, re_, im):
    if fmt == "RI":
        return re_, im
    mag = float(np.hypot(re_, im))
    ang = float(np.degrees(np.arctan2(im, re_)))
    return (20 * np.log10(mag) if fmt == "DB" else mag), ang


@st.composite
def touchstone_texts(draw):
    """A Touchstone text with its file name: version 1 or 2, 1 to 4 ports, S/Y/Z (H/G for
    two-ports), RI/MA/DB, any frequency unit, reference from R or [Reference], full or half
    matrices (version 2), records wrapped over lines, comments, blank lines and noise data."""
    version = draw(st.sampled_from(["1", "2"]))
    n = draw(st.integers(1, 4))
    param = draw(st.sampled_from(["S", "Y", "Z"] + (["H", "G"] if n == 2 else [])))
    fmt = draw(st.sampled_from(FORMATS))
    unit = draw(st.sampled_from(sorted(UNITS)))
    r = draw(st.sampled_from([50.0, 75.0, 1.0, 12.5]))
    nf = draw(st.integers(1, 40))  # from 16 lines on, plain data are read in one pass
    fmt_num = draw(st.sampled_from(["{!r}", "{:.6e}", "{:.9g}", "{:.4f}"]))
    comments = draw(st.booleans())
    matrix = draw(st.sampled_from(["Full", "Upper", "Lower"])) if version == "2" else "Full"
    order = draw(st.sampled_from(["12_21", "21_12"])) if version == "2" and n == 2 else None
    if n == 2 and matrix != "Full":
        order = "12_21"  # scikit-rf 2.2 misreads a half two-port in the 21_12 order
    refs = (draw(st.lists(st.sampled_from([25.0, 50.0, 75.0]), min_size=n, max_size=n))
            if version == "2" and draw(st.booleans()) else None)
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    f = np.cumsum(rng.uniform(0.5, 3.0, nf)) * 10
    num = fmt_num.format
    if n <= 2 and version == "1":
        per_line = None  # one record per line
    else:
        per_line = draw(st.sampled_from([None, 2, 4, 8]))  # matrix values per line
    out = []
    if version == "2":
        out += ["[Version] 2.0"]
    out.append(f"# {UNITS[unit]} {param} {fmt} R {r:g}")
    if comments:
        out.insert(0, "! generated for the comparison with scikit-rf")
    if version == "2":
        out.append(f"[Number of Ports] {n}")
        if order:
            out.append(f"[Two-Port Data Order] {order}")
        out.append(f"[Number of Frequencies] {nf}")
        if refs:
            out.append("[Reference] " + " ".join(f"{x:g}" for x in refs))
        if matrix != "Full":
            out.append(f"[Matrix Format] {matrix}")
        out.append("[Network Data]")
    if n == 2 and matrix == "Full":
        idx = [(0, 0), (1, 0), (0, 1), (1, 1)] if version == "1" or order == "21_12" else \
            [(0, 0), (0, 1), (1, 0), (1, 1)]
    elif matrix == "Upper":
        idx = [(i, j) for i in range(n) for j in range(i, n)]
    elif matrix == "Lower":
        idx = [(i, j) for i in range(n) for j in range(i + 1)]
    else:
        idx = [(i, j) for i in range(n) for j in range(n)]
    for k in range(nf):
        m = (rng.normal(size=(n, n)) + 1j * rng.normal(size=(n, n))) * 0.4
        m = m + np.eye(n) * (0.5 if param in ("Y", "Z") else 0)
        vals = []
        for i, j in idx:
            vals += _pair(fmt, m[i, j].real, m[i, j].imag)
        toks = [num(float(v)) for v in vals]
        if per_line is None:
            out.append(" ".join([num(float(f[k]))] + toks))
        else:
            first = True
            for a in range(0, len(toks), 2 * per_line):
                out.append(" ".join(([num(float(f[k]))] if first else []) + toks[a:a + 2 * per_line]))
                first = False
        if comments and k % 7 == 3:
            out.append("! a comment between records" if k % 2 else "")
    if n == 2 and draw(st.booleans()):  # a noise block
        if version == "2":
            out.append("[Noise Data]")
        for k in range(min(nf, 3)):
            out.append(f"{f[k] / 2:g} {1 + k:g} 0.5 {30 * k:g} {0.2 + k / 10:g}")
    if version == "2":
        out.append("[End]")
    name = f"gen.s{n}p" if version == "1" else "gen.ts"
    return name, "\n".join(out) + "\n"


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(case=touchstone_texts())
def test_generated_files_read_as_scikit_rf_reads_them(tmp_path, case):
    """Generated Touchstone texts (formats, units, ports, parameters, matrix formats, line
    wrapping, references, noise data) read by kit.load give exactly what scikit-rf's reader
    (skrf.Network(path)) gives."""
    name, text = case
    p = tmp_path / name
    p.write_text(text)
    cap = kit.load(p)
    assert_same_as_skrf(cap, _skrf_network(p), text[:200])
