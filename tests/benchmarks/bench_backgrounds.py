"""Benchmark: cost of 10 background species in ``generate`` (truth level vs backgrounds on).

Usage::

    python tests/benchmarks/bench_backgrounds.py [N]      # default N = 1e6 events per run

For the embedded default (water Cherenkov) and ``configs/scintillator.toml`` it runs
``generate`` in fresh subprocesses (fixed seed, default compression) in three modes:
``truth`` (response and backgrounds off: today's truth-level rate), ``bkg`` (10 background
species on: ¹⁴C, ⁸⁵Kr, ²¹⁰Bi, ⁴⁰K, ²¹⁰Po, ¹¹C, ²¹⁴Bi, ¹²B, ¹⁶N uniform and ²⁰⁸Tl from the
vessel, each with a rate giving 10 % of the signal count, so half of the events are
backgrounds) and ``bkg+resp`` (backgrounds and the detector response on). It prints the
event-loop rate (generation + stages + compression + writing, tables excluded; best of
``BENCH_REPEAT`` = 1 runs) and the ratios to ``truth``. Goal: ratio ≥ 0.8. On a shared machine
absolute numbers vary by ±20–40 %; the ratios within one run are the meaningful numbers.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

CHILD = r"""
import json, os, sys, tempfile, time
sys.path.insert(0, sys.argv[4])
from bench_configs import configured
from generator.pipeline import generate
n = int(float(sys.argv[1])); path = sys.argv[2] or None; mode = sys.argv[3]
cfg = configured(path, mode)
d = tempfile.mkdtemp()
stamp = {}
out = os.path.join(d, "b.h5")
generate(cfg, out, n_events=n, seed=1,
         on_start=lambda m: stamp.setdefault("t", time.perf_counter()))
t = time.perf_counter() - stamp["t"]
os.remove(out)
print(json.dumps({"events_per_s": n / t}))
"""


def _run(*args: str) -> float:
    here = os.path.dirname(os.path.abspath(__file__))
    out = subprocess.run([sys.executable, "-c", CHILD, *args, here], capture_output=True,
                         text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])["events_per_s"]


def main() -> None:
    n = sys.argv[1] if len(sys.argv) > 1 else "1e6"
    repeat = int(os.environ.get("BENCH_REPEAT", "1"))
    print(f"{'config':28s} {'truth ev/s':>11s} {'bkg ev/s':>10s} {'ratio':>6s} "
          f"{'bkg+resp ev/s':>14s} {'ratio':>6s}")
    for label, path in (("default (water)", ""), ("configs/scintillator.toml",
                                                   "configs/scintillator.toml")):
        rates = {}
        for mode in ("truth", "bkg", "bkg+resp"):
            rates[mode] = max(_run(n, path, mode) for _ in range(repeat))
        t = rates["truth"]
        print(f"{label:28s} {t:11.4g} {rates['bkg']:10.4g} {rates['bkg'] / t:6.2f} "
              f"{rates['bkg+resp']:14.4g} {rates['bkg+resp'] / t:6.2f}")


if __name__ == "__main__":
    main()
