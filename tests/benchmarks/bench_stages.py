"""Benchmark: per-stage split of the ``generate`` event loop (cProfile cumulative times).

Usage::

    python tests/benchmarks/bench_stages.py [N]          # default N = 5e5 events per config

For the embedded default (water Cherenkov) and ``configs/scintillator.toml``, with every stage
that exists switched on (detector response; radioactive backgrounds when the package has them),
``generate`` runs into a temporary HDF5 file with the default compression and a fixed seed. The
profiler is switched on by the ``on_start`` callback, i.e. after the tables are built, so only
the event loop is profiled. The cumulative times of the stage functions are mapped to stages
and printed as ns/event and % of the loop; "other" is the loop time not inside any listed stage
function (array assembly, the rejection bookkeeping, dtype conversions). cProfile adds a small
per-call overhead (the loop makes a few hundred calls per chunk), so the total is a few per cent
above an unprofiled run. Numbers taken while other jobs use the 2 cores are noisy.
"""

from __future__ import annotations

import cProfile
import dataclasses
import os
import pstats
import sys
import tempfile
import time

from generator.config import load_config
from generator.pipeline import generate

#: stage -> (file name suffix, function name) of the functions whose cumulative time counts.
STAGES: dict[str, tuple[tuple[str, str], ...]] = {
    "source + E proposal": (("spectra/sampling.py", "sample"),),
    "time proposal + Sun vectors": (("exposure.py", "sample_times"), ("exposure.py", "sun")),
    "flavour probabilities + acceptance": (("oscillation.py", "probabilities"),
                                           ("chunks.py", "sigma_matrix"),
                                           ("envelope.py", "__call__")),
    "recoil sampling": (("recoil.py", "sample"),),
    "kinematics + vertex": (("kinematics.py", "scatter"), ("geometry.py", "sample")),
    "response": (("response/__init__.py", "process"),),
    "backgrounds": (("backgrounds/__init__.py", "sample"), ("backgrounds/sampler.py", "sample"),
                    ("backgrounds/__init__.py", "process")),
    "HDF5 encode/write": (("io/writer.py", "write_chunk"),),
}


#: Files of the pipeline itself (calls from them count for a stage).
PIPELINE_FILES = ("generator/pipeline.py", "generator/chunks.py")


def _with_all_stages(cfg):
    """Switch on every optional stage the configuration knows about."""
    changes = {}
    for name in ("response", "backgrounds"):
        sec = getattr(cfg, name, None)
        if sec is not None and hasattr(sec, "enabled"):
            changes[name] = dataclasses.replace(sec, enabled=True)
    return dataclasses.replace(cfg, **changes)


def profile(path: str | None, n: int) -> tuple[float, dict[str, float]]:
    """Loop wall time (s) and cumulative time per stage (s) of one profiled run."""
    cfg = _with_all_stages(load_config(path))
    prof = cProfile.Profile()
    stamp: dict[str, float] = {}

    def start(_m: int) -> None:
        stamp["t"] = time.perf_counter()
        prof.enable()

    with tempfile.TemporaryDirectory() as d:
        generate(cfg, os.path.join(d, "b.h5"), n_events=n, seed=1, force=True, on_start=start)
        prof.disable()
        loop = time.perf_counter() - stamp["t"]
    st = pstats.Stats(prof).stats            # (file, line, func) -> (cc, nc, tt, ct, callers)
    out: dict[str, float] = {}
    for stage, funcs in STAGES.items():
        total = 0.0
        for (fname, _line, func), (_cc, _nc, _tt, ct, callers) in st.items():
            fname = fname.replace(os.sep, "/")
            if not any(fname.endswith(suffix) and func == f for suffix, f in funcs):
                continue
            # only calls made by the pipeline itself (so a stage calling another stage's
            # function, e.g. the response asking for the Sun direction, is not counted twice);
            # calls straight from generate() have no recorded caller (the profiler was
            # switched on inside a callback)
            if not callers:
                total += ct
                continue
            total += sum(edge[3] for c, edge in callers.items()
                         if c[0].replace(os.sep, "/").endswith(PIPELINE_FILES))
        out[stage] = total
    return loop, out


def main() -> None:
    n = int(float(sys.argv[1])) if len(sys.argv) > 1 else 500_000
    for label, path in (("default (water)", None),
                        ("configs/scintillator.toml", "configs/scintillator.toml")):
        loop, stages = profile(path, n)
        print(f"\n{label}: {n} events, loop {loop:.2f} s = {n / loop / 1e6:.2f} M events/s "
              "(profiled)")
        print(f"  {'stage':38s} {'ns/event':>9s} {'%':>6s}")
        other = loop - sum(stages.values())
        for stage, t in [*stages.items(), ("other (loop bookkeeping)", other)]:
            note = "" if t > 0 or stage != "backgrounds" else "  (not in this build)"
            print(f"  {stage:38s} {t / n * 1e9:9.0f} {100 * t / loop:6.1f}{note}")


if __name__ == "__main__":
    main()
