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
    """One flat row (name, ok, error, flags, params, <param>_stderr, derived figures)."""
    row = {"name": name, "ok": bool(result.ok), "error": result.reason,
           "flags": ";".join(result.flags), "model": result.model,
           "residual_rel": result.residual_rel, "n_points": result.n_points,
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


def _fit_one(args):
    index, name, item, kwargs = args
    from kit.resonators.fitting import fit

    try:
        if isinstance(item, (str, os.PathLike)):
            from kit.io.touchstone import load

            item = load(item)
        result = fit(item, keep_data=False, **kwargs)
        return index, result_row(name, result)
    except Exception as exc:  # noqa: BLE001 - a lot never stops on one capture
        return index, {"name": name, "ok": False, "error": f"{type(exc).__name__}: {exc}",
                       "flags": "failed", "model": kwargs.get("model", "")}


def fit_lot(captures, model: str = "bvd", span_hz=None, modes: int = 1,
            method: str = "reflection", workers: int | None = None, progress: bool = True,
            start_method: str = "forkserver", **options):
    """Fit many captures; returns a pandas DataFrame, one row per capture, in input order.

    Parameters
    ----------
    captures : iterable or dict
        Captures, scikit-rf Networks, Touchstone paths (loaded in the worker), or (f, z)
        pairs; a dict maps names to any of these.
    model, span_hz, modes, method, **options
        As for :func:`kit.fit`.
    workers : int, optional
        Number of processes (default: the CPU count); 0 or 1 fits in this process.
    progress : bool
        Show a tqdm progress bar.
    start_method : str
        multiprocessing start method ("forkserver" by default: safe with the threads of a
        notebook kernel; it needs the main script to be a file or a notebook, not stdin).

    Returns
    -------
    pandas.DataFrame
        Columns "name", "ok", "error", "flags", "model", "residual_rel", one column per
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
    jobs = [(i, name, item, kwargs) for i, (name, item) in enumerate(items)]
    rows: list = [None] * len(jobs)
    if workers is None:
        workers = min(os.cpu_count() or 1, max(len(jobs), 1))
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=len(jobs), desc=f"fitting {model}", unit="capture")
    try:
        if workers <= 1 or len(jobs) <= 1:
            for job in jobs:
                i, row = _fit_one(job)
                rows[i] = row
                if bar is not None:
                    bar.update(1)
        else:
            import multiprocessing
            from concurrent.futures import ProcessPoolExecutor, as_completed

            ctx = multiprocessing.get_context(start_method)
            with ProcessPoolExecutor(max_workers=workers, mp_context=ctx) as pool:
                futures = [pool.submit(_fit_one, job) for job in jobs]
                for fut in as_completed(futures):
                    try:
                        i, row = fut.result()
                    except Exception as exc:  # noqa: BLE001 - e.g. a worker that died
                        i = futures.index(fut)
                        row = {"name": jobs[i][1], "ok": False, "flags": "failed",
                               "error": f"{type(exc).__name__}: {exc}", "model": model}
                    rows[i] = row
                    if bar is not None:
                        bar.update(1)
    finally:
        if bar is not None:
            bar.close()
    return pd.DataFrame(rows)
