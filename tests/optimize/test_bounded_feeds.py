"""Past the stage size limit, the cost objective builds only the current-source feeds that can be in the cheapest design.

Checked against an independent route: the same spec designed from the whole
stage table (the size limit patched down only for the bounded run), and
each left-out row's bound against the MILP's optimum with that row forced.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import DEMO_CATALOG, ROOT

from partpick.catalog import load_catalog
from partpick.errors import SizeLimitError, SolverTimeout
from partpick.evaluate import stage
from partpick.evaluate.context import Targets, make_pool
from partpick.optimize import design
from partpick.optimize.design import design_without, forbid_parts, option_sources, prepare, proven_whole, run
from partpick.optimize.explain import _with, alternatives
from partpick.optimize.milp import rules_kept, solve
from partpick.optimize.problem import assemble, least_prices, offers_by_part
from partpick.optimize.revise import stock_risk
from partpick.optimize.sweep import spec_at
from partpick.spec import load_spec

EXAMPLES = ROOT / "examples"


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(DEMO_CATALOG)


def _bench(power: float, **stage_values):
    spec = spec_at(load_spec(EXAMPLES / "bench_2x25w_split.toml"), "power", power)
    return _with(spec, "stage", **stage_values) if stage_values else spec


CASES = {
    # auto feed, a resistor design found in the first round
    "bench 20 W auto": lambda: _bench(20.0),
    # auto feed, no resistor feed at all: the threshold grows through rounds without a design
    "bench 25 W auto": lambda: _bench(25.0),
    "bench 22 W current source": lambda: _bench(22.0, bias_feed="current_source"),
    "desk 1.5 W auto": lambda: spec_at(load_spec(EXAMPLES / "desk_2ch_12v_single.toml"), "power", 1.5),
    "module current source": lambda: _with(load_spec(EXAMPLES / "module_60w_4ohm_reactive.toml"), "stage", bias_feed="current_source"),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_the_bounded_route_finds_the_whole_tables_optimum(name, catalog, monkeypatch) -> None:
    spec = CASES[name]()
    whole = run(spec, catalog)
    assert whole.status == "ok" and whole.stage.cost_bound is None
    rows = len(whole.stage.configs)
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", rows - 1)
    with pytest.raises(SizeLimitError):
        prepare(spec, catalog)  # the whole table is now past the limit
    bounded = run(spec, catalog)
    assert bounded.status == "ok"
    assert bounded.stage.cost_bound is not None
    assert len(bounded.stage.configs) < rows
    assert bounded.solution.total == pytest.approx(whole.solution.total, abs=1e-6)
    assert bounded.solution.total <= bounded.stage.cost_bound
    assert not bounded.check.failing()
    assert any("whose cost bound is at or below" in w for w in bounded.warnings)
    assert bounded.stage.funnel[stage.ABOVE_BOUND] >= 0


def _row_bounds(spec, catalog):
    """The whole table and each row's bound as run_bounded bounds it (:func:`design.feed_bound`, then the FeedBound's row bound)."""
    pool = make_pool(spec, catalog)
    targets = Targets.from_spec(spec)
    cores = stage.stage_cores(spec, pool, targets)
    fb = design.feed_bound(spec, pool, targets, cores)
    whole = stage.evaluate_stage(spec, pool, targets, cores=cores)
    asm = assemble(spec, pool, targets, whole)
    ccs = (whole.configs["feed"] == "current_source").to_numpy()
    # The same rows bounded by their core alone plus the sources' parts (no heatsink or fees of their own).
    plain = stage.feed_row_bounds(spec, pool, targets, cores, stage.replace(fb, sinks=None), whole.configs)
    return asm, ccs, stage.feed_row_bounds(spec, pool, targets, cores, fb, whole.configs), plain


@pytest.mark.parametrize("name", ["bench 20 W auto", "bench 22 W current source"])
def test_a_rows_bound_is_below_every_design_holding_it(name, catalog) -> None:
    """The relaxation is a true lower bound: the cheapest design holding a row (the MILP with the row forced) never costs less.

    Checked at the whole table's optimum row and at the first rows, in bound
    order, that have a design (the tightest bounds mostly have none: their
    cheap parts miss a coupling), and at a spread of others.
    """
    asm, ccs, bound, plain = _row_bounds(CASES[name](), catalog)
    best = solve(asm.problem)
    assert bound[best.choice["stage"]] <= best.total + 1e-9
    rows = np.flatnonzero(ccs)
    # Rows whose own heatsink and fees raise the bound above their core's: the first of them in bound order too.
    raised = rows[bound[rows] > plain[rows] + 1e-9]
    raised = raised[np.argsort(bound[raised], kind="stable")]
    order = (list(rows[np.argsort(bound[rows], kind="stable")[:60]]) + list(np.random.default_rng(7).choice(rows, 6, replace=False))
             + list(raised[:40]))
    checked = checked_raised = 0
    is_raised = set(raised.tolist())
    for r in dict.fromkeys(order):
        if checked >= 10 and (checked_raised >= 5 or r not in is_raised):
            continue
        asm.problem.forced = {"stage": int(r)}
        sol = solve(asm.problem)
        if sol.status == "infeasible":
            continue
        assert sol.status == "optimal"
        assert sol.total >= bound[r] - 1e-9, (r, sol.total, bound[r])
        checked += 1
        checked_raised += bound[r] > plain[r] + 1e-9
    asm.problem.forced = {}
    assert checked >= 10 and checked_raised >= 5


@pytest.mark.parametrize("name", ["bench 22 W current source", "desk 1.5 W auto", "module current source"])
def test_a_bounded_table_holds_exactly_the_rows_whose_bound_is_under_its_threshold(name, catalog) -> None:
    """The rows :func:`stage.evaluate_stage` builds under a FeedBound are the whole table's rows at or under the threshold.

    Row by row against :func:`stage.feed_row_bounds` on the whole table, at
    three thresholds; and :func:`stage.candidate_bounds`, which chooses the
    thresholds by table size, counts at least the current-source rows built.
    Some rows on the heatsink get a dearer heatsink than their core alone
    would (the sources' heat and own limits), so the split bound is tighter
    than the core's bound plus the parts.
    """
    spec = CASES[name]()
    pool = make_pool(spec, catalog)
    targets = Targets.from_spec(spec)
    cores = stage.stage_cores(spec, pool, targets)
    fb = design.feed_bound(spec, pool, targets, cores)
    whole = stage.evaluate_stage(spec, pool, targets, cores=cores)
    bound = stage.feed_row_bounds(spec, pool, targets, cores, fb, whole.configs)
    ccs = (whole.configs["feed"] == "current_source").to_numpy()
    sink = (whole.configs["ccs_mount"] == "heatsink").to_numpy()
    assert sink.any() and (bound[sink] > fb.core_lb[whole.configs["core_i"].to_numpy(int)][sink] + 1e-9).any()
    counted = stage.candidate_bounds(spec, pool, targets, cores, fb)
    for q in (0.1, 0.3, 0.6):
        threshold = float(np.quantile(bound[ccs & np.isfinite(bound)], q))
        table = stage.evaluate_stage(spec, pool, targets, cores=cores, feed_bound=stage.replace(fb, threshold=threshold))
        expect = whole.configs["key"][~ccs | (bound <= threshold)]
        assert sorted(table.configs["key"]) == sorted(expect)
        assert int(np.searchsorted(counted, threshold, side="right")) >= int((table.configs["feed"] == "current_source").sum())


@pytest.mark.parametrize("limit", [2900, 200])
def test_stock_risk_and_alternatives_of_a_bounded_design_are_exact_or_say_not_proven(catalog, monkeypatch, limit) -> None:
    """The bench example at 20 W has 2,901 stage configurations: 2,900 lets every re-design fit, 200 does not.

    (Its bounded table has 180.)
    """
    spec = _bench(20.0)
    whole = run(spec, catalog)
    whole_risks = {r.mpn: r for r in stock_risk(whole)}
    whole_alts = [a.solution.total for a in alternatives(spec, catalog, 3, first=whole)]
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", limit)
    bounded = run(spec, catalog)
    assert bounded.status == "ok" and bounded.stage.cost_bound is not None
    assert proven_whole(bounded, bounded.solution) and proven_whole(whole, whole.solution)
    risks = stock_risk(bounded)
    assert [r.mpn for r in risks] == list(whole_risks)
    unproven = 0
    for r in risks:
        w = whole_risks[r.mpn]
        if "not proven" in (r.replacement or ""):
            unproven += 1
            assert r.total_without is None or r.total_without >= w.total_without - 1e-6
        else:
            assert r.total_without == pytest.approx(w.total_without, abs=1e-6)
    assert unproven == 0 if limit == 2900 else unproven > 0
    alts = alternatives(spec, catalog, 3, first=bounded)
    assert alts[0] is bounded and len(alts) == len(whole_alts)
    for a, w in zip(alts[1:], whole_alts[1:]):
        if a.status == "ok":
            assert a.solution.total == pytest.approx(w, abs=1e-6) and a.solution.total <= bounded.stage.cost_bound
        else:
            assert a.status == "not proven optimal" and a.solution.total > bounded.stage.cost_bound


@pytest.mark.parametrize("name, share", [("bench 20 W auto", 1.0), ("bench 22 W current source", 0.25)])
def test_designing_on_without_a_part_equals_excluding_it_from_the_whole_table(name, share, catalog, monkeypatch) -> None:
    """design_without (the bounded search continued, the part forbidden) against run(..., exclude=(part,)) on the whole table.

    Both of its starts: none (the threshold grows from the cost bound) and the
    design the bounded table itself has without the part. The size limit is
    ``share`` of the whole table (less one row); the first table is the
    least one (``FIRST_ROWS`` 1), so that some parts' re-designs lie beyond
    the bounded table's cost bound.
    """
    spec = CASES[name]()
    rows = len(run(spec, catalog).stage.configs)
    limit = int(share * rows) - 1
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", limit)
    monkeypatch.setattr(design, "FIRST_ROWS", 1)
    bounded = run(spec, catalog)
    assert bounded.search is not None and bounded.stage.cost_bound is not None
    families = set(bounded.pool.passives["family"])
    parts = sorted({src for g, o in bounded.solution.choice.items() for src, _q, _r in option_sources(bounded, g, o)} - families)
    assert len(parts) >= 5
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 10 * rows)
    expected = {src: run(spec, catalog, exclude=(src,)) for src in parts}
    assert all(e.stage.cost_bound is None for e in expected.values())
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", limit)
    problem = bounded.assembly.problem
    beyond = proven = 0
    for src in parts:
        with rules_kept(problem):
            forbid_parts(bounded.assembly, (src,))
            start = solve(problem)
        if proven_whole(bounded, start):
            continue
        beyond += 1
        for first in (None, start):
            again = design_without(bounded, (src,), start=first)
            want = expected[src]
            assert src not in {s for g, o in again.solution.choice.items() for s, _q, _r in option_sources(again, g, o)}
            assert not again.check.failing()
            if again.status == "not proven optimal":  # its tables passed the limit: never cheaper than the whole's
                assert again.solution.total >= want.solution.total - 1e-6
            else:
                assert again.status == want.status == "ok", (src, first is None)
                assert again.solution.total == pytest.approx(want.solution.total, abs=1e-6)
                proven += 1
    assert beyond > 0 and proven > 0  # the bounded table alone did not prove some: the search went on and proved them


@pytest.mark.parametrize("share", [0.75, 0.25])
def test_why_past_the_limit_gives_the_whole_tables_answer_or_says_not_known(share, catalog, monkeypatch) -> None:
    """``partpick why`` on a bounded table: the forced design proven there, or designed with the part forced (bounded).

    A part in no configuration of the bounded table is tried in each stage
    role with the part forced; where that passes the limit too, the answer
    says "not known" instead of a rejection that is not the whole story.
    """
    from partpick.optimize.design import usable_sources
    from partpick.optimize.explain import why

    spec = _bench(22.0, bias_feed="current_source")
    whole = run(spec, catalog)
    chosen = {src for g, o in whole.solution.choice.items() for src, _q, _r in option_sources(whole, g, o)}
    tr = catalog.transistors.set_index("mpn")
    usable = sorted(m for m in usable_sources(whole) - chosen if m in tr.index)
    assert len(usable) >= 6
    picks = usable[:: max(1, len(usable) // 6)][:6]
    expected = {m: why(spec, catalog, m) for m in picks}
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", int(share * len(whole.stage.configs)))
    monkeypatch.setattr(design, "FIRST_ROWS", 1)  # the least first table: some forced designs lie beyond its bound
    bounded = run(spec, catalog)
    assert bounded.stage.cost_bound is not None
    beyond = not_known = 0
    for m in picks:
        got, want = why(spec, catalog, m), expected[m]
        assert want.forced_total is not None and not want.chosen
        if "not known" in got.reason:
            not_known += 1
            assert got.forced_total is None
            continue
        assert (got.role, got.chosen) == (want.role, want.chosen), m
        assert got.forced_total == pytest.approx(want.forced_total, abs=1e-6), m
        beyond += want.forced_total > bounded.stage.cost_bound
    assert beyond > 0  # forced designs past the bounded table's cost bound, proven all the same
    assert not_known == 0 if share == 0.75 else not_known > 0


def test_the_bounded_route_is_for_the_cost_objective_alone(catalog, monkeypatch) -> None:
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 1000)
    with pytest.raises(SizeLimitError):
        run(_bench(20.0), catalog, objective="lines")


def test_a_relaxed_table_too_large_to_bound_keeps_the_size_limit_error(catalog, monkeypatch) -> None:
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 1000)
    monkeypatch.setattr(design, "RELAXED_ROWS_MAX", 10)
    with pytest.raises(SizeLimitError, match="more than 1,000 stage configurations"):
        run(_bench(20.0), catalog)


def test_a_search_past_the_untimed_size_goes_on_only_under_a_time_limit(catalog, monkeypatch) -> None:
    """Past UNTIMED_CELLS_MAX the size-limit error says a time limit lets it go on; with one, it designs as usual."""
    spec = _bench(20.0)
    whole = run(spec, catalog)
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 1000)
    monkeypatch.setattr(design, "UNTIMED_CELLS_MAX", 10)
    with pytest.raises(SizeLimitError, match=r"more than 1,000 stage configurations.*give a time limit \(--time-limit S\)"):
        run(spec, catalog)
    timed = run(spec, catalog, time_limit=600.0)
    assert timed.status == "ok" and timed.stage.cost_bound is not None
    assert timed.solution.total == pytest.approx(whole.solution.total, abs=1e-6)


def test_the_command_designs_past_the_limit_and_says_how(catalog, monkeypatch, tmp_path, capsys) -> None:
    import json

    from partpick.cli import main

    spec_file = tmp_path / "bench20.toml"
    spec_file.write_text((EXAMPLES / "bench_2x25w_split.toml").read_text(encoding="utf-8").replace("power_w = 25.0", "power_w = 20.0"), encoding="utf-8")
    from partpick.optimize.explain import compare_feeds

    whole = run(load_spec(spec_file), catalog)
    other_feed = compare_feeds(whole, catalog)
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 1000)  # the whole table has 2,901 rows
    report = tmp_path / "r.json"
    code = main(["--no-color", "design", str(spec_file), "--catalog", str(DEMO_CATALOG), "--json", str(report)])
    out = capsys.readouterr()
    assert code == 0, out.err
    assert "Traceback" not in out.out + out.err
    rep = json.loads(report.read_text(encoding="utf-8"))
    assert rep["totals"]["total"] == pytest.approx(round(whole.solution.total, 2))
    assert any("whose cost bound is at or below" in w for w in rep["warnings"])
    assert rep["design"]["bias_feed_alternative"] == other_feed  # the chosen feed is the resistor: the other one designed bounded
    assert "still the cheapest of the whole catalogue" in " ".join(out.out.split())


def _out_of_time(*_args, **_kwargs):
    """Every solve runs out of time before it finds a design."""
    raise SolverTimeout(600.0)


def test_a_search_past_the_limit_without_a_design_in_time_names_the_resistor_feed(catalog, monkeypatch, tmp_path,
                                                                                  capsys) -> None:
    """Out of time with no design: past the size limit with the automatic feed the message also names the resistor feed.

    Not when the whole table fits (more time is the whole answer), nor when
    the spec fixes the current-source feed (the resistor feed would be
    another design than the one asked for). The command says it in one line,
    exit 1, without a traceback.
    """
    from partpick.cli import main

    no_more = "the solver found no design within the time limit of 600 s; allow more time"
    monkeypatch.setattr(design, "_forced_finish", _out_of_time)
    with pytest.raises(SolverTimeout) as fits:
        run(_bench(20.0), catalog, time_limit=600.0)
    assert str(fits.value) == no_more
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 1000)  # the whole table has 2,901 rows
    with pytest.raises(SolverTimeout) as auto:
        run(_bench(20.0), catalog, time_limit=600.0)
    assert str(auto.value) == f"{no_more}, or {design.RESISTOR_HINT}"
    assert auto.value.time_limit == 600.0
    with pytest.raises(SolverTimeout) as fixed:
        run(_bench(22.0, bias_feed="current_source"), catalog, time_limit=600.0)
    assert str(fixed.value) == no_more
    spec_file = tmp_path / "bench20.toml"
    spec_file.write_text((EXAMPLES / "bench_2x25w_split.toml").read_text(encoding="utf-8").replace("power_w = 25.0", "power_w = 20.0"), encoding="utf-8")
    code = main(["--no-color", "design", str(spec_file), "--catalog", str(DEMO_CATALOG), "--time-limit", "600"])
    out = capsys.readouterr()
    assert code == 1
    assert "Traceback" not in out.out + out.err
    assert 'set bias_feed = "resistor" under [stage] in the spec' in " ".join(out.err.split())


def _tables(spec, catalog, core_lb_of, threshold):
    pool = make_pool(spec, catalog)
    targets = Targets.from_spec(spec)
    cores = stage.stage_cores(spec, pool, targets)
    whole = stage.evaluate_stage(spec, pool, targets, cores=cores)
    tr, dio = least_prices(offers_by_part(pool, pool.transistors["mpn"])), least_prices(offers_by_part(pool, pool.diodes["mpn"]))
    fb = stage.FeedBound(core_lb_of(len(cores.core)), threshold, tr, dio, 1.0)
    return whole, stage.evaluate_stage(spec, pool, targets, feed_bound=fb, cores=cores)


def test_a_threshold_above_every_bound_builds_the_whole_table(catalog) -> None:
    whole, bounded = _tables(_bench(20.0), catalog, np.zeros, 1e12)
    assert bounded.cut_cores == 0 and bounded.funnel[stage.ABOVE_BOUND] == 0
    assert list(bounded.configs["key"]) == list(whole.configs["key"])
    assert bounded.feed_options.equals(whole.feed_options)


def test_cores_without_any_design_are_left_out_but_not_counted_as_cut(catalog) -> None:
    """An infinite bound (no design even fed by nothing) builds no current source at any threshold."""
    whole, bounded = _tables(_bench(20.0), catalog, lambda n: np.full(n, np.inf), 1e12)
    assert bounded.cut_cores == 0
    assert (bounded.configs["feed"] == "resistor").all()
    assert len(bounded.configs) == int((whole.configs["feed"] == "resistor").sum())
    # Cores only a current source could feed: no design holds them, whatever the feed.
    assert bounded.funnel[stage.NO_DESIGN_ANY_FEED] > 0 and bounded.funnel[stage.ABOVE_BOUND] == 0
    assert bounded.funnel["bias feed (s.3)"] <= whole.funnel["bias feed (s.3)"]


@pytest.mark.parametrize("name, power", [("bench", 20.0), ("bench", 30.0), ("bench", 26.5), ("desk", 1.5)])
def test_any_design_on_bounded_tables_agrees_with_the_whole_table(name, power, catalog) -> None:
    from partpick.optimize.design import has_design_bounded

    base = load_spec(EXAMPLES / ("bench_2x25w_split.toml" if name == "bench" else "desk_2ch_12v_single.toml"))
    spec = spec_at(base, "power", power)
    assert has_design_bounded(spec, catalog) == run(spec, catalog).feasible


def test_feasibility_suggestions_past_the_limit_equal_the_whole_tables(catalog, monkeypatch) -> None:
    """The bench example at 30 W has no design; its trials at lower powers pass a limit of 1,000 configurations."""
    from partpick.optimize import explain

    spec = _bench(30.0)
    whole = explain.suggestions(spec, catalog, (), [])
    calls = []
    real = design.has_design_bounded
    monkeypatch.setattr(design, "has_design_bounded", lambda *a, **k: calls.append(a) or real(*a, **k))
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 1000)
    notes: list[str] = []
    assert explain.suggestions(spec, catalog, (), notes) == whole
    assert notes == [] and calls
    assert whole["highest_feasible_power_w"] < 30.0
