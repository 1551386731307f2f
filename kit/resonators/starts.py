"""Where the analysis of a lot starts: a fit span and a name pattern read off the data.

:func:`suggest_span` takes captures and gives the span a fit of their main resonance
should use: from fs - w (fp - fs) to fp + w (fp - fs), with fs and fp the medians of
:func:`kit.resonators.frequencies.resonance` over the captures, clipped to the frequency
range every capture covers (their common range). Without a resonance it is that common
range. :func:`lot_start` does the same on a sample of a folder's files and adds the name
pattern guessed from the file names (:func:`kit.io.names.guess_pattern`). Panels start
from these instead of numbers of one demo lot.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

#: How far beyond fs and fp the span reaches, in units of fp - fs [1]. 1.25 keeps the
#: capacitive baseline on both sides of the pair, which a fit needs for C0 (common
#: practice, no source).
WIDEN = 1.25


@dataclass(frozen=True)
class LotStart:
    """A fit span and a name pattern suggested by the data.

    Attributes
    ----------
    span_hz : (float, float)
        Suggested fit span [Hz].
    common_hz : (float, float)
        The frequency range every capture read covers [Hz].
    fs_hz, fp_hz : float
        Medians of the captures' fs and fp [Hz] (NaN where none was found).
    read : int
        Captures read.
    basis : str
        One sentence saying where the span comes from.
    pattern : str or None
        Name pattern guessed from the file names (None when none could be told, or when
        no names were given).
    files : int
        Touchstone files in the folder (0 when captures were given).
    skipped : tuple of str
        Files that could not be read, with the reason.
    """

    span_hz: tuple[float, float]
    common_hz: tuple[float, float]
    fs_hz: float
    fp_hz: float
    read: int
    basis: str
    pattern: str | None = None
    files: int = 0
    skipped: tuple[str, ...] = field(default=())


def suggest_span(captures, method: str = "reflection", widen: float = WIDEN) -> LotStart:
    """The fit span of the main resonance of some captures (see the module docstring).

    Parameters
    ----------
    captures : iterable of Capture (or skrf.Network)
    method : str
        How Z is taken (see :func:`kit.impedance`).
    widen : float
        Reach beyond fs and fp in units of fp - fs [1].

    Returns
    -------
    LotStart

    Raises
    ------
    ValueError
        When no capture is given, or the captures share no frequency range.
    """
    from kit.capture import CaptureError
    from kit.network.accept import network_of
    from kit.resonators.frequencies import resonance
    from kit.units import quantity

    caps = list(captures)
    if not caps:
        raise ValueError("no capture to read a span from: give at least one")
    f = [np.asarray(network_of(c, "a span").f, dtype=float) for c in caps]
    ranges = [(float(x.min()), float(x.max())) for x in f]
    lo, hi = max(r[0] for r in ranges), min(r[1] for r in ranges)
    note = ""
    if not hi > lo:  # sweeps of different settings: keep the largest group of one range
        groups: dict[tuple[float, float], list[int]] = {}
        for i, r in enumerate(ranges):
            groups.setdefault(r, []).append(i)
        (lo, hi), keep = max(groups.items(), key=lambda kv: len(kv[1]))
        if not hi > lo:
            raise ValueError("the captures share no frequency range: read captures of one "
                             "sweep setting together")
        note = f"; {len(caps) - len(keep)} capture(s) of other sweep ranges left out"
        caps = [caps[i] for i in keep]
    fs, fp = [], []
    for c in caps:
        try:
            r = resonance(c, span_hz=(lo, hi), method=method)
        except (CaptureError, ValueError):
            continue
        fs.append(r.fs_hz)
        fp.append(r.fp_hz)
    fs_m = _median(fs)
    fp_m = _median(fp)
    if math.isfinite(fs_m) and math.isfinite(fp_m) and fp_m > fs_m:
        d = fp_m - fs_m
        span = (max(lo, fs_m - widen * d), min(hi, fp_m + widen * d))
        basis = (f"around the resonance found: fs {quantity(fs_m, 'Hz')}, fp "
                 f"{quantity(fp_m, 'Hz')} (medians of {len(caps)} capture(s)), "
                 f"{widen:g} × (fp − fs) beyond each{note}")
    else:
        span = (lo, hi)
        basis = (f"the range all {len(caps)} capture(s) cover: no resonance pair (fs below "
                 f"fp) was found in them{note}")
    return LotStart(span_hz=span, common_hz=(lo, hi), fs_hz=fs_m, fp_hz=fp_m, read=len(caps),
                    basis=basis)


def _median(values) -> float:
    v = np.asarray([x for x in values if math.isfinite(x)], dtype=float)
    return float(np.median(v)) if v.size else math.nan


def lot_start(folder, method: str = "reflection", sample: int = 8,
              widen: float = WIDEN) -> LotStart:
    """The fit span and name pattern of a folder of captures, from a sample of its files.

    Parameters
    ----------
    folder : str or Path
        A folder of Touchstone files (or one file).
    method : str
        How Z is taken (see :func:`kit.impedance`).
    sample : int
        At most this many files are read, spread evenly over the folder's sorted names;
        the name pattern is guessed from all names.
    widen : float
        See :func:`suggest_span`.

    Returns
    -------
    LotStart
        With ``pattern``, ``files`` and ``skipped`` filled in.

    Raises
    ------
    ValueError
        When the folder holds no readable Touchstone file.
    """
    from dataclasses import replace

    from kit.capture import CaptureError
    from kit.io.folder import touchstone_files
    from kit.io.names import guess_pattern, stem_of
    from kit.io.touchstone import load

    root = Path(folder)
    paths = touchstone_files(root) if root.is_dir() else [root]
    if not paths:
        raise ValueError(f"no Touchstone file (.sNp, .ts) in {root}: check the folder")
    pick = sorted({int(i) for i in np.linspace(0, len(paths) - 1, min(sample, len(paths)))})
    caps, skipped = [], []
    for i in pick:
        try:
            caps.append(load(paths[i]))
        except CaptureError as exc:
            skipped.append(f"{paths[i].name}: {exc}")
    if not caps:
        raise ValueError(f"none of the files read from {root} could be loaded "
                         f"({'; '.join(skipped)})")
    start = suggest_span(caps, method=method, widen=widen)
    return replace(start, pattern=guess_pattern(stem_of(p) for p in paths), files=len(paths),
                   skipped=tuple(skipped))
