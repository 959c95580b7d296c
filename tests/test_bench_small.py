"""The benchmark helpers on the small size: the generated catalogue and the agreement of routes.

Untimed. The catalogue generator must write files that the loader accepts in
the layout of formats.md; on that catalogue the MILP (partpick's route, with its
reductions), the exhaustive baseline of ``tests/bench/bench_design.py`` (an
independent route: enumeration plus exact pricing, no solver) and the
unpruned MILP must reach the same order total.
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench.bench_design import DEFAULT_SPEC, agreement_tolerance, exhaustive_optimum, staged_run, unpruned_route  # noqa: E402
from bench.make_catalog import size_counts, write_catalog  # noqa: E402
from conftest import csv_records  # noqa: E402
from partpick.catalog import load_catalog  # noqa: E402
from partpick.optimize import design  # noqa: E402
from partpick.optimize.milp import check_choice  # noqa: E402
from partpick.spec import load_spec  # noqa: E402

#: Part-number stems of real parts that generated mpns must never start with (rules.md).
REAL_PREFIX = re.compile(r"^(MJE?|TIP|2N|2S[AC]|BD|BC|LM|TL|NE|OPA|AD|IRF)\d")


@pytest.fixture(scope="module")
def small_folder(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("bench_small")
    write_catalog(folder, **size_counts("small"), seed=0)
    return folder


def test_small_catalogue_loads_with_the_rows_written(small_folder: Path) -> None:
    cat = load_catalog(small_folder)  # raises InputError on any bad cell
    counts = size_counts("small")
    # Row counts by the csv module alone (conftest.csv_records), an independent reader.
    assert len(csv_records(small_folder / "transistors.csv")) == 2 * counts["pairs"] == len(cat.transistors)
    assert len(csv_records(small_folder / "opamps.csv")) == counts["opamps"] == len(cat.opamps)
    assert len(csv_records(small_folder / "heatsinks.csv")) == counts["heatsinks"] == len(cat.heatsinks)
    assert len(csv_records(small_folder / "suppliers.csv")) == counts["suppliers"] == len(cat.suppliers)
    assert len(csv_records(small_folder / "offers.csv")) == len(cat.offers)


def test_small_catalogue_has_the_asked_shape(small_folder: Path) -> None:
    cat = load_catalog(small_folder)
    tr = cat.transistors
    # Every transistor is half of a listed complementary pair of one package.
    by_mpn = tr.set_index("mpn")
    assert tr["complement"].notna().all()
    assert (by_mpn.loc[tr["complement"], "polarity"].to_numpy() != tr["polarity"].to_numpy()).all()
    assert (by_mpn.loc[tr["complement"], "package"].to_numpy() == tr["package"].to_numpy()).all()
    assert set(tr["package"]) == {"TO-92", "TO-126", "TO-220", "TO-247", "TO-3P", "TO-264"}
    assert 0 < tr["soa_dc"].notna().sum() < len(tr)
    assert (tr["hfe_min"] >= 750).any() and (tr["hfe_min"] < 750).any()  # Darlingtons and plain pairs
    assert cat.heatsinks["rth_sa_k_w"].between(0.5, 25).all()
    assert set(cat.diodes["kind"]) == {"diode", "led"}
    # Every part and family is offered, with 1 to 4 breaks per supplier, and some stock is zero.
    offered = set(cat.offers["mpn"])
    names = set(cat.passives["family"]).union(*(set(f["mpn"]) for f in (tr, cat.opamps, cat.regulators, cat.heatsinks, cat.diodes)))
    assert names == offered
    breaks = cat.offers.groupby(["mpn", "supplier"]).size()
    assert breaks.between(1, 4).all()
    assert (cat.offers["stock"] == 0).any()
    assert not any(REAL_PREFIX.match(m) for m in names), "a generated mpn looks like a real part number"


def test_generator_is_deterministic(tmp_path: Path) -> None:
    a, b = tmp_path / "a", tmp_path / "b"
    for folder in (a, b):
        write_catalog(folder, **size_counts("small"), seed=7)
    for name in ("transistors.csv", "offers.csv", "heatsinks.csv"):
        assert (a / name).read_bytes() == (b / name).read_bytes()
    write_catalog(tmp_path / "c", **size_counts("small"), seed=8)
    assert (a / "offers.csv").read_bytes() != (tmp_path / "c" / "offers.csv").read_bytes()


EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))


@pytest.mark.parametrize("spec_path", [DEFAULT_SPEC] + [p for p in EXAMPLES if p != DEFAULT_SPEC], ids=lambda p: p.stem)
def test_routes_agree_on_the_small_size(small_folder: Path, spec_path: Path) -> None:
    spec = load_spec(spec_path)
    run = staged_run(spec, small_folder)
    sol = run.result.solution
    assert run.result.feasible and run.report is not None
    # The staged route is design.run step by step: same answer.
    direct = design.run(spec, load_catalog(small_folder))
    assert direct.solution.total == pytest.approx(sol.total, abs=1e-9)
    # Independent route: enumeration plus exact pricing (no solver).
    problem = run.result.assembly.problem
    ex = exhaustive_optimum(problem, time_limit_s=300.0)
    assert ex.combinations > 0
    assert check_choice(problem, ex.choice) == []
    assert ex.total == pytest.approx(sol.total, abs=agreement_tolerance(problem, sol))
    # The benchmark's unpruned route: the whole Problem, no reductions, same answer.
    whole = unpruned_route(problem, "cbc", time_limit_s=300.0)
    assert whole["status"] == "optimal"
    assert whole["total"] == pytest.approx(sol.total, abs=1e-9)


def test_past_the_size_limit_the_staged_run_times_the_bounded_search(small_folder: Path, monkeypatch) -> None:
    """The staged route goes on through run_bounded, as design.run does, and reaches the whole table's total.

    The bench spec has 260 stage configurations on the small size; a limit
    of 100 sends it past the size limit. The exhaustive baseline agrees on
    the bounded table's Problem too.
    """
    from bench import bench_design
    from partpick.evaluate import stage

    spec = load_spec(DEFAULT_SPEC)
    whole = staged_run(spec, small_folder)
    assert len(whole.result.stage.configs) > 100 and "bounded search" not in whole.seconds
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 100)
    bounded = staged_run(spec, small_folder)
    assert bounded.result.stage.cost_bound is not None and bounded.result.status == "ok"
    assert bounded.seconds["bounded search"] > 0 and bounded.report is not None
    assert bounded.result.solution.total == pytest.approx(whole.result.solution.total, abs=1e-9)
    problem = bounded.result.assembly.problem
    ex = exhaustive_optimum(problem, time_limit_s=300.0)
    assert ex.total == pytest.approx(bounded.result.solution.total, abs=agreement_tolerance(problem, bounded.result.solution))
    table = bench_design.table(dict(
        size="small", rows={f: 0 for f in ("transistors.csv", "opamps.csv", "heatsinks.csv", "regulators.csv", "passives.csv", "suppliers.csv", "offers.csv")},
        median={**bounded.seconds, "total": 1.0}, bias_feed="auto", groups={}, lines=0, solver="cbc", repeat=1,
        rss_self_mib=0.0, rss_children_mib=0.0, totals=[ex.total], tolerance=1e-6, status="ok",
        exhaustive=dict(skipped="skipped"), unpruned=dict(skipped="skipped"),
    ))
    assert re.search(r"^   assemble +-$", table, re.M) and re.search(r"^   bounded search +\d", table, re.M)
