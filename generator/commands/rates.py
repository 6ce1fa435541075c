"""``sunrecoil rates``: expected counts by deterministic integration (table or JSON)."""

from __future__ import annotations

import argparse
import json
import math
import sys
from typing import Any

from ..errors import InputError

__all__ = ["add_parser", "run", "parse_edges", "render"]


def parse_edges(text: str) -> list[float]:
    """Comma-separated numbers (``inf`` allowed) → list of floats; argparse type."""
    parts = [p.strip() for p in text.split(",") if p.strip()]
    try:
        return [float(p) for p in parts]
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text[:60]!r}: give comma-separated numbers, e.g. "
                                         "3.5,5,8,inf") from None


def add_parser(sub: Any) -> None:
    """Register the ``rates`` sub-command."""
    p = sub.add_parser("rates", help="expected event rates (deterministic, no Monte Carlo)",
                       description="Expected events per source and arriving flavour, per day "
                                   "and for the whole exposure, by day and night, from the "
                                   "same tables that normalise a generated run.")
    p.add_argument("config", nargs="?", help="TOML configuration file (merged over the default)")
    p.add_argument("--json", action="store_true", help="print JSON (schema sunrecoil.rates)")
    p.add_argument("--threshold", type=float, metavar="MEV",
                   help="recoil-energy threshold replacing interaction.threshold_mev (0 allowed "
                        "unless a magnetic moment is set)")
    p.add_argument("--t-windows", type=parse_edges, metavar="EDGES",
                   help="windows of true recoil kinetic energy, comma-separated edges in MeV "
                        "(last may be inf)")
    p.add_argument("--reco-windows", type=parse_edges, metavar="EDGES",
                   help="windows of reconstructed energy (needs [response]), edges in MeV")
    p.add_argument("--zenith", type=parse_edges, metavar="EDGES",
                   help="solar cos-zenith bin edges (multiples of 0.01 in [-1, 1]; write "
                        "--zenith=-1,0,1 when the first edge is negative)")
    p.set_defaults(run=run)


def _fmt(x: float) -> str:
    return f"{x:.5g}" if math.isfinite(x) else str(x)


def _table(rows: list[list[str]], head: list[str]) -> str:
    w = [max(len(r[i]) for r in rows + [head]) for i in range(len(head))]
    line = "  ".join(h.rjust(w[i]) if i else h.ljust(w[i]) for i, h in enumerate(head))
    body = ["  ".join(c.rjust(w[i]) if i else c.ljust(w[i]) for i, c in enumerate(r))
            for r in rows]
    return "\n".join([line, "-" * len(line), *body]) + "\n"


def render(rep: dict[str, Any]) -> str:
    """The readable table of a :func:`generator.rates.to_dict` report."""
    out = [f"sunrecoil rates — {rep['config_source']} ({rep['detector']})\n",
           f"exposure {rep['live_days']:.6g} live days, N_e = {rep['target_electrons']:.5g}, "
           f"recoil threshold {rep['threshold_mev']:g} MeV, flux model {rep['flux_model']}, "
           f"{rep['corrections']} cross sections, oscillation {rep['oscillation']}\n\n"]
    head = ["source", "events", "± flux 1σ", "per day", "ν_e", "ν_μ+ν_τ", "day", "night"]
    rows = []
    for d in rep["sources"] + [{"name": "total", **rep["total"]}]:
        rows.append([d["name"], _fmt(d["events"]), _fmt(d["flux_sigma_events"]),
                     _fmt(d["per_day"]), _fmt(d["nu_e"]), _fmt(d["nu_mu_tau"]), _fmt(d["day"]),
                     _fmt(d["night"])])
    out.append(_table(rows, head))
    if "zenith_edges" in rep:
        ze = rep["zenith_edges"]
        head = ["source"] + [f"[{ze[i]:g},{ze[i + 1]:g})" for i in range(len(ze) - 1)]
        rows = [[d["name"]] + [_fmt(a + b) for a, b in zip(d["zenith"]["nu_e"],
                                                           d["zenith"]["nu_mu_tau"],
                                                           strict=True)]
                for d in rep["sources"]]
        out.append("\nevents per solar cos-zenith bin\n" + _table(rows, head))
    out.append(_window_tables(rep["sources"], rep["total"], "source", "events", (
        ("t_windows", "true recoil kinetic energy"),
        ("reco_windows", "reconstructed energy (triggered, above analysis threshold)"))))
    if "backgrounds" in rep:
        out.append(_render_backgrounds(rep["backgrounds"]))
    out.append("\ncounts for the whole exposure; ± is the flux-model 1σ (total: quadrature "
               "sum over sources)\n")
    return "".join(out)


def _render_backgrounds(bg: dict[str, Any]) -> str:
    """Background isotopes: totals, day/night, and their energy windows."""
    head = ["isotope", "decays", "per day", "day", "night"]
    rows = [[d["name"], _fmt(d["events"]), _fmt(d["per_day"]), _fmt(d["day"]),
             _fmt(d["night"])] for d in bg["isotopes"] + [{"name": "total", **bg["total"]}]]
    out = ["\nradioactive backgrounds (generated decays)\n" + _table(rows, head)]
    out.append(_window_tables(bg["isotopes"], bg["total"], "isotope", "background events", (
        ("t_windows", "deposited energy (kinetic + gamma)"),
        ("reco_windows", "reconstructed energy (triggered)"))))
    return "".join(out)


def _window_tables(items: list[dict[str, Any]], total: dict[str, Any], label: str, what: str,
                   kinds: tuple[tuple[str, str], ...]) -> str:
    """One table per kind of energy window present in ``total`` (rows: items, then total)."""
    out = []
    for key, title in kinds:
        if key not in total:
            continue
        head = [label] + [f"[{w['lo_mev']:g},{w['hi_mev']:g})" for w in total[key]]
        rows = [[d["name"]] + [_fmt(w["events"]) for w in d[key]]
                for d in items + [{"name": "total", **total}]]
        out.append(f"\n{what} in windows of {title}, MeV\n" + _table(rows, head))
    return "".join(out)


def run(args: argparse.Namespace) -> int:
    """Execute ``sunrecoil rates``; returns the exit status."""
    from ..config import load_config
    from ..rates import compute_rates, to_dict

    cfg = load_config(args.config)
    if args.threshold is not None and not math.isfinite(args.threshold):
        raise InputError(f"--threshold: {args.threshold} is not a finite number of MeV")
    r = compute_rates(cfg, threshold=args.threshold, t_edges=args.t_windows,
                      reco_edges=args.reco_windows)
    rep = to_dict(r, args.zenith)
    if args.json:
        json.dump(rep, sys.stdout, indent=1)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(render(rep))
    return 0
