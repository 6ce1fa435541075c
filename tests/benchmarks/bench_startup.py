"""Benchmark: start-up time (imports and table building), cold and warm table cache.

Usage::

    python tests/benchmarks/bench_startup.py [--repeat N] [--profile] [CONFIG ...]

Without CONFIG the embedded default and every ``configs/*.toml`` are measured. Every number is
the median of N (default 3) fresh interpreters (wall time, incl. interpreter start-up):

* ``import cli``: ``python -c "import generator.cli"`` (what ``--help`` and ``config show``
  pay), and ``import pipeline``: ``import generator.pipeline``;
* ``plan cold``: imports + :func:`generator.pipeline.build_plan` with an empty cache folder
  (a fresh temporary ``SUNRECOIL_CACHE`` per run);
* ``plan warm``: the same with the cache filled by a previous run (the start-up goal of
  issue #12: < 1 s);
* ``generate 1k``: ``python -m generator generate CONFIG --events 1000`` with a warm cache.

``--profile`` adds a cProfile split of the first build_plan of a fresh interpreter (warm
cache; the profiler adds ≈ 5–10 % here, more on many small calls).
Numbers taken while other jobs use the 2 cores are noisy: compare runs made together.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

PLAN = ("import sys\nfrom generator.config import load_config\n"
        "from generator.pipeline import build_plan\n"
        "build_plan(load_config(sys.argv[1] or None))\n")

#: part -> (file name suffix, function name) of build_plan's main steps (``--profile``).
PARTS = {
    "recoil tables (RecoilSampler)": ("recoil.py", "__init__"),
    "flavour model (day tables, night table)": ("oscillation.py", "__init__"),
    "exposure (Sun table)": ("exposure.py", "__init__"),
    "per-source plans (envelope, proposal, zenith table)": ("pipeline.py", "_plan_source"),
    "spectra": ("spectrum.py", "get_spectrum"),
    "response model": ("response/__init__.py", "build_response"),
    "backgrounds": ("stage.py", "build_backgrounds"),
}


def _wall(args: list[str], cache: str) -> float:
    env = {**os.environ, "SUNRECOIL_CACHE": cache, "PYTHONPATH": str(ROOT)}
    t0 = time.perf_counter()
    subprocess.run(args, check=True, env=env, cwd=ROOT, stdout=subprocess.DEVNULL)
    return time.perf_counter() - t0


def _median(f, n: int) -> float:
    return statistics.median(f() for _ in range(n))


PROFILE = """
import cProfile, pstats, sys, time
from generator.config import load_config
from generator.pipeline import build_plan
parts = {parts!r}
cfg = load_config(sys.argv[1] or None)
prof = cProfile.Profile()
t0 = time.perf_counter()
prof.enable()
build_plan(cfg)
prof.disable()
total = time.perf_counter() - t0
print(f"    first build_plan of a fresh interpreter, warm cache (profiled): {{total:.3f}} s")
st = pstats.Stats(prof).stats
for part, (suffix, func) in parts.items():
    ct = sum(v[3] for k, v in st.items()
             if k[0].replace(chr(92), "/").endswith(suffix) and k[2] == func
             and any(c[0].endswith(("pipeline.py", "plan.py")) for c in v[4]))
    print(f"      {{part:55s}} {{ct:6.3f}} s {{100 * ct / total:5.1f}} %")
"""


def _profile(config: str, cache: str) -> None:
    env = {**os.environ, "SUNRECOIL_CACHE": cache, "PYTHONPATH": str(ROOT)}
    subprocess.run([sys.executable, "-c", PROFILE.format(parts=PARTS), config], check=True,
                   env=env, cwd=ROOT)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("configs", nargs="*")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--profile", action="store_true")
    a = ap.parse_args()
    configs = a.configs or [""] + sorted(str(p.relative_to(ROOT))
                                         for p in (ROOT / "configs").glob("*.toml"))
    py = sys.executable
    with tempfile.TemporaryDirectory(prefix="bench-startup-") as tmp:
        empty = str(Path(tmp, "unused"))
        for mod in ("generator.cli", "generator.pipeline"):
            t = _median(lambda m=mod: _wall([py, "-c", f"import {m}"], empty), a.repeat)
            print(f"import {mod:20s} {t:6.3f} s  (median of {a.repeat} fresh interpreters)")
        print(f"{'config':32s} {'plan cold':>10s} {'plan warm':>10s} {'generate 1k':>12s}")
        for i, config in enumerate(configs):
            def cold(i: int = i, config: str = config) -> float:
                d = tempfile.mkdtemp(prefix=f"cold{i}-", dir=tmp)
                return _wall([py, "-c", PLAN, config], d)

            warm_dir = str(Path(tmp, f"warm{i}"))
            _wall([py, "-c", PLAN, config], warm_dir)          # fill the cache
            t_cold = _median(cold, a.repeat)
            t_warm = _median(lambda c=config, d=warm_dir: _wall([py, "-c", PLAN, c], d),
                             a.repeat)
            out = str(Path(tmp, f"ev{i}.h5"))
            gen = [py, "-m", "generator", "generate", *([config] if config else []), "-o", out,
                   "--events", "1000", "--seed", "1", "--force", "--quiet"]
            t_gen = _median(lambda g=gen, d=warm_dir: _wall(g, d), a.repeat)
            print(f"{config or '(embedded default)':32s} {t_cold:9.3f}s {t_warm:9.3f}s "
                  f"{t_gen:11.3f}s")
            if a.profile:
                _profile(config, warm_dir)


if __name__ == "__main__":
    main()
