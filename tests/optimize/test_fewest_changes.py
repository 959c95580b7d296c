"""Fewest changed roles first, then cost (a re-design against a previous report).

The check values come from brute force: every combination of options, its
changes counted and its order priced exactly (the pricer of
:mod:`tests.optimize.test_milp_exhaustive`), the least (changes, cost) kept.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partpick.optimize import milp, prune
from partpick.optimize.milp import Group, Offer, Problem, ceil_units, check_choice, line_need, solve

from .test_milp_exhaustive import COST_TOL, LinePricer, assert_plan_valid, order_cost, problems, rules_ok


def fewest_changes_brute_force(problem: Problem) -> tuple[float, float] | None:
    """(changes, cost) of the best design by enumeration; None when there is none."""
    names = list(problem.groups)
    pricer = LinePricer(problem)
    best = None
    for combo in itertools.product(*(range(len(problem.groups[g])) for g in names)):
        choice = dict(zip(names, combo))
        if not rules_ok(problem, choice) or check_choice(problem, choice):
            continue
        cost = order_cost(problem, {line: ceil_units(q) for line, q in line_need(problem, choice).items()}, pricer)
        if not math.isfinite(cost):
            continue
        changes = sum(float(problem.change_cost[g][choice[g]]) for g in problem.change_cost)
        if best is None or changes < best[0] or (changes == best[0] and cost < best[1] - 1e-9):
            best = (changes, cost)
    return best


@settings(max_examples=80, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(problems(), st.data())
def test_fewest_changes_then_cost_equals_brute_force(problem: Problem, data) -> None:
    # Change counts per option as a re-design draws them: 0 for the previous part, 1 or 2 otherwise.
    changes = {g: np.array(data.draw(st.lists(st.integers(0, 2), min_size=len(grp), max_size=len(grp))), float)
               for g, grp in problem.groups.items() if data.draw(st.booleans())}
    problem = replace(problem, change_cost=changes, change_weight=None)
    exact = fewest_changes_brute_force(problem)
    # The change bounds never exceed the changes of a design (every rule met) that holds the option.
    bound = prune.change_bounds(problem)
    names = list(problem.groups)
    for combo in itertools.product(*(range(len(problem.groups[g])) for g in names)):
        choice = dict(zip(names, combo))
        if rules_ok(problem, choice) and not check_choice(problem, choice):
            n = sum(float(problem.change_cost[g][choice[g]]) for g in problem.change_cost)
            assert all(bound[g][o] <= n + 1e-9 for g, o in choice.items())
    sol = solve(problem, "cbc")
    if exact is None:
        assert sol.status == "infeasible"
        return
    assert sol.status == "optimal"
    assert_plan_valid(problem, sol)
    assert sum(float(problem.change_cost[g][sol.choice[g]]) for g in problem.change_cost) == exact[0]
    assert sol.total == pytest.approx(exact[1], abs=COST_TOL)
    # The whole problem in one model (both goals, no levels, no pruning) keeps the same tie-break.
    assert solve(problem, "cbc", prune=False).choice == sol.choice


def test_each_level_is_solved_on_the_options_it_can_hold(monkeypatch) -> None:
    # Hand-worked. g0's previous part "a" (0 changes) has no stock; "b" and "c" are
    # one change each, "b" at 5.00 and "c" at 2.00; g1's only option is unchanged
    # (1.00). A design with 0 changes holds "a", which cannot be bought: level 0
    # (g0 = {a}) has no design. Level 1 holds every option; the best is "c":
    # 1 change, 3.00. Brute force agrees.
    g0 = Group("g0", ["a", "b", "c"], [[("A", 1.0, "r")], [("B", 1.0, "r")], [("C", 1.0, "r")]])
    g1 = Group("g1", ["d"], [[("D", 1.0, "s")]])
    offers = {"A": [Offer("S", 1, 1.0, 0, 1)], "B": [Offer("S", 1, 5.0, 10, 1)],
              "C": [Offer("S", 1, 2.0, 10, 1)], "D": [Offer("S", 1, 1.0, 10, 1)]}
    p = Problem({"g0": g0, "g1": g1}, [], offers, {"S": 0.0}, 1.0,
                change_cost={"g0": np.array([0.0, 1.0, 1.0]), "g1": np.array([0.0])})
    seen = []
    real = milp.solve_model
    monkeypatch.setattr(milp, "solve_model", lambda q, *a, **k: seen.append(len(q.groups["g0"])) or real(q, *a, **k))
    assert fewest_changes_brute_force(p) == (1.0, pytest.approx(3.0))
    sol = solve(p, "cbc")
    assert (sol.status, sol.choice, sol.total) == ("optimal", {"g0": 2, "g1": 0}, pytest.approx(3.0))
    # Level 0 holds "a" alone; level 1 all three (dominance only lets an option
    # earlier in the tie-break order drop a later one, and "c" comes after "b").
    assert seen == [1, 3]
    assert milp.objective_value(p, sol) == pytest.approx(3.0)  # no weight: changes are not priced


def test_a_design_with_no_changes_is_found_on_its_own_options(monkeypatch) -> None:
    # The previous parts are all still buyable: level 0 holds them alone and its
    # design is the answer, though "b" is cheaper (cost comes second).
    g0 = Group("g0", ["a", "b"], [[("A", 1.0, "r")], [("B", 1.0, "r")]])
    offers = {"A": [Offer("S", 1, 4.0, 10, 1)], "B": [Offer("S", 1, 1.0, 10, 1)]}
    p = Problem({"g0": g0}, [], offers, {"S": 0.0}, 1.0, change_cost={"g0": np.array([0.0, 1.0])})
    seen = []
    real = milp.solve_model
    monkeypatch.setattr(milp, "solve_model", lambda q, *a, **k: seen.append(len(q.groups["g0"])) or real(q, *a, **k))
    sol = solve(p, "cbc")
    assert (sol.choice, sol.total) == ({"g0": 0}, pytest.approx(4.0))
    assert seen == [1]
