"""``sunrecoil sensitivity``: expected uncertainty and discovery significance versus exposure."""

from __future__ import annotations

import argparse
import json
import math
import sys
from typing import Any

from ..errors import InputError
from .rates import parse_edges

__all__ = ["add_parser", "run"]


def add_parser(sub: Any) -> None:
    """Register the ``sensitivity`` sub-command."""
    from ..sensitivity_config import MINIMISERS, POI_NAMES

    p = sub.add_parser(
        "sensitivity", help="expected sensitivity (Asimov scan over exposure, optional toys)",
        description="Binned Poisson likelihood over energy × cos θ_sun (× day/night) with "
                    "flux, background, energy-scale and resolution nuisances: the median "
                    "expected 1σ interval and discovery significance of a parameter of "
                    "interest from the Asimov data set, for a list of exposures; optionally "
                    "seeded pseudo-experiments (pulls, coverage). Settings in the config's "
                    "[sensitivity] section; options override them.")
    p.add_argument("config", nargs="?", help="TOML configuration file (merged over the default)")
    p.add_argument("--exposures", type=parse_edges, metavar="DAYS",
                   help="comma-separated live times in days (sensitivity.exposures_days)")
    p.add_argument("--poi", metavar="NAME", help=f"parameter of interest: {', '.join(POI_NAMES)}")
    p.add_argument("--toys", type=int, metavar="N", help="number of pseudo-experiments")
    p.add_argument("--seed", type=int, metavar="SEED", help="root entropy of the toys")
    p.add_argument("--templates", metavar="FILE",
                   help="build the templates from this event file (same configuration)")
    p.add_argument("--minimiser", choices=MINIMISERS, help="minimiser (default scipy)")
    p.add_argument("--json", action="store_true",
                   help="print JSON (schema sunrecoil.sensitivity)")
    p.add_argument("--plot", metavar="FILE.png",
                   help="write a PNG of the uncertainty versus exposure (needs matplotlib)")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Execute ``sunrecoil sensitivity``; returns the exit status."""
    from ..config import load_config
    from ..sensitivity import check_plot_target, plot, render, resolve_config, run_sensitivity

    if args.plot is not None:
        from ..export import require_extra

        require_extra("matplotlib", "plots", "sensitivity --plot")
        check_plot_target(args.plot)
    if args.seed is not None and not 0 <= args.seed < 2**128:
        raise InputError(f"--seed: {args.seed} is out of range; use 0 ≤ seed < 2**128")
    cfg = load_config(args.config)
    sens = resolve_config(cfg, exposures_days=args.exposures, poi=args.poi, n_toys=args.toys,
                          toy_seed=args.seed, template_file=args.templates,
                          minimiser=args.minimiser)
    rep = run_sensitivity(cfg, sens)
    if args.plot is not None:
        plot(rep, args.plot)
    sys.stdout.write(json.dumps(_json_safe(rep), indent=1) + "\n" if args.json
                     else render(rep))
    return 0


def _json_safe(obj: Any) -> Any:
    """Non-finite floats → null (strict JSON has no NaN or Infinity)."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: _json_safe(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_json_safe(v) for v in obj]
    return obj
