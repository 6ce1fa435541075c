"""Benchmark: start-up time (imports and table building) with a warm table cache.

Usage::

    python tests/benchmarks/bench_startup.py [CONFIG]     # default: the embedded default

Prints the wall time of ``python -c "import generator.pipeline"`` (best of 3 fresh
interpreters) and of :func:`generator.pipeline.build_plan` after a first call has filled the
disk cache (night table), with the split of the second call into its main parts (cProfile
cumulative times; the profiler adds ≈ 5–10 %). Runs in ≈ 20 s; numbers taken while other jobs
use the 2 cores are noisy.
"""

from __future__ import annotations

import cProfile
import pstats
import subprocess
import sys
import time

#: part -> (file name suffix, function name) of build_plan's main steps.
PARTS = {
    "recoil tables (RecoilSampler)": ("recoil.py", "__init__"),
    "flavour model (day tables, night table from cache)": ("oscillation.py", "__init__"),
    "exposure (Sun table)": ("exposure.py", "__init__"),
    "per-source plans (exposure-averaged σ, envelope, proposal)": ("pipeline.py",
                                                                  "_plan_source"),
    "response model": ("response/__init__.py", "build_response"),
}


def main() -> None:
    path = sys.argv[1] if len(sys.argv) > 1 else None
    best = float("inf")
    for _ in range(3):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", "import generator.pipeline"], check=True)
        best = min(best, time.perf_counter() - t0)
    print(f"import generator.pipeline (fresh interpreter, incl. start-up): {best:.2f} s")
    from generator.config import load_config
    from generator.pipeline import build_plan

    cfg = load_config(path)
    t0 = time.perf_counter()
    build_plan(cfg)
    print(f"build_plan, first call (fills the cache if cold): {time.perf_counter() - t0:.2f} s")
    prof = cProfile.Profile()
    t0 = time.perf_counter()
    prof.enable()
    build_plan(cfg)
    prof.disable()
    total = time.perf_counter() - t0
    print(f"build_plan, warm cache (profiled): {total:.2f} s")
    st = pstats.Stats(prof).stats
    for part, (suffix, func) in PARTS.items():
        ct = sum(v[3] for k, v in st.items()
                 if k[0].replace("\\", "/").endswith(suffix) and k[2] == func
                 and any(c[0].endswith("pipeline.py") for c in v[4]))
        print(f"  {part:60s} {ct:6.2f} s {100 * ct / total:5.1f} %")


if __name__ == "__main__":
    main()
