"""Benchmark: time and peak memory of ``generate`` against the event count (linearity).

Usage::

    python tests/benchmarks/bench_scaling.py [N ...]     # default: 1e6 (add 1e7 1e8 by hand)

Each N runs in a fresh subprocess (the child of ``bench_generate.py``, with its
``BENCH_CONFIG``/``BENCH_STAGES``/``BENCH_THREADS`` settings; default compression ``deflate``,
fixed seed, output in a temporary folder), so the peak RSS (``resource.getrusage``) is that
run's own. Prints total and event-loop time, time per event
and peak RSS; time/event constant over N means the loop is linear in the event count, and a
flat peak RSS means memory is bounded by the chunk size. Default run ≈ 10 s; 10⁷ takes
≈ 10–30 s and 10⁸ several minutes on the shared 2-core machine (numbers under contention are
noisy).
"""

from __future__ import annotations

import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from bench_generate import run_child  # noqa: E402


def main() -> None:
    sizes = [float(x) for x in sys.argv[1:]] or [1e6]
    comp = os.environ.get("BENCH_COMPRESSION", "deflate")
    print(f"stages {os.environ.get('BENCH_STAGES', 'file')}, config "
          f"{os.environ.get('BENCH_CONFIG') or 'embedded default'}, filter {comp}")
    print(f"{'events':>11} {'total s':>8} {'loop s':>8} {'ns/event (loop)':>16} "
          f"{'CPU ns/event':>13} {'peak RSS MB':>12} {'load':>5}")
    for n in sizes:
        r = run_child(n, comp)
        loop = r["total_s"] - r["plan_s"]
        print(f"{r['n']:>11d} {r['total_s']:8.2f} {loop:8.2f} {loop / r['n'] * 1e9:16.0f} "
              f"{r['cpu_ns_per_event']:13.0f} {r['peak_rss_mb']:12.0f} {r['load']:5.2f}",
              flush=True)


if __name__ == "__main__":
    main()
