"""Benchmark: per-stage CPU split of the ``generate`` event loop, and its rate.

Usage::

    python tests/benchmarks/bench_stages.py [N] [STAGES]   # default 1e6 events, bkg+resp

For the embedded default (water Cherenkov) and ``configs/scintillator.toml`` (see
``bench_configs.py`` for STAGES: ``bkg+resp`` = response + 10 background species, ``file``,
``truth``, ``resp``), ``generate`` writes N events to a temporary file with the default
filter (``deflate``), a fixed seed and the default threads. The stage functions are wrapped
by timers of the CPU time of the calling thread (``time.thread_time``), exclusive of nested
stages, in every thread (chunk threads and the writer's encoder threads); so the split holds
with the thread pools on and its parts add up to the CPU time of the event loop ("other":
the rest, e.g. array assembly in the chunk and the rejection bookkeeping). It prints the
wall-clock rate, the CPU time per event and the split in ns/event of CPU and % of the loop's
CPU (the goal of issue 12: no stage above 40 %), with the load average. The timers cost a
few per cent; on a shared machine the wall rate varies by ±20–40 %, the CPU split much less.
"""

from __future__ import annotations

import functools
import os
import sys
import tempfile
import threading
import time
from collections import defaultdict

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from bench_configs import configured  # noqa: E402

#: stage -> (module, attribute path) of the functions whose exclusive CPU time counts.
STAGES: dict[str, tuple[tuple[str, str], ...]] = {
    "source + E proposal": (("generator.spectra.sampling", "InverseCDFSampler.sample"),),
    "time proposal + Sun vectors": (("generator.exposure", "Exposure.sample_times"),
                                    ("generator.exposure", "Exposure.sun")),
    "flavour probabilities + acceptance": (("generator.oscillation",
                                            "FlavourModel.probabilities"),
                                           ("generator.chunks", "sigma_matrix"),
                                           ("generator.envelope", "Envelope.__call__")),
    "recoil sampling": (("generator.recoil", "RecoilSampler.sample"),),
    "kinematics + vertex": (("generator.kinematics", "scatter"),
                            ("generator.geometry", "FiducialVolume.sample")),
    "backgrounds": (("generator.backgrounds.stage", "BackgroundPlan.fill"),),
    "response": (("generator.response", "ResponseStage.process"),),
    "HDF5 encode (deflate, encoder threads)": (("generator.io.writer", "encode_deflate"),),
    "HDF5 write (buffering, direct chunk writes, flush)": (("generator.io.writer",
                                                          "HDF5Sink.write_chunk"),
                                                         ("generator.io.writer",
                                                          "HDF5Sink.commit")),
}


class StageTimer:
    """Exclusive per-stage thread CPU time over all threads."""

    def __init__(self) -> None:
        self.total: dict[str, float] = defaultdict(float)
        self._local = threading.local()
        self._lock = threading.Lock()

    def wrap(self, stage: str, fn):
        @functools.wraps(fn)
        def timed(*args, **kwargs):
            stack = self._local.__dict__.setdefault("stack", [])
            stack.append(0.0)
            t0 = time.thread_time()
            try:
                return fn(*args, **kwargs)
            finally:
                dt = time.thread_time() - t0
                inner = stack.pop()
                if stack:
                    stack[-1] += dt
                with self._lock:
                    self.total[stage] += dt - inner
        return timed


def _install(timer: StageTimer) -> list:
    import importlib

    undo = []
    for stage, funcs in STAGES.items():
        for mod_name, attr in funcs:
            owner = importlib.import_module(mod_name)
            *parents, name = attr.split(".")
            for p in parents:
                owner = getattr(owner, p)
            original = owner.__dict__[name] if isinstance(owner, type) else getattr(owner, name)
            setattr(owner, name, timer.wrap(stage, original))
            undo.append((owner, name, original))
    return undo


def profile(path: str | None, n: int, stages: str) -> tuple[float, float, dict[str, float]]:
    """(loop wall s, loop CPU s, exclusive CPU s per stage) of one run."""
    from generator.pipeline import generate

    cfg = configured(path, stages)
    timer = StageTimer()
    undo = _install(timer)
    stamp: dict[str, float] = {}

    def start(_m: int) -> None:
        timer.total.clear()
        stamp["t"], stamp["c"] = time.perf_counter(), time.process_time()

    try:
        with tempfile.TemporaryDirectory() as d:
            generate(cfg, os.path.join(d, "b.h5"), n_events=n, seed=1, force=True,
                     on_start=start)
            wall = time.perf_counter() - stamp["t"]
            cpu = time.process_time() - stamp["c"]
    finally:
        for owner, name, original in reversed(undo):
            setattr(owner, name, original)
    return wall, cpu, dict(timer.total)


def main() -> None:
    n = int(float(sys.argv[1])) if len(sys.argv) > 1 else 1_000_000
    stages = sys.argv[2] if len(sys.argv) > 2 else "bkg+resp"
    for label, path in (("default (water)", None),
                        ("configs/scintillator.toml", "configs/scintillator.toml")):
        load0 = os.getloadavg()[0]
        wall, cpu, split = profile(path, n, stages)
        print(f"\n{label}, {stages}: {n} events, loop {wall:.2f} s = {n / wall / 1e6:.3f} M "
              f"events/s wall, CPU {cpu / n * 1e9:.0f} ns/event ({cpu / wall:.2f} cores), "
              f"load average {load0:.2f} -> {os.getloadavg()[0]:.2f}")
        print(f"  {'stage':52s} {'ns/event':>9s} {'% CPU':>6s}")
        other = cpu - sum(split.values())
        for stage in [*STAGES, "other"]:
            t = other if stage == "other" else split.get(stage, 0.0)
            print(f"  {stage:52s} {t / n * 1e9:9.0f} {100 * t / cpu:6.1f}")


if __name__ == "__main__":
    main()
