"""A re-solve with constraints added may take the cost bounds of the solve before it.

The check values come from brute force (every combination of options, priced
exactly; :func:`~tests.optimize.test_milp_exhaustive.brute_force`), an
independent route to the optimum.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partpick.optimize import prune
from partpick.optimize.milp import Coupling, Group, Offer, Problem, solve

from .test_milp_exhaustive import COST_TOL, brute_force, crowded_line_problem, problems


def _extra_rule(draw, problem: Problem) -> Problem:
    """The problem with one more coupling (over one or two groups) or one more no-good cut."""
    names = list(problem.groups)
    members = draw(st.lists(st.sampled_from(names), min_size=1, max_size=2, unique=True))
    if draw(st.booleans()):
        terms = {g: np.array(draw(st.lists(st.integers(-2, 2), min_size=len(problem.groups[g]), max_size=len(problem.groups[g]))), float)
                 for g in members}
        rule = Coupling("added", terms, draw(st.sampled_from(["<=", ">="])), float(draw(st.integers(-2, 2))))
        return replace(problem, couplings=problem.couplings + [rule])
    cut = {g: sorted(draw(st.sets(st.integers(0, len(problem.groups[g]) - 1), min_size=1))) for g in members}
    return replace(problem, forbidden=problem.forbidden + [cut])


@settings(max_examples=60, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(problems(), st.data())
def test_bounds_of_a_solve_bound_every_design_and_serve_a_stricter_problem(problem: Problem, data) -> None:
    first = solve(problem, "cbc")
    if first.status == "infeasible" and first.bounds is None:
        return  # no option left after the forced options and one-group couplings: nothing was bounded
    assert first.bounds is not None
    assert {g: len(b) for g, b in first.bounds.items()} == {g: len(grp) for g, grp in problem.groups.items()}
    # Each option's bound is at most the cheapest design holding it (brute force with the option forced).
    for g, b in first.bounds.items():
        for o in range(len(problem.groups[g])):
            if g in problem.forced and problem.forced[g] != o:
                continue
            held = brute_force(replace(problem, forced={**problem.forced, g: o}), "cost")
            if held is not None:
                assert b[o] <= held.cost + COST_TOL, (g, o)
    stricter = _extra_rule(data.draw, problem)
    exact = brute_force(stricter, "cost")
    again = solve(stricter, "cbc", bounds=first.bounds)
    if exact is None:
        assert again.status == "infeasible"
    else:
        assert again.status == "optimal"
        assert again.total == pytest.approx(exact.cost, abs=COST_TOL)


def test_a_re_solve_takes_the_bounds_it_is_given(monkeypatch) -> None:
    # Hand-worked: g0 has options on lines of 1.00, 2.00 and 3.00, g1 one of 1.00; one
    # supplier, no fee. The first solve rules out option a by a one-group coupling, so
    # a's bound is inf; b and c get 2.00 + 1.00 and 3.00 + 1.00 (no design holds them
    # for less). Without b (a second coupling) the re-solve reuses those bounds, does
    # not compute any, and finds c: 4.00.
    g0 = Group("g0", ["a", "b", "c"], [[("A", 1.0, "r")], [("B", 1.0, "r")], [("C", 1.0, "r")]])
    g1 = Group("g1", ["d"], [[("D", 1.0, "s")]])
    price = {"A": 1.0, "B": 2.0, "C": 3.0, "D": 1.0}
    offers = {line: [Offer("S", 1, v, 10, 1)] for line, v in price.items()}
    not_a = Coupling("not a", {"g0": np.array([1.0, 0.0, 0.0])}, "<=", 0.0)
    p = Problem({"g0": g0, "g1": g1}, [not_a], offers, {"S": 0.0}, 1.0)
    calls = []
    real = prune.design_bounds
    monkeypatch.setattr(prune, "design_bounds", lambda q: calls.append(1) or real(q))
    first = solve(p, "cbc")
    assert (first.total, first.choice) == (pytest.approx(3.0), {"g0": 1, "g1": 0})
    assert first.bounds["g0"].tolist() == [np.inf, pytest.approx(3.0), pytest.approx(4.0)]
    assert first.bounds["g1"].tolist() == [pytest.approx(3.0)]
    assert len(calls) == 1
    not_b = replace(p, couplings=[not_a, Coupling("not b", {"g0": np.array([0.0, 1.0, 0.0])}, "<=", 0.0)])
    again = solve(not_b, "cbc", bounds=first.bounds)
    assert (again.total, again.choice) == (pytest.approx(4.0), {"g0": 2, "g1": 0})
    assert len(calls) == 1
    assert brute_force(not_b).cost == pytest.approx(4.0)
    # The bounds handed back are the ones it used, in the whole problem's indices.
    assert again.bounds["g0"].tolist() == [np.inf, np.inf, pytest.approx(4.0)]


def test_rules_added_for_a_re_solve_are_taken_back_whatever_happens() -> None:
    from partpick.optimize.milp import rules_kept

    g0 = Group("g0", ["a", "b"], [[("A", 1.0, "r")], [("B", 1.0, "r")]])
    keep = Coupling("keep", {"g0": np.array([1.0, 1.0])}, ">=", 1.0)
    p = Problem({"g0": g0}, [keep], {}, {"S": 0.0}, 1.0, forced={"g0": 0}, forbidden=[{"g0": [1]}])
    lists = (p.couplings, p.forced, p.forbidden)
    with pytest.raises(RuntimeError), rules_kept(p):
        p.couplings.append(Coupling("added", {"g0": np.array([0.0, 1.0])}, "<=", 0.0))
        p.forced["g0"] = 1
        p.forbidden.append({"g0": [0]})
        raise RuntimeError("the solve failed")
    assert (p.couplings, p.forced, p.forbidden) == ([keep], {"g0": 0}, [{"g0": [1]}])
    assert all(a is b for a, b in zip((p.couplings, p.forced, p.forbidden), lists))  # restored in place


@settings(max_examples=60, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(problems(), st.data())
def test_a_start_design_leaves_the_answer_as_it_was(problem: Problem, data) -> None:
    # A start: the best design with one option forced (a design of the problem,
    # often dearer than its optimum). Solved from it, the problem gives the
    # brute force's optimum, and the very choice it gives without a start.
    exact = brute_force(problem, "cost")
    if exact is None:
        return
    g = data.draw(st.sampled_from(sorted(problem.groups)))
    o = data.draw(st.integers(0, len(problem.groups[g]) - 1))
    start = solve(replace(problem, forced={**problem.forced, g: o}), "cbc") if g not in problem.forced else solve(problem, "cbc")
    if start.status == "infeasible":
        return
    plain = solve(problem, "cbc")
    from_start = solve(problem, "cbc", bounds=plain.bounds, start=start)
    assert from_start.status == "optimal"
    assert from_start.total == pytest.approx(exact.cost, abs=COST_TOL)
    assert from_start.choice == plain.choice


def test_a_start_design_is_proven_in_one_solve(monkeypatch) -> None:
    # crowded_line_problem: without a start the first threshold (7) holds a
    # and c, which have no design; the model without prices says so (no full
    # solve), that set is not asked again as the threshold widens, and the
    # next threshold holds d: one full solve. From the start design (a, d) at
    # 303 the first threshold holds every option: one full solve, and nothing
    # asked without prices (a design is known).
    from partpick.optimize import milp

    p = crowded_line_problem()
    sizes: list[int] = []
    bare: list[tuple[int, bool]] = []
    real, real_bare = milp._solve_reduced, milp._any_design_model

    def spy(problem, keep, *a, **k):
        sizes.append(len(keep["g2"]))
        return real(problem, keep, *a, **k)

    def spy_bare(problem, *a, **k):
        found = real_bare(problem, *a, **k)
        bare.append((len(problem.groups["g2"]), found))
        return found

    monkeypatch.setattr(milp, "_solve_reduced", spy)
    monkeypatch.setattr(milp, "_any_design_model", spy_bare)
    plain = solve(p, "cbc")
    assert (plain.status, plain.choice, plain.total) == ("optimal", {"g1": 0, "g2": 1}, pytest.approx(303.0))
    assert sizes == [2]
    assert bare == [(1, False), (2, True)]
    sizes.clear()
    bare.clear()
    again = solve(p, "cbc", start=plain)
    assert (again.status, again.choice, again.total) == ("optimal", {"g1": 0, "g2": 1}, pytest.approx(303.0))
    assert sizes == [2]
    assert bare == []
