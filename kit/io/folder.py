"""A folder of captures at once: one table row per file, parsed in parallel processes.

A bad file is a row with status "error" and its message; it never stops the folder.
The parsed captures are kept with the table and reached by row with :func:`capture_of`.
"""

from __future__ import annotations

import hashlib
import itertools
import re
from collections import OrderedDict
from pathlib import Path
from typing import TYPE_CHECKING, Any, Iterable

from kit.capture import Capture, CaptureError
from kit.io.names import stem_of
from kit.io.pool import run_chunks
from kit.io.touchstone import load

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

TOUCHSTONE_RE = re.compile(r"\.(s\d+p|ts)$", re.IGNORECASE)
#: Below this many files, parsing in this process is faster than starting workers
#: (measured here: a worker pool costs about 0.25 s to start once the session's fork
#: server runs, the first one about 0.9 s; a 1601-point file takes 5 ms).
PARALLEL_MIN_FILES = 48
#: Smallest chunk of files sent to a worker.
MIN_CHUNK_FILES = 4
#: Show a progress bar from this many files on (tqdm; a widget in notebooks).
PROGRESS_MIN_FILES = 50

_LOTS: "OrderedDict[int, dict[str, Capture]]" = OrderedDict()
_LOT_IDS = itertools.count(1)
_KEEP_LOTS = 16

COLUMNS = ["name", "path", "sha256", "ports", "points", "f_start_hz", "f_stop_hz", "status",
           "message", "warnings"]


def touchstone_files(folder: str | Path, recursive: bool = False) -> list[Path]:
    """Touchstone files in a folder (``.sNp``, ``.ts``, any letter case), sorted by name."""
    folder = Path(folder)
    it: Iterable[Path] = folder.rglob("*") if recursive else folder.iterdir()
    return sorted(p for p in it if p.is_file() and TOUCHSTONE_RE.search(p.name))


def _row(path: Path, pattern: str | None) -> tuple[dict[str, Any], Capture | None]:
    row: dict[str, Any] = {"name": stem_of(path), "path": str(path)}
    try:
        cap = load(path, name_pattern=pattern)
    except CaptureError as exc:
        try:
            row["sha256"] = hashlib.sha256(path.read_bytes()).hexdigest()
        except OSError:
            row["sha256"] = None
        row.update(status="error", message=str(exc.reason) + (f" (line {exc.line})" if exc.line else ""),
                   warnings=0)
        return row, None
    except Exception as exc:  # noqa: BLE001 - a folder must never stop on one file
        row.update(status="error", message=f"unexpected {type(exc).__name__}: {exc}", warnings=0,
                   sha256=None)
        return row, None
    warns = [f for f in cap.findings if f.severity == "warning"]
    f = cap.f_hz
    row.update(sha256=cap.sha256, ports=cap.ports, points=cap.points,
               f_start_hz=float(f[0]), f_stop_hz=float(f[-1]),
               status="warning" if warns else "ok",
               message=warns[0].message if warns else "", warnings=len(warns))
    row.update(cap.fields)
    return row, cap


def _rows_chunk(paths: list[str], pattern: str | None) -> list[tuple[dict[str, Any], Capture | None]]:
    return [_row(Path(p), pattern) for p in paths]


def load_folder(folder: str | Path, pattern: str | None = None, *, recursive: bool = False,
                workers: int | None = None, progress: bool | None = None) -> "pd.DataFrame":
    """Read every Touchstone file of a folder into a table, one row per file.

    Parameters
    ----------
    folder : str or Path
        The folder.
    pattern : str, optional
        File-name pattern for metadata fields, e.g. ``"{lot}-{serial}"``; the fields become
        columns.
    recursive : bool
        Also look in sub-folders.
    workers : int, optional
        Worker processes; default: the usable CPU count (:mod:`kit.io.pool`). ``1``
        parses here.
    progress : bool, optional
        Show a progress bar; default: from 50 files on.

    Returns
    -------
    pandas.DataFrame
        Columns ``name, path, sha256, ports, points, f_start_hz, f_stop_hz, status``
        ("ok", "warning" or "error"), ``message`` (the first warning or the error),
        ``warnings`` (count), then the name-pattern fields. Reach a row's capture with
        :func:`capture_of`.

    Raises
    ------
    CaptureError
        Only when the folder itself cannot be read.
    """
    import pandas as pd

    folder = Path(folder)
    if not folder.is_dir():
        raise CaptureError("is not a folder", folder)
    paths = touchstone_files(folder, recursive=recursive)
    n = len(paths)
    show = (n >= PROGRESS_MIN_FILES) if progress is None else progress
    results = run_chunks(_rows_chunk, [str(p) for p in paths], pattern, workers=workers,
                         min_chunk=MIN_CHUNK_FILES, parallel_from=PARALLEL_MIN_FILES,
                         progress=show, desc=f"reading {folder.name}", unit="file")
    table = pd.DataFrame([r for r, _ in results])
    for col in COLUMNS:
        if col not in table.columns:
            table[col] = pd.Series(dtype=object)
    extra = [c for c in table.columns if c not in COLUMNS]
    table = table[COLUMNS + extra]
    lot_id = next(_LOT_IDS)
    _LOTS[lot_id] = {r["path"]: c for r, c in results if c is not None}
    while len(_LOTS) > _KEEP_LOTS:
        _LOTS.popitem(last=False)
    table.attrs["lot_id"] = lot_id
    table.attrs["folder"] = str(folder)
    table.attrs["pattern"] = pattern
    return table


def capture_of(table: "pd.DataFrame", row: Any) -> Capture:
    """The Capture of one row of a :func:`load_folder` table.

    ``row`` is an index label of ``table`` (or a row Series). The capture parsed with the
    table is returned; if it is no longer kept, the file is read again and its hash must
    still match the table's.

    Raises
    ------
    CaptureError
        For an error row, or a file that changed since the table was made.
    """
    rec = row if hasattr(row, "get") and not isinstance(row, (int, str)) else table.loc[row]
    path = str(rec["path"])
    if rec.get("status") == "error":
        raise CaptureError(f"this file was refused: {rec.get('message')}", path)
    lot = _LOTS.get(table.attrs.get("lot_id"))
    if lot is not None and path in lot:
        return lot[path]
    cap = load(path, name_pattern=table.attrs.get("pattern"))
    if rec.get("sha256") and cap.sha256 != rec["sha256"]:
        raise CaptureError("the file changed since the folder was read; read the folder again",
                           path)
    return cap


def captures_of(table: "pd.DataFrame") -> list[Capture]:
    """Captures of every loadable row, in table order (error rows skipped)."""
    return [capture_of(table, i) for i in table.index if table.loc[i, "status"] != "error"]
