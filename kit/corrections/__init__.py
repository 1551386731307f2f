"""Corrections: remove fixtures, cables and standards' error terms from captures.

Each correction is a small object made by a factory; calling it on a capture returns a new
Capture with one more provenance step (its :meth:`~kit.corrections.base.Correction.describe`
dict) and never changes the input. :func:`chain` composes them in order.

Modules: :mod:`.algebra` (numpy kernels), :mod:`.base` (contract, grids, passivity, chain),
:mod:`.lines` (port extension, cable), :mod:`.fixtures` (fixture, OSL, open/short),
:mod:`.thru` (IEEE 370 2x-thru), :mod:`.gate` (time gate), :mod:`.residual`.
"""

from __future__ import annotations

from kit.corrections.base import PASSIVITY_TOL, Chain, Correction, Passivity, chain, passivity
from kit.corrections.fixtures import OSL, Fixture, OpenShort, fixture, open_short, osl
from kit.corrections.gate import TimeGate, time_gate
from kit.corrections.lines import Cable, PortExtension, cable, port_extension
from kit.corrections.residual import Residual, residual
from kit.corrections.thru import TwoXThru, two_x_thru

__all__ = [
    "PASSIVITY_TOL", "Cable", "Chain", "Correction", "Fixture", "OSL", "OpenShort",
    "Passivity", "PortExtension", "Residual", "TimeGate", "TwoXThru", "cable", "chain",
    "fixture", "open_short", "osl", "passivity", "port_extension", "residual", "time_gate",
    "two_x_thru",
]
