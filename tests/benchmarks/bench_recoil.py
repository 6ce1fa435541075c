"""Benchmark of the recoil-energy sampler (run: python tests/benchmarks/bench_recoil.py).

Prints table build time, the vectorised table sampler's rate for mixed energies/flavours, and
a naive per-event rejection sampler (Python loop over events, envelope from a 64-point scan of
dσ/dT per event) measured in the same run; quote the ratio, not absolute numbers, because the
machine's 2 cores are shared.
"""

from __future__ import annotations

import time

import numpy as np

from generator import xsec as X
from generator.kinematics import t_max
from generator.recoil import RecoilSampler


def rejection_sample(rng: np.random.Generator, energy: np.ndarray, pdg: np.ndarray,
                     model: X.XsecModel) -> np.ndarray:
    """Per-event rejection sampling of T from dσ/dT (reference, slow)."""
    out = np.empty(energy.size)
    grid = np.linspace(0.0, 1.0, 66)[1:-1]
    for i in range(energy.size):
        e, p = float(energy[i]), int(pdg[i])
        tm = float(t_max(e))
        fmax = 1.05 * float(np.max(X.dsigma_dt(e, grid * tm, p, model)))
        while True:
            t = tm * rng.random()
            if rng.random() * fmax < float(X.dsigma_dt(e, t, p, model)):
                out[i] = t
                break
    return out


def best_rate(fn, n: int, repeats: int = 5) -> float:
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return n / best


def main() -> None:
    model = X.XsecModel()
    t0 = time.perf_counter()
    sampler = RecoilSampler(model, pdgs=(12, 14, 16), lines=(0.3843, 0.8619, 1.4422))
    build = time.perf_counter() - t0

    rng = np.random.default_rng(1)
    n = 2_000_000
    energy = np.exp(rng.uniform(np.log(0.05), np.log(20.0), n))
    pdg = rng.choice(np.array([12, 14, 16]), n)
    sampler.sample(rng, energy[:1000], pdg[:1000])  # warm-up
    rate_table = best_rate(lambda: sampler.sample(rng, energy, pdg), n)
    rate_sigma = best_rate(lambda: sampler.sigma(energy, pdg), n)

    n_rej = 1000
    t0 = time.perf_counter()
    rejection_sample(rng, energy[:n_rej], pdg[:n_rej], model)
    rate_rej = n_rej / (time.perf_counter() - t0)

    print(f"{'item':<46}{'value':>16}")
    print(f"{'table build (3 flavours, 512x512, 3 lines)':<46}{build:>14.3f} s")
    print(f"{'table sampler, mixed E and flavour':<46}{rate_table / 1e6:>12.2f} M/s")
    print(f"{'sigma() table interpolation':<46}{rate_sigma / 1e6:>12.2f} M/s")
    print(f"{'per-event rejection sampler (reference)':<46}{rate_rej / 1e3:>12.2f} k/s")
    print(f"{'speed-up table / rejection':<46}{rate_table / rate_rej:>14.0f} x")


if __name__ == "__main__":
    main()
