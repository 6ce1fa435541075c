"""Benchmark: exports of an event file, events per second (HepMC3 text, ROOT, pyhepmc objects).

Run: ``python tests/benchmarks/bench_export.py [n_events]`` (default 200 000). Generates a
file once, then times ``export_file`` to HepMC3 (the column-wise text writer) and to ROOT
(uproot), best and median of 3, and for comparison the construction and writing of the same
records as pyhepmc objects event by event (on 5 000 events). Goal: ≥ 50 000 events/s to
HepMC3. The machine may be shared: compare ratios within one run.
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

from generator.config import load_config
from generator.export import export_file
from generator.export.records import split_records
from generator.io import EventFile
from generator.pipeline import generate

REPEAT = 3


def _timed(func, repeat: int = REPEAT) -> tuple[float, float]:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return min(times), statistics.median(times)


def _pyhepmc_rate(src: Path, out: Path, n: int) -> float:
    """Events/s when the same records are built as pyhepmc objects, one event at a time."""
    import pyhepmc as hp

    with EventFile(src) as ev:
        chunk = ev.read(None, 0, n)
    sig, _ = split_records(chunk)
    start = time.perf_counter()
    run = hp.GenRunInfo()
    run.weight_names = ["weight"]
    with hp.open(str(out), "w") as f:
        for i in range(sig.index.size):
            e = hp.GenEvent(hp.Units.MEV, hp.Units.MM)
            e.run_info = run
            e.event_number = i
            x, y, z = (float(v) for v in chunk["vertex"][i])
            v = hp.GenVertex((x, y, z, 0.0))
            pdg = int(sig.nu_pdg[i])
            for p4, pid, status, into in ((sig.nu_in, pdg, 4, True),
                                          (None, 11, 4, True),
                                          (sig.nu_out, pdg, 1, False),
                                          (sig.electron, 11, 1, False)):
                mom = ((0.0, 0.0, 0.0, 0.51099895069) if p4 is None
                       else (p4[i, 1], p4[i, 2], p4[i, 3], p4[i, 0]))
                part = hp.GenParticle(mom, pid, status)
                (v.add_particle_in if into else v.add_particle_out)(part)
            e.add_vertex(v)
            e.weights = [float(chunk["weight"][i])]
            e.attributes["time_utc"] = float(chunk["time_utc"][i])
            e.attributes["origin"] = int(chunk["origin"][i])
            f.write(e)
    return sig.index.size / (time.perf_counter() - start)


def main(n: int) -> None:
    """Print the benchmark table for an ``n``-event file."""
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "events.h5"
        generate(load_config(None), src, n_events=n, seed=1)
        print(f"events: {n:,}; best / median of {REPEAT}")
        print(f"{'case':34s} {'best s':>8s} {'median s':>8s} {'k ev/s (best)':>14s} {'B/ev':>6s}")
        for fmt in ("hepmc3", "root"):
            out = Path(tmp) / f"out.{fmt}"
            best, med = _timed(lambda f=fmt, o=out: export_file(src, o, f, force=True))
            print(f"{'export ' + fmt:34s} {best:8.3f} {med:8.3f} {n / best / 1e3:14.1f} "
                  f"{out.stat().st_size / n:6.0f}")
        rate = _pyhepmc_rate(src, Path(tmp) / "objects.hepmc3", min(n, 5000))
        print(f"{'pyhepmc objects, event by event':34s} {'':8s} {'':8s} {rate / 1e3:14.1f}")


if __name__ == "__main__":
    main(int(float(sys.argv[1])) if len(sys.argv) > 1 else 200_000)
