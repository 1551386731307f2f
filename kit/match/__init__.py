"""Electrical matching of a measured transducer, and the physical limit on it.

Designs (each returns a :class:`MatchDesign` with the part values, a scikit-rf two-port
of the circuit via ``.network()``, and ``describe()`` for provenance):

* :func:`tuning_inductor` - shunt or series inductor cancelling C0 or the measured
  reactance at one frequency;
* :func:`transformer`, :func:`tuned_transformer` - ideal transformer matching the real
  part to the source, alone or after a tuning inductor;
* :func:`l_network` - both L-section solutions from a complex load to a real source;
* :func:`band` - a two-element match optimised over a band.

:func:`design_frequency` gives the frequency to design at (fs of a fit) and
:func:`design_sensitivity` how much a design's parts change for a 0.1 % shift of it.

Then :func:`response` (input impedance, |S11|, return loss, VSWR, mismatch loss, power
delivered; ``.bandwidth(rl_db)``), :func:`bode_fano` (the limit and each design's share of
it), :func:`round_design` (IEC 60063 E12/E24 values) and :func:`stress` (RMS voltage and
current on the element and each part at a drive power).

Loads are given as numbers or as a measured, corrected :class:`~kit.capture.Capture`
(its impedance is taken with :func:`kit.impedance`).

Safety
------
Read :data:`CAUTIONS` before driving a matched element at power:

* Driving a matched transducer at resonance can put hundreds of volts across the element
  and the tuning parts, even at a few tens of watts. :func:`stress` estimates them; the
  real values depend on the drive, the load and the parts.
* Never drive an unloaded, dry (air-backed) high-power transducer at power: it can
  overheat, depole or crack.
* Work within the voltage, current and power ratings of the parts, the element and the
  amplifier.
* Keep your lab's electrical safety practice and the local codes; defer to a qualified
  person for high-voltage work.
"""

from __future__ import annotations

from kit.match.band import band
from kit.match.bode_fano import FanoLimit, bode_fano, fano_integral
from kit.match.circuit import MatchDesign, Part, chain, input_impedance, load_z
from kit.match.designs import l_network, transformer, tuned_transformer, tuning_inductor
from kit.match.eseries import E12, E24, round_design, round_to_series, series_values
from kit.match.response import (
                       Bandwidth,
                       MatchResponse,
                       bandwidth,
                       gamma_from_vswr,
                       gamma_from_z,
                       mismatch_loss_db,
                       response,
                       return_loss_db,
                       vswr,
)
from kit.match.sensitivity import Sensitivity, design_frequency, design_sensitivity
from kit.match.stress import PartStress, StressReport, stress

CAUTIONS: tuple[str, ...] = (
    "Driving a matched transducer at resonance can put hundreds of volts across the element "
    "and the tuning parts, even at modest power.",
    "Never drive an unloaded or dry (air-backed) high-power transducer at power: it can "
    "overheat, depole or crack.",
    "Work within the voltage, current and power ratings of the parts, the element and the "
    "amplifier.",
    "Keep your lab's electrical safety practice and the local codes; defer to a qualified "
    "person for high-voltage work.",
)

NOTEBOOK_SECTION = """\
## Matching the element to the amplifier

**Safety.** Driving a matched transducer at resonance can put hundreds of volts across the
element and the tuning parts, even at modest power. Never drive an unloaded or dry
(air-backed) high-power transducer at power: it can overheat, depole or crack. Work within
the ratings of the parts, the element and the amplifier; keep your lab's electrical safety
practice and the local codes, and defer to a qualified person for high-voltage work.

The cell below designs a match from the corrected capture, shows the predicted response
before and after, the Bode-Fano limit for the element's RC equivalent over the band, the
parts rounded to E24 values and the voltage and current they see at the chosen drive power
(available power of a 50 ohm source).
"""

__all__ = [
    "CAUTIONS", "NOTEBOOK_SECTION", "E12", "E24", "Bandwidth", "FanoLimit", "MatchDesign",
    "MatchResponse", "Part", "PartStress", "Sensitivity", "StressReport", "band",
    "bandwidth", "bode_fano", "chain", "design_frequency", "design_sensitivity",
    "fano_integral", "gamma_from_vswr", "gamma_from_z", "input_impedance", "l_network",
    "load_z", "mismatch_loss_db", "response", "return_loss_db", "round_design",
    "round_to_series", "series_values", "stress", "transformer", "tuned_transformer",
    "tuning_inductor", "vswr",
]
