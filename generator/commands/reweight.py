"""``sunrecoil reweight``: per-event weights to another configuration (see generator.reweight)."""

from __future__ import annotations

import argparse
import json
import sys
from typing import Any

from ..errors import InputError

__all__ = ["add_parser", "run"]


def add_parser(sub: Any) -> None:
    """Register the ``reweight`` sub-command."""
    p = sub.add_parser(
        "reweight", help="weights that turn an event file into another configuration",
        description="For every event, the ratio dN_alt/dN_gen of the alternative event density "
                    "to the generated one at the event's truth variables, and the event's "
                    "weight under the alternative. The alternative may change fluxes, the 8B "
                    "shape, oscillations, cross sections, NSI, the magnetic moment, raise the "
                    "threshold or drop sources; other changes are refused (exit 2).")
    p.add_argument("file", help="HDF5 event file")
    p.add_argument("alt_config", nargs="?",
                   help="TOML file of the alternative, merged over the event file's own "
                        "configuration (or the default, --base default)")
    out = p.add_mutually_exclusive_group(required=True)
    out.add_argument("-o", "--output", metavar="WEIGHTS.h5", help="write a side file")
    out.add_argument("--append", action="store_true",
                     help="add the group /reweight/NAME to the event file itself")
    p.add_argument("--from", dest="from_side", metavar="WEIGHTS.h5",
                   help="with --append: attach a side file written earlier for this event file")
    p.add_argument("--name", default="alt", help="group name for --append (default: alt)")
    p.add_argument("--base", choices=("file", "default"), default="file",
                   help="what ALT_CONFIG is merged over (default: the event file's config)")
    p.add_argument("--force", action="store_true",
                   help="overwrite an existing side file or /reweight/NAME group")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Execute ``sunrecoil reweight``; returns the exit status."""
    from ..reweight import append_weights, reweight

    if args.from_side is not None:
        if not args.append or args.alt_config is not None:
            raise InputError("reweight: --from SIDE goes with --append and no ALT_CONFIG")
        append_weights(args.file, args.from_side, args.name, args.force)
        print(f"appended {args.from_side} to {args.file} as /reweight/{args.name}")
        return 0
    if args.alt_config is None:
        raise InputError("reweight: give ALT_CONFIG (or --append --from WEIGHTS.h5)")
    s = reweight(args.file, args.alt_config, args.output, append=args.append, name=args.name,
                 force=args.force, base=args.base)
    rep = {"output": str(s.path), "group": s.group, "n_events": s.n_events,
           "expected_events": s.expected_events, "weight_sum": s.weight_sum,
           "weight_sum_mc_error": s.weight_sum_mc_error, "changes": s.attrs["changes"],
           "weight_sum_note": s.attrs.get("weight_sum_note", "")}
    if args.json:
        json.dump(rep, sys.stdout, indent=1)
        sys.stdout.write("\n")
    else:
        print(f"wrote weights of {s.n_events} events to {s.path} (/{s.group}); changes: "
              f"{rep['changes']}\nalternative expected events {s.expected_events:.6g} "
              f"(deterministic); sum of weights {s.weight_sum:.6g} ± "
              f"{s.weight_sum_mc_error:.2g} (Monte Carlo)")
        if s.attrs.get("weight_sum_note"):
            print(f"note: {s.attrs['weight_sum_note']}")
    return 0
