"""Tidy tables of a lot, their export, and corrected captures written back as Touchstone.

Every table is long (one row per observation), every column name carries its unit, and
frequency is in hertz:

* :func:`tidy` - sweeps: one row per capture, stage ("raw"/"corrected") and frequency;
* :func:`summary` - one row per capture: identity, metadata, characteristic frequencies,
  fit parameters with standard errors, flags, verdict with reasons and margins, review state;
* :func:`export` - writes them (and the review events) as Parquet and CSV beside a
  ``provenance.json``, into a fresh folder that replaces the previous export in one rename;
* :func:`write_touchstone` - a (corrected) capture as a Touchstone file whose comments name
  the corrections, with the reference impedance stated.

Nothing here writes into a folder that holds the input captures.

References
----------
.. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009): option
   line, data order of two-port files (11 21 12 22), [Reference] keyword.
.. [2] H. Wickham, "Tidy Data", Journal of Statistical Software 59(10), 2014 (long tables).
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import shutil
import sys
import tempfile
import warnings
from collections.abc import Iterable, Mapping
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import numpy as np

from kit.capture import Capture, CaptureError

EXPORT_FORMAT = "sweepbook-export"
EXPORT_VERSION = 1
#: BVD parameter names of the fitting module -> summary column names (with units).
PARAM_COLUMNS = {"C0": "c0_f", "R1": "r1_ohm", "L1": "l1_h", "C1": "c1_f",
                 "c0": "c0_f", "r1": "r1_ohm", "l1": "l1_h", "c1": "c1_f",
                 "R0": "r0_ohm", "Rs": "rs_ohm", "rs": "rs_ohm", "r0": "r0_ohm"}
RESONANCE_COLUMNS = ("fs_hz", "fp_hz", "fm_hz", "fn_hz", "fr_hz", "fa_hz", "k_eff", "qm")
SUMMARY_BASE = ["capture", "path", "sha256", "status", "error", "fs_hz", "fp_hz", "fm_hz",
                "fn_hz", "fr_hz", "fa_hz", "k_eff", "qm", "c0_f", "r1_ohm", "l1_h", "c1_f",
                "c0_f_stderr", "r1_ohm_stderr", "l1_h_stderr", "c1_f_stderr", "fit_ok",
                "fit_flags", "fit_residual_rel", "resonance_flags", "verdict", "verdict_reasons"]
DEPENDENCIES = ("numpy", "scipy", "pandas", "pyarrow", "skrf", "matplotlib")


class ExportError(ValueError):
    """An export cannot be made as asked (names the folder or file and what to do)."""


# --------------------------------------------------------------------------- helpers
def _kit_version() -> str:
    from kit import __version__

    return __version__


def _as_list(captures: Any) -> list[Any]:
    """Captures (or error records) from a Capture, an iterable, or a load_folder table."""
    if isinstance(captures, Capture):
        return [captures]
    try:
        import pandas as pd

        if isinstance(captures, pd.DataFrame):
            from kit.io.folder import capture_of

            out: list[Any] = []
            for i in captures.index:
                rec = captures.loc[i]
                if rec.get("status") == "error":
                    out.append(CaptureError(str(rec.get("message", "refused")), rec.get("path")))
                else:
                    out.append(capture_of(captures, i))
            return out
    except ImportError:  # pragma: no cover - pandas is a dependency
        pass
    return list(captures)


def _key_candidates(cap: Any, index: int) -> list[Any]:
    keys: list[Any] = []
    for attr in ("sha256", "name", "path"):
        v = getattr(cap, attr, None)
        if v is not None:
            keys += [v, str(v)]
    return keys + [index]


def _lookup(table: Any, cap: Any, index: int) -> Any:
    """The entry of ``table`` for a capture: a mapping by sha256/name/path, or a list by order."""
    if table is None:
        return None
    if isinstance(table, Mapping):
        for k in _key_candidates(cap, index):
            if k in table:
                return table[k]
        return None
    if isinstance(table, (list, tuple)):
        return table[index] if index < len(table) else None
    raise TypeError(f"results must be a dict keyed by capture name/sha256/path or a list in "
                    f"capture order, got {type(table).__name__}")


def _as_dict(obj: Any) -> dict[str, Any] | None:
    if obj is None:
        return None
    if isinstance(obj, BaseException):
        return {"__error__": f"{type(obj).__name__}: {obj}"}
    if isinstance(obj, Mapping):
        return dict(obj)
    if hasattr(obj, "to_dict"):
        return dict(obj.to_dict())
    raise TypeError(f"a result must be a dict or have to_dict(), got {type(obj).__name__}")


def _num(v: Any) -> float:
    if v is None or isinstance(v, bool):
        return math.nan
    try:
        x = float(v)
    except (TypeError, ValueError):
        return math.nan
    return x if math.isfinite(x) else math.nan


def _flags(v: Any) -> str:
    if v is None:
        return ""
    if isinstance(v, str):
        return v
    return "; ".join(str(x) for x in v)


def _safe_name(s: str) -> str:
    out = "".join(c if c.isalnum() else "_" for c in str(s).lower()).strip("_")
    return out or "x"


def input_folders(captures: Iterable[Any]) -> set[Path]:
    """Resolved folders holding the captures' files (the folders never written to)."""
    out = set()
    for c in captures:
        p = getattr(c, "path", None)
        if p is not None:
            out.add(Path(p).resolve().parent)
    return out


def refuse_input_folder(target: Path, captures: Iterable[Any], what: str) -> None:
    """Raise ExportError when ``target`` (a file or folder to write) sits in an input folder."""
    t = Path(target).resolve()
    folders = input_folders(captures)
    if t in folders or t.parent in folders:
        where = t if t in folders else t.parent
        raise ExportError(f"{what} {target} would be written into {where}, which holds input "
                          "captures; raw captures are evidence and their folder is never written "
                          "to (except the review log): choose another folder")


from kit.io.atomic import write_bytes as atomic_write_bytes  # noqa: E402  (kept for callers)


# --------------------------------------------------------------------------- sweeps
def _z_method(cap: Capture, z_method: Any) -> str | None:
    if isinstance(z_method, Mapping):
        for k in _key_candidates(cap, -1):
            if k in z_method:
                return z_method[k]
        z_method = None
    if z_method:
        return str(z_method)
    if cap.ports == 1:
        return "reflection"
    hint = cap.meta.get("z_method")
    return str(hint) if hint else None


def _sweep_frame(cap: Capture, stage: str, z_method: str | None):
    import pandas as pd

    from kit.network.immittance import impedance

    n = cap.points
    cols: dict[str, Any] = {
        "capture": [cap.name] * n, "sha256": [cap.sha256] * n,
        "path": [None if cap.path is None else str(cap.path)] * n,
        "stage": [stage] * n, "f_hz": np.asarray(cap.f_hz, float),
    }
    s = np.asarray(cap.s)
    for i in range(cap.ports):
        for j in range(cap.ports):
            cols[f"s{i + 1}{j + 1}_re"] = s[:, i, j].real
            cols[f"s{i + 1}{j + 1}_im"] = s[:, i, j].imag
    z0 = np.asarray(cap.z0)
    for i in range(cap.ports):
        z0i = z0[:, i] if z0.ndim == 2 else np.broadcast_to(z0, (n,))
        cols[f"z0_p{i + 1}_re_ohm"] = np.real(z0i).astype(float)
        if np.any(np.imag(z0i)):
            cols[f"z0_p{i + 1}_im_ohm"] = np.imag(z0i).astype(float)
    if z_method:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # singular points are NaN in the table
            z = impedance(cap, method=z_method)
        cols["z_re_ohm"], cols["z_im_ohm"] = z.real, z.imag
    else:
        cols["z_re_ohm"] = cols["z_im_ohm"] = np.full(n, np.nan)
    cols["z_method"] = [z_method or ""] * n
    cols["s_def"] = [str(getattr(cap.network, "s_def", "power") or "power")] * n
    for k, v in cap.fields.items():
        cols[str(k)] = [v] * n
    return pd.DataFrame(cols)


def tidy(captures: Any, corrected: Any = None, z_method: Any = None):
    """The sweeps of a lot as one long table.

    Parameters
    ----------
    captures : Capture, iterable of Capture, or a :func:`kit.load_folder` table
        Raw captures (rows with ``stage = "raw"``). Refused files are skipped.
    corrected : list or dict, optional
        Corrected captures, in capture order or keyed by capture name/sha256/path (rows
        with ``stage = "corrected"``; their frequency grid may differ).
    z_method : str or dict, optional
        How the impedance columns are obtained (see :func:`kit.impedance`). Default:
        "reflection" for one-ports; for multi-ports ``meta["z_method"]`` if set, else the
        impedance columns are NaN and ``z_method`` is empty.

    Returns
    -------
    pandas.DataFrame
        Columns ``capture``, ``sha256``, ``path``, ``stage``, ``f_hz``, ``sIJ_re``,
        ``sIJ_im`` for every port pair, ``z0_pN_re_ohm`` (port reference impedance),
        ``z_re_ohm``, ``z_im_ohm``, ``z_method``, ``s_def`` and the metadata fields of the
        file name.
    """
    import pandas as pd

    caps = [c for c in _as_list(captures) if isinstance(c, Capture)]
    frames = []
    for i, cap in enumerate(caps):
        frames.append(_sweep_frame(cap, "raw", _z_method(cap, z_method)))
        cor = _lookup(corrected, cap, i)
        if cor is not None:
            if not isinstance(cor, Capture):
                raise TypeError(f"corrected entry for {cap.name!r} is not a Capture")
            frames.append(_sweep_frame(cor, "corrected", _z_method(cor, z_method)))
    if not frames:
        return pd.DataFrame(columns=["capture", "sha256", "path", "stage", "f_hz"])
    return pd.concat(frames, ignore_index=True, sort=False)


def to_network(sweeps: Any, capture: str | None = None, stage: str = "raw"):
    """A scikit-rf Network back from a tidy sweeps table (one capture and stage).

    Raises
    ------
    ValueError
        If the table holds several captures and none is named, or the rows are not found.
    """
    import skrf

    df = sweeps[sweeps["stage"] == stage] if "stage" in sweeps else sweeps
    names = list(dict.fromkeys(df["capture"]))
    if capture is None:
        if len(names) != 1:
            raise ValueError(f"the table holds {len(names)} captures; name one of them")
        capture = names[0]
    df = df[df["capture"] == capture]
    if df.empty:
        raise ValueError(f"no {stage} rows for capture {capture!r}")
    ports = 0
    while f"s{ports + 1}{ports + 1}_re" in df and df[f"s{ports + 1}{ports + 1}_re"].notna().any():
        ports += 1
    f = df["f_hz"].to_numpy(float)
    s = np.empty((len(df), ports, ports), complex)
    z0 = np.empty((len(df), ports), complex)
    for i in range(ports):
        for j in range(ports):
            s[:, i, j] = (df[f"s{i + 1}{j + 1}_re"].to_numpy(float)
                          + 1j * df[f"s{i + 1}{j + 1}_im"].to_numpy(float))
        im = df.get(f"z0_p{i + 1}_im_ohm")
        z0[:, i] = df[f"z0_p{i + 1}_re_ohm"].to_numpy(float) + (
            0 if im is None else 1j * im.fillna(0).to_numpy(float))
    s_def = str(df["s_def"].iloc[0]) if "s_def" in df else None
    return skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=s, z0=z0,
                        s_def=s_def or None, name=str(capture))


# --------------------------------------------------------------------------- summary
def _fit_columns(d: dict[str, Any]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    if "__error__" in d:
        return {"fit_ok": False, "fit_flags": "fit failed: " + d["__error__"]}
    params = d.get("params") if isinstance(d.get("params"), Mapping) else {}
    stderr = d.get("stderr") if isinstance(d.get("stderr"), Mapping) else {}
    flat = {k: v for k, v in d.items() if not isinstance(v, (Mapping, list, tuple))}
    for src in (params, flat):
        for k, v in src.items():
            col = PARAM_COLUMNS.get(k, k if k in PARAM_COLUMNS.values() else None)
            if col and col not in out:
                out[col] = _num(v)
                e = stderr.get(k, flat.get(f"{col}_stderr"))
                out[f"{col}_stderr"] = _num(e)
    derived = d.get("derived") if isinstance(d.get("derived"), Mapping) else {}
    dstd = d.get("derived_stderr") if isinstance(d.get("derived_stderr"), Mapping) else {}
    for k in RESONANCE_COLUMNS:
        if k in derived:
            out[f"fit_{k}"] = _num(derived[k])
            out[f"fit_{k}_stderr"] = _num(dstd.get(k))
    out["fit_ok"] = bool(d["ok"]) if "ok" in d and d["ok"] is not None else None
    out["fit_flags"] = _flags(d.get("flags"))
    if d.get("reason"):
        parts = [x for x in out["fit_flags"].split("; ") + [str(d["reason"])] if x]
        out["fit_flags"] = "; ".join(dict.fromkeys(parts))
    if "residual_rel" in d:
        out["fit_residual_rel"] = _num(d["residual_rel"])
    if d.get("model"):
        out["fit_model"] = str(d["model"])
    return out


def _resonance_columns(d: dict[str, Any]) -> dict[str, Any]:
    if "__error__" in d:
        return {"resonance_flags": "resonance failed: " + d["__error__"]}
    out = {k: _num(d.get(k)) for k in RESONANCE_COLUMNS if k in d}
    for k in ("zm_ohm", "zn_ohm", "g_max_s", "r_max_ohm", "f1_hz", "f2_hz"):
        if k in d:
            out[k] = _num(d[k])
    out["resonance_flags"] = _flags(d.get("flags"))
    return out


def _identity_columns(cap: Any) -> dict[str, Any]:
    if isinstance(cap, BaseException):
        path = getattr(cap, "path", None)
        return {"capture": Path(path).stem if path else "?", "path": path, "sha256": None,
                "status": "error", "error": str(getattr(cap, "reason", cap))}
    row: dict[str, Any] = {
        "capture": cap.name, "path": None if cap.path is None else str(cap.path),
        "sha256": cap.sha256, "status": "ok", "error": "",
        "ports": cap.ports, "points": cap.points,
        "f_start_hz": float(cap.f_hz[0]) if cap.points else math.nan,
        "f_stop_hz": float(cap.f_hz[-1]) if cap.points else math.nan,
        "z0_ohm": float(np.real(np.asarray(cap.z0).ravel()[0])) if cap.points else math.nan,
        "date": cap.meta.get("date"), "correction_state": cap.meta.get("correction_state"),
        "corrections": "; ".join(str(p.get("name") or p.get("kind") or p.get("step") or "step")
                                 for p in cap.provenance),
        "warnings": "; ".join(f.message for f in cap.findings if f.severity == "warning"),
    }
    for k, v in cap.fields.items():
        row[k if k not in row else f"field_{k}"] = v
    return row


def summary(captures: Any, fits: Any = None, resonances: Any = None, limits: Any = None,
            review_log: Any = None):
    """One row per capture: identity, metadata, figures, fit, verdict and review state.

    Parameters
    ----------
    captures : Capture, iterable, or a :func:`kit.load_folder` table
        Entries that are exceptions (files that failed to load) give rows with
        ``status = "error"`` and the message in ``error``.
    fits, resonances : dict or list, optional
        Results per capture (keyed by name, sha256 or path, or in capture order): objects
        with ``to_dict()`` (kit.resonators.fitting.FitResult, kit.resonance results) or plain dicts.
        An exception in place of a result is reported in the flags, not raised.
    limits : kit.review.limits.Limits or path, optional
        When given: ``verdict`` ("pass"/"fail"/"incomplete"), ``verdict_reasons`` and a
        ``<check>_margin`` / ``<check>_margin_rel`` column per check.
    review_log : kit.ReviewLog, optional
        Adds ``review_verdict``, ``review_author``, ``review_utc``, ``review_notes``,
        ``review_tags`` and ``retest_requested``.

    Returns
    -------
    pandas.DataFrame
        Columns of :data:`SUMMARY_BASE` always present (NaN or empty where not computed),
        then metadata, extra figures and margins.
    """
    rows = summary_rows(captures, fits=fits, resonances=resonances, limits=limits,
                        review_log=review_log)
    return summary_frame(rows)


def summary_rows(captures: Any, fits: Any = None, resonances: Any = None, limits: Any = None,
                 review_log: Any = None) -> list[dict[str, Any]]:
    """The rows of :func:`summary` as plain dicts (same arguments).

    Batch runs build rows in their worker processes and join them with
    :func:`summary_frame`, so every engine gives the table :func:`summary` gives.
    """
    from kit.review.limits import Limits, load_limits, verdict

    if limits is not None and not isinstance(limits, Limits):
        limits = load_limits(limits)
    caps = _as_list(captures)
    state = None
    if review_log is not None:
        state = review_log.state().set_index("sha256")
    rows = []
    for i, cap in enumerate(caps):
        row = {k: None for k in SUMMARY_BASE}
        row.update(_identity_columns(cap))
        ok = not isinstance(cap, BaseException)
        res = _as_dict(_lookup(resonances, cap, i)) if ok else None
        fit = _as_dict(_lookup(fits, cap, i)) if ok else None
        if res:
            row.update(_resonance_columns(res))
        if fit:
            fc = _fit_columns(fit)
            for k in RESONANCE_COLUMNS:  # fall back on the fitted model's figures
                if _num(row.get(k)) != _num(row.get(k)) and f"fit_{k}" in fc:
                    row[k] = fc[f"fit_{k}"]
            row.update(fc)
        if limits is not None:
            v = verdict(row, limits, capture=cap if ok else None)
            row["verdict"] = v.status
            row["verdict_reasons"] = "; ".join(v.reasons)
            for c in v.checks:
                base = c.name if c.kind == "quantity" else f"mask_{_safe_name(c.name)}"
                unit = "" if c.kind == "quantity" else f"_{_safe_name(c.unit)}"
                row[f"{base}_margin{unit}"] = c.margin
                row[f"{base}_margin_rel"] = c.margin_rel
        if state is not None:
            sha = row.get("sha256")
            st = state.loc[sha] if sha in state.index else None
            row["review_verdict"] = None if st is None else st["verdict"]
            row["review_author"] = None if st is None else st["verdict_author"]
            row["review_utc"] = None if st is None else st["verdict_utc"]
            row["review_notes"] = 0 if st is None else int(st["notes"])
            row["review_last_note"] = None if st is None else st["last_note"]
            row["review_tags"] = "" if st is None else st["tags"]
            row["retest_requested"] = False if st is None else bool(st["retest_requested"])
        rows.append(row)
    return rows


def summary_frame(rows: list[dict[str, Any]]):
    """The summary DataFrame from rows of :func:`summary_rows` (column order and types)."""
    import pandas as pd

    df = pd.DataFrame(rows)
    for col in SUMMARY_BASE:
        if col not in df:
            df[col] = None
    num = [c for c in SUMMARY_BASE if c.endswith(("_hz", "_f", "_ohm", "_h", "_stderr"))
           or c in ("k_eff", "qm", "fit_residual_rel")]
    for c in num:
        df[c] = pd.to_numeric(df[c], errors="coerce").astype(float)
    rest = [c for c in df.columns if c not in SUMMARY_BASE]
    return df[SUMMARY_BASE + rest]




#: :func:`summary` under a name that :func:`export`'s ``summary`` argument does not hide.
build_summary = summary


# --------------------------------------------------------------------------- export
def _corrected_info(real: list[Capture], corrected: Any) -> list[dict[str, Any]]:
    out = []
    for i, c in enumerate(real):
        cor = _lookup(corrected, c, i)
        if cor is not None:
            out.append({"capture": c.name, "points": cor.points,
                        "corrections": _jsonable(list(cor.provenance))})
    return out


def _jsonable(v: Any) -> Any:
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


def export(out_dir: str | os.PathLike, captures: Any, summary: Any = None,
           review_log: Any = None, settings: Mapping[str, Any] | None = None,
           corrected: Any = None) -> Path:
    """Write the lot's tables as Parquet and CSV, with a provenance JSON.

    Files: ``sweeps.*`` (see :func:`tidy`), ``summary.*`` (the given table, else
    :func:`summary` of the captures), ``events.*`` (the review log, when given) and
    ``provenance.json`` (kit and dependency versions, creation time, every input file's
    SHA-256, the corrections applied to each capture, ``settings`` such as fit settings,
    and the hash of every file written).

    The export is built in a temporary folder beside ``out_dir`` and then renamed into
    place, so an interrupted export leaves the previous complete one untouched. A
    non-empty ``out_dir`` that is not a sweepbook export is never replaced.

    Raises
    ------
    ExportError
        If ``out_dir`` is a folder of input captures, a file, or a foreign folder.
    """
    out = Path(out_dir)
    caps = _as_list(captures)
    real = [c for c in caps if isinstance(c, Capture)]
    refuse_input_folder(out / "provenance.json", real, "the export")
    if out.exists() and not out.is_dir():
        raise ExportError(f"{out} is a file; give a folder for the export")
    if out.is_dir() and any(out.iterdir()) and not _is_previous_export(out):
        raise ExportError(f"{out} holds files that are not a sweepbook export; it is not "
                          "replaced: choose an empty or new folder")
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.new-", dir=out.parent))
    try:
        tables = {"sweeps": write_table(tidy(real, corrected=corrected), tmp, "sweeps")}
        summ = summary if summary is not None else build_summary(caps, review_log=review_log)
        tables["summary"] = write_table(summ, tmp, "summary")
        if review_log is not None:
            tables["events"] = write_table(review_log.events(), tmp, "events")
        prov = {
            "format": EXPORT_FORMAT, "version": EXPORT_VERSION,
            "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds"),
            "kit_version": _kit_version(), "versions": _versions(),
            "inputs": [{"capture": c.name, "path": None if c.path is None else str(c.path),
                        "sha256": c.sha256, "ports": c.ports, "points": c.points,
                        "corrections": _jsonable(list(c.provenance)),
                        "warnings": [f.message for f in c.findings]} for c in real],
            "refused": [{"path": getattr(c, "path", None), "error": str(c)}
                        for c in caps if isinstance(c, BaseException)],
            "corrected": _corrected_info(real, corrected),
            "settings": _jsonable(dict(settings or {})),
            "review_log": None if review_log is None else str(review_log.path),
            "tables": tables,
        }
        text = json.dumps(prov, indent=2, ensure_ascii=False, allow_nan=False)
        (tmp / "provenance.json").write_text(text + "\n", encoding="utf-8")
        _swap_into_place(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return out


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


# --------------------------------------------------------------------------- Touchstone
def _describe_step(step: Mapping[str, Any]) -> str:
    name = step.get("name") or step.get("kind") or step.get("correction") or "step"
    rest = {k: v for k, v in step.items() if k not in ("name", "kind", "correction")}
    text = json.dumps(_jsonable(rest), ensure_ascii=True, sort_keys=True, separators=(",", ":"))
    return f"{name} {text}".replace("\n", " ").replace("\r", " ")


def _fmt(x: float) -> str:
    return repr(float(x))


def write_touchstone(capture: Capture, path: str | os.PathLike, overwrite: bool = False) -> Path:
    """Write a (corrected) capture as a Touchstone file, atomically.

    The comments name the source file and its SHA-256, every correction step of
    ``capture.provenance`` and the reference impedance; the option line is
    ``# Hz S RI R <z0>``. Per-port references that differ are written as Touchstone 2.0
    with ``[Reference]``. Values are written with 17 significant digits (exact round trip).

    Parameters
    ----------
    capture : Capture
    path : str or Path
        ``.sNp`` with N the port count (or ``.ts``, written as version 2.0).
    overwrite : bool
        Replace an existing file (default: refuse).

    Raises
    ------
    ExportError
        For a frequency-dependent or complex reference impedance (renormalise first), a
        wrong extension, an existing file, or a target in the input captures' folder.

    References
    ----------
    .. [1] IBIS Open Forum, *Touchstone File Format Specification*, Version 2.0 (2009).
    """
    path = Path(path)
    n = capture.ports
    suffix = path.suffix.lower()
    if suffix != ".ts" and suffix != f".s{n}p":
        raise ExportError(f"{path}: a {n}-port capture is written as .s{n}p (or .ts)")
    refuse_input_folder(path, [capture], "the Touchstone file")
    if path.exists() and not overwrite:
        raise ExportError(f"{path} exists; pass overwrite=True to replace it")
    z0 = np.asarray(capture.z0)
    if np.any(np.imag(z0) != 0):
        raise ExportError(f"{capture.name}: complex reference impedance cannot be written; "
                          "renormalise to a real reference first")
    z0 = np.real(z0).reshape(capture.points, -1)
    if not np.allclose(z0, z0[:1], rtol=0, atol=0):
        raise ExportError(f"{capture.name}: the reference impedance changes with frequency; "
                          "renormalise to a constant reference first")
    refs = [float(x) for x in z0[0]] if z0.size else [50.0] * n
    v2 = suffix == ".ts" or len(set(refs)) > 1
    lines = [f"! written by sweepbook {_kit_version()} on "
             f"{datetime.now(timezone.utc).isoformat(timespec='seconds')}",
             f"! capture: {capture.name}"]
    if capture.path is not None:
        lines.append(f"! source file: {capture.path.name} sha256 {capture.sha256}")
    if capture.provenance:
        lines.append(f"! corrections applied ({len(capture.provenance)}), in order:")
        for k, step in enumerate(capture.provenance, 1):
            lines.append(f"! correction {k}: {_describe_step(step)}")
    else:
        lines.append("! corrections applied: none (as measured)")
    lines.append("! reference impedance: " + ", ".join(f"port {i + 1}: {r:g} ohm"
                                                       for i, r in enumerate(refs)))
    sdef = getattr(capture.network, "s_def", None)
    if sdef:
        lines.append(f"! S-parameter definition: {sdef} waves")
    if v2:
        lines += ["[Version] 2.0", f"# Hz S RI R {_fmt(refs[0])}", f"[Number of Ports] {n}"]
        if n == 2:
            lines.append("[Two-Port Data Order] 21_12")
        lines += [f"[Number of Frequencies] {capture.points}",
                  "[Reference] " + " ".join(_fmt(r) for r in refs), "[Network Data]"]
    else:
        lines.append(f"# Hz S RI R {_fmt(refs[0])}")
    s = np.asarray(capture.s)
    f = capture.f_hz
    for k in range(capture.points):
        if n == 1:
            lines.append(f"{_fmt(f[k])} {_fmt(s[k, 0, 0].real)} {_fmt(s[k, 0, 0].imag)}")
        elif n == 2:
            vals = [s[k, 0, 0], s[k, 1, 0], s[k, 0, 1], s[k, 1, 1]]  # 11 21 12 22
            lines.append(_fmt(f[k]) + " " + " ".join(f"{_fmt(v.real)} {_fmt(v.imag)}"
                                                      for v in vals))
        else:
            for i in range(n):
                row = s[k, i, :]
                chunks = [row[j: j + 4] for j in range(0, n, 4)]
                for c, chunk in enumerate(chunks):
                    head = _fmt(f[k]) if (i == 0 and c == 0) else " " * 4
                    lines.append(head + " " + " ".join(f"{_fmt(v.real)} {_fmt(v.imag)}"
                                                      for v in chunk))
    if v2:
        lines.append("[End]")
    path.parent.mkdir(parents=True, exist_ok=True)
    atomic_write_bytes(path, ("\n".join(lines) + "\n").encode("ascii", "replace"))
    return path
