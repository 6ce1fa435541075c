"""Benchmark of the flavour stage (plain script: ``python tests/benchmarks/bench_flavour.py``).

Prints the night-table build time (no cache), the cached reload time and the throughput of
``FlavourModel.probabilities`` for 10⁷ events, with np.interp on the same arrays as a
same-run reference (other processes share the cores, so compare ratios).
"""

from __future__ import annotations

import tempfile
import time

import numpy as np

from generator.oscillation import PRESETS, FlavourModel


def main() -> None:
    params = PRESETS["nufit-6.0"]
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        FlavourModel(params, ["8B"], latitude_deg=42.0, depth_m=1000.0, cache_dir=tmp)
        rows.append(("build (8B, night table, no cache)", time.perf_counter() - t0, ""))
        t0 = time.perf_counter()
        model = FlavourModel(params, ["8B"], latitude_deg=42.0, depth_m=1000.0, cache_dir=tmp)
        rows.append(("build (8B, cached night table)", time.perf_counter() - t0, ""))
    rng = np.random.default_rng(1)
    n = 10_000_000
    e = rng.uniform(0.05, 20.0, n)
    cz = rng.uniform(-1.0, 1.0, n)
    grid = np.linspace(0.05, 20.0, 200)
    vals = np.sin(grid)
    best_ref = best = np.inf
    for _ in range(3):
        t0 = time.perf_counter()
        np.interp(e, grid, vals)
        best_ref = min(best_ref, time.perf_counter() - t0)
        t0 = time.perf_counter()
        model.probabilities("8B", e, cz)
        best = min(best, time.perf_counter() - t0)
    rows.append(("np.interp, 1e7 (reference)", best_ref, f"{n / best_ref / 1e6:.1f} M/s"))
    rows.append(
        (
            "probabilities(), 1e7 day+night",
            best,
            f"{n / best / 1e6:.1f} M/s; {best / best_ref:.2f}x interp",
        )
    )
    print(f"{'case':42s} {'seconds':>9s}  rate")
    for name, sec, note in rows:
        print(f"{name:42s} {sec:9.3f}  {note}")


if __name__ == "__main__":
    main()
