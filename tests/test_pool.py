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


# --------------------------------------------------------------------- progress and cancelling
def _marked(chunk, folder):
    """Leave a start mark (with this worker's pid); chunk 0 returns at once, the others sleep
    far longer than the test waits, then leave an end mark."""
    import time
    from pathlib import Path

    Path(folder, f"start-{chunk[0]}-{os.getpid()}").touch()
    if chunk[0] != 0:
        time.sleep(60)
    Path(folder, f"end-{chunk[0]}").touch()
    return list(chunk)


def _dies_on_seven(chunk):
    if 7 in chunk:
        os._exit(3)  # a worker killed mid-chunk (out of memory, a crash in a C library)
    return list(chunk)


class _Calls:
    """An on_progress callback that records its calls and the thread they came from."""

    def __init__(self, cancel=None, cancel_at=None):
        self.calls, self.threads = [], set()
        self.cancel, self.cancel_at = cancel, cancel_at

    def __call__(self, done, total):
        import threading

        self.calls.append((done, total))
        self.threads.add(threading.get_ident())
        if self.cancel is not None and done >= self.cancel_at:
            self.cancel.set()


@pytest.mark.parametrize("workers", [1, 2])
def test_progress_is_reported_per_chunk_in_the_calling_thread(workers):
    """on_progress gets (0, n) first, then the running count after each chunk, ending at
    (n, n), always in the thread that called run_chunks, with or without workers."""
    import threading

    calls = _Calls()
    out = pool.run_chunks(_squares, list(range(23)), 0, workers=workers, chunk_size=5,
                          on_progress=calls)
    assert out == [x * x for x in range(23)]
    assert calls.calls[0] == (0, 23) and calls.calls[-1] == (23, 23)
    done = [d for d, _ in calls.calls]
    assert done == sorted(done) and len(done) == 1 + 5  # five chunks: 5, 5, 5, 5, 3
    assert sorted(d2 - d1 for d1, d2 in zip(done, done[1:])) == [3, 5, 5, 5, 5]
    assert calls.threads == {threading.get_ident()}


def test_cancel_in_this_process_stops_before_the_next_chunk():
    """Set after the second chunk: no further chunk is computed, and Cancelled says how far
    the run got."""
    import threading

    seen = []

    def record(chunk):
        seen.extend(chunk)
        return list(chunk)

    stop = threading.Event()
    with pytest.raises(pool.Cancelled) as info:
        pool.run_chunks(record, list(range(20)), workers=1, chunk_size=4,
                        on_progress=_Calls(stop, cancel_at=8), cancel=stop)
    assert seen == list(range(8))
    assert (info.value.done, info.value.total) == (8, 20)


def test_cancel_with_workers_stops_submitting_and_ends_the_busy_workers(tmp_path):
    """Chunk 0 is quick and sets the flag; every other chunk would sleep 60 s. The run
    raises Cancelled at once, never hands out more than two chunks per worker, and the
    worker busy with a sleeping chunk no longer exists (it was terminated, not waited for)."""
    import threading
    import time

    stop = threading.Event()
    with pytest.raises(pool.Cancelled) as info:
        pool.run_chunks(_marked, list(range(40)), str(tmp_path), workers=2, chunk_size=2,
                        on_progress=_Calls(stop, cancel_at=2), cancel=stop)
    assert info.value.done == 2 and info.value.total == 40
    marks = sorted(p.name for p in tmp_path.iterdir())
    starts = [m for m in marks if m.startswith("start-")]
    assert [m for m in marks if m.startswith("end-")] == ["end-0"]
    assert 1 <= len(starts) <= pool.AHEAD * 2  # handed out a few at a time, then no more
    busy = [int(m.rsplit("-", 1)[1]) for m in starts if not m.startswith("start-0-")]
    for pid in busy:  # the busy worker was stopped (it is gone, reaped by the fork server)
        deadline = time.monotonic() + 10
        while time.monotonic() < deadline:
            try:
                os.kill(pid, 0)
            except ProcessLookupError:
                break
            time.sleep(0.05)
        else:
            pytest.fail(f"worker {pid} still runs after the run was cancelled")


def test_a_worker_that_dies_gives_error_rows_for_the_chunks_it_took_down():
    """A dead worker breaks the pool (concurrent.futures: BrokenProcessPool); with on_error
    every chunk not finished by then becomes error rows, also those not yet handed out."""
    rows = pool.run_chunks(_dies_on_seven, list(range(40)), workers=2, chunk_size=2,
                           on_error=lambda chunk, exc: ["error"] * len(chunk))
    assert len(rows) == 40
    assert rows[6:8] == ["error", "error"]
    assert all(r == i or r == "error" for i, r in enumerate(rows))


def test_workers_start_from_a_thread_that_is_not_the_main_one():
    """A notebook panel runs the pool from a background thread: the fork server starts and
    serves workers from there too, and progress comes back in that thread."""
    import threading

    box = {}

    def job():
        calls = _Calls()
        box["out"] = pool.run_chunks(_squares, list(range(30)), 1, workers=2, chunk_size=4,
                                     on_progress=calls)
        box["threads"] = calls.threads
        box["me"] = threading.get_ident()

    t = threading.Thread(target=job, daemon=True)
    t.start()
    t.join(timeout=120)
    assert not t.is_alive()
    assert box["out"] == [x * x + 1 for x in range(30)]
    assert box["threads"] == {box["me"]} and box["me"] != threading.get_ident()
