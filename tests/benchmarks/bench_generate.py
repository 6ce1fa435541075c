"""Benchmark of ``generate`` end to end: events/s, CPU per event, peak memory, bytes/event.

Usage::

    python tests/benchmarks/bench_generate.py [N ...]      # default: 1e6 1e7

Each size runs in a fresh subprocess (so peak RSS is that run's own), with the embedded default
configuration (or the TOML file named by ``BENCH_CONFIG``), the optional stages set by
``BENCH_STAGES`` (``file`` as written, ``truth``, ``resp`` or ``bkg+resp`` = response + 10
background species; see ``bench_configs.py``), the default filter (``BENCH_COMPRESSION``
lists others), ``BENCH_THREADS`` chunk threads (default: generate's default), a fixed seed and
output into a temporary directory. The plan-building time (tables; the night table comes from
the disk cache after the first run) is reported apart from the event loop, whose rate
(generation + compression + writing) is the events/s column; "CPU ns" is the process CPU
time of the loop per event (all threads) and "load" the 1-minute load average at the end.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile

CHILD = r"""
import json, resource, sys, time, tempfile, os
sys.path.insert(0, sys.argv[3])
from bench_configs import configured
from generator.pipeline import generate
n = int(float(sys.argv[1])); comp = sys.argv[2]
cfg = configured(os.environ.get("BENCH_CONFIG") or None, os.environ.get("BENCH_STAGES", "file"),
                 comp)
t0 = time.perf_counter()
threads = int(os.environ["BENCH_THREADS"]) if os.environ.get("BENCH_THREADS") else None
d = tempfile.mkdtemp()
stamp = {}
def start(m):
    stamp["loop"], stamp["cpu"] = time.perf_counter(), time.process_time()
generate(cfg, os.path.join(d, "b.h5"), n_events=n, seed=1, on_start=start, threads=threads)
t_end = time.perf_counter()
cpu = time.process_time() - stamp["cpu"]
t_all = t_end - t0
t_plan = stamp["loop"] - t0
size = os.path.getsize(os.path.join(d, "b.h5"))
os.remove(os.path.join(d, "b.h5"))
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
print(json.dumps({"n": n, "compression": comp, "plan_s": t_plan, "total_s": t_all,
                  "events_per_s": n / max(t_end - stamp["loop"], 1e-9), "peak_rss_mb": rss,
                  "bytes_per_event": size / n, "cpu_ns_per_event": cpu / n * 1e9,
                  "load": os.getloadavg()[0]}))
"""

HERE = os.path.dirname(os.path.abspath(__file__))


def main() -> None:
    sizes = [float(x) for x in sys.argv[1:]] or [1e6, 1e7]
    comps = os.environ.get("BENCH_COMPRESSION", "deflate").split(",")
    print(f"stages {os.environ.get('BENCH_STAGES', 'file')}, config "
          f"{os.environ.get('BENCH_CONFIG') or 'embedded default'}, threads "
          f"{os.environ.get('BENCH_THREADS') or 'default'}")
    print(f"{'events':>10} {'filter':>10} {'plan s':>8} {'total s':>8} {'events/s':>12} "
          f"{'CPU ns':>7} {'peak MB':>8} {'B/event':>8} {'load':>5}")
    for comp in comps:
        for n in sizes:
            r = run_child(n, comp)
            print(f"{r['n']:>10d} {comp:>10} {r['plan_s']:8.2f} {r['total_s']:8.2f} "
                  f"{r['events_per_s']:12.4g} {r['cpu_ns_per_event']:7.0f} "
                  f"{r['peak_rss_mb']:8.0f} {r['bytes_per_event']:8.1f} {r['load']:5.2f}")


def run_child(n: float, comp: str = "deflate") -> dict:
    """One run in a fresh interpreter (the environment variables above apply)."""
    with tempfile.TemporaryDirectory():
        out = subprocess.run([sys.executable, "-c", CHILD, str(n), comp, HERE],
                             capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


if __name__ == "__main__":
    main()
