"""Benchmark of ``generate`` end to end: events/s and peak memory.

Usage::

    python tests/benchmarks/bench_generate.py [N ...]      # default: 1e6 1e7

Each size runs in a fresh subprocess (so peak RSS is that run's own), with the embedded default
configuration (or the TOML file named by ``BENCH_CONFIG``, e.g. ``[response] enabled = false``
for the truth-level stages alone), the default compression (``BENCH_COMPRESSION`` lists
others), a fixed seed and output into a temporary directory. The
plan-building time (tables; the night table comes from the disk cache after the first run) is
reported apart from the event loop, whose rate (generation + compression + writing) is the
events/s column.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile

CHILD = r"""
import json, resource, sys, time, tempfile, os
from generator.config import load_config
from generator.pipeline import generate
n = int(float(sys.argv[1])); comp = sys.argv[2]
cfg = load_config(os.environ.get("BENCH_CONFIG") or None)
import dataclasses
cfg = dataclasses.replace(cfg, output=dataclasses.replace(cfg.output, compression=comp))
d = tempfile.mkdtemp()
stamp = {}
t0 = time.perf_counter()
generate(cfg, os.path.join(d, "b.h5"), n_events=n, seed=1,
         on_start=lambda m: stamp.setdefault("loop", time.perf_counter()))
t_end = time.perf_counter()
t_all = t_end - t0
t_plan = stamp["loop"] - t0
size = os.path.getsize(os.path.join(d, "b.h5"))
os.remove(os.path.join(d, "b.h5"))
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
print(json.dumps({"n": n, "compression": comp, "plan_s": t_plan, "total_s": t_all,
                  "events_per_s": n / max(t_end - stamp["loop"], 1e-9), "peak_rss_mb": rss,
                  "bytes_per_event": size / n}))
"""


def main() -> None:
    sizes = [float(x) for x in sys.argv[1:]] or [1e6, 1e7]
    comps = os.environ.get("BENCH_COMPRESSION", "deflate").split(",")
    print(f"{'events':>10} {'filter':>10} {'plan s':>8} {'total s':>8} {'events/s':>12} "
          f"{'peak MB':>8} {'B/event':>8}")
    for comp in comps:
        for n in sizes:
            with tempfile.TemporaryDirectory():
                out = subprocess.run([sys.executable, "-c", CHILD, str(n), comp],
                                     capture_output=True, text=True, check=True)
            r = json.loads(out.stdout.strip().splitlines()[-1])
            print(f"{r['n']:>10d} {comp:>10} {r['plan_s']:8.2f} {r['total_s']:8.2f} "
                  f"{r['events_per_s']:12.4g} {r['peak_rss_mb']:8.0f} {r['bytes_per_event']:8.1f}")


if __name__ == "__main__":
    main()
