"""Command-line interface: a thin shell around the library.

Exit status: 0 success, 1 the run failed, 2 bad input or usage (nothing written).
"""

from __future__ import annotations

import argparse
import decimal
import importlib
import logging
import os
import signal
import sys
from collections.abc import Sequence
from pathlib import Path

from . import __version__
from .commands import production
from .config import MAX_EVENTS
from .errors import InputError, SunrecoilError

__all__ = ["main", "build_parser", "exact_int"]

log = logging.getLogger("generator")

#: Commands implemented in ``generator/commands/<name>.py``; each module provides
#: ``add_parser(subparsers)`` (which sets ``run=<function(args) -> int>`` as a default).
COMMAND_MODULES: tuple[str, ...] = ("check", "merge", "rates", "export", "reweight",
                                     "sensitivity")


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # argparse exits with 2 already; keep the text short
        self.print_usage(sys.stderr)
        self.exit(2, f"{self.prog}: error: {message}\n")


def exact_int(text: str) -> int:
    """Parse an integer argument: decimal, 0x/0o/0b, or exact scientific notation.

    ``1e6`` and ``2.5e3`` are accepted because they are exact integers; ``1.5``, ``1e-3``,
    ``inf`` and text are refused with a clear message.
    """
    t = text.strip().replace("_", "")
    try:
        return int(t, 0)
    except ValueError:
        pass
    try:
        d = decimal.Decimal(t)
    except decimal.InvalidOperation:
        raise argparse.ArgumentTypeError(f"{text[:40]!r} is not an integer") from None
    if not d.is_finite() or d != d.to_integral_value() or abs(d.adjusted()) > 60:
        raise argparse.ArgumentTypeError(f"{text[:40]!r} is not an exact integer")
    return int(d)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``sunrecoil`` command."""
    p = _Parser(prog="sunrecoil",
                description="Monte Carlo events of solar-neutrino elastic scattering on electrons.")
    p.add_argument("--version", action="version", version=f"sunrecoil {__version__}")
    p.add_argument("--debug", action="store_true",
                   help="show Python tracebacks of failures (also SUNRECOIL_DEBUG=1)")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)

    g = sub.add_parser("generate", help="generate an event file",
                       description="Generate truth-level events into an HDF5 file. Without "
                                   "CONFIG the embedded default detector is used.")
    g.add_argument("config", nargs="?", help="TOML configuration file (merged over the default)")
    g.add_argument("-o", "--output", help="output file (default: output.path of the config)")
    g.add_argument("--events", type=exact_int, help="number of events (overrides run.events and "
                                              "run.count_mode)")
    g.add_argument("--seed", type=exact_int,
                   help="root seed (overrides run.seed; random if neither); decimal, 0x… hex "
                        "or exact scientific notation")
    g.add_argument("--force", action="store_true", help="overwrite an existing output file")
    g.add_argument("--quiet", action="store_true", help="no progress bar, warnings only")
    production.add_generate_options(g)

    c = sub.add_parser("config", help="configuration tools")
    csub = c.add_subparsers(dest="config_command", required=True, parser_class=_Parser)
    show = csub.add_parser("show", help="print the effective configuration as TOML",
                           description="Print the effective configuration (defaults merged).")
    show.add_argument("config", nargs="?", help="TOML configuration file, or an event file "
                                                "(.h5) whose recorded configuration is printed")
    show.add_argument("--example", metavar="NAME",
                      help="print a shipped example configuration (see 'config examples')")
    csub.add_parser("examples", help="list the shipped example configurations",
                    description="List the example configurations shipped with the package.")

    i = sub.add_parser("inspect", help="summarise an event file",
                       description="Counts by origin and flavour, energy ranges, exposure and "
                                   "provenance of an event file.")
    i.add_argument("file", help="HDF5 event file")
    i.add_argument("--json", action="store_true", help="machine-readable summary (JSON)")
    i.add_argument("--plots", metavar="DIR", help="also write first-look PNG figures into DIR "
                                                 "(needs the extra 'plots')")
    for name in COMMAND_MODULES:
        importlib.import_module(f"{__package__}.commands.{name}").add_parser(sub)
    return p


def _terminal_size() -> tuple[int, int]:
    """Columns and lines of the terminal on stderr (80 × 24 where it reports none)."""
    try:
        size = os.get_terminal_size(sys.stderr.fileno())
    except OSError:
        return 80, 24
    return size.columns or 80, size.lines or 24


def _cmd_generate(args: argparse.Namespace) -> int:
    from tqdm import tqdm

    from .config import load_config

    if args.events is not None and not 1 <= args.events <= MAX_EVENTS:
        raise InputError(f"--events: {args.events} is not allowed; give an integer from 1 to "
                         f"{MAX_EVENTS:.0e}")
    if args.seed is not None and not 0 <= args.seed < 2**128:
        raise InputError(f"--seed: {args.seed} is out of range; use 0 ≤ seed < 2**128")
    cfg = load_config(args.config)
    target = args.output if args.output is not None else cfg.output.path
    bar = None
    if not args.quiet:
        print("sunrecoil: building tables …", file=sys.stderr, flush=True)

    def start(n: int) -> None:
        nonlocal bar
        if Path(target).suffix.lower() not in (".h5", ".hdf5"):  # after the target checks
            log.warning("output %r does not end in .h5 or .hdf5; it is written as HDF5 anyway",
                        str(target))
        if not args.quiet:
            cols, rows = _terminal_size()
            # on a terminal the bar redraws in place and prints its final state once; piped
            # output gets no bar lines, only the summary line at the end
            bar = tqdm(total=n, unit=" events", unit_scale=True, file=sys.stderr,
                       disable=not sys.stderr.isatty(), ncols=cols, nrows=rows,
                       desc="generate", bar_format="{desc}: {percentage:3.0f}%|{bar}| "
                       "{n_fmt}/{total_fmt} [{elapsed}<{remaining}, {rate_fmt}]")

    def advance(m: int) -> None:
        if bar is not None:
            bar.update(m)

    try:
        summary = production.run_generate(args, cfg, advance, start)
    finally:
        if bar is not None:
            bar.close()
    if not args.quiet:
        print(f"wrote {summary.n_events} events to {summary.path} "
              f"(expected {summary.expected_events:.6g} for the exposure; "
              f"seed {summary.seed_entropy})")
    return 0


def _cmd_config_show(args: argparse.Namespace) -> int:
    from .config import check_data_files, load_config, to_toml
    from .examples import example_names, example_path

    if args.config_command == "examples":
        for name in example_names():
            cfg = load_config(example_path(name))
            print(f"{name:<18s} {cfg.detector.name}")
        return 0
    if args.example is not None:
        if args.config is not None:
            raise InputError("config show: give either CONFIG or --example, not both")
        args.config = str(example_path(args.example))
    if args.config is not None and _is_hdf5(args.config):
        from .io import EventFile

        with EventFile(args.config) as ev:
            sys.stdout.write(str(ev.attrs["config_toml"]))
        return 0
    cfg = load_config(args.config)
    check_data_files(cfg)
    sys.stdout.write(to_toml(cfg))
    return 0


def _is_hdf5(path: str) -> bool:
    """True when the file starts with the HDF5 signature (user block offsets 0 only)."""
    try:
        with open(path, "rb") as fh:
            return fh.read(8) == b"\x89HDF\r\n\x1a\n"
    except OSError:
        return False


def _cmd_inspect(args: argparse.Namespace) -> int:
    from .summary import summarise, summary_json

    written = []
    if args.plots:
        from .plots import render_plots

        written = render_plots(args.file, args.plots)
    sys.stdout.write(summary_json(args.file) if args.json else summarise(Path(args.file)))
    if written:
        print(f"plots: {', '.join(p.name for p in written)} in {args.plots}", file=sys.stderr)
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``sunrecoil`` command; returns the exit status.

    Exit status: 0 success; 1 the run failed (one line on stderr, partial output removed);
    2 bad input or usage (nothing written); 130 / 143 interrupted by SIGINT / SIGTERM (partial
    output removed). ``--debug`` or ``SUNRECOIL_DEBUG=1`` adds the Python traceback.
    """
    from .io import signals

    args = build_parser().parse_args(argv)
    debug = bool(getattr(args, "debug", False) or os.environ.get("SUNRECOIL_DEBUG"))
    logging.basicConfig(level=logging.WARNING if getattr(args, "quiet", False) else logging.INFO,
                        format="%(levelname)s %(name)s: %(message)s", stream=sys.stderr)
    signals.install()
    try:
        if args.command == "generate":
            return _cmd_generate(args)
        if args.command == "config":
            return _cmd_config_show(args)
        if args.command == "inspect":
            return _cmd_inspect(args)
        return int(args.run(args))
    except InputError as exc:
        return _fail(f"sunrecoil: error: {exc}", 2, debug)
    except SunrecoilError as exc:
        return _fail(f"sunrecoil: run failed: {exc}", 1, debug)
    except (signals.Interrupted, KeyboardInterrupt) as exc:
        if signals.committed():      # the output is complete: end by the signal itself
            signals.restore()
            os.kill(os.getpid(), getattr(exc, "signum", signal.SIGINT))
        status = getattr(exc, "exit_status", 130)
        return _fail(f"sunrecoil: {exc or 'interrupted'}; partial output was removed", status,
                     debug)
    except OSError as exc:
        where = f" ({exc.filename})" if getattr(exc, "filename", None) else ""
        return _fail(f"sunrecoil: run failed: {exc.strerror or exc}{where}", 1, debug)
    finally:
        # from here on a signal ends the process at once (it cannot be swallowed by
        # finalisers at interpreter exit and turn into exit status 0)
        signals.restore()


def _fail(message: str, status: int, debug: bool) -> int:
    """Print one line (plus the traceback with --debug) and return the exit status."""
    if debug:
        import traceback

        traceback.print_exc(file=sys.stderr)
    print(" ".join(message.split()), file=sys.stderr)
    return status


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
