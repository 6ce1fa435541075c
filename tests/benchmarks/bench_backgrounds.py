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
import dataclasses, json, os, sys, tempfile, time
from generator.backgrounds.config import BackgroundsConfig, IsotopeConfig
from generator.config import load_config
from generator.pipeline import build_plan, generate
n = int(float(sys.argv[1])); path = sys.argv[2] or None; mode = sys.argv[3]
cfg = load_config(path)
cfg = dataclasses.replace(cfg, backgrounds=None,
                          response=dataclasses.replace(cfg.response, enabled="resp" in mode))
if "bkg" in mode:
    base = build_plan(cfg)
    mass = base.fiducial.volume_cm3 * base.medium.density_g_cm3 / 1000.0
    rate = base.expected_total / 10.0 / (mass * base.exposure.live_seconds)   # Bq/kg
    names = ["14C", "85Kr", "210Bi", "40K", "210Po", "11C", "214Bi", "208Tl", "12B", "16N"]
    isos = tuple(IsotopeConfig(x, rate, "Bq/kg", "vessel" if x == "208Tl" else "uniform",
                               0.3 if x == "208Tl" else None) for x in names)
    det = cfg.detector
    cfg = dataclasses.replace(cfg, backgrounds=BackgroundsConfig(
        True, isos, vessel_radius_m=det.fiducial_radius_m + 0.5,
        vessel_half_height_m=det.fiducial_half_height_m + 0.5))
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
    out = subprocess.run([sys.executable, "-c", CHILD, *args], capture_output=True, text=True,
                         check=True)
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
