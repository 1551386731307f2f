"""The one process-pool policy (kit.io.pool): worker count, chunking, order, BLAS threads."""

from __future__ import annotations

import os

import pytest

from kit.io import pool


def _squares(chunk, offset):
    return [x * x + offset for x in chunk]


def _pid_and_blas(chunk):
    import numpy  # noqa: F401  (loads the BLAS library numpy links against)
    from threadpoolctl import threadpool_info

    threads = [lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas"]
    return [(os.getpid(), threads, os.environ.get("OMP_NUM_THREADS")) for _ in chunk]


def _fails_on_seven(chunk):
    if 7 in chunk:
        raise RuntimeError("seven")
    return list(chunk)


def test_usable_cpus_is_the_affinity_mask():
    """The default worker count is the CPUs this process may use (Linux sched_getaffinity),
    capped by the number of tasks."""
    expected = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    assert pool.usable_cpus() == expected
    assert pool.default_workers() == expected
    assert pool.default_workers(1) == 1
    assert pool.default_workers(0) == 1


@pytest.mark.parametrize("n,workers,min_size", [(0, 2, 1), (1, 4, 1), (10, 2, 4), (1000, 3, 1),
                                                 (97, 8, 5)])
def test_chunks_cover_the_items_in_order(n, workers, min_size):
    """Concatenated chunks give the items back; about 8 chunks per worker, none below min_size
    except the last."""
    items = list(range(n))
    chunks = pool.chunked(items, workers, min_size=min_size)
    assert [x for c in chunks for x in c] == items
    assert all(len(c) >= min_size for c in chunks[:-1])
    if n >= 8 * workers * min_size:
        assert len(chunks) <= 8 * workers


def test_here_and_in_workers_give_the_same_results_in_order():
    """Results come back in the order of the items, whether computed here or in processes."""
    items = list(range(40))
    here = pool.run_chunks(_squares, items, 3, workers=1)
    there = pool.run_chunks(_squares, items, 3, workers=2, chunk_size=3)
    assert here == there == [x * x + 3 for x in items]


def test_workers_run_one_blas_thread():
    """Each worker limits BLAS to one thread (as threadpoolctl reports it) and sets the
    OpenMP variable for libraries loaded later."""
    out = pool.run_chunks(_pid_and_blas, list(range(8)), workers=2, chunk_size=2)
    assert all(pid != os.getpid() for pid, _, _ in out)
    assert all(env == "1" for _, _, env in out)
    assert all(threads and all(t == 1 for t in threads) for _, threads, _ in out)


def test_a_failing_chunk_goes_to_on_error_or_raises():
    """on_error gives the rows of a chunk that raised; without it the error propagates."""
    items = list(range(10))
    rows = pool.run_chunks(_fails_on_seven, items, workers=1, chunk_size=4,
                           on_error=lambda chunk, exc: [f"error: {exc}"] * len(chunk))
    assert rows[:4] == [0, 1, 2, 3] and rows[4:8] == ["error: seven"] * 4 and rows[8:] == [8, 9]
    with pytest.raises(RuntimeError, match="seven"):
        pool.run_chunks(_fails_on_seven, items, workers=2, chunk_size=4)


def test_start_method_is_one_without_fork_hazards():
    """The default start method is forkserver on POSIX, spawn elsewhere (no plain fork)."""
    assert pool.default_start_method() in ("forkserver", "spawn")
