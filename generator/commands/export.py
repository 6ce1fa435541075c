"""``sunrecoil export FILE --format hepmc3|root -o OUT``: event files for downstream tools."""

from __future__ import annotations

import argparse
import sys

__all__ = ["add_parser", "run"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Register the ``export`` sub-command."""
    from ..export import FORMATS

    p = sub.add_parser(
        "export", help="export an event file to HepMC3 ASCII or a flat ROOT tree",
        description="Convert a sunrecoil event file for downstream simulation: HepMC3 ASCII "
                    "records (extra 'hepmc3' to read them back in Python) or a flat ROOT TTree "
                    "(extra 'root'). The file is streamed in chunks.")
    p.add_argument("file", help="sunrecoil HDF5 event file")
    p.add_argument("--format", required=True, choices=sorted(FORMATS), help="output format")
    p.add_argument("-o", "--output", required=True, help="output file")
    p.add_argument("--force", action="store_true", help="overwrite an existing output file")
    p.add_argument("--quiet", action="store_true", help="no summary line")
    p.set_defaults(run=run)
    return p


def run(args: argparse.Namespace) -> int:
    """Run the export; returns the exit status (errors are mapped by the CLI)."""
    from ..export import export_file

    summary = export_file(args.file, args.output, args.format, force=args.force)
    if not args.quiet:
        print(f"wrote {summary.n_events} events to {summary.path} ({summary.format})",
              file=sys.stdout)
    return 0
