"""Benchmark: `rates` on the demo configurations (tables built once, then the rate sums).

Usage: PYTHONPATH=. python tests/benchmarks/bench_rates.py
Prints, per config, the time of build_plan (the generator's own tables, shared with
`generate`) and of compute_rates on the built plan (totals, and with true/reco windows),
then the wall time of the command `sunrecoil rates CONFIG` in a fresh process (imports, warm
table cache, table output), the median of three runs.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time

from generator.config import load_config
from generator.pipeline import build_plan
from generator.rates import compute_rates, to_dict

CONFIGS = [None, "configs/water_cherenkov.toml", "configs/scintillator.toml",
           "configs/hybrid_wbls.toml"]

if __name__ == "__main__":
    for path in CONFIGS:
        cfg = load_config(path)
        t0 = time.process_time()
        plan = build_plan(cfg)
        t1 = time.process_time()
        to_dict(compute_rates(cfg, plan=plan), [-1.0, 0.0, 1.0])
        t2 = time.process_time()
        thr = cfg.interaction.threshold_mev
        compute_rates(cfg, plan=plan, t_edges=[thr, thr + 1, thr + 3, float("inf")],
                      reco_edges=[thr, thr + 1, thr + 3, 20.0])
        t3 = time.process_time()
        print(f"{path or 'default'}: build_plan {t1 - t0:.2f} s CPU; rates totals "
              f"{t2 - t1:.3f} s; with 3 true + 3 reco windows {t3 - t2:.2f} s")
    for path in CONFIGS:
        walls = []
        for _ in range(3):
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "generator", "rates", *([path] if path else [])],
                           check=True, stdout=subprocess.DEVNULL, env=dict(os.environ))
            walls.append(time.perf_counter() - t0)
        print(f"`sunrecoil rates {path or ''}`: {sorted(walls)[1]:.2f} s wall (median of 3, "
              "warm cache)")
