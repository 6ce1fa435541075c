"""Benchmark: event times, Sun vectors and flavour draws together (issue goal ≥ 3 M events/s).

Usage::

    python tests/benchmarks/bench_propagation.py [N]     # default N = 1e7, chunks of 1e6

For each chunk: times ∝ 1/r² on a one-year exposure, the Sun-to-detector vector and cos-zenith
from the interpolated Sun table, ⁸B energies from the source sampler, the flavour probabilities
(day: vacuum combination; night: Earth table) and one uniform per event to draw the flavour —
the same calls the pipeline makes. Single process (one core).
"""

from __future__ import annotations

import sys
import time

import numpy as np

from generator import spectra
from generator.exposure import Exposure
from generator.oscillation import PRESETS, FlavourModel


def main() -> None:
    n = int(float(sys.argv[1])) if len(sys.argv) > 1 else 10_000_000
    chunk = 1_000_000
    t0 = time.perf_counter()
    exposure = Exposure(np.array([[1924992000.0, 1956528000.0]]), 37.2, -101.4)  # 2031
    flavour = FlavourModel(PRESETS["nufit-6.0"], ["8B"], latitude_deg=37.2, depth_m=1100.0)
    b8 = spectra.get_spectrum("8B")
    setup = time.perf_counter() - t0
    rng = np.random.default_rng(1)
    pdg = np.array([12, 14, 16], dtype=np.int16)
    t0 = time.perf_counter()
    done = 0
    night = 0
    while done < n:
        m = min(chunk, n - done)
        t = exposure.sample_times(rng, m)
        d, cz, _ = exposure.sun(t)
        e = np.maximum(b8.sample(rng, m), 0.05)
        p = flavour.probabilities("8B", e, cz)
        u = rng.random(m)
        flav = pdg[(u[:, None] >= np.cumsum(p, axis=1)[:, :2]).sum(axis=1)]
        night += int((cz < 0).sum())
        done += m
    dt = time.perf_counter() - t0
    print(f"set-up (Sun table, flavour tables; night table cached after first run): {setup:.2f} s")
    print(f"{n} events: {dt:.2f} s → {n / dt / 1e6:.2f} M events/s "
          f"(times + Sun vectors + flavour draws; night fraction {night / n:.4f}; "
          f"last flavour {flav[-1]})")


if __name__ == "__main__":
    main()
