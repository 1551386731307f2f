"""The one peak reader (kit.resonators.peaks) against analytic cases, and one fs per capture.

Outside references: the vertex of a parabola and the half-power points of a Lorentzian
(analytic); the Butterworth-Van Dyke identities of ANSI/IEEE Std 176-1987 (clause from
memory), fs = 1/(2 pi sqrt(L1 C1)) and Qm = 1/(2 pi fs R1 C1), with the check values of the
methods sheet sections 1.2 and 1.7 (fixture A).
"""

from __future__ import annotations

import glob
import math
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
import pytest  # noqa: E402

import kit  # noqa: E402
from kit.capture import CaptureError  # noqa: E402
from kit.resonators import peaks as pk  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]

# fixture A of the methods sheet section 1.2: fs = 1 MHz, C0 = 1 nF, C1 = 0.2 nF, Qm = 100
FS, C0, C1, QM = 1e6, 1e-9, 0.2e-9, 100.0
WS = 2 * np.pi * FS
L1 = 1 / (WS**2 * C1)           # fs = 1/(2 pi sqrt(L1 C1)), IEEE Std 176 (from memory)
R1 = 1 / (WS * QM * C1)         # Qm = 1/(2 pi fs R1 C1), IEEE Std 176 (from memory)


def bvd_z(f):
    """Z of C0 parallel (R1 - L1 - C1) [ohm]."""
    w = 2 * np.pi * np.asarray(f, dtype=float)
    return 1 / (1j * w * C0 + 1 / (R1 + 1j * w * L1 + 1 / (1j * w * C1)))


# --------------------------------------------------------------------------- analytic cases


def test_vertex_of_a_parabola_is_exact():
    """y = a (x - x0)^2 + c: the 3-point vertex is x0, c to rounding (analytic)."""
    x0, a, c = 1_234_567.89, 3e-6, 7.0
    f = np.linspace(1.2e6, 1.3e6, 41)          # x0 is not a grid point
    t = a * (f - x0) ** 2 + c
    i = int(np.argmin(t))
    fv, tv = pk.vertex_min(f, t, i)
    assert fv == pytest.approx(x0, rel=1e-12)
    assert tv == pytest.approx(c, rel=1e-9)
    # the parabola's coefficients through three of its points are its own (analytic)
    aa, bb, cc = pk.parabola(f[i - 1:i + 2], t[i - 1:i + 2])
    assert aa == pytest.approx(a, rel=1e-6)
    assert bb == pytest.approx(2 * a * (f[i] - x0), rel=1e-6)
    assert cc == t[i]


def test_vertex_falls_back_to_the_sample():
    """A maximum (parabola opening downwards) or a NaN neighbour returns the sample itself."""
    f = np.array([1.0, 2.0, 3.0, 4.0])
    t = -(f - 2.3) ** 2
    assert pk.vertex_min(f, t, 1) == (2.0, float(t[1]))
    assert pk.vertex_min(f, np.array([1.0, 0.5, np.nan, 2.0]), 1) == (2.0, 0.5)


@pytest.mark.parametrize("base", [0.0, 0.25])
def test_lorentzian_peak_and_half_power_points(base):
    """v = base + h/(1 + ((f - f0)/g)^2): peak at f0, half height at f0 +- g (analytic)."""
    f0, g, h = 2_000_123.4, 1_000.0, 2.0
    f = np.linspace(1.99e6, 2.01e6, 801)        # step 25 Hz; f0 off the grid
    v = base + h / (1 + ((f - f0) / g) ** 2)
    i = pk.prominent_peak(v)
    peak = pk.peak_by_reciprocal(f, v - base, i)
    assert peak.refined
    assert peak.f_hz == pytest.approx(f0, rel=1e-12)   # 1/(v - base) is an exact parabola
    assert peak.value + base == pytest.approx(h + base, rel=1e-12)
    f1, f2 = pk.half_power_points(f, v, i, peak.value + base, base)
    assert f1 == pytest.approx(f0 - g, rel=1e-12)
    assert f2 == pytest.approx(f0 + g, rel=1e-12)
    assert pk.q_half_power(peak.f_hz, f1, f2) == pytest.approx(f0 / (2 * g), rel=1e-9)


def test_half_power_points_outside_the_trace():
    """A peak whose half-power level is not reached on both sides gives None."""
    f = np.linspace(0.0, 1.0, 11)
    v = 1.0 / (1 + ((f - 0.9) / 0.5) ** 2)
    assert pk.half_power_points(f, v, int(np.argmax(v)), float(v.max())) is None


def test_crossings_quadratic_and_linear():
    """x^2 - 2 crosses zero at sqrt(2) (quadratic, exact); with a NaN neighbour: linear."""
    f = np.linspace(0.0, 3.0, 7)
    y = f**2 - 2
    i = int(np.nonzero((y[:-1] < 0) & (y[1:] >= 0))[0][0])
    assert pk.crossing(f, y, i, 0.0) == pytest.approx(np.sqrt(2), rel=1e-13)
    lin = f[i] + (f[i + 1] - f[i]) * (0 - y[i]) / (y[i + 1] - y[i])
    y_nan = y.copy()
    y_nan[i - 1] = np.nan
    assert pk.crossing(f, y_nan, i, 0.0) == pytest.approx(lin, rel=1e-15)
    # a level other than zero: y = 3 at x = sqrt(5)
    j = int(np.nonzero((y[:-1] < 3) & (y[1:] >= 3))[0][0])
    assert pk.crossing(f, y, j, 3.0) == pytest.approx(np.sqrt(5), rel=1e-13)


def test_bvd_fs_and_qm_from_ieee_identities():
    """fs and Qm of fixture A read by the peak reader (methods sheet 1.2 and 1.7(b))."""
    # fs = 1/(2 pi sqrt(L1 C1)) = 1 MHz, Qm = 1/(2 pi fs R1 C1) = 100 (IEEE Std 176, from
    # memory); f1 = 995 012.499922 Hz, f2 = 1 005 012.499922 Hz (methods sheet 1.7(b)).
    step = 250.0
    f = np.arange(0.9e6, 1.1e6 + step / 2, step) + 37.0    # fs is not a grid point
    z = bvd_z(f)
    peak = pk.conductance_peak(f, z)
    # the 3-point vertex of 1/G carries the cubic term of f/fs - fs/f: a bias of order
    # (step/fs)^2 (derived here, no source)
    assert peak.f_hz == pytest.approx(FS, rel=(step / FS) ** 2)
    assert abs(peak.f_hz - FS) < 0.01 * step               # far below one step
    # G(fs) = 1/R1 exactly (sheet 1.2); the vertex value carries the same bias
    assert peak.value == pytest.approx(1 / R1, rel=2 * (step / FS) ** 2)
    g = (1 / z).real
    f1, f2 = pk.half_power_points(f, g, peak.index, peak.value)
    assert f1 == pytest.approx(995_012.499922, abs=0.05)
    assert f2 == pytest.approx(1_005_012.499922, abs=0.05)
    assert pk.q_half_power(peak.f_hz, f1, f2) == pytest.approx(1 / (2 * np.pi * FS * R1 * C1),
                                                               rel=1e-5)


def test_prominent_peak_is_not_the_edge_of_a_rising_baseline():
    """A lossy C0 makes G rise to the top of a wide sweep; the reader still finds fs."""
    # G of C0 (1 - j tan_delta) is omega C0 tan_delta (methods sheet section 0 convention);
    # at 1 GHz it is 2.5 times 1/R1, so the largest sample is at the edge, not at fs.
    tan_delta = 0.05
    f = np.geomspace(0.5e6, 1e9, 40001)
    w = 2 * np.pi * f
    y = 1j * w * C0 * (1 - 1j * tan_delta) + 1 / (R1 + 1j * w * L1 + 1 / (1j * w * C1))
    z = 1 / y
    assert int(np.argmax(y.real)) == len(f) - 1
    peak = pk.conductance_peak(f, z)
    assert abs(peak.f_hz - FS) < 0.01 * FS / QM          # within 1 % of the half-power width


def test_cleaning_merges_repeats_and_drops_nan():
    """Repeated frequencies are averaged, non-finite points dropped, both flagged."""
    f = np.array([3.0, 1.0, 2.0, 2.0, 4.0, 5.0, 6.0, np.nan, 7.0, 8.0])
    z = np.array([3, 1, 2 + 2j, 4 + 0j, 4, 5, 6, 6, np.nan, 8], dtype=complex)
    ff, zz, flags, span = pk.clean_trace(f, z, min_points=5)
    assert list(ff) == [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 8.0]
    assert zz[1] == 3 + 1j                                 # mean of 2+2j and 4
    assert flags == ["nan-points:2", "repeated-frequencies:1"] and span == (1.0, 8.0)
    with pytest.raises(CaptureError, match="at least 9"):
        pk.clean_trace(f, z, min_points=9)
    with pytest.raises(CaptureError, match="low edge"):
        pk.clean_trace(f, z, (5.0, 2.0))


# --------------------------------------------------------------------------- one fs


def _lot():
    paths = sorted(glob.glob(str(ROOT / "demo_data" / "lot" / "pzd7-*.s1p")))
    assert len(paths) >= 10
    return paths


def _four_routes(capture, span):
    from kit.match.bode_fano import bode_fano
    from kit.resonators.models import bvd_figures
    from kit.ui.match_panel import match_panel

    fs_res = kit.resonance(capture, span_hz=span).fs_hz
    st = kit.fit(capture, span_hz=span, keep_data=False).start
    fs_start = bvd_figures(st["C0"], st["R1"], st["L1"], st["C1"])["fs_hz"]
    lim = bode_fano(capture, span[0], span[1], model="series-rlc")
    fs_fano = 1 / (2 * np.pi * np.sqrt(lim.l_h * lim.c_f))
    fs_panel = None
    if span == (float(capture.f_hz[0]), float(capture.f_hz[-1])):
        fs_panel = match_panel(capture, display=False).f_mhz.value * 1e6
    return fs_res, fs_start, fs_fano, fs_panel


def test_demo_lot_one_fs_for_every_route():
    """kit.resonance, the fit's start values and Bode-Fano agree on fs; the match panel uses the fit.

    They all call the same peak reader on the same points, so the only differences are the
    floating-point round trips fs -> (L1, C1) -> fs and Hz -> MHz -> Hz, each a few units in
    the last place (about 1e-15 relative); 1e-12 leaves room for that and nothing else (the
    routes differed by 1e-6 to 3e-4 relative before they shared the reader).
    """
    import matplotlib.pyplot as plt

    for path in _lot():
        c = kit.load(path)
        full = (float(c.f_hz[0]), float(c.f_hz[-1]))
        fs_res, fs_start, fs_fano, fs_panel = _four_routes(c, full)
        assert math.isfinite(fs_res), path
        for other in (fs_start, fs_fano):
            assert other == pytest.approx(fs_res, rel=1e-12), path
        # the match panel designs at the fitted fs (kit.match.design_frequency), not at the
        # peak reading: same value as that function, and within 0.1 % of the peak reading
        from kit.match import design_frequency

        assert fs_panel == pytest.approx(design_frequency(c)[0], rel=1e-12), path
        assert fs_panel == pytest.approx(fs_res, rel=1e-3), path
        # a narrower span around the resonance: the three span-taking routes still agree
        r = kit.resonance(c)
        narrow = (r.fs_hz - 4 * (r.f2_hz - r.f1_hz), r.fs_hz + 4 * (r.f2_hz - r.f1_hz))
        fs_res, fs_start, fs_fano, _ = _four_routes(c, narrow)
        assert fs_start == pytest.approx(fs_res, rel=1e-12), path
        assert fs_fano == pytest.approx(fs_res, rel=1e-12), path
        plt.close("all")
