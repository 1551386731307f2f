"""The demo scenario: an invented lot of thickness-mode disc elements and a few RF parts.

``sweepbook demo [OUT_DIR]`` writes ``demo_data/`` deterministically (fixed seeds) from
physical models, and the generator's true parameters beside the files (``truth.json``),
so that tests can check that the kit recovers them.

The scenario (all names invented): lot "pzd7" of 12 PZT-like discs with their thickness
mode near 2 MHz, measured by reflection on a network analyser calibrated at its own port,
through 1.5 m of 50 ohm coax and a spring-contact fixture. Open, short and 50 ohm load
standards were captured in the fixture. Three parts are faulty: a cracked one (low
coupling, low Q), a de-poled one (shifted resonance, lower coupling) and one with a bad
contact (series resistance, noisy). A 100 ohm check resistor was captured through the
same chain. Two-port parts: an inductor (series-through, with its self-resonance), an RC
low-pass and an LC band-pass filter.

Models: the free lossy thickness-mode plate of :func:`kit.resonators.plate.free_plate_z` plus one
weak lateral (spurious) mode as a motional branch; the coax as a TEM line with
conductor loss scaling as sqrt(f); the fixture as series R-L then a shunt stray C.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np

from kit.io.atomic import write_text
from kit.resonators.plate import free_plate_z

SEED = 20261118
C_LIGHT = 299_792_458.0
Z0 = 50.0
LOT = "pzd7"
GRID = {"f_start_hz": 1.0e6, "f_stop_hz": 3.0e6, "points": 1601}
CABLE = {"length_m": 1.5, "velocity_factor": 0.66, "z0_ohm": 50.0, "loss_db_per_m": 0.12,
         "loss_ref_hz": 10.0e6}
FIXTURE = {"series_r_ohm": 0.05, "series_l_h": 15e-9, "shunt_c_f": 3.0e-12}
NOISE_SIGMA = 3e-4  # complex Gaussian noise on the raw S11, per part [1]
HEADER_DATE = "2026-11-18"


def default_dir() -> Path:
    """The repository's demo_data/ folder."""
    return Path(__file__).resolve().parents[1] / "demo_data"


# ---------------------------------------------------------------- chain models
def cable_abcd(f_hz: np.ndarray, length_m: float, velocity_factor: float, z0_ohm: float,
               loss_db_per_m: float, loss_ref_hz: float) -> np.ndarray:
    r"""ABCD matrices of a TEM coax line, shape (n, 2, 2).

    .. math:: \gamma = \alpha + j\omega/(v_f c), \quad
              \alpha = \frac{L_{dB}}{20 \log_{10} e} \sqrt{f/f_{ref}}

    References
    ----------
    .. [1] D. M. Pozar, *Microwave Engineering*, 4th ed., ch. 2 and Table 4.2 (ABCD of a
       line), from memory for the numbering.
    """
    f = np.asarray(f_hz, float)
    alpha = loss_db_per_m / (20.0 * np.log10(np.e)) * np.sqrt(f / loss_ref_hz)
    beta = 2 * np.pi * f / (velocity_factor * C_LIGHT)
    gl = (alpha + 1j * beta) * length_m
    a = np.empty((f.size, 2, 2), complex)
    a[:, 0, 0] = np.cosh(gl)
    a[:, 0, 1] = z0_ohm * np.sinh(gl)
    a[:, 1, 0] = np.sinh(gl) / z0_ohm
    a[:, 1, 1] = np.cosh(gl)
    return a


def fixture_abcd(f_hz: np.ndarray, series_r_ohm: float, series_l_h: float,
                 shunt_c_f: float) -> np.ndarray:
    """ABCD of the spring fixture: series R + jwL, then a shunt stray C at the DUT side."""
    w = 2 * np.pi * np.asarray(f_hz, float)
    zs = series_r_ohm + 1j * w * series_l_h
    yp = 1j * w * shunt_c_f
    a = np.empty((w.size, 2, 2), complex)
    a[:, 0, 0] = 1 + zs * yp
    a[:, 0, 1] = zs
    a[:, 1, 0] = yp
    a[:, 1, 1] = 1
    return a


def zin_through(abcd: np.ndarray, z_load_ohm: np.ndarray) -> np.ndarray:
    """Input impedance [ohm] of a two-port (ABCD) terminated by z_load_ohm; inf load = open."""
    a, b, c, d = abcd[:, 0, 0], abcd[:, 0, 1], abcd[:, 1, 0], abcd[:, 1, 1]
    zl = np.asarray(z_load_ohm, complex)
    out = np.empty_like(a)
    opn = ~np.isfinite(zl)
    out[opn] = a[opn] / c[opn]
    k = ~opn
    out[k] = (a[k] * zl[k] + b[k]) / (c[k] * zl[k] + d[k])
    return out


def measured_s11(f_hz: np.ndarray, z_dut_ohm: np.ndarray) -> np.ndarray:
    """S11 at the analyser port for a DUT (impedance [ohm]) in the fixture at the end of the cable."""
    chain = np.einsum("nij,njk->nik", cable_abcd(f_hz, **CABLE), fixture_abcd(f_hz, **FIXTURE))
    zin = zin_through(chain, z_dut_ohm)
    return (zin - Z0) / (zin + Z0)


def element_z(f_hz: np.ndarray, p: dict) -> np.ndarray:
    """True impedance of one disc element: lossy plate in parallel with the spurious branch."""
    w = 2 * np.pi * np.asarray(f_hz, float)
    z = free_plate_z(f_hz, p["kt"], p["fp_hz"], p["c0_f"], p["qm"], p["tan_delta"])
    sp = p["spurious"]
    zsp = sp["r_ohm"] + 1j * w * sp["l_h"] + 1 / (1j * w * sp["c_f"])
    return 1 / (1 / z + 1 / zsp)


def lossless_pair(kt: float, fp_hz: float) -> tuple[float, float]:
    """fs, fp of the lossless free plate: kt^2 tan(x)/x = 1, x = pi fs / (2 fp) (IEEE 176),
    solved by :func:`kit.resonators.coupling.fs_from_kt`."""
    from kit.resonators.coupling import fs_from_kt

    return fs_from_kt(kt, fp_hz), fp_hz


def _elements(rng: np.random.Generator) -> dict[str, dict]:
    out = {}
    for i in range(1, 13):
        name = f"{LOT}-{i:02d}"
        p = {
            "model": "plate",
            "kt": float(rng.normal(0.48, 0.006)),
            "fp_hz": float(rng.normal(2.05e6, 8e3)),
            "c0_f": float(rng.normal(1.9e-9, 0.03e-9)),
            "qm": float(rng.normal(85.0, 3.0)),
            "tan_delta": float(rng.normal(0.018, 0.001)),
            "defect": None,
            "contact_ohm": 0.0,
            "noise_sigma": NOISE_SIGMA,
        }
        out[name] = p
    # the faulty ones
    out[f"{LOT}-04"].update(kt=0.27, qm=32.0, defect="cracked")
    out[f"{LOT}-07"].update(kt=0.33, fp_hz=out[f"{LOT}-07"]["fp_hz"] * 1.035, defect="de-poled")
    out[f"{LOT}-10"].update(contact_ohm=3.0, noise_sigma=8 * NOISE_SIGMA, defect="bad-contact")
    for name, p in out.items():
        # weak lateral mode above the thickness mode: a motional branch with C1 = 0.4 % of C0
        c1 = 0.004 * p["c0_f"]
        f_sp = 2.45e6 * (p["fp_hz"] / 2.05e6)
        l1 = 1 / ((2 * np.pi * f_sp) ** 2 * c1)
        p["spurious"] = {"r_ohm": float(1 / (2 * np.pi * f_sp * c1 * 60.0)), "l_h": float(l1),
                         "c_f": float(c1), "f_hz": float(f_sp)}
        fs, fp = lossless_pair(p["kt"], p["fp_hz"])
        c1e = p["c0_f"] * ((fp / fs) ** 2 - 1.0)
        p["lossless_fs_hz"] = fs
        p["bvd_approx"] = {
            "note": "BVD near the thickness mode from the lossless fs, fp and C0 (approximate)",
            "C0": p["c0_f"], "C1": c1e, "L1": 1 / ((2 * np.pi * fs) ** 2 * c1e),
            "R1": 1 / (2 * np.pi * fs * c1e * p["qm"]),
        }
    return out


# ---------------------------------------------------------------- writing
def _touchstone_text(f_hz: np.ndarray, s: np.ndarray, comments: list[str]) -> str:
    """Touchstone 1.1 text, '# Hz S RI R 50', numbers with 10 significant digits."""
    lines = [f"! {c}" if c else "!" for c in comments]
    lines.append("# Hz S RI R 50")
    n = s.shape[1]
    for k, f in enumerate(f_hz):
        # Touchstone 1 two-port order: 11 21 12 22
        terms = [s[k, 0, 0]] if n == 1 else [s[k, 0, 0], s[k, 1, 0], s[k, 0, 1], s[k, 1, 1]]
        vals = " ".join(f"{v.real:.9e} {v.imag:.9e}" for v in terms)
        lines.append(f"{f:.1f} {vals}")
    return "\n".join(lines) + "\n"


def _header(what: str, extra: list[str] | None = None) -> list[str]:
    return [f"Demo capture (invented scenario): {what}",
            f"Date: {HEADER_DATE}",
            "Correction: one-port calibration at the analyser port; cable and fixture NOT removed",
            "Operator: demo bench 3", *(extra or [])]


def _series_two_port(z: np.ndarray) -> np.ndarray:
    s = np.empty((z.size, 2, 2), complex)
    s[:, 0, 0] = s[:, 1, 1] = z / (z + 2 * Z0)
    s[:, 1, 0] = s[:, 0, 1] = 2 * Z0 / (z + 2 * Z0)
    return s


def _abcd_to_s(a: np.ndarray) -> np.ndarray:
    A, B, C, D = a[:, 0, 0], a[:, 0, 1], a[:, 1, 0], a[:, 1, 1]
    den = A + B / Z0 + C * Z0 + D
    s = np.empty_like(a)
    s[:, 0, 0] = (A + B / Z0 - C * Z0 - D) / den
    s[:, 0, 1] = 2 * (A * D - B * C) / den
    s[:, 1, 0] = 2 / den
    s[:, 1, 1] = (-A + B / Z0 - C * Z0 + D) / den
    return s


def _noisy(rng, s, sigma):
    return s + sigma * (rng.standard_normal(s.shape) + 1j * rng.standard_normal(s.shape)) / np.sqrt(2)


def generate(out_dir: str | Path | None = None) -> dict:
    """Write the demo data into ``out_dir`` (default: the repository's demo_data/).

    Returns the truth dictionary that is also written as ``truth.json``.
    """
    out = Path(out_dir) if out_dir is not None else default_dir()
    rng = np.random.default_rng(SEED)
    f = np.linspace(GRID["f_start_hz"], GRID["f_stop_hz"], GRID["points"])
    elements = _elements(rng)
    truth: dict = {
        "scenario": __doc__.split("\n\n")[1].replace("\n", " "),
        "seed": SEED, "z0_ohm": Z0, "grid": GRID, "cable": CABLE, "fixture": FIXTURE,
        "name_pattern": "{lot}-{serial}", "elements": elements,
    }
    for name, p in elements.items():
        z = element_z(f, p)
        write_text(out / "truth" / f"{name}_dut.s1p",
               _touchstone_text(f, ((z - Z0) / (z + Z0)).reshape(-1, 1, 1),
                                [f"True DUT impedance of {name} (no fixture, no cable, no noise)"]))
        s11 = measured_s11(f, z + p["contact_ohm"])
        prng = np.random.default_rng([SEED, int(name[-2:])])
        s11 = _noisy(prng, s11, p["noise_sigma"])
        write_text(out / "lot" / f"{name}.s1p",
               _touchstone_text(f, s11.reshape(-1, 1, 1), _header(f"disc element {name}")))
    # standards in the fixture
    std_rng = np.random.default_rng([SEED, 100])
    for std, zl in (("open", np.full(f.size, np.inf + 0j)), ("short", np.zeros(f.size, complex)),
                    ("load", np.full(f.size, Z0 + 0j))):
        s11 = _noisy(std_rng, measured_s11(f, zl), NOISE_SIGMA / 3)
        write_text(out / "standards" / f"{std}.s1p",
               _touchstone_text(f, s11.reshape(-1, 1, 1), _header(f"{std} standard in the fixture")))
    truth["standards"] = {"open": "ideal open", "short": "ideal short", "load_ohm": Z0,
                          "noise_sigma": NOISE_SIGMA / 3}
    # check resistor: 100 ohm with 1 nH of lead inductance
    res = {"r_ohm": 100.0, "l_h": 1e-9}
    zr = res["r_ohm"] + 1j * 2 * np.pi * f * res["l_h"]
    s11 = _noisy(np.random.default_rng([SEED, 200]), measured_s11(f, zr), NOISE_SIGMA)
    write_text(out / "lot" / "check_resistor.s1p",
           _touchstone_text(f, s11.reshape(-1, 1, 1), _header("100 ohm check resistor")))
    truth["check_resistor"] = res
    # two-port parts, measured directly at the analyser ports (no cable/fixture)
    inductor = {"l_h": 10e-6, "cp_f": 2e-12, "rs_ohm": 0.5, "method": "series-through",
                "f_start_hz": 1e6, "f_stop_hz": 100e6, "points": 1601}
    f2 = np.linspace(inductor["f_start_hz"], inductor["f_stop_hz"], inductor["points"])
    w2 = 2 * np.pi * f2
    zl = 1 / (1 / (inductor["rs_ohm"] + 1j * w2 * inductor["l_h"]) + 1j * w2 * inductor["cp_f"])
    inductor["srf_hz"] = float(1 / (2 * np.pi * np.sqrt(inductor["l_h"] * inductor["cp_f"])))
    s = _noisy(np.random.default_rng([SEED, 300]), _series_two_port(zl), NOISE_SIGMA / 3)
    write_text(out / "parts" / "inductor.s2p",
           _touchstone_text(f2, s, _header("10 uH inductor, series-through")))
    truth["inductor"] = inductor
    rc = {"r_ohm": 50.0, "c_f": 1e-9, "topology": "series R, shunt C", "f_start_hz": 0.1e6,
          "f_stop_hz": 50e6, "points": 1001}
    f3 = np.linspace(rc["f_start_hz"], rc["f_stop_hz"], rc["points"])
    a = np.einsum("nij,njk->nik", fixture_abcd(f3, rc["r_ohm"], 0.0, 0.0),
                  fixture_abcd(f3, 0.0, 0.0, rc["c_f"]))
    s = _noisy(np.random.default_rng([SEED, 400]), _abcd_to_s(a), NOISE_SIGMA / 3)
    write_text(out / "parts" / "rc_lowpass.s2p", _touchstone_text(f3, s, _header("RC low-pass filter")))
    truth["rc_lowpass"] = rc
    lc = {"r_ohm": 2.0, "l_h": 10e-6, "c_f": 25.33e-12, "topology": "series RLC between ports",
          "f_start_hz": 5e6, "f_stop_hz": 15e6, "points": 1001}
    f4 = np.linspace(lc["f_start_hz"], lc["f_stop_hz"], lc["points"])
    w4 = 2 * np.pi * f4
    zs = lc["r_ohm"] + 1j * w4 * lc["l_h"] + 1 / (1j * w4 * lc["c_f"])
    lc["f0_hz"] = float(1 / (2 * np.pi * np.sqrt(lc["l_h"] * lc["c_f"])))
    lc["q_loaded"] = float(2 * np.pi * lc["f0_hz"] * lc["l_h"] / (lc["r_ohm"] + 2 * Z0))
    s = _noisy(np.random.default_rng([SEED, 500]), _series_two_port(zs), NOISE_SIGMA / 3)
    write_text(out / "parts" / "lc_bandpass.s2p", _touchstone_text(f4, s, _header("LC band-pass filter")))
    truth["lc_bandpass"] = lc
    write_text(out / "truth.json", json.dumps(truth, indent=2, sort_keys=True) + "\n")
    write_text(out / "README.md", _readme())
    return truth


def _readme() -> str:
    return """# Demo data (invented scenario)

Written by `sweepbook demo` from physical models with fixed seeds; do not edit by hand.
The true parameters of every part are in `truth.json`.

| folder / file | what | ports, points |
|---|---|---|
| `lot/pzd7-01.s1p` ... `pzd7-12.s1p` | thickness-mode disc elements near 2 MHz, by reflection through 1.5 m of coax and a spring fixture; name pattern `{lot}-{serial}`; 04 cracked, 07 de-poled, 10 bad contact | 1, 1601 (1 to 3 MHz) |
| `lot/check_resistor.s1p` | 100 ohm check resistor through the same chain | 1, 1601 |
| `standards/open.s1p`, `short.s1p`, `load.s1p` | open, short and 50 ohm load in the fixture, through the cable | 1, 1601 |
| `truth/<name>_dut.s1p` | the true element impedance without fixture, cable or noise | 1, 1601 |
| `parts/inductor.s2p` | 10 uH inductor with 2 pF, series-through, self-resonance 35.59 MHz | 2, 1601 (1 to 100 MHz) |
| `parts/rc_lowpass.s2p` | series 50 ohm, shunt 1 nF low-pass | 2, 1001 (0.1 to 50 MHz) |
| `parts/lc_bandpass.s2p` | series R-L-C band-pass at 10 MHz | 2, 1001 (5 to 15 MHz) |
"""


def main(argv: list[str] | None = None) -> int:
    """Command-line entry: ``sweepbook demo [OUT_DIR]``."""
    argv = sys.argv[1:] if argv is None else argv
    out = Path(argv[0]) if argv else default_dir()
    generate(out)
    print(f"demo data written to {out}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
