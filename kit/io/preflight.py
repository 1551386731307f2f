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
from kit.io.keywords import LineState, keyword_line, reference_values
from kit.io.names import suffix_of
from kit.io.options import DEFAULT_OPTION, option_text, parse_option
from kit.io.portref import PREFIX, check_blocks, float_block
from kit.io.records import Block, bulk_rows, numbers, records_of

SUFFIX_RE = re.compile(r"^\.s(\d+)p$", re.IGNORECASE)
#: Comment lines scikit-rf's reader takes for something else than a comment.
_SPECIAL_COMMENTS = ("! gamma", "! port", "! terminal data exported", "! modal data exported")

#: Below this magnitude a reverse term counts as "at the noise floor" (-80 dB); common
#: practice for a two-port analyser's isolation, no source.
NOISE_FLOOR = 1e-4


@dataclass
class Scan:
    """What the line scan of one file found (internal)."""

    path: str
    findings: list[Finding] = field(default_factory=list)
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
    noise: Any = None  # ndarray (rows, 5) of the noise block, as written
    port_impedance: bool = False  # per-frequency references in '! Port Impedance' comments
    reader_lines: list[str] = field(default_factory=list)  # see reader_text
    lines: list[str] = field(default_factory=list)
    bulk_spans: list[tuple[int, int]] = field(default_factory=list)

    def add(self, severity: str, message: str, line: int | None = None, fix: str | None = None,
            code: str = "") -> None:
        self.findings.append(Finding(severity, message, line, fix, code, self.path))

    @property
    def has_error(self) -> bool:
        return any(f.severity == "error" for f in self.findings)

    @property
    def reader_text(self) -> str:
        """What scikit-rf's reader reads, line for line (see :func:`scan_text`); '' after
        an error. Data lines read in bulk are filled in here, only when asked for."""
        if not self.reader_lines:
            return ""
        reader = list(self.reader_lines)
        for a, b in self.bulk_spans:
            reader[a:b] = [ln.strip() for ln in self.lines[a:b]]
        return "\n".join(reader) + "\n"


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


def _ports_from_name(path: str, scan: Scan) -> int | None:
    suffix = suffix_of(path)
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


def _comment_line(lines: list[str], idx: int, reader: list[str], blocks: list) -> int:
    """A comment line: port-impedance blocks and the s-definition sentence go to the reader
    (verbatim), every other comment is left out. Returns the index of the next line."""
    stripped = lines[idx].strip()
    low = stripped.lower()
    if low.startswith(PREFIX):
        values, end = float_block(lines, idx)
        blocks.append((idx + 1, values))
        reader[idx:end] = [ln.strip() for ln in lines[idx:end]]
        return end
    if "S-parameter uses the" in stripped and not low.startswith(_SPECIAL_COMMENTS):
        reader[idx] = stripped
    return idx + 1


def scan_text(text: str, path: str, scan: Scan | None = None) -> Scan:
    """Scan Touchstone text; fills and returns a :class:`Scan` (no exceptions).

    ``scan.reader_text`` is the text for the reader, line for line: the option line and
    keywords in canonical form, data lines without their comments, and left out (blank)
    whatever the scan ignores, so the reader reads exactly what the scan checked.
    """
    scan = scan or Scan(path=path)
    suffix_ports = _ports_from_name(path, scan)
    # lines end at CR, LF or CR LF only (as the specification and scikit-rf's reader have
    # it), not at the other breaks of str.splitlines (form feed, U+2028, ...)
    text = text.replace("\r\n", "\n").replace("\r", "\n")
    lines = text.split("\n")
    scan.lines = lines
    if not any(ln.strip() for ln in lines):
        scan.add("error", "the file is empty", None, "re-export the capture from the analyser",
                 "empty")
        return scan
    reader = [""] * len(lines)
    st = LineState()
    data_lines: list[tuple[int, list[str]]] = []  # (line, tokens)
    noise_lines: list[tuple[int, list[str]]] = []
    blocks: list[tuple[int, list[float]]] = []  # per-frequency port references
    at = [0, 0, 0]  # bulk reading: [line, its offset in text, no bulk before this line]
    idx = 0
    while idx < len(lines):
        raw = lines[idx]
        lineno = idx + 1
        body, bang, _ = raw.partition("!")
        if bang:
            scan.comments.append(raw.strip())
        s = body.strip()
        if st.after_end or st.in_info:
            if st.in_info and s.upper().startswith("[END INFORMATION]"):
                st.in_info = False
            elif st.after_end and (s or raw.strip().lower().startswith(PREFIX)) \
                    and "end-text" not in {f.code for f in scan.findings}:
                scan.add("warning", "text after [End] is ignored", lineno,
                         "delete it or move it before [End]", "end-text")
            idx += 1
            continue
        if not s:
            idx = _comment_line(lines, idx, reader, blocks) if bang else idx + 1
            continue
        idx += 1
        if s.startswith("#"):
            st.content_seen = True
            if st.option_at is not None:
                scan.add("warning", f"repeated option line (first on line {st.option_at}); "
                         "the repeat is ignored", lineno, "delete the second option line",
                         "repeated-option")
                continue
            st.option_at = lineno
            scan.option_line = s
            if scan.version.startswith("2") and set(st.seen) - {"VERSION"}:
                scan.add("error", "the option line comes after keywords other than [Version]",
                         lineno, "put the option line right after [Version]", "keyword-order")
            scan.option = parse_option(s[1:].split(), scan.add, lineno) or {}
            continue
        if s.startswith("["):
            m = re.match(r"^\[([^\]]*)\]\s*(.*)$", s)
            st.ref_pending = 0
            if not m:
                scan.add("error", f"malformed keyword line {s[:40]!r}", lineno,
                         "keywords look like '[Number of Ports] 2'", "bad-keyword")
            else:
                key, arg = " ".join(m.group(1).split()).upper(), m.group(2).strip()
                scan.keywords[key] = arg
                reader[lineno - 1] = keyword_line(scan, st, key, arg, lineno)
            st.content_seen = True
            continue
        st.content_seen = True
        if st.ref_pending:
            reference_values(scan, s, lineno)
            st.ref_pending = max(0, (scan.nports or 0) - len(scan.reference))
            continue
        if st.in_noise:
            noise_lines.append((lineno, s.split()))
            reader[lineno - 1] = s
            continue
        if not st.in_data:
            scan.add("warning", "data without a [Network Data] keyword before it; read as "
                     "network data", lineno,
                     "put '[Network Data]' before the first data line", "no-network-data")
            st.in_data = True
        st.data_started = True
        if not bang and idx > at[2]:
            block = _bulk(text, lines, idx - 1, at)
            if block is not None:
                data_lines.append(block)
                scan.bulk_spans.append((block.start, block.stop))
                idx = block.stop
                continue
        data_lines.append((lineno, s.split()))
        reader[lineno - 1] = s
    if st.ref_index is not None and scan.reference:
        reader[st.ref_index] = "[Reference] " + " ".join(repr(r) for r in scan.reference)
    _finish(scan, st, reader, data_lines, noise_lines, blocks, suffix_ports)
    return scan


def _bulk(text: str, lines: list[str], i: int, at: list[int]) -> Block | None:
    """Plain data lines from ``lines[i]`` on (up to the next comment, option line or
    keyword), read at once by :func:`kit.io.records.bulk_rows`; None to read line by line.

    The lines read this way are the ones the line loop would read as data lines with the
    same state (no '!', '#' or '[' in them), so both ways give the same records.
    """
    off = at[1] + sum(len(ln) + 1 for ln in lines[at[0]:i])
    at[0], at[1] = i, off
    stop = len(text)  # the stretch ends at a comment, an option line or a keyword
    for mark in "![#":
        q = text.find(mark, off, stop)
        if q >= 0:
            stop = q
    end = len(text) if stop == len(text) else text.rfind("\n", off, stop) + 1
    at[2] = max(i + text.count("\n", off, end), i + 1)  # one attempt per stretch
    if end <= off:
        return None
    got = bulk_rows(text[off:end], i, lines)
    if got is None:
        return None
    block, used = got
    at[0], at[1] = block.stop, off + used
    return block


def _finish(scan: Scan, st: LineState, reader: list[str], data_lines, noise_lines, blocks,
            suffix_ports: int | None) -> None:
    path = scan.path
    # ---- option line
    if st.option_at is None:
        scan.add("warning", "no option line; the specification's default '# GHz S MA R 50' "
                 "applies", 1, "add an option line such as '# Hz S RI R 50'", "no-option")
        scan.option = dict(DEFAULT_OPTION)
    elif scan.option:
        if scan.option["r_ohm"] is None and not blocks:
            scan.add("error", "malformed option line: 'R' is not followed by a reference "
                     "impedance", st.option_at, "write e.g. '# MHz S RI R 50'", "bad-option")
        reader[st.option_at - 1] = option_text(scan.option)
    if scan.has_error:
        return
    # ---- port count
    if scan.version.startswith("2"):
        if scan.nports is None:
            scan.add("error", "Touchstone 2 file without [Number of Ports]", None,
                     "add '[Number of Ports] N' after [Version]", "no-ports")
            return
        if suffix_ports is not None and suffix_ports != scan.nports:
            scan.add("warning", f"[Number of Ports] {scan.nports} differs from the file name "
                     f"({suffix_of(path)}); the keyword is used", None, None, "ports-name")
        if st.nf_declared is None:
            scan.add("error", "Touchstone 2 file without [Number of Frequencies]", None,
                     "add '[Number of Frequencies] N'", "no-nfreq")
            return
    else:
        if suffix_ports is None:
            scan.add("error", "cannot tell the number of ports: a '.ts' file needs "
                     "[Version] 2.0 and [Number of Ports]", None,
                     "rename the file .sNp or add the Touchstone 2 keywords", "no-ports")
            return
        scan.nports = suffix_ports
    n = scan.nports
    if scan.option["parameter"] in ("H", "G") and n != 2:
        scan.add("error", f"{scan.option['parameter']}-parameters are defined for two-ports "
                 f"only, and this file has {n} port(s)", st.option_at,
                 "correct the parameter of the option line (S, Y or Z)", "bad-option")
        return
    if scan.reference is not None and len(scan.reference) != n:
        scan.add("error", f"[Reference] gives {len(scan.reference)} value(s) for {n} port(s)",
                 None if st.ref_index is None else st.ref_index + 1,
                 "give one reference impedance per port", "bad-reference")
        return
    # ---- data records
    records = records_of(scan, data_lines, noise_lines)
    if records is None or not numbers(scan, records):
        return
    if st.nf_declared is not None and st.nf_declared[0] != len(records):
        scan.add("error", f"[Number of Frequencies] says {st.nf_declared[0]} but the file has "
                 f"{len(records)} frequency records", st.nf_declared[1],
                 "correct the keyword or restore the missing lines", "nfreq-mismatch")
        return
    if blocks:
        if not check_blocks(blocks, n, len(records), scan.add):
            return
        scan.port_impedance = True
        scan.add("warning", "the comments give a complex port reference impedance per "
                 "frequency ('! Port Impedance'); the data are read against it", blocks[0][0],
                 "renormalise to a real reference before comparing with 50 ohm data",
                 "port-impedance-comments")
    if n == 2 and scan.matrix_format != "FULL":
        # scikit-rf 2.2 fills an Upper two-port matrix in the 21_12 order (its default) from
        # entries it never wrote; for a symmetric matrix the order means nothing, so the
        # reader is told 12_21, which it fills correctly
        if "TWO-PORT DATA ORDER" in st.seen:
            reader[st.seen["TWO-PORT DATA ORDER"] - 1] = ""
        reader[st.seen["MATRIX FORMAT"] - 1] += "\n[Two-Port Data Order] 12_21"
    scan.reader_lines = reader
    _reference_findings(scan)
    _one_path_finding(scan)


def _reference_findings(scan: Scan) -> None:
    if scan.port_impedance:
        return  # said by the 'port-impedance-comments' warning
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


def scan_bytes(data: bytes, path: Path) -> Scan:
    """Decode and scan a file's bytes; every problem is a finding, nothing is raised."""
    scan = Scan(path=str(path))
    text = _decode(data, scan)
    if scan.has_error:
        return scan
    try:
        return scan_text(text, str(path), scan)
    except Exception:  # noqa: BLE001 - the scan must never let a malformed file escape
        scan.add("error", "the check stopped on a form of the file it does not know", None,
                 "compare the file with the Touchstone specification", "scan-failed")
        return scan
