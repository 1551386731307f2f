"""Fit every capture of a lot, in parallel processes, one table row per capture.

A capture that cannot be read or fitted becomes a row with ``ok=False`` and the reason in
``error``; the lot never stops on one failure.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from kit.capture import Capture
from kit.network.coerce import is_network, name_of

__all__ = ["fit_lot", "result_row"]


def result_row(name: str, result) -> dict:
    """One flat row (name, ok, error, flags, residual and noise, params, <param>_stderr,
    derived figures)."""
    row = {"name": name, "ok": bool(result.ok), "error": result.reason,
           "flags": ";".join(result.flags), "model": result.model,
           "residual_rel": result.residual_rel, "noise_rms": result.noise_rms,
           "residual_to_noise": result.residual_to_noise, "n_points": result.n_points,
           "nfev": result.nfev}
    for p, v in result.params.items():
        row[p] = v
        row[f"{p}_stderr"] = result.stderr.get(p, np.nan)
    for k in ("fs_hz", "fp_hz", "k_eff", "qm"):
        if k not in result.params:
            row[k] = result.derived.get(k, np.nan)
            row[f"{k}_stderr"] = result.derived_stderr.get(k, np.nan)
    return row


def _label(item, index: int) -> str:
    """Row name: a path's stem, a capture's or network's name (kit.network.coerce.name_of)."""
    if isinstance(item, (str, os.PathLike)):
        return Path(item).stem
    if isinstance(item, Capture) or is_network(item):
        return name_of(item, f"capture-{index + 1}")
    return f"capture-{index + 1}"


def _failed_row(name: str, model: str, exc: BaseException) -> dict:
    return {"name": name, "ok": False, "error": f"{type(exc).__name__}: {exc}",
            "flags": "failed", "model": model}


def _fit_one(name: str, item, kwargs: dict) -> dict:
    from kit.resonators.fitting import fit

    try:
        if isinstance(item, (str, os.PathLike)):
            from kit.io.touchstone import load

            item = load(item)
        return result_row(name, fit(item, keep_data=False, **kwargs))
    except Exception as exc:  # noqa: BLE001 - a lot never stops on one capture
        return _failed_row(name, kwargs.get("model", ""), exc)


def _fit_chunk(chunk: list, kwargs: dict) -> list[dict]:
    """Worker task of :func:`fit_lot`: one row per (name, item) of the chunk."""
    return [_fit_one(name, item, kwargs) for name, item in chunk]


def fit_lot(captures, model: str = "bvd", span_hz=None, modes: int = 1,
            method: str = "reflection", workers: int | None = None, progress: bool = True,
            start_method: str | None = None, **options):
    """Fit many captures; returns a pandas DataFrame, one row per capture, in input order.

    Parameters
    ----------
    captures : iterable or dict
        Captures, scikit-rf Networks, Touchstone paths (loaded in the worker), or (f, z)
        pairs; a dict maps names to any of these.
    model, span_hz, modes, method, **options
        As for :func:`kit.fit`.
    workers : int, optional
        Number of processes (default: the usable CPUs, :mod:`kit.io.pool`); 0 or 1 fits in
        this process.
    progress : bool
        Show a tqdm progress bar.
    start_method : str, optional
        multiprocessing start method (default :func:`kit.io.pool.default_start_method`:
        the fork server, safe with the threads of a notebook kernel; it needs the main
        script to be a file or a notebook, not stdin).

    Returns
    -------
    pandas.DataFrame
        Columns "name", "ok", "error", "flags", "model", "residual_rel", "noise_rms",
        "residual_to_noise", one column per
        parameter and "<parameter>_stderr", and the derived "fs_hz", "fp_hz", "k_eff", "qm"
        with their "_stderr".

    References
    ----------
    .. [1] Fitting method: see :func:`kit.fit`.
    """
    import pandas as pd

    if isinstance(captures, dict):
        items = list(captures.items())
    else:
        items = [(_label(c, i), c) for i, c in enumerate(captures)]
    kwargs = dict(model=model, span_hz=span_hz, modes=modes, method=method, **options)
    from kit.resonators.registry import get_model

    get_model(model, modes, **{k: v for k, v in options.items()
                               if k in ("z_front", "z_back")})  # invalid arguments raise here
    from kit.io.pool import run_chunks

    def failed_chunk(chunk: list, exc: BaseException) -> list[dict]:  # e.g. a worker that died
        return [_failed_row(name, model, exc) for name, _ in chunk]

    rows = run_chunks(_fit_chunk, items, kwargs, workers=workers, start_method=start_method,
                      progress=progress, desc=f"fitting {model}",
                      unit="capture", on_error=failed_chunk)
    return pd.DataFrame(rows)
