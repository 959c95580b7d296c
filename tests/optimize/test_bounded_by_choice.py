"""With many current-source rows, ``design.run`` builds the stage table by cost bound although the whole would fit.

Checked against an independent route: the same spec designed from the whole
table (``run(..., whole=True)``, every configuration built). The desk example
at 1 W has 101,015 candidate current-source rows on the demo catalogue, past
:data:`~partpick.optimize.design.CHOICE_ROWS`, and a whole table of 69,703
rows; the other cases lower ``CHOICE_ROWS`` to take the route.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from conftest import DEMO_CATALOG, ROOT
from optimize.test_bounded_feeds import _bench

from partpick.catalog import load_catalog
from partpick.evaluate import stage
from partpick.evaluate.context import Targets, make_pool
from partpick.optimize import design
from partpick.optimize.design import BoundedSearch, design_without, option_sources, run
from partpick.optimize.explain import _with, alternatives, compare_feeds
from partpick.optimize.sweep import spec_at
from partpick.spec import load_spec

EXAMPLES = ROOT / "examples"


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(DEMO_CATALOG)


def _desk(power: float):
    return spec_at(load_spec(EXAMPLES / "desk_2ch_12v_single.toml"), "power", power)


CASES = {
    "desk 1 W auto": lambda: _desk(1.0),
    "bench 20 W auto": lambda: _bench(20.0),
    "bench 22 W current source": lambda: _bench(22.0, bias_feed="current_source"),
    "module current source": lambda: _with(load_spec(EXAMPLES / "module_60w_4ohm_reactive.toml"), "stage", bias_feed="current_source"),
}


def _low_choice(monkeypatch) -> None:
    monkeypatch.setattr(design, "CHOICE_ROWS", 1)


def _built_by_choice(result) -> bool:
    return isinstance(result.search, BoundedSearch) and result.search.fits and result.stage.cost_bound is not None


@pytest.mark.parametrize("name", sorted(CASES) + ["desk 1.5 W auto"])
def test_the_candidate_count_bounds_the_whole_tables_current_source_rows(name, catalog) -> None:
    spec = CASES[name]() if name in CASES else _desk(1.5)
    pool = make_pool(spec, catalog)
    targets = Targets.from_spec(spec)
    cores = stage.stage_cores(spec, pool, targets)
    whole = stage.evaluate_stage(spec, pool, targets, cores=cores)
    ccs = int((whole.configs["feed"] == "current_source").sum())
    resistor = int((whole.configs["feed"] == "resistor").sum())
    assert ccs > 0
    assert ccs <= stage.candidate_rows(spec, pool, cores)
    assert resistor <= len(cores.core)  # at most one resistor-fed row per core configuration
    fixed = _with(spec, "stage", bias_feed="resistor")
    assert stage.candidate_rows(fixed, make_pool(fixed, catalog), stage.stage_cores(fixed, pool, targets)) == 0


@pytest.mark.parametrize("name", sorted(CASES))
def test_the_route_by_choice_finds_the_whole_tables_optimum(name, catalog, monkeypatch) -> None:
    spec = CASES[name]()
    whole = run(spec, catalog, whole=True)
    assert whole.status == "ok" and whole.stage.cost_bound is None
    if name != "desk 1 W auto":
        assert not _built_by_choice(run(spec, catalog))  # too few candidate rows at the shipped CHOICE_ROWS
        _low_choice(monkeypatch)
    chosen = run(spec, catalog)
    assert chosen.status == "ok" and _built_by_choice(chosen)
    assert len(chosen.stage.configs) < len(whole.stage.configs)
    assert chosen.solution.total == pytest.approx(whole.solution.total, abs=1e-6)
    assert chosen.solution.total <= chosen.stage.cost_bound
    assert not chosen.check.failing()
    # Not past the size limit: no warning about it.
    assert not any("cost bound" in w or "one run holds" in w for w in chosen.warnings)
    assert compare_feeds(chosen, catalog) == compare_feeds(whole, catalog)


def test_the_shipped_threshold_takes_the_route_for_the_desk_example_at_1_w(catalog) -> None:
    result = run(_desk(1.0), catalog)
    assert _built_by_choice(result)
    assert len(result.stage.configs) < 69_703


def test_whole_forced_and_fewest_lines_build_the_whole_table(catalog, monkeypatch) -> None:
    _low_choice(monkeypatch)
    spec = CASES["bench 22 W current source"]()
    chosen = run(spec, catalog)
    assert _built_by_choice(chosen)
    npn = chosen.check.design["output_npn"] if "output_npn" in chosen.check.design else None
    assert run(spec, catalog, whole=True).stage.cost_bound is None
    assert run(spec, catalog, objective="lines").stage.cost_bound is None
    mpn = npn or next(src for src, _q, role in option_sources(chosen, "stage", chosen.solution.choice["stage"]) if role == "output_npn")
    forced = run(spec, catalog, forced={"output_npn": mpn})
    assert forced.stage.cost_bound is None and forced.solution.total == pytest.approx(chosen.solution.total, abs=1e-6)


def test_past_the_size_limit_the_route_is_the_bounded_one_with_its_warning(catalog, monkeypatch) -> None:
    _low_choice(monkeypatch)
    spec = CASES["bench 22 W current source"]()
    rows = len(run(spec, catalog, whole=True).stage.configs)
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", rows - 1)
    bounded = run(spec, catalog)
    assert isinstance(bounded.search, BoundedSearch) and not bounded.search.fits
    assert any("one run holds" in w for w in bounded.warnings)


def test_alternatives_rank_on_the_whole_table(catalog, monkeypatch) -> None:
    _low_choice(monkeypatch)
    spec = CASES["bench 20 W auto"]()
    alts = alternatives(spec, catalog, 3)
    assert len(alts) == 3 and all(a.status == "ok" for a in alts)
    assert all(a.stage.cost_bound is None for a in alts)
    totals = [a.solution.total for a in alts]
    assert totals == sorted(totals)


def test_the_design_command_asks_for_the_whole_table_for_alternatives_and_risk(catalog, monkeypatch, tmp_path, capsys) -> None:
    from partpick.cli import main

    seen: list[bool] = []
    real = design.run

    def spy(*args, **kwargs):
        seen.append(kwargs.get("whole", False))
        return real(*args, **kwargs)

    monkeypatch.setattr(design, "run", spy)
    spec = str(EXAMPLES / "bench_2x25w_split.toml")
    for extra, want in (([], False), (["--alternatives", "2"], True), (["--risk"], True)):
        seen.clear()
        assert main(["--no-color", "design", spec, "--catalog", str(DEMO_CATALOG), "--quiet", *extra]) == 0, capsys.readouterr().err
        assert seen and seen[0] is want, extra


def test_designing_on_without_a_part_stays_a_search_by_choice_and_is_exact(catalog, monkeypatch) -> None:
    _low_choice(monkeypatch)
    spec = CASES["bench 22 W current source"]()
    chosen = run(spec, catalog)
    families = set(chosen.pool.passives["family"])
    parts = sorted({src for g, o in chosen.solution.choice.items() for src, _q, _r in option_sources(chosen, g, o)} - families)
    assert len(parts) >= 5
    for src in parts[:3]:
        again = design_without(chosen, (src,))
        want = run(spec, catalog, exclude=(src,), whole=True)
        assert again.search.fits
        assert again.status == want.status == "ok"
        assert again.solution.total == pytest.approx(want.solution.total, abs=1e-6)


def test_a_design_by_choice_left_unproven_says_how_its_table_was_built(catalog, monkeypatch) -> None:
    _low_choice(monkeypatch)
    chosen = run(CASES["bench 22 W current source"](), catalog)
    design._unproven(chosen, "the time limit ran out before it was proven")
    assert chosen.status == "not proven optimal"
    assert chosen.warnings[-1].startswith("partpick builds the current-source stage configurations in order of their cost bound; "
                                          "this design comes from the ")


class _FakeClock:
    """A clock for the searches' deadlines (``milp._clock``): it moves only when told to."""

    def __init__(self) -> None:
        self.now = 0.0

    def __call__(self) -> float:
        return self.now


@pytest.mark.parametrize("past_limit", [False, True])
def test_a_bounded_searchs_time_limit_counts_its_bounds(past_limit, catalog, monkeypatch) -> None:
    """The relaxed table and its bounds are part of the search: a limit they use up leaves no round to run.

    The fake clock moves 100 s while the bounds are computed; under a 50 s
    limit the search then stops before its first table, naming the user's
    limit. Under 500 s it designs as usual.
    """
    from partpick.errors import SolverTimeout
    from partpick.optimize import milp

    spec = CASES["bench 22 W current source"]()
    want = run(spec, catalog, whole=True).solution.total
    _low_choice(monkeypatch)
    if past_limit:
        monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 1000)
    clock = _FakeClock()
    monkeypatch.setattr(milp, "_clock", clock)
    real = design.feed_bound

    def slow_bounds(*args, **kwargs):
        clock.now += 100.0
        return real(*args, **kwargs)

    monkeypatch.setattr(design, "feed_bound", slow_bounds)
    with pytest.raises(SolverTimeout) as info:
        run(spec, catalog, time_limit=50.0)
    assert info.value.time_limit == 50.0 and "50 s" in str(info.value)
    timed = run(spec, catalog, time_limit=500.0)
    assert timed.status == "ok" and timed.solution.total == pytest.approx(want, abs=1e-6)
    assert isinstance(timed.search, BoundedSearch) and timed.search.fits is not past_limit


def test_no_larger_table_is_built_with_less_time_left_than_it_would_take(catalog, monkeypatch) -> None:
    """A table there is no time to build and solve is not started: the design in hand comes back unproven.

    From a first table of few candidate rows (``CHOICE_FIRST_ROWS`` lowered
    to 1, the first threshold above the least bound), the 22 W
    current-source bench design takes two tables: the first holds a design
    above its threshold, the second proves the whole table's optimum. The
    fake clock moves 30 s at each assembly (the relaxed table's, then each
    table's) and 20 s at each table's solve, so the first round takes 50 s
    and ends at 80 s. The second round is expected to take as long per
    candidate row: 50 s times its candidate rows over the first's. A run
    without a limit gives both tables' thresholds; under that figure plus
    80 s, less 1 s, the search stops with one table built and its design
    marked not proven; under it plus 1 s, it builds the second table and
    the design is the whole table's optimum.
    """
    from partpick.optimize import milp

    spec = CASES["bench 22 W current source"]()
    want = run(spec, catalog, whole=True).solution.total
    _low_choice(monkeypatch)
    monkeypatch.setattr(design, "CHOICE_FIRST_ROWS", 1)
    clock = _FakeClock()
    monkeypatch.setattr(milp, "_clock", clock)
    real_assemble, real_finish, tables = design.assemble, design._forced_finish, []

    def slow_assembly(spec, pool, targets, stage, **kwargs):
        clock.now += 30.0
        if stage.cost_bound is not None:  # the relaxed table has none
            tables.append(stage.cost_bound)
        return real_assemble(spec, pool, targets, stage, **kwargs)

    def slow_solve(*args, **kwargs):
        clock.now += 20.0
        return real_finish(*args, **kwargs)

    monkeypatch.setattr(design, "assemble", slow_assembly)
    monkeypatch.setattr(design, "_forced_finish", slow_solve)
    untimed = run(spec, catalog)
    assert untimed.status == "ok" and len(tables) == 2
    counted = untimed.search.candidates
    first, second = (int(np.searchsorted(counted, t, side="right")) for t in tables)
    assert 1 <= first < second
    needed = 80.0 + 50.0 * second / first
    for limit, n_tables in ((needed - 1.0, 1), (needed + 1.0, 2)):
        tables.clear()
        clock.now = 0.0
        timed = run(spec, catalog, time_limit=limit)
        assert len(tables) == n_tables, limit
        if n_tables == 1:
            assert timed.status == "not proven optimal" and timed.solution.total > want + 1e-6
            assert timed.warnings[-1].endswith(f"less of the time limit ({limit:g} s) was left than the next, larger round "
                                               f"to prove it would take at the last round's pace, so it was not started")
        else:
            assert timed.status == "ok" and timed.solution.total == pytest.approx(want, abs=1e-6)


def test_a_round_that_times_out_names_the_users_limit(catalog, monkeypatch) -> None:
    """A solve in a round that finds no design by its share of the time: the error names the whole limit, not the share."""
    from partpick.errors import SolverTimeout

    _low_choice(monkeypatch)

    def out_of_time(result, forced, solver, left, start=None):
        raise SolverTimeout(left)

    monkeypatch.setattr(design, "_forced_finish", out_of_time)
    with pytest.raises(SolverTimeout) as info:
        run(CASES["bench 22 W current source"](), catalog, time_limit=321.0)
    assert info.value.time_limit == 321.0


@pytest.mark.parametrize("dearer", [False, True])
def test_a_round_left_unproven_by_the_time_limit_says_so_with_its_table(dearer, catalog, monkeypatch) -> None:
    """A round's solve that ends not proven (its share of the limit ran out) gives a design with its table and the limit named.

    As in the two-table case above (``CHOICE_FIRST_ROWS`` lowered to 1): the
    first round's design lies above its threshold; the second round's solve
    is made to end not proven. Its design is reported, unless it costs more
    than the first round's (made so here by 1 more in parts): then that one is.
    """
    _low_choice(monkeypatch)
    monkeypatch.setattr(design, "CHOICE_FIRST_ROWS", 1)
    real = design._forced_finish
    calls, statuses = [], []

    def second_unproven(result, forced, solver, left, start=None):
        out = real(result, forced, solver, left, start)
        calls.append(out)
        statuses.append(out.status)
        if len(calls) == 2:
            out.status = out.solution.status = "not proven optimal"
            if dearer:
                out.solution.parts_cost = calls[0].solution.total + 1.0
        return out

    monkeypatch.setattr(design, "_forced_finish", second_unproven)
    timed = run(CASES["bench 22 W current source"](), catalog, time_limit=321.0)
    assert statuses == ["ok", "ok"]  # as solved, before the second was marked
    assert timed is calls[0 if dearer else 1]
    assert timed.status == "not proven optimal" and timed.solution.status == "not proven optimal"
    assert timed.warnings[-1].startswith("partpick builds the current-source stage configurations in order of their cost bound; "
                                         f"this design comes from the {len(timed.stage.configs):,} whose cost bound is at or below ")
    assert timed.warnings[-1].endswith(", and the time limit (321 s) ran out before it was proven")


def test_the_funnel_counts_every_core_once_and_cores_without_any_design_have_none(catalog, monkeypatch) -> None:
    """The output stage's funnel after the core checks adds up to the core configurations; those it counts as having
    no design whatever their feed (an infinite bound) have none in the whole table either (each forced in turn)."""
    from partpick.optimize.milp import Coupling, rules_kept, solve

    _low_choice(monkeypatch)
    spec = CASES["bench 22 W current source"]()
    chosen = run(spec, catalog)
    assert _built_by_choice(chosen)
    funnel = chosen.stage.funnel
    n_cores = len(chosen.search.cores.core)
    after = ("bias feed (s.3)", stage.NO_DESIGN_ANY_FEED, stage.ABOVE_BOUND, "regulator heat (s.10)")
    built = chosen.stage.configs["core_i"].nunique()
    assert sum(funnel[k] for k in after) + built == n_cores
    hopeless = np.flatnonzero(~np.isfinite(chosen.search.bound.core_lb))
    assert funnel[stage.NO_DESIGN_ANY_FEED] > 0 and len(hopeless) >= funnel[stage.NO_DESIGN_ANY_FEED]
    whole = run(spec, catalog, whole=True)
    core_of = whole.assembly.tables["stage"]["core_i"].to_numpy()
    tried = 0
    for c in hopeless[:: max(1, len(hopeless) // 4)]:
        mask = (core_of == c).astype(float)
        if not mask.any():
            continue  # no feed serves it in the whole table
        with rules_kept(whole.assembly.problem) as problem:
            problem.couplings.append(Coupling("this core", {"stage": mask}, ">=", 1.0))
            assert solve(problem).status == "infeasible"
        tried += 1
    assert tried > 0


def test_no_design_by_choice_gives_the_whole_tables_reasons_without_a_second_solve(catalog, monkeypatch) -> None:
    """A search by choice returns no design only from a table holding every row, so the whole table is built to say
    why and is not solved again (no second solver run, no second ``--time-limit``).

    The search's answer is replaced by "no design" here; the run must then
    return the whole table (no cost bound), marked infeasible, with its
    reasons, and call the solver no more.
    """
    from partpick.optimize.design import infeasible_cause
    from partpick.optimize.milp import _infeasible

    _low_choice(monkeypatch)
    spec = CASES["bench 22 W current source"]()
    real = design._bounded_rounds
    seen = {}

    def none_found(*args, **kwargs):
        result = real(*args, **kwargs)
        seen["rows"] = len(result.stage.configs)
        return replace(result, solution=_infeasible("cbc"), status="infeasible", check=None)

    solves = []
    real_finish = design.finish

    def counted(*args, **kwargs):
        solves.append(1)
        return real_finish(*args, **kwargs)

    monkeypatch.setattr(design, "_bounded_rounds", none_found)
    monkeypatch.setattr(design, "finish", counted)
    result = run(spec, catalog, time_limit=30.0)
    rounds = len(solves)
    assert result.status == "infeasible" and result.stage.cost_bound is None
    assert len(result.stage.configs) > seen["rows"]  # the whole table, not the search's last one
    assert result.solution is not None and result.solution.status == "infeasible"
    assert result.assembly is not None and result.assembly.problem is not None
    assert any("no combination meets the couplings" in line for line in infeasible_cause(result))
    # The rounds solved their tables; nothing was solved after them.
    monkeypatch.setattr(design, "_bounded_rounds", real)
    solves.clear()
    run(spec, catalog, time_limit=30.0)
    assert rounds == len(solves) > 0
