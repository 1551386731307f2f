"""The lot summary: one row per capture, as plain rows and as a DataFrame.

A row holds the capture's identity and metadata, its characteristic frequencies, the fit
parameters with their standard errors, flags, the limits verdict with reasons and margins,
and the review state. Every column that carries a unit ends in that unit's suffix
(docs/nomenclature.md); an input that failed is a row with ``status = "error"``, a step
that failed is named in that step's flags.

References
----------
.. [1] H. Wickham, "Tidy Data", Journal of Statistical Software 59(10), 2014 (one row
   per observation, one column per variable).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from kit.outputs.entries import (
    as_list,
    failure_reason,
    flags_text,
    lookup,
    num,
    result_dict,
    safe_name,
    split_unit,
    suffix_of_unit,
    unit_column,
)

__all__ = ["PARAM_COLUMNS", "RESONANCE_COLUMNS", "SUMMARY_BASE", "summary", "summary_rows",
           "summary_frame"]

#: BVD parameter names of the fitting module -> summary column names (with units).
PARAM_COLUMNS = {"C0": "c0_f", "R1": "r1_ohm", "L1": "l1_h", "C1": "c1_f",
                 "c0": "c0_f", "r1": "r1_ohm", "l1": "l1_h", "c1": "c1_f",
                 "R0": "r0_ohm", "Rs": "rs_ohm", "rs": "rs_ohm", "r0": "r0_ohm"}
RESONANCE_COLUMNS = ("fs_hz", "fp_hz", "fm_hz", "fn_hz", "fr_hz", "fa_hz", "k_eff", "qm")
#: Further figures of :func:`kit.resonance` copied into the summary when present.
RESONANCE_EXTRA = ("zm_ohm", "zn_ohm", "g_max_siemens", "r_max_ohm", "f1_hz", "f2_hz",
                   "fs_stderr_hz", "fp_stderr_hz", "k_eff_stderr", "qm_stderr")
SUMMARY_BASE = ["capture", "path", "sha256", "status", "error", "fs_hz", "fp_hz", "fm_hz",
                "fn_hz", "fr_hz", "fa_hz", "k_eff", "qm", "c0_f", "r1_ohm", "l1_h", "c1_f",
                "c0_stderr_f", "r1_stderr_ohm", "l1_stderr_h", "c1_stderr_f", "fit_ok",
                "fit_flags", "fit_residual_rel", "resonance_flags", "verdict", "verdict_reasons"]
#: Columns of SUMMARY_BASE without a unit suffix that are numbers all the same.
_NUMERIC_PLAIN = ("k_eff", "qm", "fit_residual_rel")


def _sub(d: dict[str, Any], key: str) -> Mapping:
    v = d.get(key)
    return v if isinstance(v, Mapping) else {}


def _fit_columns(d: dict[str, Any]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    params, stderr = _sub(d, "params"), _sub(d, "stderr")
    flat = {k: v for k, v in d.items() if not isinstance(v, (Mapping, list, tuple))}
    for src in (params, flat):
        for k, v in src.items():
            col = PARAM_COLUMNS.get(k, k if k in PARAM_COLUMNS.values() else None)
            if col and col not in out:
                out[col] = num(v)
                err = unit_column(col, "stderr")
                out[err] = num(stderr.get(k, flat.get(err)))
    derived, dstd = _sub(d, "derived"), _sub(d, "derived_stderr")
    for k in RESONANCE_COLUMNS:
        if k in derived:
            out[f"fit_{k}"] = num(derived[k])
            out[unit_column(f"fit_{k}", "stderr")] = num(dstd.get(k))
    out["fit_ok"] = bool(d["ok"]) if "ok" in d and d["ok"] is not None else None
    out["fit_flags"] = flags_text(d.get("flags"))
    if d.get("reason"):
        parts = [x for x in out["fit_flags"].split("; ") + [str(d["reason"])] if x]
        out["fit_flags"] = "; ".join(dict.fromkeys(parts))
    if "residual_rel" in d:
        out["fit_residual_rel"] = num(d["residual_rel"])
    if d.get("model"):
        out["fit_model"] = str(d["model"])
    return out


def _resonance_columns(d: dict[str, Any]) -> dict[str, Any]:
    out = {k: num(d.get(k)) for k in RESONANCE_COLUMNS if k in d}
    for k in RESONANCE_EXTRA:
        if k in d:
            out[k] = num(d[k])
    out["resonance_flags"] = flags_text(d.get("flags"))
    return out


def _step_name(step: dict) -> str:
    return str(step.get("name") or step.get("kind") or step.get("step") or "step")


def _correction_state(cap: Any) -> str | None:
    """What was removed: the kit's own steps when it corrected the capture, and what the
    file's header said (``meta["correction_state"]``), so neither is mistaken for the other."""
    said = cap.meta.get("correction_state")
    if not cap.provenance:
        return said
    done = "removed by sweepbook: " + ", ".join(_step_name(p) for p in cap.provenance)
    return done + (f" (file header: {said})" if said else "")


def _identity_columns(cap: Any) -> dict[str, Any]:
    if failure_reason(cap) is not None:
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
        "date": cap.meta.get("date"), "correction_state": _correction_state(cap),
        "corrections": "; ".join(_step_name(p) for p in cap.provenance),
        "warnings": "; ".join(f.message for f in cap.findings if f.severity == "warning"),
    }
    for k, v in cap.fields.items():
        row[k if k not in row else f"field_{k}"] = v
    return row


def _verdict_columns(v: Any) -> dict[str, Any]:
    """Verdict, reasons and a margin column pair per check (the margin in the check's unit)."""
    row = {"verdict": v.status, "verdict_reasons": "; ".join(v.reasons)}
    for c in v.checks:
        if c.kind == "quantity":
            stem, suffix = split_unit(c.name)
        else:
            stem, suffix = f"mask_{safe_name(c.name)}", suffix_of_unit(c.unit)
        row[f"{stem}_margin{suffix}"] = c.margin
        row[f"{stem}_margin_rel"] = c.margin_rel
    return row


def _review_columns(state: Any, sha: Any) -> dict[str, Any]:
    st = state.loc[sha] if sha in state.index else None
    if st is None:
        return {"review_verdict": None, "review_author": None, "review_utc": None,
                "review_notes": 0, "review_last_note": None, "review_tags": "",
                "retest_requested": False}
    return {"review_verdict": st["verdict"], "review_author": st["verdict_author"],
            "review_utc": st["verdict_utc"], "review_notes": int(st["notes"]),
            "review_last_note": st["last_note"], "review_tags": st["tags"],
            "retest_requested": bool(st["retest_requested"])}


def summary(captures: Any, fits: Any = None, resonances: Any = None, limits: Any = None,
            review_log: Any = None):
    """One row per capture: identity, metadata, figures, fit, verdict and review state.

    Parameters
    ----------
    captures : Capture, iterable, or a :func:`kit.load_folder` table
        Entries that are failures (a :class:`kit.CaptureError` for a file that failed to
        load, a :class:`kit.outputs.entries.Failure`) give rows with ``status = "error"``
        and the reason in ``error``.
    fits, resonances : dict or list, optional
        Results per capture (keyed by name, sha256 or path, or in capture order): objects
        with ``to_dict()`` (:class:`kit.FitResult`, :func:`kit.resonance` results) or plain
        dicts. A failure (Failure record or exception) in place of a result is reported
        in ``fit_flags`` / ``resonance_flags``, not raised.
    limits : kit.Limits or path, optional
        When given: ``verdict`` ("pass"/"fail"/"incomplete"), ``verdict_reasons`` and per
        check a margin column in the check's unit (``fs_margin_hz`` for a bound on
        ``fs_hz``, ``mask_<name>_margin_ohm`` or ``_db`` for a mask) and a relative one
        (``fs_margin_rel``, ``mask_<name>_margin_rel``).
    review_log : kit.ReviewLog, path or ``postgresql://`` URL, optional
        Adds ``review_verdict``, ``review_author``, ``review_utc``, ``review_notes``,
        ``review_last_note``, ``review_tags`` and ``retest_requested``.

    Returns
    -------
    pandas.DataFrame
        Columns of :data:`SUMMARY_BASE` always present (NaN or empty where not computed),
        then metadata, extra figures and margins. Names and units: docs/nomenclature.md.
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
    from kit.review.limits import Limits, load_limits
    from kit.review.verdicts import verdict

    if limits is not None and not isinstance(limits, Limits):
        limits = load_limits(limits)
    caps = as_list(captures)
    from kit.review.log import as_review_log

    review_log = as_review_log(review_log)
    state = None if review_log is None else review_log.state().set_index("sha256")
    rows = []
    for i, cap in enumerate(caps):
        row: dict[str, Any] = {k: None for k in SUMMARY_BASE}
        row.update(_identity_columns(cap))
        ok = row["status"] == "ok"
        res = lookup(resonances, cap, i) if ok else None
        fit = lookup(fits, cap, i) if ok else None
        why = failure_reason(res)
        if why is not None:
            row["resonance_flags"] = "resonance failed: " + why
        elif res is not None:
            row.update(_resonance_columns(result_dict(res)))
        why = failure_reason(fit)
        if why is not None:
            row.update({"fit_ok": False, "fit_flags": "fit failed: " + why})
        elif fit is not None:
            fc = _fit_columns(result_dict(fit))
            for k in RESONANCE_COLUMNS:  # fall back on the fitted model's figures
                if math.isnan(num(row.get(k))) and f"fit_{k}" in fc:
                    row[k] = fc[f"fit_{k}"]
            row.update(fc)
        if limits is not None:
            row.update(_verdict_columns(verdict(row, limits, capture=cap if ok else None)))
        if state is not None:
            row.update(_review_columns(state, row.get("sha256")))
        rows.append(row)
    return rows


def with_review(frame: Any, review_log: Any):
    """``frame`` (a summary table) with the review columns of :func:`summary` from
    ``review_log`` (a :class:`kit.ReviewLog`, a path or a ``postgresql://`` URL) joined on
    ``sha256``; the columns are replaced when present."""
    import pandas as pd

    from kit.review.log import as_review_log

    state = as_review_log(review_log).state().set_index("sha256")
    cols = pd.DataFrame([_review_columns(state, sha) for sha in frame["sha256"]],
                        index=frame.index)
    return pd.concat([frame.drop(columns=[c for c in cols if c in frame]), cols], axis=1)


def summary_frame(rows: list[dict[str, Any]]):
    """The summary DataFrame from rows of :func:`summary_rows` (column order and types)."""
    import pandas as pd

    from kit.units import unit_of

    df = pd.DataFrame(rows)
    for col in SUMMARY_BASE:
        if col not in df:
            df[col] = None
    num_cols = [c for c in SUMMARY_BASE if unit_of(c) or c in _NUMERIC_PLAIN]
    for c in num_cols:
        df[c] = pd.to_numeric(df[c], errors="coerce").astype(float)
    rest = [c for c in df.columns if c not in SUMMARY_BASE]
    return df[SUMMARY_BASE + rest]
