"""The export folder: a lot's tables as Parquet and CSV, with a provenance record.

:func:`export` writes ``sweeps.*`` (:func:`kit.tidy`), ``summary.*`` (:func:`kit.summary`),
``events.*`` (the review log) and ``provenance.json`` into a fresh folder that replaces
the previous export in one rename. Nothing here writes into a folder that holds the input
captures.

References
----------
.. [1] Apache Parquet format specification (parquet.apache.org), written with pyarrow.
.. [2] ECMA-404, *The JSON Data Interchange Syntax*, 2nd ed. (2017): no NaN in JSON,
   missing values are written ``null``.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import shutil
import sys
import tempfile
from collections.abc import Mapping
from datetime import datetime, timezone
from pathlib import Path
from types import SimpleNamespace
from typing import Any

import numpy as np

from kit.capture import Capture
from kit.io.atomic import as_created
from kit.io.writer import ExportError, kit_version, refuse_input_folder
from kit.outputs.entries import as_list, lookup
from kit.outputs.tidy import tidy

__all__ = ["EXPORT_FORMAT", "EXPORT_VERSION", "StoredOutputError", "export", "recover_interrupted",
           "write_table"]

EXPORT_FORMAT = "sweepbook-export"
EXPORT_VERSION = 1
DEPENDENCIES = ("numpy", "scipy", "pandas", "pyarrow", "skrf", "matplotlib")


def _jsonable(v: Any) -> Any:
    """JSON data for provenance.json: non-finite numbers become null [2]_."""
    if isinstance(v, Mapping):
        return {str(k): _jsonable(x) for k, x in v.items()}
    if isinstance(v, (list, tuple, set)):
        return [_jsonable(x) for x in v]
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        return float(v) if math.isfinite(float(v)) else None
    if isinstance(v, (complex, np.complexfloating)):
        return {"re": float(v.real), "im": float(v.imag)}
    if isinstance(v, np.ndarray):
        return _jsonable(v.tolist())
    if isinstance(v, (str, int, bool)) or v is None:
        return v
    if hasattr(v, "to_dict"):
        return _jsonable(v.to_dict())
    return str(v)


def _corrected_info(real: list[Capture], corrected: Any) -> list[dict[str, Any]]:
    out = []
    for i, c in enumerate(real):
        cor = lookup(corrected, c, i)
        if cor is not None:
            out.append({"capture": c.name, "points": cor.points,
                        "corrections": _jsonable(list(cor.provenance))})
    return out


def _versions() -> dict[str, str]:
    import importlib

    out = {"python": sys.version.split()[0]}
    for mod in DEPENDENCIES:
        try:
            out[mod] = str(getattr(importlib.import_module(mod), "__version__", "?"))
        except ImportError:
            out[mod] = "not installed"
    return out


def _for_files(df):
    """Make object columns safe for Parquet: mixed types become text, NaN stays missing."""
    df = df.copy()
    for c in df.columns:
        if df[c].dtype == object:
            kinds = {type(x) for x in df[c] if x is not None and not
                     (isinstance(x, float) and math.isnan(x))}
            if len(kinds) > 1 or (kinds and not kinds <= {str, bool}):
                df[c] = [None if x is None or (isinstance(x, float) and math.isnan(x))
                         else str(x) for x in df[c]]
    return df


def write_table(df, folder: Path, stem: str) -> dict[str, Any]:
    """Write ``stem.parquet`` and ``stem.csv`` into ``folder``; returns their hashes."""
    df = _for_files(df)
    pq = folder / f"{stem}.parquet"
    csv = folder / f"{stem}.csv"
    df.to_parquet(pq, engine="pyarrow", index=False)
    df.to_csv(csv, index=False, encoding="utf-8", lineterminator="\n")
    return {"rows": int(len(df)), "columns": list(map(str, df.columns)),
            "files": {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in (pq, csv)}}


def _is_previous_export(folder: Path) -> bool:
    p = folder / "provenance.json"
    try:
        return json.loads(p.read_text(encoding="utf-8")).get("format") == EXPORT_FORMAT
    except (OSError, ValueError, AttributeError):
        return False


def _described(caps: list[Any], real: list[Capture], corrected: Any) -> dict[str, Any]:
    """The provenance of the captures themselves: inputs, refused files, corrections."""
    return {
        "inputs": [{"capture": c.name, "path": None if c.path is None else str(c.path),
                    "sha256": c.sha256, "ports": c.ports, "points": c.points,
                    "corrections": _jsonable(list(c.provenance)),
                    "warnings": [f.message for f in c.findings]} for c in real],
        "refused": [{"path": getattr(c, "path", None), "error": str(c)}
                    for c in caps if isinstance(c, BaseException)],
        "corrected": _corrected_info(real, corrected),
    }


class StoredOutputError(ValueError):
    """A stored output file did not match its recorded size or SHA-256 while being copied."""


def _copy_stored(stored: Mapping[str, Any], folder: Path) -> dict[str, Any]:
    """Copy stored table files into ``folder``, checking every byte against their SHA-256."""
    for name, f in stored["files"].items():
        h = hashlib.sha256()
        with open(f["path"], "rb") as src, open(folder / name, "wb") as dst:
            while piece := src.read(16 * 1024**2):
                h.update(piece)
                dst.write(piece)
        if h.hexdigest() != f["sha256"]:
            raise StoredOutputError(f"stored {name} does not match its SHA-256")
    return dict(stored["tables"]["sweeps"])


def _provenance(described: Mapping[str, Any], settings: Any, review_log: Any,
                tables: dict[str, Any]) -> dict[str, Any]:
    return {
        "format": EXPORT_FORMAT, "version": EXPORT_VERSION,
        "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "kit_version": kit_version(), "versions": _versions(),
        "inputs": described["inputs"], "refused": described["refused"],
        "corrected": described["corrected"],
        "settings": _jsonable(dict(settings or {})),
        # a file path, or the server URL without password (kit.review.server.safe_url)
        "review_log": None if review_log is None else review_log.location,
        "tables": tables,
    }


def export(out_dir: str | os.PathLike, captures: Any, summary: Any = None,
           review_log: Any = None, settings: Mapping[str, Any] | None = None,
           corrected: Any = None, stored: Mapping[str, Any] | None = None) -> Path:
    """Write the lot's tables as Parquet and CSV, with a provenance JSON.

    Files: ``sweeps.*`` (see :func:`kit.tidy`), ``summary.*`` (the given table, else
    :func:`kit.summary` of the captures), ``events.*`` (the review log, when given) and
    ``provenance.json`` (kit and dependency versions, creation time, every input file's
    SHA-256, the corrections applied to each capture, ``settings`` such as fit settings,
    and the hash of every file written).

    The export is built in a temporary folder beside ``out_dir`` and then renamed into
    place, so an interrupted export leaves the previous complete one untouched. A
    non-empty ``out_dir`` that is not a sweepbook export is never replaced.

    ``stored`` (from :meth:`kit.batch.lot_store.LotRecord.export_part`) gives the sweeps
    files and the captures' provenance of an earlier export of the same lot: they are copied
    (every byte checked against its SHA-256) instead of being made from ``captures``, which
    may then be empty.

    Returns
    -------
    Path
        The export folder.

    Raises
    ------
    ExportError
        If ``out_dir`` is a folder of input captures, a file, or a foreign folder.
    StoredOutputError
        If a ``stored`` file does not match its SHA-256 (nothing is written then).
    """
    from kit.outputs.summary import summary as lot_summary
    from kit.review.log import as_review_log

    review_log = as_review_log(review_log)
    out = Path(out_dir)
    caps = as_list(captures)
    real = [c for c in caps if isinstance(c, Capture)]
    described = dict(stored) if stored is not None else _described(caps, real, corrected)
    from_files = [SimpleNamespace(path=d["path"]) for d in described["inputs"] if d["path"]]
    refuse_input_folder(out / "provenance.json", real + from_files, "the export")
    if out.exists() and not out.is_dir():
        raise ExportError(f"{out} is a file; give a folder for the export")
    if out.is_dir() and any(out.iterdir()) and not _is_previous_export(out):
        raise ExportError(f"{out} holds files that are not a sweepbook export; it is not "
                          "replaced: choose an empty or new folder")
    out.parent.mkdir(parents=True, exist_ok=True)
    recover_interrupted(out)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.new-", dir=out.parent))
    as_created(tmp, folder=True)
    try:
        tables = {"sweeps": (_copy_stored(stored, tmp) if stored is not None else
                             write_table(tidy(real, corrected=corrected), tmp, "sweeps"))}
        summ = summary if summary is not None else lot_summary(caps, review_log=review_log)
        tables["summary"] = write_table(summ, tmp, "summary")
        if review_log is not None:
            tables["events"] = write_table(review_log.events(), tmp, "events")
        prov = _provenance(described, settings, review_log, tables)
        text = json.dumps(prov, indent=2, ensure_ascii=False, allow_nan=False)
        (tmp / "provenance.json").write_text(text + "\n", encoding="utf-8")
        _swap_into_place(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return out


def recover_interrupted(out: str | os.PathLike) -> list[str]:
    """Clean up after an export that was interrupted, before a new one starts.

    An export builds ``.NAME.new-*`` beside ``out`` and swaps it in with two renames
    (``out`` to ``.NAME.old-*``, then the new folder to ``out``). Interrupted between them,
    ``out`` is missing and the previous complete export sits in ``.NAME.old-*``: it is put
    back. Any ``.NAME.new-*`` left over (never swapped in) and any ``.NAME.old-*`` left once
    ``out`` exists are removed. Returns what was done, one line each.
    """
    out = Path(out)
    done: list[str] = []
    if not out.parent.is_dir():
        return done
    olds = sorted(out.parent.glob(f".{out.name}.old-*"), key=lambda p: p.stat().st_mtime)
    if not out.exists() and olds:
        os.replace(olds[-1], out)
        done.append(f"restored the previous export from {olds[-1].name}")
        olds = olds[:-1]
    for p in [*olds, *out.parent.glob(f".{out.name}.new-*")]:
        shutil.rmtree(p, ignore_errors=True)
        done.append(f"removed the unfinished {p.name}")
    return done


def _swap_into_place(new: Path, out: Path) -> None:
    """Put the finished folder ``new`` at ``out``; the old export is removed only after."""
    for p in new.iterdir():  # make the files durable before they become visible
        with open(p, "rb") as fh:
            os.fsync(fh.fileno())
    if not out.exists():
        os.replace(new, out)
        return
    old = Path(tempfile.mkdtemp(prefix=f".{out.name}.old-", dir=out.parent))
    os.rmdir(old)
    os.replace(out, old)
    try:
        os.replace(new, out)
    except BaseException:
        os.replace(old, out)  # put the previous export back
        raise
    shutil.rmtree(old, ignore_errors=True)
