"""End to end on the demo catalogue: every design is feasible, fully checked and exactly optimal.

Routes independent of the MILP:

* the full selection check (``check_chosen`` / ``SelectionCheck.failing``)
  recomputes every margin of the chosen design from the model functions;
* :func:`decomposed_optimum` (exact, no solver; itself checked against a plain
  brute force in ``test_milp_exhaustive.py``) gives the optimum of the
  assembled problem; on a restriction of each example small enough to list
  every combination, :func:`brute_force` does;
* hand-built catalogue edits (in ``tmp_path``) whose right answer follows from
  the model or from hand arithmetic.
"""

from __future__ import annotations

import csv
import math
import shutil
from collections.abc import Callable
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from partpick.catalog import load_catalog
from partpick.optimize.design import DesignResult, check_chosen, role_parts, run
from partpick.optimize.milp import Group, Problem, check_choice, solve
from partpick.spec import Spec, load_spec, parse_spec

from .test_milp_exhaustive import COST_TOL, assert_plan_valid, brute_force, decomposed_optimum

ROOT = Path(__file__).resolve().parents[2]
CATALOG_DIR = ROOT / "catalog"
EXAMPLES = sorted((ROOT / "examples").glob("*.toml"))
MODULE = ROOT / "examples" / "module_60w_4ohm_reactive.toml"
#: Largest number of combinations listed one by one.
BRUTE_FORCE_MAX = 200_000


# --------------------------------------------------------------------------- helpers


def edit_csv(path: Path, edit: Callable[[dict[str, str]], dict[str, str] | None]) -> None:
    """Rewrite a catalogue CSV row by row (``edit`` returns the new row, or None to drop it)."""
    text = path.read_text(encoding="utf-8").splitlines(keepends=True)
    comments = [l for l in text if l.startswith("#")]
    reader = csv.DictReader([l for l in text if not l.startswith("#")])
    rows = [r for r in (edit(dict(row)) for row in reader) if r is not None]
    with path.open("w", encoding="utf-8", newline="") as f:
        f.writelines(comments)
        writer = csv.DictWriter(f, fieldnames=reader.fieldnames, lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)


def copy_catalog(tmp_path: Path) -> Path:
    folder = tmp_path / "catalog"
    shutil.copytree(CATALOG_DIR, folder)
    return folder


def with_order(spec: Spec, **order) -> Spec:
    return spec.model_copy(update={"order": spec.order.model_copy(update=order)})


def chosen_mpns(result: DesignResult) -> list[tuple[str, str]]:
    return sorted((r["role"], r["line"]) for r in role_parts(result))


def chosen_row(result: DesignResult, group: str):
    return result.assembly.tables[group].iloc[result.solution.choice[group]]


def chosen_pair(result: DesignResult):
    k = chosen_row(result, "stage")
    return result.stage.pairs.iloc[int(k["pair_i"])]


def exact(problem: Problem):
    """Exact optimum: every combination when few enough, else the component search."""
    n = math.prod(len(g) for g in problem.groups.values())
    return brute_force(problem) if n < BRUTE_FORCE_MAX else decomposed_optimum(problem)


def assert_exact(result: DesignResult) -> None:
    """The design's order total equals the exact optimum of its assembled problem."""
    best = exact(result.assembly.problem)
    assert best is not None
    assert result.solution.total == pytest.approx(best.cost, abs=COST_TOL)


def assert_sound(result: DesignResult) -> None:
    """Feasible, every margin of the full check non-negative, a legal order."""
    assert result.feasible, result.status
    assert result.check.failing() == []
    assert_plan_valid(result.assembly.problem, result.solution)


def restrict(problem: Problem, keep: dict[str, list[int]]) -> Problem:
    """The problem with each group cut down to the listed options (links and couplings remapped)."""
    groups: dict[str, Group] = {}
    for name, g in problem.groups.items():
        idx = keep[name]
        compat = None
        if g.parent is not None:
            new_of = {old: new for new, old in enumerate(keep[g.parent])}
            compat = [np.array([new_of[j] for j in np.asarray(g.compat[i]).tolist() if j in new_of], dtype=int) for i in idx]
        groups[name] = Group(name, [g.keys[i] for i in idx], [g.usage[i] for i in idx], g.parent, compat)
    couplings = [replace(c, terms={g: np.asarray(a)[keep[g]] for g, a in c.terms.items()}) for c in problem.couplings]
    return replace(problem, groups=groups, couplings=couplings, forced={}, forbidden=[])


# --------------------------------------------------------------------------- the shipped examples


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(CATALOG_DIR)


@pytest.fixture(scope="module")
def designs(catalog) -> dict[str, DesignResult]:
    return {p.name: run(load_spec(p), catalog) for p in EXAMPLES}


def test_examples_are_shipped() -> None:
    assert len(EXAMPLES) >= 3


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_example_feasible_and_fully_checked(path: Path, designs) -> None:
    result = designs[path.name]
    assert result.status == "ok"
    assert_sound(result)
    assert not check_choice(result.assembly.problem, result.solution.choice)
    # The second route once more, called directly on the chosen selection.
    again = check_chosen(result.spec, result.pool, result.targets, result.stage, result.assembly, result.solution.choice)
    assert again.failing() == []
    assert {r: [m.value for m in ms] for r, ms in again.margins.items()} == {r: [m.value for m in ms] for r, ms in result.check.margins.items()}


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_example_total_is_the_exact_optimum(path: Path, designs) -> None:
    result = designs[path.name]
    problem = result.assembly.problem
    best = exact(problem)
    assert best is not None
    assert result.solution.total == pytest.approx(best.cost, abs=COST_TOL)
    # The exact search's own optimum is a feasible selection that passes the full check too.
    assert not check_choice(problem, best.choice)
    check = check_chosen(result.spec, result.pool, result.targets, result.stage, result.assembly, best.choice)
    assert check.failing() == []


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_example_forced_stage_matches_exact(path: Path, designs) -> None:
    """With the stage fixed (``problem.forced``), the MILP equals the exact search for that stage."""
    result = designs[path.name]
    problem = result.assembly.problem
    n = len(problem.groups["stage"])
    sample = sorted({result.solution.choice["stage"], *np.linspace(0, n - 1, 3).astype(int).tolist()})
    for i in sample:
        best = decomposed_optimum(problem, pivot_options=[i])
        sol = solve(replace(problem, forced={"stage": i}), "highs")
        if best is None:
            assert sol.status == "infeasible", i
        else:
            assert sol.choice["stage"] == i
            assert sol.total == pytest.approx(best.cost, abs=COST_TOL), i
            assert sol.total >= result.solution.total - COST_TOL  # no stage beats the optimum


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_example_restriction_by_full_brute_force(path: Path, designs) -> None:
    """Each group cut to the chosen option and one neighbour: every combination listed."""
    result = designs[path.name]
    problem = result.assembly.problem
    choice = result.solution.choice
    keep = {}
    for g, grp in problem.groups.items():
        other = (choice[g] + 1) % len(grp)
        keep[g] = sorted({choice[g], other}) if g != "stage" else [choice[g]]
    small = restrict(problem, keep)
    assert math.prod(len(g) for g in small.groups.values()) < BRUTE_FORCE_MAX
    best = brute_force(small)
    assert best is not None
    for solver in ("cbc", "highs"):
        sol = solve(small, solver)
        assert_plan_valid(small, sol)
        assert sol.total == pytest.approx(best.cost, abs=COST_TOL)
    # The restriction still holds the full optimum, so it cannot be cheaper than it.
    assert best.cost == pytest.approx(result.solution.total, abs=COST_TOL)


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_example_solvers_agree_and_runs_repeat(path: Path, designs, catalog) -> None:
    cbc = designs[path.name]
    highs = run(load_spec(path), catalog, solver="highs")
    again = run(load_spec(path), catalog, solver="cbc")
    assert highs.solution.total == pytest.approx(cbc.solution.total, abs=COST_TOL)
    assert chosen_mpns(highs) == chosen_mpns(cbc)
    assert highs.solution.choice == cbc.solution.choice
    assert highs.solution.purchases == cbc.solution.purchases
    assert again.solution.choice == cbc.solution.choice
    assert again.solution.purchases == cbc.solution.purchases
    assert again.solution.total == cbc.solution.total


def test_example_lines_objective_is_exact(catalog) -> None:
    """Objective ``lines``: fewest distinct lines, then cost, equal to the exact search."""
    result = run(load_spec(MODULE), catalog, objective="lines", solver="highs")
    assert_sound(result)
    best = decomposed_optimum(result.assembly.problem, "lines")
    sol = result.solution
    assert sum(1 for q in sol.need.values() if q > 0) == best.lines
    assert sol.total == pytest.approx(best.cost, abs=COST_TOL)
    cost_first = decomposed_optimum(result.assembly.problem, "cost")
    assert best.lines <= cost_first.lines and best.cost >= cost_first.cost - COST_TOL


# --------------------------------------------------------------------------- hand-built cases


@pytest.fixture(scope="module")
def module_design(catalog) -> DesignResult:
    return run(load_spec(MODULE), catalog)


def _lenient_slew_need_v_us(result: DesignResult) -> float:
    """The slew rate the most lenient configuration needs (model s.8: 2 pi f Vdrive)."""
    k = result.assembly.tables["stage"]
    vd_max = float(result.assembly.tables["bias_diode"]["vf_v"].max())
    return 2 * math.pi * result.spec.output.f_high_hz / 1e6 * (float(k["base_peak_v"].min()) - vd_max)


def test_slew_rate_rejects_the_winning_opamp(tmp_path: Path, module_design) -> None:
    base = module_design
    winner = chosen_row(base, "driver_opamp")["mpn"]
    need = next(m for m in base.check.margins["driver_opamp"] if m.name == "slew rate").limit
    assert min(need, _lenient_slew_need_v_us(base)) > 0.5  # 0.5 V/us is below every configuration's need
    folder = copy_catalog(tmp_path)
    edit_csv(folder / "opamps.csv", lambda r: {**r, "slew_v_us": "0.5"} if r["mpn"] == winner else r)
    result = run(base.spec, load_catalog(folder))
    assert_sound(result)
    assert chosen_row(result, "driver_opamp")["mpn"] != winner
    cand = result.assembly.candidates["driver_opamp"].set_index("mpn")
    assert not cand.loc[winner, "feasible"]
    assert cand.loc[winner, "rejected_by"].startswith("slew rate")
    assert result.solution.total >= base.solution.total - COST_TOL  # a constraint more cannot help
    assert_exact(result)


def test_slew_rate_coupling_moves_the_stage(tmp_path: Path, module_design) -> None:
    """Slew between what the lenient configuration and the chosen one need: the coupling decides."""
    base = module_design
    winner = chosen_row(base, "driver_opamp")["mpn"]
    need_chosen = next(m for m in base.check.margins["driver_opamp"] if m.name == "slew rate").limit
    need_lenient = _lenient_slew_need_v_us(base)
    assert need_lenient < need_chosen
    slew = 0.5 * (need_lenient + need_chosen)
    folder = copy_catalog(tmp_path)
    edit_csv(folder / "opamps.csv", lambda r: {**r, "slew_v_us": f"{slew:.6f}"} if r["mpn"] == winner else r)
    result = run(base.spec, load_catalog(folder))
    assert_sound(result)  # the slew margin of whatever is chosen is non-negative
    cand = result.assembly.candidates["driver_opamp"].set_index("mpn")
    assert cand.loc[winner, "feasible"]  # passes the lenient filter: only the coupling can rule it out
    if chosen_row(result, "driver_opamp")["mpn"] == winner:
        assert chosen_row(result, "stage")["key"] != chosen_row(base, "stage")["key"]
    # The slew coupling rules the winner out with the baseline stage, whatever the bias diode.
    problem = result.assembly.problem
    k_base = problem.groups["stage"].keys.index(chosen_row(base, "stage")["key"])
    j = problem.groups["driver_opamp"].keys.index(winner)
    slew_c = next(c for c in problem.couplings if c.name.startswith("slew rate"))
    lhs = slew_c.terms["driver_opamp"][j] + slew_c.terms["stage"][k_base] + np.asarray(slew_c.terms["bias_diode"])
    assert slew_c.sense == ">=" and (lhs < slew_c.rhs).all()
    forced = solve(replace(problem, forced={"stage": k_base}), "highs")
    if forced.status != "infeasible":
        assert problem.groups["driver_opamp"].keys[forced.choice["driver_opamp"]] != winner
    assert_exact(result)


def _cheap_heatsink_without(folder: Path, mpn: str, packages: str) -> None:
    """Make heatsink ``mpn`` the best and cheapest on offer, mounting only ``packages``."""
    edit_csv(folder / "heatsinks.csv", lambda r: {**r, "packages": packages, "rth_sa_k_w": "0.3", "max_devices": "8", "rth_cs_k_w": "0.2"} if r["mpn"] == mpn else r)
    edit_csv(folder / "offers.csv", lambda r: {**r, "unit_price": "0.10", "stock": "1000", "moq": "1"} if r["mpn"] == mpn else r)


def test_heatsink_without_the_package_is_never_chosen(tmp_path: Path, module_design) -> None:
    base = module_design
    pkg = chosen_pair(base)["package"]
    folder = copy_catalog(tmp_path)
    others = sorted({"TO-220", "TO-247", "TO-3P", "TO-264"} - {pkg})
    _cheap_heatsink_without(folder, "AHX-200-1.0", ";".join(others))
    cat = load_catalog(folder)
    # The chosen pair forced: the cheap sink does not mount it, so it cannot be picked.
    npn = chosen_pair(base)["mpn_n"]
    forced = run(base.spec, cat, forced={"output_npn": npn})
    assert_sound(forced)
    assert chosen_pair(forced)["package"] == pkg
    assert chosen_row(forced, "heatsink")["mpn"] != "AHX-200-1.0"
    assert pkg in chosen_row(forced, "heatsink")["mounts"]
    # Free choice: whatever sink wins mounts the chosen pair's package, and the total is exact.
    free = run(base.spec, cat)
    assert_sound(free)
    assert chosen_pair(free)["package"] in chosen_row(free, "heatsink")["mounts"]
    assert free.solution.total <= forced.solution.total + COST_TOL
    assert_exact(free)


def test_heatsink_for_no_catalogued_package_is_rejected(tmp_path: Path, module_design) -> None:
    folder = copy_catalog(tmp_path)
    _cheap_heatsink_without(folder, "AHX-200-1.0", "TO-3")  # no transistor of the demo catalogue has it
    result = run(module_design.spec, load_catalog(folder))
    assert_sound(result)
    assert chosen_row(result, "heatsink")["mpn"] != "AHX-200-1.0"
    cand = result.assembly.candidates["heatsink"].set_index("mpn")
    assert cand.loc["AHX-200-1.0", "rejected_by"].startswith("package")
    assert result.solution.total == pytest.approx(module_design.solution.total, abs=COST_TOL)


@pytest.mark.parametrize("fee", [0.10, 30.0])
def test_order_fee_moves_purchases_to_fewer_suppliers(tmp_path: Path, module_design, fee: float) -> None:
    base = module_design
    free = "Brindlecombe Parts"  # order fee 0 in the demo catalogue
    assert free in base.solution.suppliers_used and len(base.solution.suppliers_used) == 2
    folder = copy_catalog(tmp_path)
    edit_csv(folder / "suppliers.csv", lambda r: {**r, "order_fee": f"{fee:.2f}"} if r["supplier"] == free else r)
    cat = load_catalog(folder)
    result = run(base.spec, cat)
    assert_sound(result)
    sol = result.solution
    fees = dict(zip(cat.suppliers["supplier"], cat.suppliers["order_fee"].astype(float)))
    assert sol.parts_cost == pytest.approx(sum(p.qty * p.unit_price for p in sol.purchases), abs=COST_TOL)
    assert sol.fees_cost == pytest.approx(sum(fees[s] for s in sol.suppliers_used), abs=COST_TOL)
    assert sol.total == pytest.approx(sol.parts_cost + sol.fees_cost, abs=COST_TOL)
    assert_exact(result)
    # The old order at the new fee is always available: the optimum is never dearer.
    assert sol.total <= base.solution.total + fee + COST_TOL
    # Exact optimum without that supplier (fee too large to pay) decides which way it goes.
    without = decomposed_optimum(replace(result.assembly.problem, fees={**fees, free: 1e6}))
    if without.cost < base.solution.total + fee - COST_TOL:
        assert free not in sol.suppliers_used
        assert len(sol.suppliers_used) < len(base.solution.suppliers_used)
        assert sol.parts_cost >= base.solution.parts_cost - COST_TOL  # fewer suppliers, dearer parts
    else:
        assert sol.suppliers_used == base.solution.suppliers_used
        assert sol.total == pytest.approx(base.solution.total + fee, abs=COST_TOL)
    assert (fee == 30.0) == (free not in sol.suppliers_used)  # both branches are exercised


@pytest.fixture(scope="module")
def module_8_boards(catalog) -> DesignResult:
    return run(with_order(load_spec(MODULE), boards=8), catalog)


@pytest.mark.parametrize("p10", [11.00, 13.25])
def test_buying_up_to_a_price_break(tmp_path: Path, module_8_boards, p10: float) -> None:
    # 8 heatsinks needed (8 boards, 1 channel). One supplier quotes 15.06 from 1 and p10
    # from 10: buy 10 when 10 x p10 < 8 x 15.06 = 120.48 (p10 = 11.00: 110.00), else 8
    # (p10 = 13.25: 132.50).
    base = module_8_boards
    spec = base.spec
    sink = chosen_row(base, "heatsink")["mpn"]
    assert base.solution.need[sink] == 8
    folder = copy_catalog(tmp_path)
    supplier = "Tessaly Electronics"

    def offers(r: dict[str, str]) -> dict[str, str] | None:
        if r["mpn"] != sink:
            return r
        if r["supplier"] != supplier or r["min_qty"] not in ("1", "10"):
            return None
        return {**r, "unit_price": "15.06" if r["min_qty"] == "1" else f"{p10:.2f}", "stock": "1000", "moq": "1"}

    edit_csv(folder / "offers.csv", offers)
    cat = load_catalog(folder)
    assert sorted(cat.offers.loc[cat.offers["mpn"] == sink, "min_qty"].tolist()) == [1, 10]
    result = run(spec, cat, forced={"heatsink": sink})
    assert_sound(result)
    bought = [p for p in result.solution.purchases if p.line == sink]
    want = 10 if 10 * p10 < 8 * 15.06 else 8
    assert [(p.qty, p.min_qty) for p in bought] == [(want, 10 if want == 10 else 1)]
    assert_exact(result)


def test_infeasible_spec() -> None:
    # 200 W into 8 ohm needs a 56.6 V peak (sqrt(2 x 200 x 8)); +/-20..22 V rails cannot swing it.
    spec = parse_spec(
        """
name = "impossible"
[output]
power_w = 200.0
load_ohm = 8.0
[supply]
arrangement = "split"
v_min = 20.0
v_max = 22.0
"""
    )
    result = run(spec, load_catalog(CATALOG_DIR))
    assert result.status == "infeasible"
    assert not result.feasible


def test_equal_gain_pair_values_are_bought_for_both_roles(catalog) -> None:
    # Gain 2 (model s.9: 1 + Rf/Rg, so Rf = Rg): 14.14 V rms out of 25 W into 8 ohm
    # from a 7.07 V rms input. Both resistors are one line, used twice per channel:
    # 2 channels x 4 boards x 2 = 16 units must be ordered, not 8.
    spec = load_spec(ROOT / "examples" / "bench_2x25w_split.toml")
    spec = spec.model_copy(update={"output": spec.output.model_copy(update={"input_vrms": 7.07})})
    result = run(spec, catalog)
    assert_sound(result)
    rows = result.assembly.tables["gain_pair"].iloc[result.solution.choice["gain_pair"]]
    rf, rg = rows["values"]
    assert rf == rg
    line = next(line for line, _q, role in result.assembly.problem.groups["gain_pair"].usage[result.solution.choice["gain_pair"]]
                if role == "feedback_resistor")
    assert result.solution.need[line] == 16
    assert sum(p.qty for p in result.solution.purchases if p.line == line) >= 16
    assert_exact(result)


#: Variations of the shipped examples: (example, output, order, stage, thermal changes).
VARIED = [
    ("bench_2x25w_split", dict(power_w=15.0, channels=1), dict(boards=3, spares_pct=0.0), dict(bias_feed="resistor"), dict(shared_heatsink=True)),
    ("bench_2x25w_split", dict(power_w=8.5, input_vrms=0.5), dict(boards=22, spares_pct=5.0), dict(bias_feed="resistor"), dict()),
    ("module_60w_4ohm_reactive", dict(power_w=40.0), dict(boards=7, spares_pct=0.0), dict(), dict(shared_heatsink=True)),
    ("module_60w_4ohm_reactive", dict(power_w=35.0, input_vrms=7.07, channels=1), dict(boards=10, spares_pct=5.0), dict(bias_feed="resistor"), dict(ambient_c=25.0)),
    ("module_60w_4ohm_reactive", dict(power_w=44.0), dict(boards=24, spares_pct=5.0, objective="lines"), dict(bias_feed="resistor"), dict(ambient_c=50.0)),
    ("desk_2ch_12v_single", dict(power_w=1.5, input_vrms=2.0), dict(boards=4, spares_pct=10.0), dict(bias_feed="resistor"), dict()),
    # Fewest lines over 3,345 current-source configurations.
    ("bench_2x25w_split", dict(power_w=18.1, input_vrms=1.41, load_phase_deg=0.0, channels=1), dict(boards=2, spares_pct=0.0, objective="lines"),
     dict(bias_feed="current_source"), dict(ambient_c=25.0)),
]


@pytest.mark.parametrize("case", VARIED, ids=lambda c: f"{c[0]}-{c[1].get('power_w')}W")
def test_varied_examples_order_every_need_at_the_exact_optimum(catalog, case) -> None:
    # Each varied spec designs; every margin of the full check holds, the order
    # covers every line's need within stock, one break per supplier and line, and
    # the total is the exact optimum of its problem (brute force or component
    # search). Lines objective: the fewest lines of the exact search.
    name, output, order, stage, thermal = case
    spec = load_spec(ROOT / "examples" / f"{name}.toml")
    spec = spec.model_copy(update={
        "output": spec.output.model_copy(update=output), "order": spec.order.model_copy(update=order),
        "stage": spec.stage.model_copy(update=stage), "thermal": spec.thermal.model_copy(update=thermal),
    })
    result = run(spec, catalog)
    assert_sound(result)
    problem = result.assembly.problem
    if spec.order.objective == "cost":
        assert_exact(result)
    else:
        n = math.prod(len(g) for g in problem.groups.values())
        best = brute_force(problem, "lines") if n < BRUTE_FORCE_MAX else decomposed_optimum(problem, objective="lines")
        assert best is not None
        assert sum(1 for q in result.solution.need.values() if q > 0) == best.lines
