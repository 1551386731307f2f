"""Data records of a Touchstone file: values per frequency, numbers, frequency order, noise.

The data lines found by the line scan are grouped into one record per frequency, turned
into numbers in one numpy conversion, and checked (count, finite values, rising
frequencies, the noise block of a two-port). Numbers follow Python's ``float`` exactly,
as the reader does, so a token is a number here exactly when it is one there.

References
----------
.. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 1.1 (2002) (one line
   per frequency for one- and two-ports, the noise block after the network data) and
   Version 2.0 (2009) (records spread over lines, [Matrix Format]).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from kit.io.options import FREQ_UNITS

#: Values per line of noise parameters: frequency, NFmin, |Gamma_opt|, angle, Rn/Z0 (spec).
NOISE_VALUES = 5
#: A stretch of fewer plain data lines is read line by line (numpy's start-up is not worth it).
BULK_MIN_LINES = 16
#: Characters of a plain stretch: digits, signs, point, exponent letter, space, tab, newline.
_PLAIN = b"0123456789+-.eE \t\n"


@dataclass
class Block:
    """Consecutive plain data lines read at once (internal): ``lines[start:stop]`` of the
    file, ``rows`` the numbers of each line that is not blank (one line per row, the same
    count on each), ``linenos`` their 1-based line numbers."""

    start: int
    stop: int
    rows: np.ndarray
    linenos: np.ndarray
    lines: list

    def __len__(self) -> int:
        return len(self.rows)

    def token_lines(self) -> list[tuple[int, list[str]]]:
        """The same lines as ``(line, tokens)``, as the line-by-line scan keeps them."""
        return [(i + 1, t) for i in range(self.start, self.stop) if (t := self.lines[i].split())]


def bulk_rows(chunk: str, start: int, lines: list) -> tuple[Block, int] | None:
    """Read a stretch of plain data lines (no comment, keyword or option line) in one go.

    ``chunk`` is the text of ``lines[start:...]`` (whole lines). Returns the block (up to its
    last line that is not blank) and the number of characters it covers, or None when the
    stretch must be read line by line: fewer than :data:`BULK_MIN_LINES` lines, characters
    other than those of plain decimal numbers, a token that is not a number, or lines with
    different counts of values.

    Numbers are read by numpy's text reader (``numpy.loadtxt``), which converts each token
    with CPython's ``PyOS_string_to_double``, the conversion behind Python's ``float`` that
    scikit-rf's reader uses: on the characters allowed here a token is read exactly when
    ``float`` reads it, to the same double (checked by tests/test_touchstone_fuzz.py).
    """
    body = chunk.rstrip()
    nlines = body.count("\n") + 1
    if nlines < BULK_MIN_LINES or not body.isascii():
        return None
    raw = body.encode("ascii")
    if raw.translate(None, _PLAIN):
        return None
    try:
        rows = np.loadtxt(body.split("\n"), dtype=float, comments=None, ndmin=2)
    except ValueError:
        return None
    stop = start + nlines
    if len(rows) == nlines:
        linenos = np.arange(start + 1, stop + 1, dtype=np.int64)
    else:  # blank lines inside the stretch (rare): the lines of the rows one by one
        linenos = np.array([i + 1 for i in range(start, stop) if lines[i].strip()],
                           dtype=np.int64)
    return Block(start, stop, rows, linenos, lines), len(body) + 1


def values_per_record(nports: int, matrix_format: str) -> int:
    """Numbers per frequency record: the frequency and two per matrix entry written."""
    pairs = nports * nports if matrix_format == "FULL" else nports * (nports + 1) // 2
    return 1 + 2 * pairs


def _other_port_count(ncols: int) -> int | None:
    for n in range(1, 9):
        if 1 + 2 * n * n == ncols:
            return n
    return None


def is_float(t: str) -> bool:
    """True when ``float(t)`` reads the token."""
    try:
        float(t)
        return True
    except ValueError:
        return False


def _noise_start(data_lines) -> int | None:
    """Index of the first line whose frequency is below the one before (None if none)."""
    firsts = [toks[0] if toks else "nan" for _, toks in data_lines]
    try:
        fv = np.array(firsts, dtype=float)
    except ValueError:
        fv = np.array([float(t) if is_float(t) else np.nan for t in firsts])
    drop = np.flatnonzero(fv[1:] < fv[:-1])
    return int(drop[0]) + 1 if drop.size else None


def _line_records(scan, data_lines, per: int):
    """Version 1 one- and two-ports: one record per line; a two-port's noise block starts
    where the frequency falls (the rule of scikit-rf's reader: strictly lower)."""
    n = scan.nports
    noise = []
    start = _noise_start(data_lines) if n == 2 and len(data_lines) > 1 else None
    if start is not None:
        data_lines, noise = data_lines[:start], data_lines[start:]
    bad = next((i for i, (_, toks) in enumerate(data_lines) if len(toks) != per), None)
    if bad is None and noise and len(noise[0][1]) != NOISE_VALUES:
        ln, toks = noise[0]
        scan.add("error", f"frequency {toks[0]} is lower than the one before: frequencies must "
                 "rise (a falling frequency starts a two-port's noise block, but this line has "
                 f"{len(toks)} values)", ln, "sort the data by frequency or split the file",
                 "decreasing")
        return None, None
    if bad is not None:
        ln, toks = data_lines[bad]
        other = _other_port_count(len(toks))
        if bad == len(data_lines) - 1 and not noise and len(toks) < per:
            msg = f"the last data line has {len(toks)} of {per} values: the file is truncated"
            fix, code = "re-export the capture; the file was cut short", "truncated"
        elif other is not None and other != n:
            msg = (f"data line has {len(toks)} values, which fits {other}-port data, "
                   f"but the file name says {n} port(s) (expected {per})")
            fix, code = f"rename the file .s{other}p if it holds {other}-port data", "columns"
        else:
            msg = f"data line has {len(toks)} values; {n}-port data needs {per}"
            fix = "check the export settings; each line needs frequency plus 2 values per S-term"
            code = "columns"
        scan.add("error", msg, ln, fix, code)
        return None, None
    return data_lines, noise


def _stream_records(scan, data_lines, per: int):
    """Records that may span lines; each starts on a new line."""
    stream = [(ln, t, j == 0) for ln, toks in data_lines for j, t in enumerate(toks)]
    records = []
    i = 0
    while i < len(stream):
        ln, _, first = stream[i]
        if not first:
            scan.add("error", f"a frequency record does not start on a new line: the values do "
                     f"not fit {scan.nports}-port data ({per} values per frequency)", ln,
                     "check the port count and the matrix format", "columns")
            return None
        chunk = stream[i: i + per]
        if len(chunk) > 1 and chunk[1][2]:
            scan.add("error", f"the frequency {chunk[0][1]} stands alone on its line: a record "
                     "starts with the frequency and its first values on one line", ln,
                     "join this line with the next one", "columns")
            return None
        if len(chunk) < per:
            scan.add("error", f"the last frequency record has {len(chunk)} of {per} values: "
                     "the file is truncated", chunk[-1][0],
                     "re-export the capture; the file was cut short", "truncated")
            return None
        records.append((ln, [c[1] for c in chunk]))
        i += per
    return records


def noise_ok(scan, noise_lines) -> bool:
    """Noise lines hold five numbers each; an error finding otherwise."""
    for ln, toks in noise_lines:
        if len(toks) != NOISE_VALUES or not all(is_float(t) for t in toks):
            scan.add("error", f"noise data line has {len(toks)} values, not {NOISE_VALUES} "
                     "numbers (frequency, NFmin, |Gamma_opt|, angle, Rn)", ln,
                     "correct or delete the noise block", "noise-data")
            return False
    scan.noise_rows = len(noise_lines)
    scan.noise = np.array([t for _, toks in noise_lines for t in toks],
                          dtype=float).reshape(-1, NOISE_VALUES)
    return True


def _whole_block(scan, data_lines, per: int) -> Block | None:
    """The data as one :class:`Block` of one record per line, when they are that."""
    if len(data_lines) != 1 or not isinstance(data_lines[0], Block):
        return None
    block = data_lines[0]
    if block.rows.shape[1] != per:
        return None
    if scan.nports == 2 and not scan.version.startswith("2") and \
            np.any(block.rows[1:, 0] < block.rows[:-1, 0]):
        return None  # a falling frequency: the noise block or an error, read line by line
    return block


def records_of(scan, data_lines, noise_lines) -> list | Block | None:
    """Group the data lines into records and check the noise lines; None after an error.

    Data read as one :class:`Block` of one record per line come back as that block.
    """
    per = values_per_record(scan.nports, scan.matrix_format)
    if not data_lines:
        scan.add("error", "the file has no data lines", None,
                 "re-export the capture from the analyser", "empty")
        return None
    block = _whole_block(scan, data_lines, per)
    if block is not None:
        return block if noise_ok(scan, noise_lines) else None
    data_lines = [x for d in data_lines
                  for x in (d.token_lines() if isinstance(d, Block) else (d,))]
    if not scan.version.startswith("2") and scan.nports <= 2:
        records, v1_noise = _line_records(scan, data_lines, per)
        noise_lines = list(noise_lines) + list(v1_noise or [])
    else:
        records = _stream_records(scan, data_lines, per)
    if records is None or not noise_ok(scan, noise_lines):
        return None
    return records


def numbers(scan, records) -> bool:
    """Convert the records, check values and frequencies; fills ``scan.freqs``, ``values``."""
    if isinstance(records, Block):
        return _checked(scan, records.rows, records.linenos)
    per = len(records[0][1])
    # one numpy conversion (about 3x faster than float() per token); the per-record path
    # runs only to name the line of a bad token
    try:
        arr = np.array([t for _, toks in records for t in toks], dtype=float).reshape(len(records), per)
    except ValueError:
        for ln, toks in records:
            bad = next((t for t in toks if not is_float(t)), None)
            if bad is not None:
                scan.add("error", f"{bad!r} is not a number", ln,
                         "remove the stray text or comment it out with '!'", "not-number")
                return False
        raise  # pragma: no cover - numpy and float() read the same tokens
    lines_arr = np.fromiter((ln for ln, _ in records), dtype=np.int64, count=len(records))
    return _checked(scan, arr, lines_arr)


def _checked(scan, arr: np.ndarray, lines_arr: np.ndarray) -> bool:
    """Check finite values and rising frequencies of the records' numbers."""
    mult = FREQ_UNITS[scan.option["unit"]]
    finite = np.isfinite(arr).all(axis=1)
    if not finite.all():
        scan.add("error", "NaN or infinite value in the data", int(lines_arr[np.argmin(finite)]),
                 "re-export the capture; the analyser wrote an invalid number", "nan-values")
        return False
    with np.errstate(over="ignore"):
        f = arr[:, 0] * mult
    if f.min() < 0 or not np.isfinite(f).all():
        k = int(np.argmax((f < 0) | ~np.isfinite(f)))
        scan.add("error", f"frequency {arr[k, 0]!r} is negative or too large", int(lines_arr[k]),
                 "check the frequency column and the unit of the option line", "bad-frequency")
        return False
    d = np.diff(f)
    if np.any(d < 0):
        k = int(np.argmax(d < 0)) + 1
        scan.add("error", f"frequency {arr[k, 0]:g} is lower than the one before: frequencies "
                 "must rise", int(lines_arr[k]), "sort the data by frequency or split the file",
                 "decreasing")
        return False
    scan.freqs = f
    scan.freq_lines = lines_arr
    scan.values = arr[:, 1:]
    dup = int(np.count_nonzero(d == 0))
    if dup:
        first_dup = int(lines_arr[int(np.argmax(d == 0)) + 1])
        scan.add("warning", f"{dup} repeated frequency value(s) (first on line {first_dup}); "
                 "loading keeps the first of each and drops the rest", first_dup,
                 "export with more frequency digits", "duplicate-frequency")
    return True
