"""Per-frequency port reference impedances given in comment lines.

Some writers (field solvers, and scikit-rf's ``Network.write_touchstone(write_z0=True)`` for
power-wave or complex-referenced data) put, after each frequency record, a comment
``! Port Impedance <re1> <im1> <re2> <im2> ...`` (continued on following comment lines that
hold only numbers), with the option line's ``R`` left without a value. The reference of
port k at that frequency is ``re_k + j im_k`` [ohm]; a block of N*N values is a full matrix
whose diagonal is per port. This module finds those blocks exactly as scikit-rf's reader
does (``skrf.io.touchstone.Touchstone._parse_float_block``), so that the pre-flight check
and the reader agree on them.

References
----------
.. [1] scikit-rf, ``skrf/io/touchstone.py`` (``Touchstone._parse_float_block``,
   ``_hfss_port_values``) and ``skrf/network.py`` (``Network.write_touchstone``, ``write_z0``),
   version 2.2.
"""

from __future__ import annotations

import numpy as np

PREFIX = "! port impedance"


def _floats(tokens: list[str], skip_bad: bool) -> list[float] | None:
    out = []
    for t in tokens:
        try:
            out.append(float(t))
        except ValueError:
            if not skip_bad:
                return None
    return out


def float_block(lines: list[str], i: int) -> tuple[list[float], int]:
    """Values of the port-impedance block starting on ``lines[i]``, and the index after it.

    The first line's words that are not numbers are skipped; the block goes on over the
    following lines that start with '!' and hold numbers only.
    """
    head = lines[i].strip().lower()[len(PREFIX):]
    values = _floats(head.rpartition("!")[2].split(), skip_bad=True) or []
    j = i + 1
    while j < len(lines):
        cont = lines[j].strip()
        more = _floats(cont[1:].split(), skip_bad=False) if cont.startswith("!") else None
        if not more:
            break
        values.extend(more)
        j += 1
    return values, j


def check_blocks(blocks: list[tuple[int, list[float]]], nports: int, nrecords: int, add) -> bool:
    """Check the blocks against the data: one per frequency record, N or N*N complex values
    each, finite with a positive real part. Adds an error finding and returns False if not."""
    fix = "give one '! Port Impedance' line per frequency with a real and imaginary part per port"
    if len(blocks) != nrecords:
        add("error", f"{len(blocks)} '! Port Impedance' comment(s) for {nrecords} frequency "
            "record(s): each frequency needs its own", blocks[0][0], fix, "port-impedance")
        return False
    sizes = {2 * nports, 2 * nports * nports}
    for line, vals in blocks:
        if len(vals) not in sizes:
            add("error", f"'! Port Impedance' gives {len(vals)} numbers; {nports} port(s) need "
                f"{2 * nports} (real and imaginary part per port)", line, fix, "port-impedance")
            return False
    if len({len(v) for _, v in blocks}) > 1:
        add("error", "'! Port Impedance' comments differ in length", blocks[0][0], fix,
            "port-impedance")
        return False
    z = np.array([v for _, v in blocks], dtype=float).view(np.complex128)
    if z.shape[1] == nports * nports != nports:  # a full matrix: its diagonal is per port
        z = np.diagonal(z.reshape(-1, nports, nports), axis1=1, axis2=2)
    bad = ~(np.isfinite(z) & (z.real > 0))
    if bad.any():
        k = int(np.argmax(bad.any(axis=1)))
        add("error", "'! Port Impedance' value that is not finite or has no positive real part",
            blocks[k][0], fix, "port-impedance")
        return False
    return True
