"""Benchmark: time and peak memory of ``generate`` against the event count (linearity).

Usage::

    python tests/benchmarks/bench_scaling.py [N ...]     # default: 1e6 (add 1e7 1e8 by hand)

Each N runs in a fresh subprocess (the child of ``bench_generate.py``: embedded default
configuration, default compression, fixed seed, output in a temporary folder), so the peak RSS
(``resource.getrusage``) is that run's own. Prints total and event-loop time, time per event
and peak RSS; time/event constant over N means the loop is linear in the event count, and a
flat peak RSS means memory is bounded by the chunk size. Default run ≈ 10 s; 10⁷ takes
≈ 10–30 s and 10⁸ several minutes on the shared 2-core machine (numbers under contention are
noisy).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from bench_generate import CHILD  # noqa: E402


def main() -> None:
    sizes = [float(x) for x in sys.argv[1:]] or [1e6]
    comp = os.environ.get("BENCH_COMPRESSION", "blosc-lz4")
    print(f"{'events':>11} {'total s':>8} {'loop s':>8} {'ns/event (loop)':>16} "
          f"{'peak RSS MB':>12}")
    for n in sizes:
        out = subprocess.run([sys.executable, "-c", CHILD, str(n), comp], capture_output=True,
                             text=True, check=True)
        r = json.loads(out.stdout.strip().splitlines()[-1])
        loop = r["total_s"] - r["plan_s"]
        print(f"{r['n']:>11d} {r['total_s']:8.2f} {loop:8.2f} {loop / r['n'] * 1e9:16.0f} "
              f"{r['peak_rss_mb']:12.0f}")


if __name__ == "__main__":
    main()
