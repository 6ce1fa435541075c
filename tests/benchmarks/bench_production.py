"""Benchmark of sharded production: one process vs. a local dask cluster, and the merge.

Usage::

    python tests/benchmarks/bench_production.py [N] [WORKERS] [CONFIG]   # default: 1e7 2

Runs, with the embedded default configuration (or CONFIG, e.g. a file with
``[response] enabled = false`` for truth-level speed) and a fixed seed, in one temporary folder:

1. ``generate`` in one process (wall time including the tables), with one chunk thread and
   with the default threads (speed-ups are printed against both);
2. ``generate --workers WORKERS`` through :func:`generator.distributed.generate_distributed`
   (wall time including cluster start, the tables built once in the parent and shipped to
   the workers, shards and the merge), and
   the same with the cluster already running (``--scheduler``), which is how a batch farm
   or a long-lived cluster is used;
3. the merge alone (``merge_shards`` of the shard files), in MB/s of file written, against
   a plain file copy of the same bytes (disk speed).

It checks that the outputs are identical in ``/events`` and prints one JSON line per result.
"""

from __future__ import annotations

import json
import os
import shutil
import sys
import tempfile
import time
from pathlib import Path


def main() -> None:
    n = int(float(sys.argv[1])) if len(sys.argv) > 1 else 10_000_000
    workers = int(sys.argv[2]) if len(sys.argv) > 2 else 2
    import numpy as np
    from distributed import Client, LocalCluster

    from generator.config import load_config
    from generator.distributed import generate_distributed
    from generator.io import read_events
    from generator.io.merge import merge_shards
    from generator.pipeline import generate
    from generator.production import Shard

    cfg = load_config(sys.argv[3] if len(sys.argv) > 3 else None)
    d = Path(tempfile.mkdtemp(prefix="bench-prod-"))
    try:
        t = time.perf_counter()
        generate(cfg, d / "single1.h5", n_events=n, seed=1, threads=1)
        t_single1 = time.perf_counter() - t
        print(json.dumps({"what": "single process, one chunk thread", "n": n,
                          "wall_s": t_single1, "events_per_s": n / t_single1}))
        t = time.perf_counter()
        generate(cfg, d / "single.h5", n_events=n, seed=1)
        t_single = time.perf_counter() - t
        print(json.dumps({"what": "single process, default chunk threads", "n": n,
                          "wall_s": t_single, "events_per_s": n / t_single}))

        t = time.perf_counter()
        generate_distributed(cfg, d / "dist.h5", n_events=n, seed=1, workers=workers)
        t_dist = time.perf_counter() - t
        print(json.dumps({"what": f"--workers {workers} (cluster start included)", "n": n,
                          "wall_s": t_dist, "events_per_s": n / t_dist,
                          "speedup": t_single / t_dist, "speedup_vs_one_thread":
                          t_single1 / t_dist}))

        cluster = LocalCluster(n_workers=workers, processes=True, threads_per_worker=1,
                               host="127.0.0.1", dashboard_address=None)
        client = Client(cluster)
        client.run(lambda: __import__("generator.pipeline"))
        t = time.perf_counter()
        generate_distributed(cfg, d / "sched.h5", n_events=n, seed=1,
                             scheduler=cluster.scheduler_address)
        t_sched = time.perf_counter() - t
        client.close()
        cluster.close()
        print(json.dumps({"what": f"--scheduler, {workers} running workers", "n": n,
                          "wall_s": t_sched, "events_per_s": n / t_sched,
                          "speedup": t_single / t_sched, "speedup_vs_one_thread":
                          t_single1 / t_sched}))

        shards = [d / f"s{i}.h5" for i in range(workers)]
        for i, p in enumerate(shards):
            generate(cfg, p, n_events=n, seed=1, shard=Shard(i, workers))
        t = time.perf_counter()
        merge_shards(d / "merged.h5", shards)
        t_merge = time.perf_counter() - t
        size = (d / "merged.h5").stat().st_size
        t = time.perf_counter()
        with open(d / "copy.bin", "wb") as out:
            for p in shards:
                with open(p, "rb") as src:
                    shutil.copyfileobj(src, out, 1 << 24)
            out.flush()
        t_copy = time.perf_counter() - t
        print(json.dumps({"what": "merge (copy of compressed chunks)", "bytes": size,
                          "merge_MB_per_s": size / t_merge / 1e6,
                          "plain_copy_MB_per_s": size / t_copy / 1e6}))

        a = read_events(d / "single.h5", ["e_kinetic", "time_utc", "e_dir"])
        for other in ("single1.h5", "dist.h5", "sched.h5", "merged.h5"):
            b = read_events(d / other, ["e_kinetic", "time_utc", "e_dir"])
            assert all(np.array_equal(a[k], b[k]) for k in a), other
        print(json.dumps({"identical_events": True, "load_average": os.getloadavg()}))
    finally:
        shutil.rmtree(d, ignore_errors=True)


if __name__ == "__main__":
    main()
