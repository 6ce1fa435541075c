"""Benchmark: `sensitivity` Asimov scan over the 10 exposures of the water-Cherenkov demo.

Usage: PYTHONPATH=. python tests/benchmarks/bench_sensitivity.py [N_TOYS]
Prints wall and CPU seconds of build_plan, of the templates (tables; 9 energy × 8 cos θ_sun ×
day/night bins, 2 sources × 5 moments × 5 variants, 5 background isotopes), of the Asimov
scan over 10 exposures (profile interval + q₀ each) and, with N_TOYS > 0, of that many toys.
The issue's goal: the whole Asimov scan over 10 exposures (plan, templates and fits) < 30 s.
"""

from __future__ import annotations

import sys
import time

from generator.config import load_config
from generator.pipeline import build_plan
from generator.sensitivity import asimov_scan, prepare, run_toys

CONFIG = "configs/water_cherenkov.toml"


def _clock() -> tuple[float, float]:
    return time.perf_counter(), time.process_time()


def _since(t: tuple[float, float]) -> str:
    w, c = _clock()
    return f"{w - t[0]:.2f} s wall / {c - t[1]:.2f} s CPU"


if __name__ == "__main__":
    n_toys = int(sys.argv[1]) if len(sys.argv) > 1 else 0
    t0 = _clock()
    cfg = load_config(CONFIG)
    sens = cfg.sensitivity
    t = _clock()
    plan = build_plan(cfg)
    print(f"build_plan: {_since(t)}")
    t = _clock()
    an = prepare(cfg, sens, plan)
    print(f"templates ({an.model.n_bins} bins, {len(an.model.components)} components, "
          f"{int((~an.model.fixed).sum())} free parameters): {_since(t)}")
    t = _clock()
    rows = asimov_scan(an)
    calls = sum(r["fit_calls"] for r in rows)
    print(f"Asimov scan over {len(rows)} exposures ({calls} likelihood evaluations): "
          f"{_since(t)}")
    print(f"total (config to scan): {_since(t0)}")
    if n_toys:
        t = _clock()
        toys = run_toys(an, n_toys, seed=1, exposure_days=365.0)
        print(f"{n_toys} toys (fit + profile interval each): {_since(t)}; pull mean "
              f"{toys['pull_mean']:.3f}, std {toys['pull_std']:.3f}, coverage "
              f"{toys.get('coverage_68', float('nan')):.3f}")
