"""Run every benchmark of bench/ in turn (``make bench``); each prints its own ratios.

Sizes are the scripts' defaults; pass ``--quick`` for a short look (smaller lots).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
QUICK = {"bench_batch.py": ["200"], "bench_report.py": ["1000"], "bench_fit.py": [],
         "bench_corrections.py": []}


def main() -> int:
    quick = "--quick" in sys.argv[1:]
    failed = []
    for script in sorted(HERE.glob("bench_*.py")):
        print(f"== {script.name}", flush=True)
        args = QUICK.get(script.name, []) if quick else []
        if subprocess.run([sys.executable, str(script), *args]).returncode != 0:
            failed.append(script.name)
    if failed:
        print("failed: " + ", ".join(failed))
    return 1 if failed else 0


if __name__ == "__main__":
    raise SystemExit(main())
