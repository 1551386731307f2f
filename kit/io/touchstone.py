"""Safe import of Touchstone 1.x and 2.x files into a :class:`~kit.capture.Capture`.

The file is first scanned by :mod:`kit.io.preflight`, which reads every number. Only a file
without error-level findings becomes a ``skrf.Network``, built from the scan's arrays the way
scikit-rf's reader (``skrf.io.touchstone.Touchstone.load_file``) builds its arrays from the
same numbers (:func:`_arrays`): the file is parsed once. Two rare forms go to
scikit-rf's reader instead, on the text the scan checked (option line and keywords in
canonical form, see :func:`kit.io.preflight.scan_text`): never through
``skrf.Network(path)``, which tries to unpickle a file before reading it as text.
:func:`check` and :func:`load` run the same two steps (:func:`examine`), so a file has an
error-level finding exactly when it is refused.

References
----------
.. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009) and
   Version 2.1 (2024).
.. [2] scikit-rf, ``skrf/io/touchstone.py`` (``Touchstone.load_file``) and
   ``skrf/network.py`` (``Network.read_touchstone``, ``set_noise_a``), version 2.2.
"""

from __future__ import annotations

import hashlib
import io
import re
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from kit.capture import Capture, CaptureError, Finding
from kit.io.names import parse_name, stem_of, suffix_of
from kit.io.options import FREQ_UNITS
from kit.io.preflight import Scan, read_bytes, scan_bytes

_DATE_RE = re.compile(r"(\d{4}-\d{2}-\d{2}(?:[ T]\d{2}:\d{2}(?::\d{2})?)?|\d{1,2}/\d{1,2}/\d{2,4})")
_CORR_RE = re.compile(r"\b(correction|calibration|cal)\b\s*[:=]?\s*(.*)", re.IGNORECASE)


def header_meta(scan: Scan, network=None) -> dict[str, Any]:
    """Metadata from a scan: comments verbatim and the keys a header states."""
    meta: dict[str, Any] = {
        "comments": list(scan.comments),
        "option_line": scan.option_line,
        "option": dict(scan.option),
        "version": scan.version,
        "keywords": dict(scan.keywords),
    }
    if scan.port_impedance:  # per frequency: the first frequency's real parts here
        meta["reference_ohm"] = [float(np.real(z)) for z in np.asarray(network.z0)[0]]
    elif scan.reference is not None:
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


def load(path: str | Path, name_pattern: str | None = None, data: bytes | None = None,
         sha256: str | None = None) -> Capture:
    """Read one Touchstone file into a :class:`~kit.capture.Capture`.

    Parameters
    ----------
    path : str or Path
        ``.s1p`` ... ``.sNp`` or ``.ts`` (Touchstone 1.x or 2.x, any letter case).
    name_pattern : str, optional
        A file-name pattern such as ``"{lot}-{serial}"`` or ``"{mode}_{temperature_c}C"``;
        matched against the file stem, fields land in ``meta["fields"]``.
    data, sha256 : bytes and str, optional
        The file's bytes and their SHA-256 when the caller has them already (the cache of
        parsed captures): the file is then neither read nor hashed again.

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
    data = read_bytes(path) if data is None else data
    scan, network = examine(data, path)
    errors = [f for f in scan.findings if f.severity == "error"]
    if errors:
        first = errors[0]
        raise CaptureError(first.message + (f" (fix: {first.fix})" if first.fix else ""),
                           path, first.line, errors)
    meta = header_meta(scan, network)
    findings = list(scan.findings)
    if name_pattern:
        fields, finding = parse_name(stem_of(path), name_pattern, str(path))
        meta["fields"] = fields
        if finding is not None:
            findings.append(finding)
    else:
        meta["fields"] = {}
    meta["name_pattern"] = name_pattern
    if sha256 is None:
        sha256 = hashlib.sha256(data).hexdigest()
    return Capture(network=network, path=path, sha256=sha256,
                   meta=meta, findings=tuple(findings))


def check(path: str | Path) -> list[Finding]:
    """Pre-flight check of one Touchstone file.

    The same steps as :func:`load` (the line scan, then the reader), so the result has an
    error-level finding exactly when :func:`load` raises.

    Parameters
    ----------
    path : str or Path
        The file (``.s1p`` ... ``.sNp`` or ``.ts``, any letter case).

    Returns
    -------
    list of Finding
        Errors (the file cannot be trusted), warnings (it loads, but say so) and
        information, each with the line where it applies and a suggested fix.

    References
    ----------
    .. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009).
    """
    path = Path(path)
    try:
        data = read_bytes(path)
    except CaptureError as exc:
        return [Finding("error", exc.reason, None, None, "unreadable", str(path))]
    return examine(data, path)[0].findings


def examine(data: bytes, path: Path) -> tuple[Scan, Any]:
    """Scan a file's bytes and, without error findings, read them: ``(scan, network)``.

    A refusal of the reader becomes an error finding of the scan (network None); nothing
    is raised for a malformed file. This is the one path of :func:`check` and :func:`load`.
    """
    scan = scan_bytes(data, path)
    if scan.has_error:
        return scan, None
    return scan, _read_network(scan, path)


_READER_FIX = ("compare the header and the data with the Touchstone specification (option "
               "line, keywords, values per frequency)")


def _read_network(scan: Scan, path: Path):
    """The network of a scanned file; a refusal becomes an error finding (None).

    Built from the scan's numbers (:func:`_arrays`), except for two rare forms
    handed to scikit-rf's reader on the scan's text (:func:`_reader_network`): per-frequency
    '! Port Impedance' comments (the reader also takes the S-parameter definition from
    comment sentences) and [Mixed-Mode Order] (ports reordered, references scaled).
    """
    if scan.port_impedance or "MIXED-MODE ORDER" in scan.keywords:
        return _reader_network(scan, path)
    param = scan.option.get("parameter", "S")
    try:
        with warnings.catch_warnings(record=True), np.errstate(all="ignore"):
            warnings.simplefilter("always")
            f, s, z0 = _arrays(scan)
    except np.linalg.LinAlgError:
        _singular(scan, param)
        return None
    return _finish_network(scan, path, f, s, z0, "power")


def _arrays(scan: Scan) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Frequency [Hz], S and z0 [ohm] from the scan's numbers, as scikit-rf's reader makes them.

    The operations are scikit-rf's own, in its order and on arrays of the same layout, so
    the results are the same to the bit: values as read; MA and DB converted by
    ``mag * exp(1j * deg * pi / 180)`` (DB first to ``10 ** (dB / 20)``); a half matrix
    ([Matrix Format] Lower/Upper) mirrored; the two-port column order of Touchstone 1 and
    [Two-Port Data Order] 21_12 (11 21 12 22) transposed; Y/Z/H/G converted to S by
    scikit-rf's ``y2s``/``z2s``/``h2s``/``g2s`` (Touchstone 1 values being normalised to the
    reference, multiplied by it first). A half two-port matrix is read in the 12_21 order
    (its two off-diagonal entries are equal; scikit-rf 2.2 would fill one from entries it
    never wrote in the 21_12 order).

    References
    ----------
    .. [1] scikit-rf, ``skrf/io/touchstone.py``, ``Touchstone.load_file``, version 2.2.
    .. [2] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009).
    """
    from skrf import network as skrf_network

    n, nf = scan.nports, len(scan.freqs)
    fmt, param = scan.option["format"], scan.option["parameter"]
    raw = np.array(scan.values)  # a C-ordered copy, as scikit-rf's reshaped list
    if fmt == "DB":
        raw[:, 0::2] = 10 ** (raw[:, 0::2] / 20.0)
    if fmt in ("MA", "DB"):
        s_flat = raw[:, 0::2] * np.exp(1j * raw[:, 1::2] * np.pi / 180)
    else:
        s_flat = raw.view(np.complex128)
    s = np.empty((nf, n * n), dtype=complex)
    half = scan.matrix_format
    if half == "FULL":
        s[:] = s_flat
    else:
        index = np.tril_indices(n) if half == "LOWER" else np.triu_indices(n)
        s[:, np.ravel_multi_index(index, (n, n))] = s_flat
    legacy = n == 2 and half == "FULL" and (not scan.version.startswith("2")
                                            or scan.two_port_order == "21_12")
    s = np.transpose(s.reshape((-1, n, n)), axes=(0, 2, 1)) if legacy else s.reshape((-1, n, n))
    if half == "UPPER":
        lower = np.tril_indices(n)
        s[(..., *lower)] = s.transpose(0, 2, 1)[(..., *lower)]
    elif half == "LOWER":
        upper = np.triu_indices(n)
        s[(..., *upper)] = s.transpose(0, 2, 1)[(..., *upper)]
    if scan.reference is not None:
        z0 = np.broadcast_to(scan.reference, (nf, n)).copy()
    else:
        z0 = np.broadcast_to(complex(scan.option["r_ohm"]), (nf, n)).copy()
    if param in ("Y", "Z", "H", "G"):
        if not scan.version.startswith("2"):
            s = s * z0[:, :, None]
        s = getattr(skrf_network, f"{param.lower()}2s")(s, z0)
    return scan.freqs, s, z0


def _singular(scan: Scan, param: str) -> None:
    scan.add("error", f"the {param}-parameters cannot be converted to S-parameters: the "
             "matrix is singular at some frequency", None,
             f"check the {param} values, or export S-parameters", "singular")


def _reader_network(scan: Scan, path: Path):
    """scikit-rf's reader on the scan's text; a refusal becomes an error finding (None)."""
    from skrf.io.touchstone import Touchstone

    sio = io.StringIO(scan.reader_text)
    # scikit-rf takes the port count of a version 1 file from the name's extension
    sio.name = "capture" + (suffix_of(path).lower() or ".ts")
    param = scan.option.get("parameter", "S")
    try:
        with warnings.catch_warnings(record=True), np.errstate(all="ignore"):
            warnings.simplefilter("always")
            t = Touchstone(sio)
            f, s = t.get_sparameter_arrays()
            z0 = np.asarray(t.z0)
    except np.linalg.LinAlgError:
        _singular(scan, param)
        return None
    except Exception:  # noqa: BLE001 - the scan checks what the reader needs; a safety net
        scan.add("error", "the Touchstone reader could not read the file, although the "
                 "check found nothing wrong in it", None, _READER_FIX, "reader")
        return None
    if s.shape != (len(scan.freqs), scan.nports, scan.nports) or f.shape != scan.freqs.shape:
        scan.add("error", f"the reader found {s.shape[1]} port(s) x {f.size} points where the "
                 f"check found {scan.nports} x {scan.freqs.size}; the file is ambiguous", None,
                 _READER_FIX, "reader")
        return None
    return _finish_network(scan, path, f, s, z0, t.s_def or "power")


def _finish_network(scan: Scan, path: Path, f, s, z0, s_def: str):
    """Refuse non-finite S, keep the first of repeated frequencies, make the network (with
    the noise block as scikit-rf's ``Network.read_touchstone`` keeps it)."""
    import skrf

    param = scan.option.get("parameter", "S")
    bad = ~np.isfinite(s).all(axis=(1, 2))
    if bad.any():
        k = int(np.argmax(bad))
        scan.add("error", f"the data convert to non-finite S-parameters (a {param} matrix "
                 "without S-parameter equivalent, or a number too large)",
                 int(scan.freq_lines[k]), "check the values on this line, or export "
                 "S-parameters", "non-finite-s")
        return None
    if f.size > 1 and np.any(np.diff(f) == 0):
        # repeated frequencies: keep the first of each (the scan reported how many)
        keep = np.concatenate(([True], np.diff(f) > 0))
        f, s = f[keep], s[keep]
        if z0.ndim == 2 and z0.shape[0] == keep.size:
            z0 = z0[keep]
    try:
        with warnings.catch_warnings(record=True):
            warnings.simplefilter("always")
            net = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=s, z0=z0,
                               s_def=s_def, name=stem_of(path))
            if scan.noise is not None and len(scan.noise):
                _set_noise(net, scan)
            return net
    except Exception:  # noqa: BLE001 - a safety net as above
        scan.add("error", "the data could not be made into a network, although the check "
                 "found nothing wrong in them", None, _READER_FIX, "reader")
        return None


def _set_noise(net, scan: Scan) -> None:
    """The noise block (frequency, NFmin [dB], |Gamma_opt|, angle [deg], Rn) as scikit-rf's
    ``Network.read_touchstone`` keeps it (``set_noise_a``); Rn is normalised to the
    reference in Touchstone 1 and in ohm in Touchstone 2.

    References
    ----------
    .. [1] scikit-rf, ``skrf/network.py``, ``Network.read_touchstone``, version 2.2.
    .. [2] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009),
       [Noise Data].
    """
    import skrf

    noise = np.array(scan.noise)
    noise[:, 0] *= FREQ_UNITS[scan.option["unit"]]
    rn = noise[:, 4] * net.z0[0, 0] if not scan.version.startswith("2") else noise[:, 4]
    gamma_opt = noise[:, 2] * np.exp(1j * np.deg2rad(noise[:, 3]))
    net.set_noise_a(skrf.Frequency.from_f(noise[:, 0], unit="hz"), noise[:, 1], gamma_opt, rn)
