"""Run every benchmark (tests/bench/bench_*.py) in turn, each in its own process.

Each benchmark prints its own figures with their targets; none fails on speed.
The exit code is non-zero only when a benchmark crashes.  Used by ``make bench``.
"""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main(argv: list[str]) -> int:
    only = set(argv)
    benches = sorted(p for p in HERE.glob("bench_*.py") if not only or p.stem in only or p.name in only)
    failed = []
    for path in benches:
        print(f"=== {path.name}", flush=True)
        t0 = time.perf_counter()
        rc = subprocess.call([sys.executable, str(path)], cwd=HERE.parents[1])
        print(f"=== {path.name}: {'done' if rc == 0 else f'FAILED (exit {rc})'} in {time.perf_counter() - t0:.0f} s\n",
              flush=True)
        if rc != 0:
            failed.append(path.name)
    if failed:
        print("benchmarks that crashed: " + ", ".join(failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
