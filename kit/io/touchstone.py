"""Safe import of Touchstone 1.x and 2.x files into a :class:`~kit.capture.Capture`.

The file is first scanned by :mod:`kit.io.preflight`. Only a file without error-level
findings is handed to scikit-rf's ``skrf.io.touchstone.Touchstone`` reader, called directly
on the decoded text: never through ``skrf.Network(path)``, which tries to unpickle a file
before reading it as text.

References
----------
.. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009) and
   Version 2.1 (2024).
"""

from __future__ import annotations

import hashlib
import io
import re
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from kit.capture import Capture, CaptureError
from kit.io.names import parse_name
from kit.io.preflight import Scan, read_bytes, scan_bytes

_DATE_RE = re.compile(r"(\d{4}-\d{2}-\d{2}(?:[ T]\d{2}:\d{2}(?::\d{2})?)?|\d{1,2}/\d{1,2}/\d{2,4})")
_CORR_RE = re.compile(r"\b(correction|calibration|cal)\b\s*[:=]?\s*(.*)", re.IGNORECASE)


def header_meta(scan: Scan) -> dict[str, Any]:
    """Metadata from a scan: comments verbatim and the keys a header states."""
    meta: dict[str, Any] = {
        "comments": list(scan.comments),
        "option_line": scan.option_line,
        "option": dict(scan.option),
        "version": scan.version,
        "keywords": dict(scan.keywords),
    }
    if scan.reference is not None:
        meta["reference_ohm"] = list(scan.reference)
    else:
        meta["reference_ohm"] = [scan.option.get("r_ohm", 50.0)] * (scan.nports or 1)
    for c in scan.comments:
        text = c.lstrip("!").strip()
        if "date" not in meta:
            m = _DATE_RE.search(text)
            if m and ("date" in text.lower() or text.lower().startswith(("created", "measured"))
                      or m.group(0) == text):
                meta["date"] = m.group(0)
        if "correction_state" not in meta:
            m = _CORR_RE.search(text)
            if m:
                meta["correction_state"] = text
    return meta


def load(path: str | Path, name_pattern: str | None = None) -> Capture:
    """Read one Touchstone file into a :class:`~kit.capture.Capture`.

    Parameters
    ----------
    path : str or Path
        ``.s1p`` ... ``.sNp`` or ``.ts`` (Touchstone 1.x or 2.x, any letter case).
    name_pattern : str, optional
        A file-name pattern such as ``"{lot}-{serial}"`` or ``"{mode}_{temperature_c}C"``;
        matched against the file stem, fields land in ``meta["fields"]``.

    Returns
    -------
    Capture
        With the warnings of :func:`check` in ``findings``.

    Raises
    ------
    CaptureError
        For every error-level finding (the first one's line is in ``.line``), and for
        anything the reader refuses. No other exception escapes for a malformed file.

    References
    ----------
    .. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009).
    """
    path = Path(path)
    data = read_bytes(path)
    scan = scan_bytes(data, path)
    errors = [f for f in scan.findings if f.severity == "error"]
    if errors:
        first = errors[0]
        raise CaptureError(first.message + (f" (fix: {first.fix})" if first.fix else ""),
                           path, first.line, errors)
    network = _read_network(scan, path)
    findings = [f for f in scan.findings if f.severity != "error"]
    meta = header_meta(scan)
    if name_pattern:
        fields, finding = parse_name(path.stem, name_pattern, str(path))
        meta["fields"] = fields
        if finding is not None:
            findings.append(finding)
    else:
        meta["fields"] = {}
    meta["name_pattern"] = name_pattern
    return Capture(network=network, path=path, sha256=hashlib.sha256(data).hexdigest(),
                   meta=meta, findings=tuple(findings))


def _read_network(scan: Scan, path: Path):
    import skrf
    from skrf.io.touchstone import Touchstone

    sio = io.StringIO(scan.text)
    # scikit-rf takes the port count of a version 1 file from the name's extension
    suffix = path.suffix.lower()
    sio.name = str(path.with_suffix(suffix)) if suffix else str(path)
    try:
        with warnings.catch_warnings(record=True):
            warnings.simplefilter("always")
            t = Touchstone(sio)
            f, s = t.get_sparameter_arrays()
            z0 = np.asarray(t.z0)
            s_def = t.s_def or "power"
            npts = f.size
            if f.size > 1 and np.any(np.diff(f) == 0):
                # repeated frequencies: keep the first of each (the scan reported how many)
                keep = np.concatenate(([True], np.diff(f) > 0))
                f, s = f[keep], s[keep]
                if z0.ndim == 2 and z0.shape[0] == npts:
                    z0 = z0[keep]
            net = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=s, z0=z0,
                               s_def=s_def, name=path.stem)
    except CaptureError:
        raise
    except Exception as exc:  # noqa: BLE001 - reader errors become a CaptureError naming the file
        raise CaptureError(f"the Touchstone reader refused the file: {type(exc).__name__}: {exc}",
                           path) from None
    if net.nports != scan.nports or npts != len(scan.freqs):
        raise CaptureError(
            f"the reader found {net.nports} port(s) x {net.frequency.npoints} points, the scan "
            f"{scan.nports} x {len(scan.freqs)}; the file is ambiguous", path)
    if not np.all(np.isfinite(net.s)):
        raise CaptureError("the data convert to non-finite S-parameters (for example Z data "
                           "with a singular point)", path)
    return net
