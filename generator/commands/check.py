"""``sunrecoil check FILE``: verify an event file's integrity (see :mod:`generator.io.check`).

Exit status: 0 no problem found, 1 problems found (each printed on its own line), 2 the file
cannot be opened as HDF5 or the arguments are wrong.
"""

from __future__ import annotations

import argparse
import sys

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> None:
    """Register the ``check`` command."""
    p = sub.add_parser("check", help="verify an event file (schema, checksums, normalisation)",
                       description="Read the whole file: schema and units, Fletcher-32 "
                                   "checksums, event counts, normalisation sums, provenance. "
                                   "Exit 0 if no problem is found, 1 otherwise.")
    p.add_argument("files", nargs="+", help="HDF5 event file(s)")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Check each file; print problems; return the exit status."""
    from ..io.check import check_file

    status = 0
    for path in args.files:
        problems = check_file(path)
        if problems:
            status = 1
            for p in problems:
                print(f"{path}: {p}")
        else:
            print(f"{path}: ok")
    sys.stdout.flush()
    return status
