"""Options of ``sunrecoil generate`` for sharded, resumable and distributed production."""

from __future__ import annotations

import argparse
from collections.abc import Callable
from typing import Any

from ..errors import InputError

__all__ = ["add_generate_options", "run_generate"]


def add_generate_options(g: argparse.ArgumentParser) -> None:
    """Add --shard, --resume, --workers, --scheduler and --threads to the ``generate`` parser."""
    g.add_argument("--shard", metavar="I/N",
                   help="write only shard I of N (0 ≤ I < N): chunks [I·K/N, (I+1)·K/N) of the "
                        "run's K chunks; join the N files with 'sunrecoil merge'")
    g.add_argument("--resume", action="store_true",
                   help="continue a killed run from its last complete chunk (same command "
                        "line; the temporary file .NAME.tmp beside the output is reused)")
    g.add_argument("--workers", type=int, metavar="K",
                   help="run K shards on a local dask process cluster, then merge "
                        "(needs the 'dask' extra)")
    g.add_argument("--scheduler", metavar="ADDRESS",
                   help="run one shard per worker on an existing dask.distributed cluster "
                        "(e.g. tcp://host:8786; workers must see the output folder), then merge")
    g.add_argument("--threads", type=int, metavar="T",
                   help="threads that generate chunks in this process (default: the usable "
                        "CPUs, at most 2); the output does not depend on it")


def run_generate(args: argparse.Namespace, cfg: Any, progress: Callable[[int], None] | None,
                 on_start: Callable[[int], None]) -> Any:
    """Run ``generate`` as the options ask: one process, one shard, resumed or distributed."""
    from ..pipeline import generate
    from ..production import parse_shard

    distributed = args.workers is not None or args.scheduler is not None
    if args.workers is not None and args.scheduler is not None:
        raise InputError("--workers and --scheduler exclude each other; give one")
    if args.workers is not None and not 1 <= args.workers <= 256:
        raise InputError(f"--workers: {args.workers} is not allowed; give 1 … 256")
    threads = getattr(args, "threads", None)
    if threads is not None and not 1 <= threads <= 64:
        raise InputError(f"--threads: {threads} is not allowed; give 1 … 64")
    if distributed and threads is not None:
        raise InputError("--threads applies to one process; dask workers use one thread each")
    if distributed and (args.shard or args.resume):
        raise InputError("--shard/--resume apply to one process; with --workers or --scheduler "
                         "the shards are chosen and merged automatically")
    shard = parse_shard(args.shard) if args.shard is not None else None
    if args.resume and args.force:
        raise InputError("--resume continues a partial run and --force discards it; give one")
    if distributed:
        from ..distributed import generate_distributed

        return generate_distributed(cfg, args.output, n_events=args.events, seed=args.seed,
                                    force=args.force, workers=args.workers,
                                    scheduler=args.scheduler, on_start=on_start)
    return generate(cfg, args.output, n_events=args.events, seed=args.seed, force=args.force,
                    progress=progress, on_start=on_start, shard=shard, resume=args.resume,
                    threads=threads)
