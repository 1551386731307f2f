"""An invented lot of many parts made directly with numpy, for report tests and benchmarks.

No capture is fitted: each part gets Butterworth-Van Dyke parameters drawn at random
around an invented nominal element, its figures (fs, fp, k_eff, Qm) from the model's own
``derived`` and its |Z| from the model's own ``z`` (kit.resonators.registry, the one home
of the models), its verdict from kit.review.verdicts on the quantity limits, and its trace
decimated by kit.outputs.decimate as a batch worker would.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from kit.outputs.decimate import minmax
from kit.outputs.entries import split_unit
from kit.outputs.summary import summary_frame
from kit.resonators.registry import get_model
from kit.review.limits import parse_limits
from kit.review.verdicts import verdict

LIMITS_TOML = """name = "invented element, synthetic lot"
[quantity.fs_hz]
min = 1.82e6
max = 1.88e6
[quantity.k_eff]
min = 0.40
max = 0.44
[quantity.qm]
min = 400.0
required = false
[[mask]]
name = "z-band"
curve = "z_mag_ohm"
f_min_hz = 1.6e6
f_max_hz = 2.4e6
upper = 50000.0
"""


def synthetic_lot(n: int, seed: int = 0, points: int = 1601, columns: int = 256):
    """(summary DataFrame, traces by sha256, Limits) of an invented lot of ``n`` parts."""
    rng = np.random.default_rng(seed)
    limits = parse_limits(LIMITS_TOML, "<synthetic>")
    judged = dataclasses.replace(limits, masks=())  # masks need captures: not judged here
    model = get_model("bvd")
    f = np.linspace(1.0e6, 3.0e6, points)
    c0 = 1e-9 * (1 + 0.02 * rng.standard_normal(n))
    c1 = 0.204e-9 * (1 + 0.012 * rng.standard_normal(n))
    l1 = 3.63e-5 * (1 + 0.012 * rng.standard_normal(n))
    r1 = 0.53 * np.exp(0.25 * rng.standard_normal(n))
    rows, traces = [], {}
    for i in range(n):
        params = {"C0": c0[i], "R1": r1[i], "L1": l1[i], "C1": c1[i]}
        d = model.derived(params)
        sha = f"{i:064x}"
        row = {"capture": f"syn-{i:05d}", "path": f"lot/syn-{i:05d}.s1p", "sha256": sha,
               "status": "ok", "error": "", "ports": 1, "points": points,
               "fs_hz": d["fs_hz"], "fp_hz": d["fp_hz"], "k_eff": d["k_eff"], "qm": d["qm"],
               "c0_f": c0[i], "r1_ohm": r1[i], "l1_h": l1[i], "c1_f": c1[i], "fit_ok": True,
               "fit_flags": "", "resonance_flags": ""}
        v = verdict(row, judged)
        row["verdict"], row["verdict_reasons"] = v.status, "; ".join(v.reasons)
        for c in v.checks:
            stem, suffix = split_unit(c.name)
            row[f"{stem}_margin{suffix}"] = c.margin
            row[f"{stem}_margin_rel"] = c.margin_rel
        rows.append(row)
        traces[sha] = minmax(f, np.abs(model.z(f, params)), columns)
    return summary_frame(rows), traces, limits


def one_port(params: dict, name: str, points: int = 1601):
    """A Capture of a BVD element (for drawing a few real pictures)."""
    import skrf

    from kit.capture import from_network

    f = np.linspace(1.0e6, 3.0e6, points)
    z = get_model("bvd").z(f, params).reshape(-1, 1, 1)
    net = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="Hz"), z=z, z0=50, name=name)
    return from_network(net)
