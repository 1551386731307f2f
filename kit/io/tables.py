"""Delimited tables from impedance analysers, read into the same Capture as Touchstone.

A table is read with an explicit column mapping, because exporters name and order their
columns in many ways. The mapping keys (case-sensitive) are:

``"f"``
    the frequency column (required);
``"re"`` and ``"im"``
    real and imaginary part of the quantity: R and X for ``quantity="Z"``, G and B for
    ``"Y"``, re and im of S11 for ``"S"``;
``"mag"`` and ``"deg"``
    magnitude and phase in degrees of the quantity (instead of re/im; |Z| and phase for
    ``"Z"``).

Each value is a column header (as written in the file, quotes removed, matched without
regard to case or surrounding spaces) or a 0-based column index. Lines starting with
``#``, ``!`` or ``%`` are comments and are kept verbatim in ``meta["comments"]``.
"""

from __future__ import annotations

import csv
import hashlib
import io
from pathlib import Path
from typing import Any, Literal

import numpy as np

from kit.capture import Capture, CaptureError, Finding
from kit.io.names import parse_name
from kit.io.options import FREQ_UNITS

Quantity = Literal["Z", "Y", "S"]
_COMMENT = ("#", "!", "%")


def _delimiter(sample: str) -> str | None:
    for d in ("\t", ",", ";"):
        if d in sample:
            return d
    return None  # whitespace


def _split(line: str, delim: str | None) -> list[str]:
    if delim is None:
        return line.split()
    return [c.strip() for c in next(csv.reader([line], delimiter=delim))]


def _index(spec: str | int, header: list[str] | None, path: Path, key: str) -> int:
    if isinstance(spec, int):
        return spec
    if header is None:
        raise CaptureError(f"column {key!r} is given by name ({spec!r}) but the table has no "
                           "header line; give a 0-based column index instead", path)
    norm = [h.strip().strip('"').strip().lower() for h in header]
    want = spec.strip().lower()
    if want not in norm:
        raise CaptureError(f"no column named {spec!r} for {key!r}; the header has "
                           + ", ".join(repr(h.strip().strip('"')) for h in header), path, 1)
    return norm.index(want)


def load_table(path: str | Path, columns: dict[str, str | int], quantity: Quantity = "Z",
               f_unit: str = "Hz", z0_ohm: float = 50.0, delimiter: str | None = None,
               name_pattern: str | None = None) -> Capture:
    """Read a delimited impedance/admittance/reflection table into a one-port Capture.

    Parameters
    ----------
    path : str or Path
        The table (CSV, TSV, semicolon or whitespace separated; one optional header line).
    columns : dict
        Column mapping, see the module docstring: ``{"f": ..., "re": ..., "im": ...}`` or
        ``{"f": ..., "mag": ..., "deg": ...}``.
    quantity : {"Z", "Y", "S"}
        What the columns hold: impedance [ohm], admittance [S] or the reflection S11 [1].
    f_unit : {"Hz", "kHz", "MHz", "GHz"}
        Unit of the frequency column.
    z0_ohm : float
        Reference impedance used to express the data as S11 [ohm].
    delimiter : str, optional
        Column separator; guessed (tab, comma, semicolon, else whitespace) when None.
    name_pattern : str, optional
        File-name pattern for metadata fields, as in :func:`kit.load`.

    Returns
    -------
    Capture
        A one-port capture; ``meta["source"] == "table"``.

    Raises
    ------
    CaptureError
        Naming the file and line, for a missing column, a non-numeric cell, NaN/inf,
        falling frequencies or an empty table.

    References
    ----------
    .. [1] S11 = (Z - Z0)/(Z + Z0), Pozar, *Microwave Engineering*, 4th ed., ch. 2
       (from memory for the chapter).
    """
    import skrf

    path = Path(path)
    if quantity not in ("Z", "Y", "S"):
        raise CaptureError(f"quantity must be 'Z', 'Y' or 'S', not {quantity!r}", path)
    unit = FREQ_UNITS.get(str(f_unit).upper())
    if unit is None:
        raise CaptureError(f"unknown frequency unit {f_unit!r}; use Hz, kHz, MHz or GHz", path)
    if "f" not in columns:
        raise CaptureError("the column mapping needs 'f' (the frequency column)", path)
    polar = "mag" in columns or "deg" in columns
    need = ("mag", "deg") if polar else ("re", "im")
    missing = [k for k in need if k not in columns]
    if missing:
        raise CaptureError(f"the column mapping lacks {', '.join(missing)}; give 're' and 'im', "
                           "or 'mag' and 'deg'", path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise CaptureError(f"cannot read the file: {exc.strerror or exc}", path) from None
    findings: list[Finding] = []
    if data.startswith(b"\xef\xbb\xbf"):
        data_text = data[3:].decode("utf-8", errors="replace")
    else:
        try:
            data_text = data.decode("utf-8")
        except UnicodeDecodeError:
            data_text = data.decode("latin-1")
            findings.append(Finding("warning", "the text is not UTF-8; decoded as ISO-8859-1",
                                    None, None, "not-utf8", str(path)))
    comments: list[str] = []
    header: list[str] | None = None
    rows: list[tuple[int, list[str]]] = []
    delim = delimiter
    for lineno, raw in enumerate(io.StringIO(data_text), start=1):
        s = raw.strip()
        if not s:
            continue
        if s.startswith(_COMMENT):
            comments.append(s)
            continue
        if delim is None and not rows and header is None:
            delim = _delimiter(s)
        cells = _split(s, delim)
        if header is None and not rows:
            try:
                float(cells[0].strip('"'))
            except ValueError:
                header = cells
                continue
        rows.append((lineno, cells))
    if not rows:
        raise CaptureError("the table has no data rows", path)
    idx = {k: _index(columns[k], header, path, k) for k in ("f", *need)}
    vals = np.empty((len(rows), 3))
    for r, (lineno, cells) in enumerate(rows):
        for c, key in enumerate(("f", *need)):
            j = idx[key]
            if j >= len(cells):
                raise CaptureError(f"row has {len(cells)} column(s), column {key!r} is number "
                                   f"{j} (0-based)", path, lineno)
            try:
                vals[r, c] = float(cells[j].strip('"'))
            except ValueError:
                raise CaptureError(f"{cells[j]!r} in column {key!r} is not a number", path,
                                   lineno) from None
            if not np.isfinite(vals[r, c]):
                raise CaptureError(f"NaN or infinite value in column {key!r}", path, lineno)
    f = vals[:, 0] * unit
    d = np.diff(f)
    if np.any(d < 0):
        k = int(np.argmax(d < 0)) + 1
        raise CaptureError("frequencies must rise; this one is lower than the one before",
                           path, rows[k][0])
    if np.any(d == 0):
        keep = np.concatenate(([True], d > 0))
        findings.append(Finding("warning", f"{int(np.sum(~keep))} repeated frequency value(s); "
                                "kept the first of each", None, None, "duplicate-frequency",
                                str(path)))
        f, vals = f[keep], vals[keep]
    if polar:
        q = vals[:, 1] * np.exp(1j * np.deg2rad(vals[:, 2]))
    else:
        q = vals[:, 1] + 1j * vals[:, 2]
    with np.errstate(divide="ignore", invalid="ignore"):
        # Gamma = (Z - Z0)/(Z + Z0) written here because io sits below kit.network (whose
        # reflection module is the home of the formula) in the layer contract
        if quantity == "Z":
            s11 = (q - z0_ohm) / (q + z0_ohm)
        elif quantity == "Y":
            s11 = (1.0 - q * z0_ohm) / (1.0 + q * z0_ohm)
        else:
            s11 = q
    if not np.all(np.isfinite(s11)):
        raise CaptureError("some rows give no finite reflection coefficient "
                           f"(a {quantity} of exactly -Z0)", path)
    net = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=s11.reshape(-1, 1, 1),
                       z0=z0_ohm, name=path.stem)
    meta: dict[str, Any] = {
        "comments": comments,
        "source": "table",
        "quantity": quantity,
        "columns": dict(columns),
        "header": None if header is None else [h.strip('"') for h in header],
        "reference_ohm": [z0_ohm],
        "option_line": None,
        "fields": {},
        "name_pattern": name_pattern,
    }
    if name_pattern:
        fields, finding = parse_name(path.stem, name_pattern, str(path))
        meta["fields"] = fields
        if finding:
            findings.append(finding)
    return Capture(network=net, path=path, sha256=hashlib.sha256(data).hexdigest(), meta=meta,
                   findings=tuple(findings))
