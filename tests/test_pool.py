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


def test_usable_cpus_is_the_affinity_mask(monkeypatch):
    """The default worker count is the CPUs this process may use (Linux sched_getaffinity),
    not the machine's count, capped by the number of tasks."""
    monkeypatch.setattr(os, "sched_getaffinity", lambda pid: {0, 2, 5}, raising=False)
    monkeypatch.setattr(os, "cpu_count", lambda: 64)
    assert pool.usable_cpus() == 3
    assert pool.default_workers() == 3 and pool.default_workers(10) == 3
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


def _start_methods(chunk: list) -> list:
    import multiprocessing

    return [multiprocessing.get_start_method() for _ in chunk]


def test_workers_start_without_fork_hazards():
    """Workers are started by the fork server on POSIX (spawn elsewhere), never by a plain
    fork of a process that may run threads (Python multiprocessing docs, start methods)."""
    expected = "forkserver" if os.name == "posix" else "spawn"
    assert pool.default_start_method() == expected
    seen = pool.run_chunks(_start_methods, list(range(4)), workers=2, chunk_size=2)
    assert set(seen) == {expected}
