"""Benchmark: `reweight` throughput (goal ≥ 2 × 10⁶ events/s), table build time apart.

Usage: PYTHONPATH=. python tests/benchmarks/bench_reweight.py [N_EVENTS]
Generates N_EVENTS (default 4 × 10⁶; ⁸B + hep, response off) into a temporary file once,
then for each kind of change prints
  * tables: build_plan of the alternative and the DensityRatio (the generated configuration's
    flavour tables when oscillations change), CPU seconds, not part of the rates below;
  * ratio: events per CPU second of the vectorised ratio alone on in-memory event arrays;
  * file pass: events/s of the whole reweight pass (chunked read of six fields, ratio, write of
    the side file with Fletcher-32), wall and CPU time.
The machine is shared: wall times are noisier than CPU times.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import h5py

from generator.config import parse_config
from generator.io import EventFile
from generator.pipeline import build_plan, generate
from generator.reweight import DEFAULT_CHUNK, READ_FIELDS, DensityRatio, load_alternative, reweight

CHANGES = {
    "flux model": "[sources]\nflux_model = \"B16-AGSS09met\"\n",
    "8B shape": "[sources]\nb8_shape = \"plus1sigma\"\n",
    "oscillation": "[oscillation]\nsin2_theta12 = 0.25\n",
    "tree level": "[interaction]\ncorrections = \"tree\"\n",
    "magnetic moment": "[interaction]\nmagnetic_moment = 50.0\n",
    "all of these": "[sources]\nflux_model = \"B16-AGSS09met\"\nb8_shape = \"plus1sigma\"\n"
                    "[oscillation]\nsin2_theta12 = 0.25\n[interaction]\ncorrections = \"tree\"\n",
}


def main(n: int) -> None:
    import tomllib

    from generator.config import default_config_text

    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        data = tomllib.loads(default_config_text())
        data["sources"]["include"] = ["8B", "hep"]
        data["response"] = {"enabled": False}
        cfg = parse_config(data)
        t0 = time.perf_counter()
        generate(cfg, d / "a.h5", n_events=n, seed=1)
        print(f"generated {n} events in {time.perf_counter() - t0:.1f} s")
        with EventFile(d / "a.h5") as ev:
            events = ev.read(list(READ_FIELDS))
            names = [x.decode() if isinstance(x, bytes) else str(x)
                     for x in ev.table("sources/name")]
            codes = dict(zip(names, (int(c) for c in ev.table("sources/code")), strict=True))
            flux = dict(zip(names, (float(x) for x in ev.table("sources/flux")), strict=True))
            intervals = ev.table("exposure/intervals")
        for label, text in CHANGES.items():
            (d / "alt.toml").write_text(text)
            alt = load_alternative(d / "alt.toml", cfg)
            c0 = time.process_time()
            plan = build_plan(alt)
            c1 = time.process_time()
            ratio = DensityRatio(cfg, flux, codes, plan, intervals)
            c2 = time.process_time()
            chunk = {k: v[:DEFAULT_CHUNK] for k, v in events.items()}
            t0 = time.process_time()
            reps = max(1, n // DEFAULT_CHUNK)
            for _ in range(reps):
                ratio(chunk)
            t_ratio = (time.process_time() - t0) / (reps * chunk["origin"].size)
            w0, p0 = time.perf_counter(), time.process_time()
            reweight(d / "a.h5", alt, d / "w.h5", force=True, alt_plan=plan,
                     density_ratio=ratio)
            wall, cpu = time.perf_counter() - w0, time.process_time() - p0
            with h5py.File(d / "w.h5") as f:
                assert f["weights/weight"].shape == (n,)
            print(f"{label:16s} tables {c1 - c0:5.2f} + {c2 - c1:5.2f} s CPU | ratio "
                  f"{1e-6 / t_ratio:6.2f} M ev/s CPU | file pass {n / wall / 1e6:5.2f} M ev/s "
                  f"wall, {n / cpu / 1e6:5.2f} M ev/s CPU")


if __name__ == "__main__":
    main(int(float(sys.argv[1])) if len(sys.argv) > 1 else 4_000_000)
