"""kit.match.sensitivity: the design frequency and how much a design depends on it."""

from __future__ import annotations

import math

import numpy as np
import pytest
import skrf

from kit import match as km
from kit.capture import from_network

# the Butterworth-Van Dyke element of the methods sheet, section 2.1 (fixture A)
FS, C0, C1, QM = 1e6, 1e-9, 0.2e-9, 100.0
WS = 2 * np.pi * FS
L1, R1 = 1 / (WS**2 * C1), 1 / (WS * QM * C1)


def bvd_capture(f=np.linspace(0.9e6, 1.1e6, 801)):
    """The BVD element as a Capture through scikit-rf's Network.from_z."""
    w = 2 * np.pi * f
    z = 1 / (1j * w * C0 + 1 / (R1 + 1j * w * L1 + 1 / (1j * w * C1)))
    return from_network(skrf.Network.from_z(z.reshape(-1, 1, 1),
                                            frequency=skrf.Frequency.from_f(f, unit="Hz"),
                                            name="bvd"))


def test_a_tuned_capacitance_moves_by_twice_the_shift():
    """L = 1/(omega^2 C) (methods sheet 8.2, common practice): a shift d of f changes L by
    1/(1 - d)^2 - 1 at most, about 2 d; the design is steady."""
    d = 1e-3
    s = km.design_sensitivity(lambda f: km.tuning_inductor(2e-9, f, "shunt"), 1.8e6, d)
    assert s.parts == ("L1",)
    assert s.worst == pytest.approx(1 / (1 - d) ** 2 - 1, rel=1e-9)
    assert not s.sensitive and "steady" in s.message()


def test_a_transformer_on_a_resistor_does_not_move():
    """An ideal transformer to a resistive load has no frequency in it: no change."""
    s = km.design_sensitivity(lambda f: km.transformer(12.5, 50.0, f_hz=f), 1e6)
    assert s.worst == 0.0 and not s.sensitive


def test_tuning_the_measured_susceptance_at_fs_of_a_high_q_element_is_sensitive():
    """At fs the motional branch is R1 (Y = jwC0 + 1/R1); 0.1 % above fs its susceptance is
    about -2 d Qm/R1/(1 + (2 d Qm)^2), here -0.19/R1, larger than wC0 = 0.05/R1 (BVD
    algebra, derived here): the element turns inductive and no shunt inductor exists."""
    cap = bvd_capture()
    s = km.design_sensitivity(lambda f: km.tuning_inductor(cap, f, "shunt"), FS)
    assert math.isinf(s.worst) and s.sensitive
    text = s.message()
    assert "0.10 %" in text and "inductive" in text and "band design" in text
    assert "Error" not in text


def test_the_design_frequency_is_fs_of_a_fit_not_a_grid_point():
    """For the BVD element fs = 1/(2 pi sqrt(L1 C1)) = 1 MHz (ANSI/IEEE Std 176-1987, from
    memory), also on a grid whose points miss it by a third of a step."""
    f = 0.9e6 + 250.0 * (np.arange(801) + 1 / 3)
    fs, basis = km.design_frequency(bvd_capture(f))
    assert "Butterworth-Van Dyke fit" in basis
    assert fs == pytest.approx(FS, rel=1e-7)
    assert np.min(np.abs(f - fs)) > 50.0  # not a grid point


def test_a_given_fit_and_a_load_without_resonance():
    """A fit given is used as it is; a resistor gives the middle of the sweep, said so."""
    from kit.resonators.fitting import fit

    cap = bvd_capture()
    r = fit(cap, model="bvd")
    assert km.design_frequency(cap, r) == (pytest.approx(r.fs_hz), "fs of the bvd fit")
    freq = skrf.Frequency(1, 4, 101, "MHz")
    res = from_network(skrf.Network.from_z(np.full((101, 1, 1), 100.0 + 0j), frequency=freq))
    f, basis = km.design_frequency(res)
    assert f == pytest.approx(2e6) and "middle of the sweep" in basis
