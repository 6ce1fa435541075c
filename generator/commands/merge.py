"""``sunrecoil merge OUT SHARD...``: join the shard files of one run into one event file."""

from __future__ import annotations

import argparse
from pathlib import Path

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Register the ``merge`` sub-command."""
    m = sub.add_parser(
        "merge", help="merge the shard files of one run",
        description="Join the files written by 'generate --shard I/N' (all N shards of one run, "
                    "any order) into one event file whose /events are bit-identical to a "
                    "single-process run. Compressed chunks are copied without re-encoding.")
    m.add_argument("output", help="merged event file")
    m.add_argument("shards", nargs="+", help="shard files (each of 0/N … N-1/N exactly once)")
    m.add_argument("--force", action="store_true", help="overwrite an existing output file")
    m.add_argument("--quiet", action="store_true", help="no summary line")
    m.set_defaults(run=run)
    return m


def run(args: argparse.Namespace) -> int:
    """Merge; exit status 0 (errors propagate to the CLI's exit-status mapping)."""
    from ..io.merge import merge_shards

    out = merge_shards(Path(args.output), [Path(s) for s in args.shards], force=args.force)
    if not args.quiet:
        print(f"merged {len(args.shards)} shard(s) into {out}")
    return 0
