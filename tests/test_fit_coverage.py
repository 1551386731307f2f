"""Coverage study of kit.fit: do the stated standard errors cover the truth as claimed?

300 synthetic one-port captures in three families, made as an engineer would measure them:

* "fork": quartz tuning-fork-like resonators, fs near 32.768 kHz, Qm 10,000-60,000, C0 of a
  few pF, C1 of a few fF, reflection measured at the matched reference
  Z0 = sqrt(R1 |X_C0|) (X_C0 at fs);
* "ceramic": piezoceramic elements, fs 1-3 MHz, Qm 50-1000, C0 1-5 nF, k_eff^2 5-30 %, 50 ohm;
* "film": thin-film resonators, fs 1-3 GHz, Qm 200-2000, k_eff^2 3-7 %, C0 near 1 pF, 50 ohm.

Each capture holds 1601 points over a window of six half-power bandwidths (fs/Qm) below fs
and above fp, the span an engineer sets around the resonance pair (common practice, no
source). The impedance comes from the Butterworth-Van Dyke circuit (ANSI/IEEE Std 176-1987,
methods sheet section 2.1) and is measured as S11 = (Z - Z0)/(Z + Z0) (Pozar, *Microwave
Engineering*, 4th ed., Wiley, 2012, eq. (2.35), equation number from memory), with complex
Gaussian noise of RMS magnitude sigma added to S11, sigma log-uniform in 1e-4..3e-3
(E|n|^2 = sigma^2, sigma/sqrt(2) per part). The capture is a scikit-rf Network with that
reference impedance, read by kit.from_network, and fitted with the defaults of kit.fit.

The check is against the normal distribution: an honest estimate with an honest standard
error lies within 2 of them with probability 95.45 % and within 3 with 99.73 %
(scipy.stats.norm; the two-sided normal probabilities, e.g. NIST/SEMATECH e-Handbook of
Statistical Methods, section 1.3.6.7.1, from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

import kit
from kit.resonators.registry import get_model

BVD = get_model("bvd")
FAMILIES = ("fork", "ceramic", "film")
QUANTITIES = ("C0", "R1", "L1", "C1", "fs_hz", "fp_hz", "k_eff", "qm")
PER_FAMILY = 100
POINTS = 1601


def _log_uniform(rng, lo, hi):
    return float(np.exp(rng.uniform(np.log(lo), np.log(hi))))


def family_truth(rng, family):
    """BVD parameters and reference impedance of one random resonator of a family.

    Returns
    -------
    (dict, float)
        {"C0", "R1", "L1", "C1"} [F, ohm, H, F] and Z0 [ohm].
    """
    if family == "fork":
        fs = 32768.0 * (1 + rng.uniform(-1e-3, 1e-3))
        c0, c1 = _log_uniform(rng, 1e-12, 5e-12), _log_uniform(rng, 1e-15, 6e-15)
        qm = _log_uniform(rng, 1e4, 6e4)
    elif family == "ceramic":
        fs, c0 = _log_uniform(rng, 1e6, 3e6), _log_uniform(rng, 1e-9, 5e-9)
        k2, qm = rng.uniform(0.05, 0.30), _log_uniform(rng, 50, 1000)
        c1 = c0 * k2 / (1 - k2)
    elif family == "film":
        fs, c0 = _log_uniform(rng, 1e9, 3e9), _log_uniform(rng, 0.7e-12, 1.5e-12)
        k2, qm = rng.uniform(0.03, 0.07), _log_uniform(rng, 200, 2000)
        c1 = c0 * k2 / (1 - k2)  # k_eff^2 = C1/(C0 + C1), methods sheet section 2.1
    else:
        raise ValueError(family)
    w = 2 * np.pi * fs
    p = {"C0": c0, "R1": 1 / (w * qm * c1), "L1": 1 / (w * w * c1), "C1": c1}
    z0 = float(np.sqrt(p["R1"] / (w * c0))) if family == "fork" else 50.0
    return p, z0


def synthetic_capture(rng, family, points=POINTS):
    """One noisy S11 capture of a family; returns (Capture, truth params, sigma, Z0)."""
    import skrf

    p, z0 = family_truth(rng, family)
    fig = BVD.derived(p)
    bw = fig["fs_hz"] / fig["qm"]
    f = np.linspace(fig["fs_hz"] - 6 * bw, fig["fp_hz"] + 6 * bw, points)
    z = BVD.z(f, p)
    sigma = _log_uniform(rng, 1e-4, 3e-3)
    s11 = (z - z0) / (z + z0) + sigma * (rng.standard_normal(points)
                                         + 1j * rng.standard_normal(points)) / np.sqrt(2)
    ntwk = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="Hz"),
                        s=s11.reshape(-1, 1, 1), z0=z0, name=f"{family}")
    return kit.from_network(ntwk, {}), p, sigma, z0


def _expected_noise_rms(p, f, sigma, z0):
    """noise_rms implied by the generator: sqrt(mean(|dY/dS11|^2 sigma^2 / |Y|^2)).

    Y = (1 - S11)/(Z0 (1 + S11)), so |dY/dS11| = 2/(Z0 |1 + S11|^2) = |Z + Z0|^2/(2 Z0 |Z|^2)
    (from the reflection relation above, differentiated).
    """
    z = BVD.z(f, p)
    rel = sigma * np.abs(z + z0) ** 2 / (2 * z0 * np.abs(z))
    return float(np.sqrt(np.mean(rel**2)))


@pytest.mark.slow
def test_coverage_of_stated_errors_over_300_captures(record_property):
    """Over 300 noisy captures (forks, ceramics, films) >= 90 % of the estimates of every
    parameter and derived figure lie within 2 stated standard errors of the truth, per
    family; no fit says ok without a flag while an estimate is beyond 3 standard errors
    more often than chance allows; the noise estimate matches the generator's noise."""
    rng = np.random.default_rng(20261202)
    z_scores = {fam: [] for fam in FAMILIES}
    unflagged_far, noise_ratio, rtn, not_ok = 0, [], [], []
    for fam in FAMILIES:
        for _ in range(PER_FAMILY):
            cap, p, sigma, z0 = synthetic_capture(rng, fam)
            r = kit.fit(cap, keep_data=False)
            if not r.ok:
                not_ok.append((fam, r.reason))
                continue
            truth = dict(p, **BVD.derived(p))
            zs = np.array([(r.params.get(k, r.derived.get(k)) - truth[k])
                           / r.stderr.get(k, r.derived_stderr.get(k)) for k in QUANTITIES])
            z_scores[fam].append(zs)
            if not r.flags and np.max(np.abs(zs)) > 3:
                unflagged_far += 1
            f = np.asarray(cap.network.f)
            noise_ratio.append(r.noise_rms / _expected_noise_rms(p, f, sigma, z0))
            rtn.append(r.residual_to_noise)
    # A fit may refuse (ok=False with a reason) where the resonance is buried in the noise,
    # e.g. R1 of 0.05 ohm read through 50 ohm with sigma = 3e-3; that is honest, but rare.
    assert len(not_ok) <= 3, f"fits not ok: {not_ok}"
    assert all(reason for _, reason in not_ok)
    lines = []
    worst = 1.0
    for fam in FAMILIES:
        a = np.abs(np.array(z_scores[fam]))
        c2, c3 = np.mean(a < 2, axis=0), np.mean(a < 3, axis=0)
        worst = min(worst, float(c2.min()))
        lines.append(f"{fam:8s} n={len(a)} within 2 sigma: "
                     + ", ".join(f"{k} {v:.0%}" for k, v in zip(QUANTITIES, c2))
                     + "; within 3 sigma: " + ", ".join(f"{k} {v:.1%}" for k, v in
                                                        zip(QUANTITIES, c3)))
        for k, v in zip(QUANTITIES, c2):
            record_property(f"coverage2_{fam}_{k}", float(v))
    noise_ratio = np.asarray(noise_ratio)
    lines.append(f"fits not ok (with a reason): {len(not_ok)} {not_ok}")
    lines.append(f"expected 95.45 % within 2 sigma, 99.73 % within 3 sigma; unflagged ok fits "
                 f"with an estimate beyond 3 sigma: {unflagged_far}/{3 * PER_FAMILY}")
    lines.append(f"noise_rms / generator noise: median {np.median(noise_ratio):.3f}, range "
                 f"{noise_ratio.min():.3f}..{noise_ratio.max():.3f} (5-95 %: "
                 f"{np.percentile(noise_ratio, 5):.3f}..{np.percentile(noise_ratio, 95):.3f}); residual / noise: max "
                 f"{max(rtn):.3f}")
    message = "\n".join(["coverage study:"] + lines)
    print(message)
    assert worst >= 0.90, message
    # Each capture has 8 estimates; by the union bound the chance that any one lies beyond
    # 3 sigma is at most 8 x 0.27 % for honest errors. Allow the 99.9 % binomial quantile.
    p_any = 8 * 2 * stats.norm.sf(3)
    allowed = int(stats.binom.ppf(0.999, 3 * PER_FAMILY, p_any))
    assert unflagged_far <= allowed, (unflagged_far, allowed, message)
    # the noise read from the data is the generator's (order-statistics bias of a few %)
    assert 0.9 < np.median(noise_ratio) < 1.1, message
    # a few captures put most of the relative noise into a handful of points near a peak,
    # where the local estimate is least sure: the central 90 % only
    lo, hi = np.percentile(noise_ratio, [5, 95])
    assert 0.8 < lo and hi < 1.25, (lo, hi, message)
    # fits at the noise floor are neither inflated nor "poor-fit"
    from kit.resonators.solve import NOISE_FACTOR

    assert max(rtn) < NOISE_FACTOR, message
