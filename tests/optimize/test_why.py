"""`why`: the cost of forcing a part, against a fresh design with the part forced."""

from __future__ import annotations

import pytest
from conftest import DEMO_CATALOG, ROOT

from partpick.catalog import load_catalog
from partpick.optimize.design import run
from partpick.optimize.explain import _forced_total, why
from partpick.spec import load_spec

BENCH = ROOT / "examples" / "bench_2x25w_split.toml"


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(DEMO_CATALOG)


def test_forced_totals_equal_fresh_designs_with_the_part_forced(catalog) -> None:
    # The second route designs from scratch with `forced` (its own evaluation,
    # assembly and cost bounds); `why` re-solves the first design's problem.
    spec = load_spec(BENCH)
    best = run(spec, catalog)
    chosen = {src for g, o in best.solution.choice.items() for src, _q, _r in best.assembly.problem.groups[g].usage[o]}
    candidates = [m for frame in (catalog.transistors, catalog.opamps, catalog.heatsinks) for m in frame["mpn"] if m not in chosen]
    reached = 0
    for mpn in candidates:
        if reached == 5:
            break  # five forced designs compared are enough; the rest repeat the route
        answer = why(spec, catalog, mpn)
        if answer.optimum_total is None:
            continue  # rejected by its own checks: no forced design was searched
        fresh = run(spec, catalog, forced={answer.role: mpn})
        if answer.forced_total is None:
            assert not fresh.feasible, mpn
        else:
            reached += 1
            assert fresh.feasible, mpn
            assert answer.forced_total == pytest.approx(fresh.solution.total, abs=1e-6), mpn
            assert answer.forced_total >= answer.optimum_total - 1e-6
    assert reached == 5, "the demo catalogue has several parts that are feasible but not chosen"


def test_forcing_leaves_the_design_problem_as_it_was(catalog) -> None:
    spec = load_spec(BENCH)
    best = run(spec, catalog)
    problem = best.assembly.problem
    couplings, forced = list(problem.couplings), dict(problem.forced)
    tr = catalog.transistors
    npn = [m for m, pol in zip(tr["mpn"], tr["polarity"]) if pol == "npn"]
    totals = [_forced_total(best, "output_npn", m, "cbc") for m in npn]
    assert any(t is not None for t in totals)
    assert problem.couplings == couplings and problem.forced == forced


@pytest.mark.parametrize("alt_total, words", [(130.0, "costs +30.00 EUR more"), (75.5, "costs 24.50 EUR less")])
def test_the_feed_comparison_says_more_or_less(alt_total, words) -> None:
    """The other feed's design dearer or cheaper (a re-design puts fewest changes first) reads as such, never "-X more"."""
    from types import SimpleNamespace

    from partpick.optimize.explain import _feed_found

    result = SimpleNamespace(solution=SimpleNamespace(total=100.0), pool=SimpleNamespace(currency="EUR"))
    answer = _feed_found(result, "current_source", SimpleNamespace(total=alt_total, status="optimal"), None)
    assert answer["reason"] == f"the best current source design {words}"
    assert answer["extra_cost"] == pytest.approx(alt_total - 100.0)
