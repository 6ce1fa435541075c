"""Benchmark: cost of the detector response in ``generate`` (response on vs off).

Usage::

    python tests/benchmarks/bench_response.py [N]        # default N = 1e6 events per run

For the embedded default (water Cherenkov) and ``configs/scintillator.toml`` it runs
``generate`` in fresh subprocesses with the response off and on (alternating, best of
``BENCH_REPEAT`` = 2 runs each), with the default compression and a fixed seed, and prints the
event-loop rate (generation + response + compression + writing, tables excluded) and the
ratio on/off, both per wall-clock second and per CPU second of the process (the CPU-time ratio
is much less sensitive to other jobs on a shared machine). The goal is ratio ≥ 0.8. Wall-clock
numbers on a shared machine vary by ±20–40 %; the ratio within one run is the meaningful
number. Also times the response alone on 2¹⁸ events.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

CHILD = r"""
import dataclasses, json, os, sys, tempfile, time
from generator.config import load_config
from generator.pipeline import generate
n = int(float(sys.argv[1])); path = sys.argv[2] or None; on = sys.argv[3] == "1"
cfg = load_config(path)
cfg = dataclasses.replace(cfg, response=dataclasses.replace(cfg.response, enabled=on))
d = tempfile.mkdtemp()
stamp = {}
out = os.path.join(d, "b.h5")
def start(m):
    stamp["t"] = time.perf_counter()
    stamp["c"] = time.process_time()
generate(cfg, out, n_events=n, seed=1, on_start=start)
t = time.perf_counter() - stamp["t"]
c = time.process_time() - stamp["c"]
os.remove(out)
print(json.dumps({"events_per_s": n / t, "events_per_cpu_s": n / c}))
"""

ALONE = r"""
import json, time, numpy as np
from generator.config import load_config
from generator.pipeline import build_plan, generate_chunk
from generator.response import ResponseStage
import sys
cfg = load_config(sys.argv[1] or None)
plan = build_plan(cfg)
ev = generate_chunk(plan, np.random.default_rng(1), 1 << 18, 1.0, np.random.default_rng(2))
st = ResponseStage(plan.response, lambda t: plan.exposure.sun(t)[0])
best = 1e9
for k in range(5):
    e = dict(ev)
    t0 = time.perf_counter()
    st.process(e, 1, k)
    best = min(best, time.perf_counter() - t0)
print(json.dumps({"ns_per_event": best / (1 << 18) * 1e9}))
"""


def _run(code: str, *args: str) -> dict:
    out = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True,
                         check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    n = sys.argv[1] if len(sys.argv) > 1 else "1e6"
    repeat = int(os.environ.get("BENCH_REPEAT", "2"))
    print(f"{'config':28s} {'off ev/s':>10s} {'on ev/s':>10s} {'ratio':>6s} "
          f"{'off ev/cpu-s':>12s} {'on ev/cpu-s':>12s} {'ratio':>6s} {'response ns/ev':>15s}")
    for label, path in (("default (water)", ""), ("configs/scintillator.toml",
                                                   "configs/scintillator.toml")):
        off = on = off_c = on_c = 0.0
        for _ in range(repeat):
            r0 = _run(CHILD, n, path, "0")
            r1 = _run(CHILD, n, path, "1")
            off, off_c = max(off, r0["events_per_s"]), max(off_c, r0["events_per_cpu_s"])
            on, on_c = max(on, r1["events_per_s"]), max(on_c, r1["events_per_cpu_s"])
        alone = _run(ALONE, path)["ns_per_event"]
        print(f"{label:28s} {off:10.4g} {on:10.4g} {on / off:6.2f} {off_c:12.4g} "
              f"{on_c:12.4g} {on_c / off_c:6.2f} {alone:15.0f}")


if __name__ == "__main__":
    main()
