"""Command line: argument parsing only; the work is done by the layers below.

Exit codes: 0 success, 2 bad command line, 3 invalid input files (every
problem listed), 4 no feasible design; 1 a solver fault or internal error (one
message, no traceback), 130 interrupted. Heavy modules (the solver, plotting)
are imported inside the commands that need them, so ``--help`` and
``catalog-check`` start fast.
"""

from __future__ import annotations

import argparse
import gc
import math
import os
import signal
import sys
from pathlib import Path

from partpick import __version__
from partpick.errors import InputError, SolverError, UsageError
from partpick.procs import child_pids

EXIT_OK, EXIT_USAGE, EXIT_INPUT, EXIT_INFEASIBLE = 0, 2, 3, 4


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="partpick",
        description="Pick a safe, buildable and cheapest parts list for a discrete "
        "class-AB audio power amplifier, and the order to buy it.",
    )
    p.add_argument("--version", action="version", version=f"partpick {__version__}")
    p.add_argument("--no-color", action="store_true", help="plain text output")
    p.add_argument("--quiet", action="store_true", help="print only errors and the total")
    # The same two flags after the command name; SUPPRESS keeps the global value when absent.
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--no-color", action="store_true", default=argparse.SUPPRESS, help="plain text output")
    common.add_argument("--quiet", action="store_true", default=argparse.SUPPRESS, help="print only errors and the total")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_sub_parser(common))

    d = sub.add_parser("design", help="choose every part and the cheapest order for a spec")
    _design_args(d)

    sub.add_parser("demo", help="design the first shipped example on the shipped demo catalogue")

    c = sub.add_parser("catalog-check", help="validate a catalogue folder and summarise it")
    c.add_argument("folder", nargs="?", help="catalogue folder (default ./catalog, else the demo)")

    w = sub.add_parser("why", help="why a part was not chosen, or what forcing it would cost")
    w.add_argument("mpn")
    w.add_argument("spec")
    w.add_argument("--catalog", metavar="DIR")
    w.add_argument("--solver", choices=("cbc", "highs"), default="cbc")

    sw = sub.add_parser("sweep", help="the optimal design at each point of a power, rail or ambient range")
    sw.add_argument("spec")
    g = sw.add_mutually_exclusive_group(required=True)
    g.add_argument("--power", metavar="FROM:TO:STEP", help="power per channel [W]")
    g.add_argument("--rail", metavar="FROM:TO:STEP", help="v_min [V]; v_max keeps the spec's spread")
    g.add_argument("--ambient", metavar="FROM:TO:STEP", help="ambient temperature [degC]")
    sw.add_argument("--catalog", metavar="DIR")
    sw.add_argument("--plot", metavar="FILE.png", help="write cost against the swept quantity")
    sw.add_argument("--solver", choices=("cbc", "highs"), default="cbc")

    e = sub.add_parser("evaluate", help="the full check of a hand-picked selection")
    e.add_argument("spec")
    e.add_argument("--part", action="append", default=[], metavar="ROLE=MPN", required=True)
    e.add_argument("--catalog", metavar="DIR")
    e.add_argument("--json", metavar="FILE")
    return p


def _sub_parser(common: argparse.ArgumentParser):
    class Sub(argparse.ArgumentParser):
        def __init__(self, *a, **kw):
            kw.setdefault("parents", [common])
            super().__init__(*a, **kw)

    return Sub


def _design_args(d: argparse.ArgumentParser) -> None:
    d.add_argument("spec", help="the amplifier spec (TOML)")
    d.add_argument("--catalog", metavar="DIR")
    d.add_argument("--json", metavar="FILE", help="write the JSON report")
    d.add_argument("--bom", metavar="FILE", help="write the order as CSV")
    d.add_argument("--plots", metavar="DIR", help="write SOA and thermal pictures")
    d.add_argument("--objective", choices=("cost", "lines"))
    d.add_argument("--exclude", nargs="+", default=[], metavar="MPN")
    d.add_argument("--previous", metavar="REPORT.json", help="re-design keeping as much of a previous report as possible")
    d.add_argument("--keep-footprints", action="store_true", help="with --previous: replacements keep package and pinout")
    d.add_argument("--change-weight", type=_number(0.0, strict=False), metavar="COST", help="with --previous: trade one changed role for this much cost (default: fewest changes first)")
    d.add_argument("--risk", action="store_true", help="report single-source lines and the best design without each")
    d.add_argument("--time-limit", type=_number(0.0, strict=True), metavar="S",
                   help="time limit in seconds for the search of each design (all its solver runs together); "
                        "a design found by then is reported as not proven optimal")
    d.add_argument("--alternatives", type=int, default=0, metavar="N")
    d.add_argument("--solver", choices=("cbc", "highs"), default="cbc")


def _number(low: float, strict: bool):
    """An argparse type: a finite number above ``low`` (``strict``) or at least ``low``."""

    def parse(text: str) -> float:
        try:
            x = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"'{text}' is not a number") from None
        if not math.isfinite(x) or x < low or (strict and x == low):
            raise argparse.ArgumentTypeError(f"'{text}' must be a finite number {'above' if strict else 'of at least'} {low:g}")
        return x

    return parse


class _Terminated(KeyboardInterrupt):
    """SIGTERM, raised as an exception so that every cleanup runs (solver folders, partial files)."""


def _on_sigterm(signum, frame) -> None:
    _stop_children()
    raise _Terminated()


def _stop_children() -> None:
    """Send SIGTERM to this process's children (a solver program still running); Linux, best effort.

    A terminal's Ctrl-C reaches the whole process group, the solver
    included; a SIGTERM sent to partpick alone does not.
    """
    for pid in child_pids():
        try:
            os.kill(pid, signal.SIGTERM)
        except OSError:
            pass


def main(argv: list[str] | None = None) -> int:
    """Run one command; ``argv`` None reads ``sys.argv`` (the process is partpick's own).

    In a process of its own, the objects the imports made are frozen out of
    Python's cyclic garbage collector once the command's modules are loaded
    (:func:`gc.freeze`): they live until the process ends, and each full
    collection would otherwise walk them all again (about a tenth of the
    demo's run). A caller that passes ``argv`` keeps its collector as it is.
    """
    args = _parser().parse_args(argv)
    if args.command is None:
        _parser().print_help()
        return EXIT_USAGE
    from partpick.report.console import make_console

    console = make_console(no_color=args.no_color, quiet=args.quiet)
    try:
        previous = signal.signal(signal.SIGTERM, _on_sigterm)
    except ValueError:  # not the main thread: leave signals alone
        previous = None
    try:
        return _run_command(args, console, own_process=argv is None)
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _run_command(args: argparse.Namespace, console, own_process: bool = False) -> int:
    try:
        return _dispatch(args, console, own_process)
    except InputError as exc:
        console.print_problems(exc.problems)
        return EXIT_INPUT
    except UsageError as exc:
        console.error(str(exc))
        return EXIT_USAGE
    except SolverError as exc:
        console.error(str(exc))
        return 1
    except _Terminated:
        console.error("terminated; output files are written whole or not at all, none is left partial")
        return 143
    except KeyboardInterrupt:
        console.error("interrupted; output files are written whole or not at all, none is left partial")
        return 130
    except Exception as exc:  # noqa: BLE001 - the user sees a message, not a traceback
        if os.environ.get("PARTPICK_DEBUG"):
            raise
        console.error(f"internal error: {type(exc).__name__}: {exc} (set PARTPICK_DEBUG=1 for details)")
        return 1


def _dispatch(args: argparse.Namespace, console, own_process: bool = False) -> int:
    if args.command == "catalog-check":
        from partpick.catalog import default_catalog_dir, load_catalog
        from partpick.report.console import print_catalog_summary

        _settle(own_process)
        folder = Path(args.folder) if args.folder else default_catalog_dir()
        print_catalog_summary(console, load_catalog(folder))
        return EXIT_OK
    if args.command in ("demo", "design", "evaluate", "sweep", "why"):
        from partpick import commands

        _settle(own_process)
        run = getattr(commands, "run_" + args.command)
        return run(console) if args.command == "demo" else run(args, console)
    raise UsageError(f"unknown command {args.command}")  # pragma: no cover


def _settle(own_process: bool) -> None:
    """Freeze the objects made so far out of the cyclic collector, in a process of partpick's own (see :func:`main`)."""
    if own_process:
        gc.freeze()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
