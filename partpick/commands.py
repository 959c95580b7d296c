"""The commands behind the command line: read inputs, run the layers, write outputs."""

from __future__ import annotations

import argparse
import json
from importlib import resources
from pathlib import Path

from partpick.catalog import Catalog, default_catalog_dir, demo_catalog_dir, load_catalog
from partpick.errors import UsageError
from partpick.report.console import Terminal
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
    )
    term.print(f"partpick demo: {example.name} on the demo catalogue\n")
    return run_design(args, term)


def run_design(args: argparse.Namespace, term: Terminal) -> int:
    from partpick.optimize.design import run
    from partpick.report.build import build_report
    from partpick.report.text import render_design, render_infeasible

    spec = load_spec(args.spec)
    catalog = _catalog(args.catalog)
    if args.previous or args.keep_footprints:
        raise UsageError("--previous and --keep-footprints are not available yet")
    if args.plots:
        raise UsageError("--plots is not available yet")
    inputs = _input_paths(args.spec, catalog)
    for out in (args.json, args.bom):
        if out:
            _refuse_input(out, inputs)
    result = run(spec, catalog, exclude=tuple(args.exclude), objective=args.objective, solver=args.solver, spec_label=args.spec)
    rep = build_report(result, catalog.file_sha256, args.solver)
    if args.json:
        write_json(args.json, rep)
    if not result.feasible:
        render_infeasible(term, rep)
        return EXIT_INFEASIBLE
    if args.bom:
        from partpick.report.bom_csv import write_bom_csv

        write_bom_csv(args.bom, rep)
    if term.quiet:
        term.always(f"{rep['totals']['total']:.2f} {rep['totals']['currency']}")
    else:
        render_design(term, rep)
    return EXIT_OK


def run_evaluate(args: argparse.Namespace, term: Terminal) -> int:
    raise UsageError("evaluate is not available yet")


def run_why(args: argparse.Namespace, term: Terminal) -> int:
    raise UsageError("why is not available yet")


def _input_paths(spec_path: str, catalog: Catalog) -> set[Path]:
    paths = {Path(spec_path).resolve(), Path(catalog.folder).resolve()}
    paths.update((Path(catalog.folder) / name).resolve() for name in catalog.file_sha256)
    return paths


def _refuse_input(out: str, inputs: set[Path]) -> None:
    p = Path(out).resolve()
    if p in inputs or any(parent in inputs for parent in p.parents):
        raise UsageError(f"refusing to write {out}: it is an input file or inside the catalogue folder")


def write_json(path: str, rep: dict) -> None:
    from partpick.report.files import atomic_write_text

    atomic_write_text(path, json.dumps(rep, indent=2, ensure_ascii=False) + "\n")


__all__ = ["Spec", "run_demo", "run_design", "run_evaluate", "run_why"]
