"""The one process-pool policy of the kit: how many workers, how they start, how work is cut.

Every place that spreads captures over worker processes (the folder loader, the batch
engine, the lot fits) goes through :func:`run_chunks`, so they agree on:

* **workers**: default the usable CPU count (the CPUs this process may run on, not the
  machine's), never more than there are chunks; ``1`` runs in this process;
* **start method**: ``"forkserver"`` where the platform has it, else ``"spawn"``. A plain
  ``fork`` of a process that runs threads (a notebook kernel, a progress bar, BLAS) can
  deadlock the child. The fork server is started once per session with :data:`PRELOAD`
  imported, so that later pools start as fast as a plain fork (measured here: the first
  pool of a session about 0.9 s, later ones about 0.25 s, against 1.1 to 1.5 s each
  without the preload). As with any non-fork start, a script must call the kit from
  under ``if __name__ == "__main__":``;
* **one BLAS thread per worker** (threadpoolctl, plus the usual environment variables for
  libraries loaded later): with one worker per CPU, extra BLAS threads only compete;
* **chunking**: about ``per_worker`` chunks per worker, so the load stays even when files
  differ in size, and each task carries enough work to pay for its transfer;
* **progress**: an optional tqdm bar (a widget in notebooks), advanced per finished chunk.

Results come back in the order of the items, whatever order the chunks finish in.
"""

from __future__ import annotations

import math
import multiprocessing
import os
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Any

__all__ = ["BLAS_ENV", "PRELOAD", "chunked", "default_start_method", "default_workers", "one_blas_thread",
           "run_chunks", "usable_cpus"]

#: Environment variables that cap the thread count of BLAS and OpenMP libraries loaded
#: after the worker starts (the library's documented settings; common practice, no source).
BLAS_ENV = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS",
            "BLIS_NUM_THREADS", "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")


#: Modules the fork server imports once, before it forks workers (the kit's workers all
#: read captures with scikit-rf). Only the first pool of a session sets them.
PRELOAD = ("numpy", "skrf", "kit.io.touchstone")


def usable_cpus() -> int:
    """CPUs this process may run on (its affinity mask where the platform has one), at least 1."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # not on Linux: the machine's count
        return max(1, os.cpu_count() or 1)


def default_workers(n_tasks: int | None = None) -> int:
    """Worker processes for ``n_tasks`` tasks: the usable CPUs, no more than the tasks, at least 1."""
    n = usable_cpus()
    if n_tasks is not None:
        n = min(n, max(1, int(n_tasks)))
    return n


def default_start_method() -> str:
    """``"forkserver"`` where available (POSIX), else ``"spawn"``."""
    return "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() else "spawn"


def one_blas_thread() -> None:
    """Worker start-up: BLAS and OpenMP run one thread in this process.

    Sets the environment variables of :data:`BLAS_ENV` (for libraries loaded later) and
    limits the libraries already loaded with threadpoolctl.
    """
    for key in BLAS_ENV:
        os.environ[key] = "1"
    from threadpoolctl import threadpool_limits

    threadpool_limits(limits=1)


def chunked(items: Sequence[Any], workers: int, *, per_worker: int = 8,
            min_size: int = 1) -> list[list[Any]]:
    """Cut ``items`` into consecutive chunks, about ``per_worker`` per worker.

    Parameters
    ----------
    items : sequence
        The work, in order.
    workers : int
        Worker processes that will share it.
    per_worker : int
        Chunks per worker aimed at (more evens out the load, fewer saves transfers).
    min_size : int
        Smallest chunk (items cheap to process want bigger chunks).

    Returns
    -------
    list of list
        Consecutive slices of ``items``; concatenated they give ``items`` back.
    """
    n = len(items)
    if n == 0:
        return []
    size = max(int(min_size), 1, math.ceil(n / (max(1, workers) * max(1, per_worker))))
    return [list(items[i: i + size]) for i in range(0, n, size)]


def run_chunks(func: Callable[..., list], items: Sequence[Any], *args: Any,
               workers: int | None = None, chunk_size: int | None = None,
               min_chunk: int = 1, parallel_from: int = 2, start_method: str | None = None,
               progress: bool = False, desc: str | None = None, unit: str = "item",
               on_error: Callable[[list, BaseException], list] | None = None) -> list:
    """Apply ``func(chunk, *args)`` to chunks of ``items`` in worker processes.

    Parameters
    ----------
    func : callable
        A module-level function (workers import it by name) taking a list of items and the
        ``args``, returning one result per item, in order.
    items : sequence
        The work.
    *args
        Passed to every call (picklable).
    workers : int, optional
        Worker processes; default :func:`default_workers`. ``1`` runs in this process.
    chunk_size : int, optional
        Items per chunk; default from :func:`chunked` (``min_chunk`` at least).
    min_chunk : int
        Smallest chunk when ``chunk_size`` is not given.
    parallel_from : int
        Fewer items than this are processed here: starting workers would cost more.
    start_method : str, optional
        ``"forkserver"``, ``"spawn"`` or ``"fork"``; default :func:`default_start_method`.
    progress : bool
        Show a tqdm progress bar.
    desc, unit : str
        The bar's label and unit.
    on_error : callable, optional
        ``on_error(chunk, exc)`` returns the results of a chunk whose call raised (a worker
        that died, for example); default: the exception propagates.
    preload : sequence of str
        Modules the fork server imports before forking workers (used only when it is
        started, by the first forkserver pool of the session).

    Returns
    -------
    list
        The results of all items, in the order of ``items``.
    """
    items = list(items)
    n = len(items)
    if workers is None:
        workers = default_workers(n)
    parallel = workers > 1 and n >= max(2, parallel_from)
    if chunk_size is not None:
        chunks = [items[i: i + chunk_size] for i in range(0, n, max(1, int(chunk_size)))]
    else:
        # here, the chunks only pace the progress bar
        chunks = chunked(items, workers if parallel else 1, min_size=min_chunk,
                         per_worker=8 if parallel else 32)
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=n, desc=desc, unit=unit)
    parts: list[list | None] = [None] * len(chunks)
    try:
        if not parallel:
            for k, chunk in enumerate(chunks):
                parts[k] = _call(func, chunk, args, on_error)
                if bar is not None:
                    bar.update(len(chunk))
        else:
            ctx = multiprocessing.get_context(start_method or default_start_method())
            if ctx.get_start_method() == "forkserver":
                ctx.set_forkserver_preload(list(PRELOAD))
            with ProcessPoolExecutor(max_workers=min(workers, len(chunks)), mp_context=ctx,
                                     initializer=one_blas_thread) as ex:
                futures = {ex.submit(func, chunk, *args): k for k, chunk in enumerate(chunks)}
                for fut in as_completed(futures):
                    k = futures[fut]
                    try:
                        parts[k] = fut.result()
                    except Exception as exc:  # noqa: BLE001 - handed to on_error or re-raised
                        if on_error is None:
                            raise
                        parts[k] = on_error(chunks[k], exc)
                    if bar is not None:
                        bar.update(len(chunks[k]))
    finally:
        if bar is not None:
            bar.close()
    return [r for part in parts for r in (part or [])]


def _call(func: Callable[..., list], chunk: list, args: tuple,
          on_error: Callable[[list, BaseException], list] | None) -> list:
    try:
        return func(chunk, *args)
    except Exception as exc:  # noqa: BLE001 - handed to on_error or re-raised
        if on_error is None:
            raise
        return on_error(chunk, exc)
