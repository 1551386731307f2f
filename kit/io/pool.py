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
* **progress**: an optional tqdm bar (``tqdm.auto``: a widget in notebooks, a text bar on a
  terminal) and an optional ``on_progress(done, total)`` callback, both advanced per
  finished chunk, in the calling process;
* **cancelling**: an optional flag (anything with ``is_set()``, a :class:`threading.Event`)
  is looked at before each chunk here, and every :data:`POLL_S` while workers run; once it
  is set no chunk is started, waiting chunks are cancelled, the workers are stopped and
  :class:`Cancelled` is raised. Chunks are handed to the pool a few at a time (about two per
  worker), so a cancelled run has little queued work to withdraw.

Results come back in the order of the items, whatever order the chunks finish in.
"""

from __future__ import annotations

import math
import multiprocessing
import os
from collections.abc import Callable, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from typing import Any

__all__ = ["BLAS_ENV", "PRELOAD", "Cancelled", "chunked", "default_start_method", "default_workers",
           "one_blas_thread", "run_chunks", "usable_cpus"]

#: How often [s] a run with workers looks at its cancel flag while no chunk finishes.
POLL_S = 0.1
#: Chunks handed to the pool ahead, per worker (two keep every worker busy between polls).
AHEAD = 2


class Cancelled(Exception):
    """A run stopped because its cancel flag was set; ``done`` of ``total`` items were finished.

    The finished results are discarded: a cancelled run returns nothing and writes nothing.
    """

    def __init__(self, done: int, total: int) -> None:
        super().__init__(f"cancelled after {done} of {total} item(s)")
        self.done, self.total = done, total

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


def _worker_start() -> None:
    """Worker start-up: one BLAS thread, and Ctrl-C left to the parent. A terminal sends
    SIGINT to the whole process group; a worker that took it would break the pool, where
    the parent stops the run through its cancel flag (:class:`Cancelled`)."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    one_blas_thread()


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
               on_error: Callable[[list, BaseException], list] | None = None,
               on_progress: Callable[[int, int], Any] | None = None,
               cancel: Any = None) -> list:
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
        Show a tqdm progress bar (``tqdm.auto``).
    desc, unit : str
        The bar's label and unit.
    on_error : callable, optional
        ``on_error(chunk, exc)`` returns the results of a chunk whose call raised (a worker
        that died, for example); default: the exception propagates.
    on_progress : callable, optional
        ``on_progress(done, total)`` in items, called in this process (in the thread that
        called ``run_chunks``): once with ``done=0`` before the work starts, then after each
        finished chunk, the last call with ``done == total``.
    cancel : object with ``is_set()``, optional
        A :class:`threading.Event` or alike; once set, the run stops (see the module notes).

    Returns
    -------
    list
        The results of all items, in the order of ``items``.

    Raises
    ------
    Cancelled
        When ``cancel`` was set before every chunk was done (no result is returned).
    """
    items = list(items)
    n = len(items)
    if workers is None:
        workers = default_workers(n)
    parallel = workers > 1 and n >= max(2, parallel_from)
    if chunk_size is not None:
        chunks = [items[i: i + chunk_size] for i in range(0, n, max(1, int(chunk_size)))]
    else:
        # here, the chunks only pace the progress bar and the cancel checks
        chunks = chunked(items, workers if parallel else 1, min_size=min_chunk,
                         per_worker=8 if parallel else 32)
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=n, desc=desc, unit=unit)
    done = 0

    def advance(k: int) -> None:
        nonlocal done
        done += len(chunks[k])
        if bar is not None:
            bar.update(len(chunks[k]))
        if on_progress is not None:
            on_progress(done, n)

    def stop_if_cancelled() -> None:
        if cancel is not None and cancel.is_set():
            raise Cancelled(done, n)

    parts: list[list | None] = [None] * len(chunks)
    try:
        if on_progress is not None:
            on_progress(0, n)
        if not parallel:
            for k, chunk in enumerate(chunks):
                stop_if_cancelled()
                parts[k] = _call(func, chunk, args, on_error)
                advance(k)
        else:
            _in_workers(func, chunks, args, parts, workers, start_method, on_error, advance,
                        stop_if_cancelled)
    finally:
        if bar is not None:
            bar.close()
    return [r for part in parts for r in (part or [])]


def _in_workers(func: Callable[..., list], chunks: list[list], args: tuple,
                parts: list[list | None], workers: int, start_method: str | None,
                on_error: Callable[[list, BaseException], list] | None,
                advance: Callable[[int], None], stop_if_cancelled: Callable[[], None]) -> None:
    """The parallel branch of :func:`run_chunks`: fills ``parts`` by chunk index."""
    ctx = multiprocessing.get_context(start_method or default_start_method())
    if ctx.get_start_method() == "forkserver":
        ctx.set_forkserver_preload(list(PRELOAD))
    n_proc = min(workers, len(chunks))
    ex = ProcessPoolExecutor(max_workers=n_proc, mp_context=ctx, initializer=_worker_start)
    pending: dict[Future, int] = {}
    queue = iter(range(len(chunks)))
    finished = False
    try:
        while True:
            stop_if_cancelled()
            while len(pending) < AHEAD * n_proc:  # hand out chunks a few at a time
                k = next(queue, None)
                if k is None:
                    break
                try:
                    pending[ex.submit(func, chunks[k], *args)] = k
                except Exception as exc:  # noqa: BLE001 - a pool broken by a dead worker
                    if on_error is None:
                        raise
                    parts[k] = on_error(chunks[k], exc)
                    advance(k)
            if not pending:
                break
            ready, _ = wait(pending, timeout=POLL_S, return_when=FIRST_COMPLETED)
            for fut in ready:
                k = pending.pop(fut)
                try:
                    parts[k] = fut.result()
                except Exception as exc:  # noqa: BLE001 - handed to on_error or re-raised
                    if on_error is None:
                        raise
                    parts[k] = on_error(chunks[k], exc)
                advance(k)
        finished = True
    finally:
        if finished:
            ex.shutdown(wait=True)
        else:
            _stop(ex, pending)


def _stop(ex: ProcessPoolExecutor, pending: dict[Future, int]) -> None:
    """Stop a pool now (cancel, error, interrupt): withdraw waiting chunks, end the workers.

    A worker busy with a chunk is terminated rather than waited for: its result would be
    thrown away. The kit's workers write only through :mod:`kit.io.atomic` (a temporary
    file, then a rename), so a terminated worker leaves no half-written file behind; at
    most a hidden ``.*.tmp`` file in the cache folder.
    """
    for fut in pending:
        fut.cancel()
    stop = getattr(ex, "terminate_workers", None)  # Python 3.14 and later (shuts down too)
    if stop is not None:
        stop()
        return
    procs = list((getattr(ex, "_processes", None) or {}).values())  # the executor's own table
    ex.shutdown(wait=False, cancel_futures=True)
    for p in procs:
        if p.is_alive():
            p.terminate()
    for p in procs:
        p.join(timeout=5)


def _call(func: Callable[..., list], chunk: list, args: tuple,
          on_error: Callable[[list, BaseException], list] | None) -> list:
    try:
        return func(chunk, *args)
    except Exception as exc:  # noqa: BLE001 - handed to on_error or re-raised
        if on_error is None:
            raise
        return on_error(chunk, exc)
