"""Distributed production on dask.distributed (optional extra ``dask``).

``generate --workers K`` starts a local cluster of K worker processes (one thread each,
loopback only); ``generate --scheduler ADDRESS`` uses an existing cluster and runs one shard
per worker. Either way the run is split into N shards (:mod:`generator.production`), one task
per shard writes ``.<name>.shards/shard-IIII-of-NNNN.h5`` beside the output, and the parent
merges them (:mod:`generator.io.merge`) into the output, bit-identical in ``/events`` to a
single-process run with the same seed. The seed is fixed in the parent (drawn there when none
is given), so all shards belong to one run. The parent builds the tables once (while the
cluster starts) and ships them to every worker, which then only generates and writes. Workers
must see the output folder (a shared file system on a real cluster). The shard folder is
removed after the merge and after a failure.
"""

from __future__ import annotations

import secrets
import shutil
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path
from typing import Any

from .errors import InputError, SunrecoilError

__all__ = ["generate_distributed", "shard_paths"]


def shard_paths(out: Path, n: int) -> list[Path]:
    """Shard file names of a distributed run writing ``out``."""
    folder = out.with_name(f".{out.name}.shards")
    return [folder / f"shard-{i:04d}-of-{n:04d}.h5" for i in range(n)]


#: glibc ``mallopt`` parameters (malloc.h): M_TRIM_THRESHOLD, M_MMAP_THRESHOLD.
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3


def _tune_malloc() -> None:
    """Undo the worker's small ``MALLOC_TRIM_THRESHOLD_`` for this process (glibc only).

    dask's nanny starts workers with ``MALLOC_TRIM_THRESHOLD_=65536``; setting it also freezes
    glibc's mmap threshold at 128 KiB, so every large temporary numpy array is a fresh mmap
    with page faults, which made the event loop 3–4× slower in a worker than in a plain
    process (measured). Larger thresholds give the plain-process behaviour back.
    """
    import ctypes
    import ctypes.util

    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        libc.mallopt(_M_MMAP_THRESHOLD, 1 << 26)
        libc.mallopt(_M_TRIM_THRESHOLD, 1 << 28)
    except (OSError, AttributeError):  # pragma: no cover - not glibc
        pass


def _run_shard(plan: Any, path: str, n_events: int | None, entropy: int, index: int,
               count: int) -> tuple[int, float, int, int]:
    """One task: write shard ``index`` of ``count``; (events, expected, chunk size, chunks).

    ``plan`` holds the run's tables, built once in the parent and shipped to the workers.
    """
    _tune_malloc()
    from .pipeline import generate
    from .production import Shard

    s = generate(plan.config, path, n_events=n_events, seed=entropy, force=True,
                 shard=Shard(index, count), threads=1,   # one worker per core already
                 plan=plan)
    return s.n_events, s.expected_events, s.chunk_size, s.n_chunks


def _client(workers: int | None, scheduler: str | None) -> tuple[Any, Any]:
    try:
        import logging

        from distributed import Client, LocalCluster

        logging.getLogger("distributed").setLevel(logging.WARNING)
    except ImportError:
        raise InputError("--workers/--scheduler need dask.distributed: "
                         "pip install 'sunrecoil[dask]'") from None
    if scheduler is not None:
        try:
            return Client(scheduler, timeout="20s"), None
        except (OSError, TimeoutError, ValueError) as exc:
            raise InputError(f"--scheduler: cannot connect to {scheduler!r} ({exc})") from None
    # the workers import the generator while they start (in parallel with the parent's tables)
    cluster = LocalCluster(n_workers=workers, processes=True, threads_per_worker=1,
                           host="127.0.0.1", dashboard_address=None,
                           preload=["generator.pipeline"])
    return Client(cluster), cluster


def _close(client: Any, cluster: Any) -> None:
    client.close()
    if cluster is not None:
        cluster.close()


def generate_distributed(cfg: Any, out: str | Path | None = None, *,
                         n_events: int | None = None, seed: int | None = None,
                         force: bool = False, workers: int | None = None,
                         scheduler: str | None = None, on_start: Any = None) -> Any:
    """Generate a run as shards on a dask cluster and merge them into ``out``.

    Returns
    -------
    generator.pipeline.RunSummary
        With ``plan`` None (the tables were shipped to the workers).
    """
    from .io.merge import merge_shards
    from .io.preflight import check_target
    from .pipeline import RunSummary, build_plan

    path = Path(out if out is not None else cfg.output.path)
    known = n_events if n_events is not None else (
        cfg.run.events if cfg.run.count_mode == "fixed" else None)
    check_target(path, force, known, create_folder=out is None)
    seed = seed if seed is not None else cfg.run.seed
    entropy = int(seed) if seed is not None else secrets.randbits(128)
    folder = shard_paths(path, 1)[0].parent
    if folder.exists():
        if not force:
            raise InputError(f"{str(folder)!r} exists (shards of an interrupted distributed "
                             "run); remove it or use --force")
        shutil.rmtree(folder)
    # the tables are built once, here, while the cluster starts, and shipped to every worker
    # (a plan pickles to a few tens of MB in milliseconds; building it takes seconds)
    with ThreadPoolExecutor(1) as pool:
        planned = pool.submit(build_plan, cfg)
        client, cluster = _client(workers, scheduler)
        closing = None
        try:
            plan = planned.result()
            n = workers if workers is not None else max(1, len(client.scheduler_info()["workers"]))
            paths = shard_paths(path, n)
            folder.mkdir(parents=True)
            try:
                shipped = client.scatter(plan, broadcast=True, hash=False)
                futures = [client.submit(_run_shard, shipped, str(p), n_events, entropy, i, n,
                                         pure=False) for i, p in enumerate(paths)]
                try:
                    results = client.gather(futures)
                except InputError:
                    raise
                except Exception as exc:
                    raise SunrecoilError(f"a shard task failed: {exc}") from exc
                del shipped, futures
                closing = pool.submit(_close, client, cluster)   # meanwhile, merge
                merged = merge_shards(path, paths, force=force)
            finally:
                shutil.rmtree(folder, ignore_errors=True)
        finally:
            if closing is None:
                _close(client, cluster)
            else:
                closing.result()
    n_total = sum(r[0] for r in results)
    return RunSummary(merged, n_total, results[0][1], entropy, results[0][2],
                      sum(r[3] for r in results), None)
