"""The commands behind the command line: read inputs, run the layers, write outputs."""

from __future__ import annotations

import argparse
import json
from importlib import resources
from pathlib import Path

from partpick.catalog import Catalog, default_catalog_dir, demo_catalog_dir, load_catalog
from partpick.errors import UsageError
from partpick.report.console import Terminal, labelled
from partpick.report.files import write_all
from partpick.spec import Spec, load_spec

EXIT_OK, EXIT_INFEASIBLE = 0, 4
DEMO_EXAMPLE = "desk_2ch_12v_single.toml"


def _catalog(folder: str | None) -> Catalog:
    return load_catalog(Path(folder) if folder else default_catalog_dir())


def run_demo(term: Terminal) -> int:
    """Design the first shipped example on the shipped demo catalogue."""
    example = Path(str(resources.files("partpick") / "data" / "examples" / DEMO_EXAMPLE))
    args = argparse.Namespace(
        spec=str(example), catalog=str(demo_catalog_dir()), json=None, bom=None, plots=None,
        objective=None, exclude=[], previous=None, keep_footprints=False, alternatives=0, solver="cbc",
        change_weight=None, risk=False, time_limit=None,
    )
    term.print(f"partpick demo: {example.name} on the demo catalogue\n")
    return run_design(args, term)


def run_design(args: argparse.Namespace, term: Terminal) -> int:
    from partpick.optimize.design import run
    from partpick.report.build import build_report
    from partpick.report.text import render_design, render_infeasible

    spec = load_spec(args.spec)
    catalog = _catalog(args.catalog)
    if args.keep_footprints and not args.previous:
        raise UsageError("--keep-footprints goes with --previous REPORT.json")
    previous = None
    if args.previous:
        from partpick.optimize.revise import load_previous

        previous = load_previous(args.previous)
    _refuse_outputs(args, catalog)
    limit = getattr(args, "time_limit", None)  # one budget per design search
    revision = None
    if previous is not None:
        from partpick.optimize.revise import redesign

        if args.objective:
            spec = spec.model_copy(update={"order": spec.order.model_copy(update={"objective": args.objective})})
        # --risk re-solves the design without each of its parts: on the whole table when it fits.
        revision = redesign(spec, catalog, previous, exclude=tuple(args.exclude), keep_footprints=args.keep_footprints,
                            change_weight=getattr(args, "change_weight", None), solver=args.solver,
                            time_limit=limit, by_changes=not getattr(args, "risk", False))
        result = revision.result
    else:
        # Ranked alternatives and the stock risk re-solve the table the design came from:
        # the whole table when it fits, not one built by cost bound (design.CHOICE_ROWS).
        whole = getattr(args, "risk", False) or (args.alternatives or 0) > 1
        result = run(spec, catalog, exclude=tuple(args.exclude), objective=args.objective, solver=args.solver,
                     spec_label=args.spec, time_limit=limit, whole=whole)
    if not result.feasible:
        from partpick.optimize.explain import suggestions

        rep = build_report(result, catalog.file_sha256, args.solver)
        if not term.quiet:
            term.print("No feasible design; searching what would make it feasible ...")
        rep["suggestions"] = suggestions(result.spec, catalog, tuple(args.exclude), notes=rep["warnings"], time_limit=limit)
        write_outputs(term, args, result, rep)
        render_infeasible(term, rep)
        return EXIT_INFEASIBLE
    from partpick.optimize.explain import compare_feeds

    rep = build_report(result, catalog.file_sha256, args.solver, compare_feeds(result, catalog, tuple(args.exclude), args.solver, limit))
    if revision is not None:
        rep["changes"] = [vars(c) for c in revision.changes]
        rep["no_drop_in"] = dict(revision.no_drop_in)
        rep["previous_total"] = previous.total
    if getattr(args, "risk", False):
        from partpick.optimize.revise import stock_risk

        rep["stock_risk"] = [vars(r) for r in stock_risk(result, args.solver, limit)]
    write_outputs(term, args, result, rep)
    if term.quiet:
        term.always(f"{rep['totals']['total']:.2f} {rep['totals']['currency']}")
    else:
        render_design(term, rep)
    if revision is not None:
        from partpick.report.text import render_changes

        render_changes(term, rep)
    if "stock_risk" in rep:
        from partpick.report.text import render_risk

        render_risk(term, rep)
    if args.alternatives and args.alternatives > 1:
        from partpick.optimize.explain import alternatives
        from partpick.report.text import render_alternatives

        alts = alternatives(result.spec, catalog, args.alternatives, tuple(args.exclude), args.solver, limit,
                            first=result if revision is None else None)
        render_alternatives(term, [build_report(a, catalog.file_sha256, args.solver) for a in alts])
    return EXIT_OK


EVALUATE_ROLES = ("output_npn", "output_pnp", "driver_opamp", "heatsink", "bias_diode", "regulator", "emitter_resistor")


def run_evaluate(args: argparse.Namespace, term: Terminal) -> int:
    """The full check of a hand-picked selection; the optimiser fills the roles not given."""
    from partpick.optimize.design import run
    from partpick.optimize.explain import why
    from partpick.report.build import build_report
    from partpick.report.text import render_design

    forced: dict[str, str] = {}
    for item in args.part:
        role, sep, mpn = item.partition("=")
        if not sep or not mpn:
            raise UsageError(f"--part {item}: write ROLE=MPN, e.g. output_npn=XY123")
        if role not in EVALUATE_ROLES:
            raise UsageError(f"--part {item}: role must be one of {', '.join(EVALUATE_ROLES)}")
        forced[role] = mpn.strip()
    spec = load_spec(args.spec)
    catalog = _catalog(args.catalog)
    _check_known(catalog, forced.values())
    if args.json:
        _refuse_input(args.json, _input_paths(args.spec, catalog))
    result = run(spec, catalog, forced=forced, spec_label=args.spec)
    rep = build_report(result, catalog.file_sha256, "cbc")
    if args.json:
        write_all({Path(args.json): report_json(rep)})
    if result.feasible:
        term.print("Evaluated selection: " + ", ".join(f"{r}={m}" for r, m in forced.items()))
        render_design(term, rep, given=True)
        return EXIT_OK
    term.always(labelled("The selection is not feasible.", "bold red"))
    for role, mpn in forced.items():
        ans = why(spec, catalog, mpn)
        if ans.role is not None and ans.role != role:
            # The part serves this spec in another role only: say so, not that role's verdict alone.
            term.always(f"- {role} {mpn}: no {role.replace('_', ' ')} option of this spec uses it; "
                        f"as {ans.role.replace('_', ' ')}: {ans.reason}")
        else:
            term.always(f"- {role} {mpn}: {ans.reason}")
    return EXIT_INFEASIBLE


def run_why(args: argparse.Namespace, term: Terminal) -> int:
    from partpick.optimize.explain import why

    spec = load_spec(args.spec)
    catalog = _catalog(args.catalog)
    ans = why(spec, catalog, args.mpn, solver=args.solver)
    cur = catalog.currency
    if ans.chosen:
        term.always(f"{ans.mpn} is in the optimal design ({ans.optimum_total:.2f} {cur}).")
    elif ans.forced_total is not None:
        diff = ans.forced_total - (ans.optimum_total or 0.0)
        term.always(
            f"{ans.mpn} ({ans.role}) is feasible but not the cheapest: the best design forced to use it costs "
            f"{ans.forced_total:.2f} {cur}, {diff:+.2f} {cur} against the optimum {ans.optimum_total:.2f} {cur}."
        )
    else:
        term.always(f"{ans.mpn} is not used: {ans.reason}")
    return EXIT_OK


def run_sweep(args: argparse.Namespace, term: Terminal) -> int:
    """The optimal design at each point of a power, rail or ambient range."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    from partpick.optimize.sweep import QUANTITIES, parse_range, plot_sweep, sweep

    quantity = next(q for q in QUANTITIES if getattr(args, q))
    values = parse_range(getattr(args, quantity), f"--{quantity}")
    spec = load_spec(args.spec)
    catalog = _catalog(args.catalog)
    if args.plot:
        _refuse_input(args.plot, _input_paths(args.spec, catalog))
    points = sweep(spec, catalog, quantity, values, args.solver)
    label, unit = QUANTITIES[quantity]
    cur = catalog.currency
    t = Table(title=f"Sweep of {label} [{unit}]", box=box.SIMPLE_HEAD, title_justify="left", pad_edge=False)
    for col, just in ((unit, "right"), (f"total {cur}", "right"), ("output pair", "left"), ("driver", "left"), ("heatsink", "left"), ("tightest margin", "left")):
        t.add_column(col, justify=just, overflow="fold")
    for p in points:
        if p.feasible:
            t.add_row(f"{p.value:g}", f"{p.total:.2f}" + ("*" if p.unproven else ""), p.output_pair, p.driver, p.heatsink, f"{p.tightest} {100 * p.tightest_fraction:.0f} %")
        elif p.skipped:
            t.add_row(f"{p.value:g}", Text("not designed", style="yellow"), "", "", "", "")
        else:
            t.add_row(f"{p.value:g}", Text("infeasible", style="red"), "", "", "", "")
    term.always(t)
    from partpick.report.console import labelled

    for attr, what in (("skipped", "not designed"), ("unproven", "* not proven optimal")):
        marked = [p for p in points if getattr(p, attr)]
        if marked:
            values = ", ".join(f"{p.value:g}" for p in marked)
            term.always(labelled("warning:", "yellow", f"{what} at {values} {unit}: {getattr(marked[0], attr)}"))
    if args.plot:
        plot_sweep(points, quantity, args.plot, cur)
        term.print(f"wrote {args.plot}")
    return EXIT_OK


def _check_known(catalog: Catalog, mpns) -> None:
    from partpick.errors import InputError, Problem

    known = set(catalog.passives["family"])
    for f in (catalog.transistors, catalog.opamps, catalog.regulators, catalog.heatsinks, catalog.diodes):
        known.update(f["mpn"])
    bad = [Problem("command line", 0, "--part", f"unknown part '{m}'") for m in mpns if m not in known]
    if bad:
        raise InputError(bad)


def _input_paths(spec_path: str, catalog: Catalog, *others: str | None) -> set[Path]:
    """Every input of a run: the spec, the catalogue folder and its files, and ``others`` given."""
    paths = {Path(spec_path).resolve(), Path(catalog.folder).resolve()}
    paths.update((Path(catalog.folder) / name).resolve() for name in catalog.file_sha256)
    paths.update(Path(o).resolve() for o in others if o)
    return paths


def _refuse_outputs(args: argparse.Namespace, catalog: Catalog) -> None:
    """A design run's outputs must not overwrite an input, go into the catalogue, or clash."""
    inputs = _input_paths(args.spec, catalog, args.previous)
    files = [out for out in (args.json, args.bom) if out]
    for out in files:
        _refuse_input(out, inputs)
    if len(files) == 2 and Path(files[0]).resolve() == Path(files[1]).resolve():
        raise UsageError(f"refusing to write the report and the order into the same file {files[0]}")
    if args.plots:
        _refuse_plots_folder(args.plots, inputs)


def _refuse_input(out: str, inputs: set[Path]) -> None:
    p = Path(out).resolve()
    if p in inputs or any(parent in inputs for parent in p.parents):
        raise UsageError(f"refusing to write {out}: it is an input file or inside the catalogue folder")


def _refuse_plots_folder(folder: str, inputs: set[Path]) -> None:
    """The plots folder must not be (inside) an input, nor an existing file."""
    _refuse_input(folder, inputs)
    if Path(folder).exists() and not Path(folder).is_dir():
        raise UsageError(f"refusing to write pictures into {folder}: it is a file, not a folder")


def write_outputs(term: Terminal, args: argparse.Namespace, result, rep: dict) -> None:
    """Write the report, the order CSV and the pictures a design run asked for, all or nothing.

    The order CSV is written for a feasible design only.
    """
    files: dict[Path, bytes] = {}
    if args.json:
        files[Path(args.json)] = report_json(rep)
    if args.bom and result.feasible:
        from partpick.report.bom_csv import bom_csv_text

        files[Path(args.bom)] = bom_csv_text(rep).encode("utf-8")
    pictures: dict[str, bytes] = {}
    if args.plots:
        from partpick.report.plots import render_plots

        pictures = render_plots(result, rep)
        files.update({Path(args.plots) / name: data for name, data in pictures.items()})
    write_all(files)
    if pictures:
        term.print(f"wrote {len(pictures)} pictures to {args.plots}: {', '.join(pictures)}")


def report_json(rep: dict) -> bytes:
    """The JSON report as written: UTF-8, two-space indent, keys in the report's order."""
    return (json.dumps(rep, indent=2, ensure_ascii=False) + "\n").encode("utf-8")


__all__ = ["Spec", "run_demo", "run_design", "run_evaluate", "run_why"]
