"""Pre-flight line scan of Touchstone 1.x and 2.x text, and its findings.

The file is scanned line by line (structure, counts, numbers, frequency order) and every
problem becomes a :class:`~kit.capture.Finding` with its line and a suggested fix. Nothing
here raises for a malformed file: :func:`check` returns the findings and
:func:`kit.io.touchstone.load` refuses a file with error-level findings before scikit-rf's
reader sees it. The scan also protects that reader from malformed input it does not
expect (a truncated record, for example, would make it wait for numbers that never come).

References
----------
.. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009) and
   Version 2.1 (2024); Version 1.1 (2002) for the option line defaults.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from kit.capture import CaptureError, Finding

FREQ_UNITS = {"HZ": 1.0, "KHZ": 1e3, "MHZ": 1e6, "GHZ": 1e9}
PARAMS = {"S", "Y", "Z", "H", "G"}
FORMATS = {"DB", "MA", "RI"}
SUFFIX_RE = re.compile(r"^\.s(\d+)p$", re.IGNORECASE)
#: Below this magnitude a reverse term counts as "at the noise floor" (-80 dB); common
#: practice for a two-port analyser's isolation, no source.
NOISE_FLOOR = 1e-4


@dataclass
class Scan:
    """What the line scan of one file found (internal)."""

    path: str
    findings: list[Finding] = field(default_factory=list)
    text: str = ""
    comments: list[str] = field(default_factory=list)
    option_line: str | None = None
    option: dict[str, Any] = field(default_factory=dict)
    version: str = "1.0"
    nports: int | None = None
    keywords: dict[str, str] = field(default_factory=dict)
    reference: list[float] | None = None
    matrix_format: str = "FULL"
    two_port_order: str = "21_12"
    freqs: Any = field(default_factory=list)  # ndarray after a scan
    freq_lines: Any = field(default_factory=list)
    values: Any = field(default_factory=list)
    noise_rows: int = 0

    def add(self, severity: str, message: str, line: int | None = None, fix: str | None = None,
            code: str = "") -> None:
        self.findings.append(Finding(severity, message, line, fix, code, self.path))

    @property
    def has_error(self) -> bool:
        return any(f.severity == "error" for f in self.findings)


def _decode(data: bytes, scan: Scan) -> str:
    if data.startswith(b"\xef\xbb\xbf"):
        scan.add("warning", "the file starts with a UTF-8 byte-order mark; it was skipped", 1,
                 "save the file as UTF-8 without BOM", "bom")
        data = data[3:]
    elif data.startswith((b"\xff\xfe", b"\xfe\xff")):
        scan.add("error", "the file is UTF-16 text, which Touchstone does not allow", 1,
                 "save it as ASCII or UTF-8", "utf16")
        return ""
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        scan.add("warning", "the text is not UTF-8; it was decoded as ISO-8859-1 (Latin-1)", line,
                 "save the file as ASCII or UTF-8", "not-utf8")
        return data.decode("latin-1")


def _parse_option(tokens: list[str], scan: Scan, lineno: int) -> None:
    opt = {"unit": "GHZ", "parameter": "S", "format": "MA", "r_ohm": 50.0}
    i = 0
    while i < len(tokens):
        t = tokens[i].upper()
        if t in FREQ_UNITS:
            opt["unit"] = t
        elif t in PARAMS:
            opt["parameter"] = t
        elif t in FORMATS:
            opt["format"] = t
        elif t == "R":
            if i + 1 >= len(tokens):
                scan.add("error", "malformed option line: 'R' is not followed by a reference "
                         "impedance", lineno, "write e.g. '# MHz S RI R 50'", "bad-option")
                return
            tok = tokens[i + 1]
            try:
                if tok.startswith("("):
                    # a complex reference is outside the specification; some writers emit it
                    opt["r_ohm"] = complex(tok.strip("()").replace(" ", ""))
                    scan.add("warning", f"complex reference impedance {tok} in the option line is "
                             "outside the Touchstone specification", lineno,
                             "use a real reference, or [Reference] in a version 2 file",
                             "complex-reference")
                else:
                    opt["r_ohm"] = float(tok)
            except ValueError:
                scan.add("error", f"malformed option line: reference impedance {tokens[i + 1]!r} "
                         "is not a number", lineno, "write e.g. '# MHz S RI R 50'", "bad-option")
                return
            i += 1
        else:
            scan.add("error", f"malformed option line: unknown unit, parameter or format "
                     f"{tokens[i]!r}", lineno,
                     "use Hz/kHz/MHz/GHz, S/Y/Z/H/G, DB/MA/RI and 'R <ohms>'", "bad-option")
            return
        i += 1
    scan.option = opt


def _ports_from_name(path: str, scan: Scan) -> int | None:
    suffix = Path(path).suffix
    m = SUFFIX_RE.match(suffix)
    if m:
        n = int(m.group(1))
        if n < 1:
            scan.add("error", f"file extension {suffix!r} names no ports", None,
                     "rename it .s1p to .s4p (or .sNp)", "bad-extension")
            return None
        return n
    if suffix.lower() == ".ts":
        return None
    scan.add("error", f"file extension {suffix!r} is not a Touchstone one", None,
             "rename it .sNp (N = number of ports) or .ts", "bad-extension")
    return None


def _values_per_record(scan: Scan) -> int:
    n = scan.nports or 1
    pairs = n * n if scan.matrix_format == "FULL" else n * (n + 1) // 2
    return 1 + 2 * pairs


def _other_port_count(ncols: int) -> int | None:
    for n in range(1, 9):
        if 1 + 2 * n * n == ncols:
            return n
    return None


def _to_float(tok: str) -> float:
    return float(tok.replace("D", "E").replace("d", "e"))


def scan_text(text: str, path: str, scan: Scan | None = None) -> Scan:
    """Scan Touchstone text; fills and returns a :class:`Scan` (no exceptions)."""
    scan = scan or Scan(path=path)
    scan.text = text
    suffix_ports = _ports_from_name(path, scan)
    lines = text.splitlines()
    if not any(ln.strip() for ln in lines):
        scan.add("error", "the file is empty", None, "re-export the capture from the analyser",
                 "empty")
        return scan
    in_data = True  # v1 files have data right after the option line
    in_noise = False
    in_info = False
    option_seen_at = None
    ref_pending = 0
    data_lines: list[tuple[int, list[str]]] = []  # (line, tokens)
    nf_declared = None

    for lineno, raw in enumerate(lines, start=1):
        body, bang, comment = raw.partition("!")
        if bang:
            scan.comments.append(raw.strip())
        s = body.strip()
        if not s:
            continue
        if in_info:
            if s.upper().startswith("[END INFORMATION]"):
                in_info = False
            continue
        if s.startswith("#"):
            if option_seen_at is not None:
                scan.add("warning", f"repeated option line (first on line {option_seen_at}); "
                         "the repeat is ignored", lineno, "delete the second option line",
                         "repeated-option")
                continue
            option_seen_at = lineno
            scan.option_line = s
            _parse_option(s[1:].split(), scan, lineno)
            continue
        if s.startswith("["):
            m = re.match(r"^\[([^\]]*)\]\s*(.*)$", s)
            if not m:
                scan.add("error", f"malformed keyword line {s[:40]!r}", lineno,
                         "keywords look like '[Number of Ports] 2'", "bad-keyword")
                continue
            key, arg = m.group(1).strip().upper(), m.group(2).strip()
            scan.keywords[key] = arg
            ref_pending = 0
            if key == "VERSION":
                scan.version = arg or "2.0"
                in_data = False
            elif key == "NUMBER OF PORTS":
                try:
                    scan.nports = int(arg)
                except ValueError:
                    scan.add("error", f"[Number of Ports] {arg!r} is not a whole number", lineno,
                             None, "bad-keyword")
            elif key == "NUMBER OF FREQUENCIES":
                try:
                    nf_declared = (int(arg), lineno)
                except ValueError:
                    scan.add("error", f"[Number of Frequencies] {arg!r} is not a whole number",
                             lineno, None, "bad-keyword")
            elif key == "TWO-PORT DATA ORDER":
                scan.two_port_order = arg.upper()
                if scan.two_port_order not in ("12_21", "21_12"):
                    scan.add("error", f"[Two-Port Data Order] {arg!r} must be 12_21 or 21_12",
                             lineno, None, "bad-keyword")
            elif key == "MATRIX FORMAT":
                scan.matrix_format = arg.upper()
                if scan.matrix_format not in ("FULL", "LOWER", "UPPER"):
                    scan.add("error", f"[Matrix Format] {arg!r} must be Full, Lower or Upper",
                             lineno, None, "bad-keyword")
                    scan.matrix_format = "FULL"
            elif key == "REFERENCE":
                scan.reference = []
                for tok in arg.split():
                    try:
                        scan.reference.append(_to_float(tok))
                    except ValueError:
                        scan.add("error", f"[Reference] value {tok!r} is not a number", lineno,
                                 None, "bad-keyword")
                ref_pending = max(0, (scan.nports or 0) - len(scan.reference))
            elif key == "NETWORK DATA":
                in_data, in_noise = True, False
            elif key == "NOISE DATA":
                in_data, in_noise = False, True
            elif key == "BEGIN INFORMATION":
                in_info = True
            elif key == "END":
                in_data = in_noise = False
            continue
        if ref_pending:
            for tok in s.split():
                try:
                    scan.reference.append(_to_float(tok))
                except ValueError:
                    scan.add("error", f"[Reference] value {tok!r} is not a number", lineno, None,
                             "bad-keyword")
            ref_pending = max(0, (scan.nports or 0) - len(scan.reference))
            continue
        if in_noise:
            scan.noise_rows += 1
            continue
        if not in_data:
            if scan.version.startswith("2"):
                scan.add("warning", "data without a [Network Data] keyword before it; read as "
                         "network data", lineno,
                         "put '[Network Data]' before the first data line", "no-network-data")
                in_data = True
            else:
                continue
        data_lines.append((lineno, s.split()))

    # ---- option line
    if option_seen_at is None:
        scan.add("warning", "no option line; the specification's default '# GHz S MA R 50' "
                 "applies", 1, "add an option line such as '# Hz S RI R 50'", "no-option")
        scan.option = {"unit": "GHZ", "parameter": "S", "format": "MA", "r_ohm": 50.0}
    if scan.has_error:
        return scan
    # ---- port count
    if scan.version.startswith("2"):
        if scan.nports is None:
            scan.add("error", "Touchstone 2 file without [Number of Ports]", None,
                     "add '[Number of Ports] N' after [Version]", "no-ports")
            return scan
        if suffix_ports is not None and suffix_ports != scan.nports:
            scan.add("warning", f"[Number of Ports] {scan.nports} differs from the file name "
                     f"({Path(path).suffix}); the keyword is used", None, None, "ports-name")
        if scan.keywords.get("NUMBER OF FREQUENCIES") is None:
            scan.add("error", "Touchstone 2 file without [Number of Frequencies]", None,
                     "add '[Number of Frequencies] N'", "no-nfreq")
            return scan
    else:
        if suffix_ports is None:
            scan.add("error", "cannot tell the number of ports: a '.ts' file needs "
                     "[Version] 2.0 and [Number of Ports]", None,
                     "rename the file .sNp or add the Touchstone 2 keywords", "no-ports")
            return scan
        scan.nports = suffix_ports
    n = scan.nports
    if scan.reference is not None:
        if len(scan.reference) != n:
            scan.add("error", f"[Reference] gives {len(scan.reference)} value(s) for {n} port(s)",
                     None, "give one reference impedance per port", "bad-reference")
            return scan
    per = _values_per_record(scan)

    # ---- data records
    if not data_lines:
        scan.add("error", "the file has no data lines", None,
                 "re-export the capture from the analyser", "empty")
        return scan
    line_based = (not scan.version.startswith("2")) and n <= 2
    records: list[tuple[int, list[str]]] = []
    if line_based:
        items = data_lines
        for idx, (ln, toks) in enumerate(items):
            if n == 2 and len(toks) == 5 and records:
                # Touchstone 1 noise block of a two-port: starts where the frequency does not rise
                try:
                    if _to_float(toks[0]) <= _to_float(records[-1][1][0]):
                        scan.noise_rows = len(items) - idx
                        break
                except ValueError:
                    pass
            if len(toks) != per:
                last = idx == len(items) - 1
                other = _other_port_count(len(toks))
                if last and len(toks) < per:
                    msg = (f"the last data line has {len(toks)} of {per} values: the file is "
                           "truncated")
                    fix = "re-export the capture; the file was cut short"
                    code = "truncated"
                elif other is not None and other != n:
                    msg = (f"data line has {len(toks)} values, which fits {other}-port data, "
                           f"but the file name says {n} port(s) (expected {per})")
                    fix = f"rename the file .s{other}p if it holds {other}-port data"
                    code = "columns"
                else:
                    msg = f"data line has {len(toks)} values; {n}-port data needs {per}"
                    fix = "check the export settings; each line needs frequency plus 2 values per S-term"
                    code = "columns"
                scan.add("error", msg, ln, fix, code)
                return scan
            records.append((ln, toks))
    else:
        tokens_stream = [(ln, t, j == 0) for ln, toks in data_lines for j, t in enumerate(toks)]
        i = 0
        while i < len(tokens_stream):
            ln, t, first = tokens_stream[i]
            if not first:
                scan.add("error", f"a frequency record does not start on a new line: the values "
                         f"do not fit {n}-port data ({per} values per frequency)", ln,
                         "check the port count and the matrix format", "columns")
                return scan
            chunk = tokens_stream[i: i + per]
            if len(chunk) < per:
                scan.add("error", f"the last frequency record has {len(chunk)} of {per} values: "
                         "the file is truncated", chunk[-1][0],
                         "re-export the capture; the file was cut short", "truncated")
                return scan
            records.append((ln, [c[1] for c in chunk]))
            i += per
    mult = FREQ_UNITS.get(scan.option.get("unit", "GHZ"), 1e9)
    # Numbers in one numpy conversion (measured about 3x faster than float() per token); the
    # slow per-record path runs only to name the line of a bad token.
    try:
        arr = np.array([t for _, toks in records for t in toks], dtype=float).reshape(len(records), per)
    except ValueError:
        arr = None
        for ln, toks in records:
            if not all(_is_float(t) for t in toks):
                bad = next(t for t in toks if not _is_float(t))
                scan.add("error", f"{bad!r} is not a number", ln,
                         "remove the stray text or comment it out with '!'", "not-number")
                return scan
        arr = np.array([[_to_float(t) for t in toks] for _, toks in records], dtype=float)
    lines_arr = np.fromiter((ln for ln, _ in records), dtype=np.int64, count=len(records))
    finite = np.isfinite(arr).all(axis=1)
    if not finite.all():
        scan.add("error", "NaN or infinite value in the data", int(lines_arr[np.argmin(finite)]),
                 "re-export the capture; the analyser wrote an invalid number", "nan-values")
        return scan
    f = arr[:, 0] * mult
    if f.size and f.min() < 0:
        k = int(np.argmax(f < 0))
        scan.add("error", f"negative frequency {arr[k, 0]}", int(lines_arr[k]), None,
                 "bad-frequency")
        return scan
    d = np.diff(f)
    if np.any(d < 0):
        k = int(np.argmax(d < 0)) + 1
        scan.add("error", f"frequency {arr[k, 0]:g} is lower than the one before: frequencies "
                 "must rise", int(lines_arr[k]), "sort the data by frequency or split the file",
                 "decreasing")
        return scan
    dup = int(np.count_nonzero(d == 0))
    first_dup = int(lines_arr[int(np.argmax(d == 0)) + 1]) if dup else None
    scan.freqs = f
    scan.freq_lines = lines_arr
    scan.values = arr[:, 1:]
    if nf_declared is not None and nf_declared[0] != len(records):
        scan.add("error", f"[Number of Frequencies] says {nf_declared[0]} but the file has "
                 f"{len(records)} frequency records", nf_declared[1],
                 "correct the keyword or restore the missing lines", "nfreq-mismatch")
        return scan
    if dup:
        scan.add("warning", f"{dup} repeated frequency value(s) (first on line {first_dup}); "
                 "loading keeps the first of each and drops the rest", first_dup,
                 "export with more frequency digits", "duplicate-frequency")
    _reference_findings(scan)
    _one_path_finding(scan)
    return scan


def _is_float(t: str) -> bool:
    try:
        _to_float(t)
        return True
    except ValueError:
        return False


def _reference_findings(scan: Scan) -> None:
    if scan.reference is not None:
        refs = scan.reference
        if len(set(refs)) > 1:
            scan.add("warning", "per-port reference impedances differ: "
                     + ", ".join(f"port {i + 1}: {r:g} ohm" for i, r in enumerate(refs)),
                     None, "renormalise to one reference before comparing ports", "per-port-reference")
        elif refs and refs[0] != 50.0:
            scan.add("warning", f"reference impedance is {refs[0]:g} ohm, not 50 ohm", None,
                     None, "non-50-reference")
    else:
        r = scan.option.get("r_ohm", 50.0)
        if r != 50.0:
            scan.add("warning", f"reference impedance is {r:g} ohm, not 50 ohm", None, None,
                     "non-50-reference")


def _magnitude(a: np.ndarray, b: np.ndarray, fmt: str) -> np.ndarray:
    if fmt == "RI":
        return np.hypot(a, b)
    if fmt == "DB":
        return 10.0 ** (a / 20.0)
    return np.abs(a)


def _one_path_finding(scan: Scan) -> None:
    if scan.nports != 2 or scan.option.get("parameter") != "S" or not len(scan.values):
        return
    if scan.matrix_format != "FULL":
        return
    v = np.asarray(scan.values)
    fmt = scan.option.get("format", "MA")
    # Touchstone 1 and "21_12": 11 21 12 22; "12_21": 11 12 21 22
    i21, i12 = (1, 2) if scan.two_port_order == "21_12" or not scan.version.startswith("2") else (2, 1)
    m21 = _magnitude(v[:, 2 * i21], v[:, 2 * i21 + 1], fmt)
    m12 = _magnitude(v[:, 2 * i12], v[:, 2 * i12 + 1], fmt)
    m22 = _magnitude(v[:, 6], v[:, 7], fmt)
    all_zero = not np.any(m12) and not np.any(m22)
    floor = m12.max() < NOISE_FLOOR and m21.max() > 100.0 * max(m12.max(), 1e-300)
    if all_zero or floor:
        peak_db = 20 * np.log10(max(m12.max(), 1e-300))
        what = "all zero" if all_zero else f"at the noise floor (max |S12| {peak_db:.0f} dB)"
        scan.add("warning", f"reverse terms are {what}: a one-path measurement; S12/S22 carry "
                 "no information and reciprocity checks do not apply", None,
                 "use forward terms only (series- or shunt-through from S21)", "one-path")


def read_bytes(path: Path) -> bytes:
    """The file's bytes; an unreadable path is a :class:`~kit.capture.CaptureError`."""
    try:
        return path.read_bytes()
    except FileNotFoundError:
        raise CaptureError("file not found", path) from None
    except IsADirectoryError:
        raise CaptureError("is a folder, not a file; use kit.load_folder", path) from None
    except OSError as exc:
        raise CaptureError(f"cannot read the file: {exc.strerror or exc}", path) from None


def check(path: str | Path) -> list[Finding]:
    """Pre-flight check of one Touchstone file.

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
    return scan_bytes(data, path).findings


def scan_bytes(data: bytes, path: Path) -> Scan:
    """Decode and scan a file's bytes; every problem is a finding, nothing is raised."""
    scan = Scan(path=str(path))
    text = _decode(data, scan)
    if scan.has_error:
        return scan
    try:
        return scan_text(text, str(path), scan)
    except Exception as exc:  # noqa: BLE001 - the scan must never let a malformed file escape
        scan.add("error", f"the file could not be scanned ({type(exc).__name__}: {exc})", None,
                 None, "scan-failed")
        return scan
