"""Review log: the PostgreSQL server against the SQLite file, ratios measured in one run.

1. Writing 10,000 events (one verdict for each of 10,000 captures) in batches of 500
   (``ReviewLog.add_many``): server time / SQLite time (issue 15 asks at most 3x).
2. Reading the current state of those 10,000 captures (``ReviewLog.state``): server time /
   SQLite time (at most 2x).

Both logs are on this machine and both write durably (SQLite ``synchronous = FULL``; the
throw-away server with ``fsync = on``). The server is the one of ``SWEEPBOOK_BENCH_URL``
(password from PGPASSWORD or ~/.pgpass), else a throw-away one started here with Debian's
PostgreSQL programs (tests/pg_server.py). Prints the ratios; asserts no timing.

Run: ``python bench/bench_review.py [EVENTS]`` (or ``make bench``).
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
from kit.review.log import ReviewLog  # noqa: E402

BATCH = 500


def _events(n: int, who: str):
    return [{"capture": {"sha256": f"{who}-{i:06d}", "capture": f"part-{i:06d}",
                         "path": f"/lots/lot{i // 1000}/part-{i:06d}.s1p"},
             "kind": "verdict", "value": ("accept", "reject", "retest")[i % 3],
             "text": "bench", "author": who} for i in range(n)]


def _time_write(log: ReviewLog, events: list) -> float:
    t = time.perf_counter()
    for k in range(0, len(events), BATCH):
        log.add_many(events[k:k + BATCH])
    return time.perf_counter() - t


def _time_state(log: ReviewLog, repeat: int = 3) -> float:
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        st = log.state()
        best = min(best, time.perf_counter() - t)
    assert len(st) >= 1
    return best


def bench(n: int, url: str) -> tuple[float, float]:
    with tempfile.TemporaryDirectory() as tmp:
        lite = ReviewLog(Path(tmp) / "review.sqlite")
        server = ReviewLog(url)
        w_lite = _time_write(lite, _events(n, "lite"))
        w_server = _time_write(server, _events(n, "server"))
        r_lite, r_server = _time_state(lite), _time_state(server)
        assert len(lite.state()) == n
        lite.close()
        server.close()
    print(f"write {n:,} events in batches of {BATCH}: SQLite {w_lite:.2f} s, server "
          f"{w_server:.2f} s, ratio server/SQLite {w_server / w_lite:.2f} (target <= 3)")
    print(f"state of {n:,} captures: SQLite {r_lite:.2f} s, server {r_server:.2f} s, "
          f"ratio server/SQLite {r_server / r_lite:.2f} (target <= 2)")
    return w_server / w_lite, r_server / r_lite


def main(argv: list[str]) -> int:
    n = int(argv[0]) if argv else 10_000
    url = os.environ.get("SWEEPBOOK_BENCH_URL")
    if url:
        bench(n, url)
        return 0
    from pg_server import TempPostgres, find_bindir

    bindir = find_bindir()
    if bindir is None:
        print("no PostgreSQL server programs here (Debian package `postgresql`) and no "
              "SWEEPBOOK_BENCH_URL: nothing to compare")
        return 0
    server = TempPostgres(bindir, fsync=True).start()
    try:
        os.environ["PGPASSFILE"] = str(server.passfile)
        bench(n, server.url(server.new_database()))
    finally:
        server.stop()
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
