"""The exact reductions before the MILP (partpick.optimize.prune, .buying).

Independent routes: the brute force of ``test_milp_exhaustive`` (every
combination, exact pricing per supplier subset), the unpruned MILP, and the
test module's own line pricer (a dynamic programme written apart from
:func:`partpick.optimize.buying.cheapest_purchase`).
"""

from __future__ import annotations

import itertools
import math
import dataclasses
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from partpick.optimize import prune
from partpick.optimize.buying import cheapest_purchase, line_no_dearer, useful_breaks
from partpick.optimize.milp import (
    Coupling, Group, Offer, Problem, Purchase, ceil_units, check_choice, line_need, set_classes, solve, start_purchases, tie_weights,
)
from optimize.test_milp_exhaustive import (
    SETTINGS,
    LinePricer,
    brute_force,
    cheapest_line_cost,
    distinct_lines,
    problems,
    rules_ok,
    supplier_subsets,
)

COST_TOL = 1e-6


@settings(**SETTINGS)
@given(problems(), st.sampled_from(["cost", "lines"]), st.sampled_from(["cbc", "highs"]))
def test_pruned_and_unpruned_milp_agree_with_brute_force(problem: Problem, objective: str, solver: str) -> None:
    problem = replace(problem, objective=objective)
    exact = brute_force(problem)
    pruned, whole = solve(problem, solver), solve(problem, solver, prune=False)
    if exact is None:
        assert pruned.status == whole.status == "infeasible"
        return
    assert pruned.status == whole.status == "optimal"
    if objective == "cost":
        assert pruned.total == pytest.approx(exact.cost, abs=COST_TOL)
    else:
        # Fewest lines as the brute force; the cost within that is compared
        # route to route only (test_milp_exhaustive checks it against the brute force).
        assert distinct_lines(pruned) == distinct_lines(whole) == exact.lines
    assert pruned.total == pytest.approx(whole.total, abs=COST_TOL)
    # The reductions keep the tie-break: the very same choice.
    assert pruned.choice == whole.choice


@settings(**SETTINGS)
@given(problems(), st.sampled_from([0.5, 3.0]))
def test_pruning_with_weighted_changes_keeps_the_optimum(problem: Problem, weight: float) -> None:
    changes = {g: np.arange(len(grp), dtype=float) % 2 for g, grp in problem.groups.items()}
    problem = replace(problem, change_cost=changes, change_weight=weight)
    pruned, whole = solve(problem, "cbc"), solve(problem, "cbc", prune=False)
    assert pruned.status == whole.status
    if whole.status == "optimal":
        assert pruned.total == pytest.approx(whole.total, abs=COST_TOL)
        assert pruned.choice == whole.choice


@settings(**SETTINGS)
@given(problems())
def test_cost_bounds_never_exceed_a_design_holding_the_option(problem: Problem) -> None:
    """The parts-only bounds, the bounds with fee floors and the supplier-set bounds, against brute force."""
    parts, whole, by_set = prune.lower_bounds(problem), prune.design_bounds(problem), prune.supplier_set_bounds(problem).by_option
    for g, grp in problem.groups.items():
        for o in range(len(grp)):
            if g in problem.forced and problem.forced[g] != o:
                continue
            best = brute_force(replace(problem, forced={**problem.forced, g: o}), "cost")
            if best is not None:
                assert parts[g][o] <= whole[g][o] <= best.cost + 1e-9, (g, o)
                assert by_set[g][o] <= best.cost + 1e-9, (g, o)


@settings(**SETTINGS)
@given(problems(), st.floats(0.0, 1.5))
def test_supplier_set_bounds_under_a_threshold_keep_every_option_the_whole_keeps(problem: Problem, share: float) -> None:
    """With a threshold, the set bounds skip sets that cannot bring any option under it: same verdicts.

    Every option at or below the threshold keeps its figure; every option
    above it stays above it (its figure is a minimum over fewer sets).
    """
    whole = prune.supplier_set_bounds(problem).by_option
    finite = [float(b[np.isfinite(b)].max()) for b in whole.values() if np.isfinite(b).any()]
    threshold = share * max(finite, default=1.0)
    cut = prune.supplier_set_bounds(problem, threshold).by_option
    for g in whole:
        under = whole[g] <= threshold
        assert np.array_equal(cut[g] <= threshold, under), g
        assert np.allclose(cut[g][under], whole[g][under], rtol=0, atol=1e-9), g
        assert np.all(cut[g] >= whole[g] - 1e-9), g


def _least_fees_holding(problem: Problem, g: str, o: int) -> float:
    """Brute force: the least order fees over every feasible design holding option ``o`` of ``g``.

    A design's fees are those of the cheapest supplier set (by fees) that can
    buy all its needs (the exact line pricer over that set is finite).
    """
    pricer = LinePricer(problem)
    sets = sorted(supplier_subsets(problem), key=lambda y: sum(problem.fees[s] for s in y))
    names = list(problem.groups)
    least = math.inf
    for combo in itertools.product(*(range(len(problem.groups[h])) for h in names)):
        choice = dict(zip(names, combo))
        if choice[g] != o or not rules_ok(problem, choice) or check_choice(problem, choice):
            continue
        need = {line: ceil_units(q) for line, q in line_need(problem, choice).items() if ceil_units(q) > 0}
        for y in sets:
            if all(math.isfinite(pricer(line, q, y)) for line, q in need.items()):
                least = min(least, sum(problem.fees[s] for s in y))
                break
    return least


@settings(**SETTINGS)
@given(problems(), st.booleans())
def test_fee_floors_never_exceed_the_fees_of_a_design_holding_the_option(problem: Problem, fallback: bool) -> None:
    """Against brute force, for the subset enumeration and for the one-seller fallback."""
    floors = prune._fee_floors_one_seller(problem) if fallback else prune.fee_floors(problem)
    for g, grp in problem.groups.items():
        for o in range(len(grp)):
            assert floors[g][o] <= _least_fees_holding(problem, g, o) + 1e-9, (g, o)


def test_fee_floors_by_hand() -> None:
    """Option a0 sells only at S2 (fee 20); b0 at S0 (fee 3) or S1 (fee 5); b1 at S1 only."""
    a = Group("a", ["a0", "a1"], [[("LA0", 1.0, "r")], [("LB", 1.0, "r")]])
    b = Group("b", ["b0", "b1"], [[("LB", 1.0, "s")], [("LC", 1.0, "s")]])
    offers = {"LA0": [Offer("S2", 1, 0.1, 10, 1)], "LB": [Offer("S0", 1, 0.1, 10, 1), Offer("S1", 1, 0.1, 10, 1)],
              "LC": [Offer("S1", 1, 0.1, 10, 1), Offer("S0", 5, 0.1, 3, 1)]}  # LC at S0: the break exceeds its stock
    p = Problem({"a": a, "b": b}, [], offers, {"S0": 3.0, "S1": 5.0, "S2": 20.0}, 1.0)
    floors = prune.fee_floors(p)
    # a0 needs S2 and, for b, S0 or S1: 20 + 3; a1 with b0 at S0: 3.
    assert floors["a"].tolist() == [23.0, 3.0]
    # b0: S0 serves it and a1; b1 needs S1 (LC has no usable offer at S0): 5.
    assert floors["b"].tolist() == [3.0, 5.0]
    # The fallback: the largest, over the option's lines, of the line's cheapest
    # seller fee, and at least the least such figure of every other group.
    one = prune._fee_floors_one_seller(p)
    assert one["a"].tolist() == [20.0, 3.0] and one["b"].tolist() == [3.0, 5.0]


def test_supplier_set_bounds_by_hand(monkeypatch) -> None:
    """a0's line costs 10.00 at S1 (fee 1) or 1.00 at S2 (fee 10); b0's line 1.00 at either.

    Taken apart, the cheapest parts (1 + 1) and the cheapest fees (S1 alone, 1)
    bound a design with a0 at 3.00 only; per supplier set: S1 alone 1 + 10 + 1,
    S2 alone 10 + 1 + 1, both 11 + 1 + 1, so 12.00, the brute-force optimum.
    """
    a = Group("a", ["a0"], [[("LA", 1.0, "r")]])
    b = Group("b", ["b0"], [[("LB", 1.0, "s")]])
    offers = {"LA": [Offer("S1", 1, 10.0, 10, 1), Offer("S2", 1, 1.0, 10, 1)],
              "LB": [Offer("S1", 1, 1.0, 10, 1), Offer("S2", 1, 1.0, 10, 1)]}
    p = Problem({"a": a, "b": b}, [], offers, {"S1": 1.0, "S2": 10.0}, 1.0)
    assert prune.design_bounds(p)["a"].tolist() == [3.0]
    found = prune.supplier_set_bounds(p)
    assert found.by_option["a"].tolist() == [12.0]
    assert brute_force(p).cost == pytest.approx(12.0)
    # Per set: nothing can be bought from no supplier; S1 alone 12, S2 alone 12, both 13.
    assert dict(zip(found.sets, found.floor.tolist())) == {
        frozenset(): math.inf, frozenset({"S1"}): 12.0, frozenset({"S2"}): 12.0, frozenset({"S1", "S2"}): 13.0}
    # With a threshold of 12.5 the set of both (13) is not evaluated; a0 keeps 12.
    under = prune.supplier_set_bounds(p, 12.5)
    assert frozenset({"S1", "S2"}) not in under.sets and under.by_option["a"].tolist() == [12.0]
    # 2 options x 4 sets = 8 cells: within a cap of 8, none above a cap of 7 or one supplier.
    monkeypatch.setattr(prune, "SET_BOUNDS_MAX_CELLS", 8)
    assert prune.supplier_set_bounds(p) is not None
    monkeypatch.setattr(prune, "SET_BOUNDS_MAX_CELLS", 7)
    assert prune.supplier_set_bounds(p) is None
    monkeypatch.setattr(prune, "SET_BOUNDS_MAX_CELLS", 8)
    monkeypatch.setattr(prune, "FEE_SUBSETS_MAX_SUPPLIERS", 1)
    assert prune.supplier_set_bounds(p) is None


@settings(**SETTINGS)
@given(problems())
def test_dominated_options_are_in_no_optimal_design(problem: Problem) -> None:
    keep = prune.dominated(problem, tie_weights(problem))
    exact = brute_force(problem, "cost")
    for g, grp in problem.groups.items():
        assert set(keep[g].tolist()) <= set(range(len(grp)))
        if exact is not None:
            assert exact.choice[g] in keep[g] or _ties(problem, exact, g, keep[g])


def _ties(problem: Problem, exact, g: str, kept: np.ndarray) -> bool:
    """Whether a design with a kept option of ``g`` reaches the brute-force optimum too."""
    best = math.inf
    for o in kept:
        forced = replace(problem, forced={**problem.forced, g: int(o)})
        found = brute_force(forced, "cost")
        best = min(best, found.cost if found else math.inf)
    return best <= exact.cost + COST_TOL


@settings(**SETTINGS)
@given(
    st.lists(st.tuples(st.sampled_from(["S0", "S1"]), st.integers(1, 12), st.integers(5, 300), st.sampled_from([0, 3, 8, 40]), st.sampled_from([1, 5])), min_size=1, max_size=5),
    st.integers(1, 20),
)
def test_cheapest_purchase_matches_an_independent_pricer(rows, need: int) -> None:
    offers = [Offer(s, q, c / 100.0, stock, moq) for s, q, c, stock, moq in rows]
    expected = cheapest_line_cost(offers, need, frozenset({"S0", "S1"}))
    assert cheapest_purchase(offers, need) == pytest.approx(expected, abs=1e-9)


@settings(**SETTINGS)
@given(
    st.lists(st.tuples(st.sampled_from(["S0", "S1", "S2"]), st.sampled_from([1, 2, 5, 10, 25, 100]), st.integers(5, 300),
                       st.sampled_from([0, 3, 8, 40, 1000]), st.sampled_from([1, 5])), min_size=1, max_size=7),
    st.integers(1, 30),
)
def test_breaks_left_out_change_no_cheapest_purchase(rows, need_max: int) -> None:
    """For every need up to the largest and every set of suppliers, the kept breaks buy as cheaply as all of them
    (checked against the independent pricer, which tries every quantity of every break)."""
    offers = [Offer(s, q, c / 100.0, stock, moq) for s, q, c, stock, moq in rows]
    kept = [o for o, k in zip(offers, useful_breaks(offers, need_max)) if k]
    for allowed in (frozenset(c) for r in range(4) for c in itertools.combinations(["S0", "S1", "S2"], r)):
        for need in range(1, need_max + 1):
            assert cheapest_line_cost(kept, need, allowed) == pytest.approx(cheapest_line_cost(offers, need, allowed), abs=1e-9)


def test_useful_breaks_by_hand() -> None:
    # Hand-worked, need of at most 6 units: at S0, 6 x 1.00 = 6.00.
    offers = [
        Offer("S0", 1, 1.00, 500, 1),
        Offer("S0", 10, 0.50, 500, 1),  # 10 x 0.50 = 5.00 < 6.00: buying up to the break pays, kept
        Offer("S0", 100, 0.40, 500, 1),  # at least 40.00 > 6 x 1.00 at the 1-unit break: left out
        Offer("S0", 25, 0.30, 20, 1),  # 25 above its stock of 20: cannot be bought, left out
        Offer("S1", 100, 0.05, 500, 1),  # 5.00: another supplier's break is never compared, kept
        Offer("S1", 200, 0.03, 500, 1),  # 6.00 > 5.00 at S1's 100 break, both above the need: left out
        Offer("S2", 1, 0.90, 4, 1),  # stock 4 below the need: cannot stand in for S2's break below
        Offer("S2", 10, 0.60, 500, 1),  # 6.00 > 6 x 0.90, but only 4 units are held at 0.90: kept
        Offer("S3", 1, 1.00, 500, 1),  # even one unit costs more than S3's whole 10-unit break: left out
        Offer("S3", 10, 0.05, 500, 1),  # 0.50 covers any need up to 6: kept
    ]
    assert useful_breaks(offers, 6) == [True, True, False, False, True, False, True, True, False, True]
    # The sub-cent supplier preference counts: 10 x (0.50 + 0.01) = 5.10 against 6 x (0.85 + 0.01) = 5.16.
    close = [Offer("S0", 1, 0.85, 500, 1), Offer("S0", 10, 0.50, 500, 1)]
    assert useful_breaks(close, 6, {"S0": 0.01}) == [True, True]
    assert useful_breaks(close, 5, {"S0": 0.01}) == [True, False]  # 5 x 0.86 = 4.30 < 5.10


def test_a_start_on_a_break_left_out_moves_to_a_kept_one() -> None:
    # The model holds S0's 1- and 10-unit breaks of L (largest need 6); a start bought
    # 100 units at S0's 100 break: the cheapest kept way to its 6 useful units is
    # 10 x 0.50 = 5.00 (6 x 1.00 = 6.00 at the 1-unit break). Purchases on held breaks stay.
    held = [("L", Offer("S0", 1, 1.00, 500, 1), 6), ("L", Offer("S0", 10, 0.50, 500, 1), 6), ("M", Offer("S1", 1, 2.0, 50, 1), 3)]
    start = [Purchase("L", "S0", 100, 0.40, 100), Purchase("M", "S1", 1, 2.0, 3)]
    assert start_purchases(start, held) == {("L", "S0", 10): 10, ("M", "S1", 1): 3}
    # Only the 1-unit break held: the start buys its 6 useful units there.
    assert start_purchases(start[:1], held[:1]) == {("L", "S0", 1): 6}


def _two_option_problem(offers_b: list[Offer], coef_b: float) -> Problem:
    """One group, option a (key 'b-...', later in the order) and option b (key 'a-...'), each on its own line."""
    offers_a = [Offer("S0", 1, 1.00, 50, 1), Offer("S1", 10, 0.80, 50, 1)]
    grp = Group("g", ["b-option", "a-option"], [[("LA", 2.0, "r")], [("LB", 2.0, "r")]])
    other = Group("h", ["h0", "h1"], [[("LH", 1.0, "s")], [("LH", 1.0, "s")]])
    c = Coupling("need", {"g": np.array([1.0, coef_b]), "h": np.array([0.0, 1.0])}, ">=", 1.0)
    return Problem({"g": grp, "h": other}, [c], {"LA": offers_a, "LB": offers_b, "LH": [Offer("S0", 1, 0.1, 50, 1)]},
                   {"S0": 1.0, "S1": 2.0}, 3.0)


def test_an_option_no_dearer_anywhere_and_no_worse_dominates() -> None:
    p = _two_option_problem([Offer("S0", 1, 0.90, 50, 1), Offer("S1", 5, 0.80, 60, 1)], 1.0)
    keep = prune.dominated(p, tie_weights(p))
    assert keep["g"].tolist() == [1]  # option 0 (later key) is dominated by option 1
    assert solve(p).choice == solve(p, prune=False).choice == {"g": 1, "h": 0}


@pytest.mark.parametrize(
    "offers_b, coef_b",
    [
        ([Offer("S0", 1, 0.90, 50, 1)], 1.0),  # not offered by S1: dearer where S1 is the only good source
        ([Offer("S0", 1, 1.10, 50, 1), Offer("S1", 5, 0.50, 60, 1)], 1.0),  # dearer at S0
        ([Offer("S0", 1, 0.90, 2, 1), Offer("S1", 5, 0.50, 60, 1)], 1.0),  # S0 stock below the need of 6
        ([Offer("S0", 1, 0.90, 50, 1), Offer("S1", 5, 0.50, 60, 1)], 0.0),  # worse coupling coefficient
    ],
)
def test_no_dominance_when_one_respect_is_worse(offers_b: list[Offer], coef_b: float) -> None:
    p = _two_option_problem(offers_b, coef_b)
    assert prune.dominated(p, tie_weights(p))["g"].tolist() == [0, 1]


def test_line_no_dearer_by_hand() -> None:
    worse = [Offer("S0", 10, 0.5, 100, 1)]
    assert line_no_dearer([Offer("S0", 1, 0.5, 100, 1)], worse, 8)
    assert not line_no_dearer([Offer("S0", 20, 0.4, 100, 1)], worse, 8)  # larger smallest quantity
    assert not line_no_dearer([Offer("S1", 1, 0.1, 100, 1)], worse, 8)  # another supplier
    assert line_no_dearer([Offer("S0", 1, 0.5, 8, 1)], worse, 8)  # stock covers the need
    assert not line_no_dearer([Offer("S0", 1, 0.5, 7, 1)], worse, 8)


def test_restrict_renumbers_compat_cuts_and_forced() -> None:
    parent = Group("p", ["p0", "p1", "p2"], [[], [], []])
    child = Group("c", ["c0", "c1"], [[], []], parent="p", compat=[np.array([0, 2]), np.array([1])])
    p = Problem({"p": parent, "c": child}, [], {}, {"S": 0.0}, 1.0, forced={"c": 0},
                forbidden=[{"p": [1], "c": [0]}, {"p": [2], "c": [0]}])
    sub = prune.restrict(p, {"p": np.array([0, 2]), "c": np.array([0, 1])})
    assert [c.tolist() for c in sub.groups["c"].compat] == [[0, 1], []]
    assert sub.forbidden == [{"p": [1], "c": [0]}]  # the cut on dropped p1 can no longer bite
    assert sub.forced == {"c": 0}
    assert check_choice(sub, {"p": 1, "c": 0}) == []


@st.composite
def coupled_groups(draw) -> Problem:
    """Three groups of 1-4 options under 1-3 couplings of two or three groups each."""
    groups = {f"g{i}": Group(f"g{i}", [f"g{i}-{o}" for o in range(n)], [[] for _ in range(n)])
              for i, n in enumerate(draw(st.lists(st.integers(1, 4), min_size=3, max_size=3)))}
    couplings = []
    for ci in range(draw(st.integers(1, 3))):
        members = draw(st.lists(st.sampled_from(list(groups)), min_size=2, max_size=3, unique=True))
        terms = {g: np.array(draw(st.lists(st.integers(-3, 3), min_size=len(groups[g]), max_size=len(groups[g]))), float)
                 for g in members}
        couplings.append(Coupling(f"c{ci}", terms, draw(st.sampled_from(["<=", ">="])), float(draw(st.integers(-3, 3)))))
    return Problem(groups, couplings, {}, {"S": 0.0}, 1.0)


def _holds(c: Coupling, pick: dict[str, int]) -> bool:
    lhs = sum(v[pick[g]] for g, v in c.terms.items())
    return lhs <= c.rhs + 1e-9 if c.sense == "<=" else lhs >= c.rhs - 1e-9


@settings(**SETTINGS)
@given(coupled_groups())
def test_coupled_pairs_allow_exactly_the_pairs_each_coupling_can_meet(problem: Problem) -> None:
    import itertools

    names = list(problem.groups)
    sizes = [len(problem.groups[g]) for g in names]
    designs = [dict(zip(names, p)) for p in itertools.product(*(range(n) for n in sizes))]
    listed = set()
    for g, h, cls, allowed in prune.coupled_pairs(problem):
        listed.add(frozenset((g, h)))
        assert len(problem.groups[g]) >= len(problem.groups[h])
        for i in range(len(problem.groups[g])):
            for j in range(len(problem.groups[h])):
                # Independent route: each coupling holding both can be met by
                # some choice of the third group (enumerated, not bounded).
                each_ok = all(
                    any(_holds(c, d) for d in designs if d[g] == i and d[h] == j)
                    for c in problem.couplings if g in c.terms and h in c.terms
                )
                assert (j in allowed[cls[i]]) == each_ok, (g, i, h, j)
    # A pair left out is one where no combination is ruled out.
    for a, g in enumerate(names):
        for h in names[a + 1:]:
            if frozenset((g, h)) in listed:
                continue
            for d in designs:
                for c in problem.couplings:
                    if g in c.terms and h in c.terms:
                        assert any(_holds(c, e) for e in designs if e[g] == d[g] and e[h] == d[h])


def test_coupled_pairs_by_hand() -> None:
    # Stage needs swing: a[i] + b[j] + c[k] >= 5, with c at most 2, so a + b >= 3.
    a = Group("a", ["a0", "a1", "a2"], [[], [], []])
    b = Group("b", ["b0", "b1"], [[], []])
    c = Group("c", ["c0", "c1"], [[], []])
    need = Coupling("swing", {"a": np.array([0.0, 1.0, 3.0]), "b": np.array([1.0, 2.0]), "c": np.array([2.0, -1.0])}, ">=", 5.0)
    out = prune.coupled_pairs(Problem({"a": a, "b": b, "c": c}, [need], {}, {"S": 0.0}, 1.0))
    got = {(g, h): {(i, j) for i in range(3 if g == "a" else 2) for j in allowed[cls[i]]} for g, h, cls, allowed in out}
    # a0 (0) fits no b; a1 (1) needs b1 (2); a2 (3) fits both.
    assert got[("a", "b")] == {(1, 1), (2, 0), (2, 1)}
    # a + c >= 5 - 2 = 3: a0 with no c, a1 with c0 (1 + 2), a2 with c0 only (3 - 1 < 3).
    assert got[("a", "c")] == {(1, 0), (2, 0)}
    # b + c >= 5 - 3 = 2: b0 with c0 (1 + 2), b1 with c0 (2 + 2); c1 fits neither.
    assert got[("b", "c")] == {(0, 0), (1, 0)}


@settings(**SETTINGS)
@given(problems(), st.sampled_from([1.0, 1.04, 3.0]))
def test_array_needs_are_each_options_line_needs(problem: Problem, factor: float) -> None:
    """``_needs`` (arrays, used by the cost bounds) against an option-by-option dict of each use's rounded units."""
    problem = replace(problem, factor=factor)
    for g, grp in problem.groups.items():
        opt, ids, names, units = prune._needs(problem, g)
        assert np.all(np.diff(opt) >= 0)
        got: dict[int, dict[str, float]] = {}
        for o, i, q in zip(opt.tolist(), ids.tolist(), units.tolist()):
            assert names[i] not in got.setdefault(o, {})  # one row per option and line
            got[o][names[i]] = q
        for o, usage in enumerate(grp.usage):
            want: dict[str, float] = {}
            for line, per_board, _role in usage:
                want[line] = want.get(line, 0.0) + round(per_board * factor, 6)
            assert got.get(o, {}).keys() == want.keys()
            for line, q in want.items():
                assert got[o][line] == pytest.approx(q, rel=1e-12, abs=1e-12)


def test_array_needs_add_two_uses_of_one_line_by_hand() -> None:
    """An option using one line in two roles needs their sum; an option with no line has no row.

    With 4 boards and 4 % spares (factor 4.16): line A at 1 + 0.5 per board is
    4.16 + 2.08 = 6.24 units, B at 2 per board 8.32 units; the third option's
    B at 1 per board 4.16 units.
    """
    usage = [[("A", 1.0, "r1"), ("B", 2.0, "r1"), ("A", 0.5, "r2")], [], [("B", 1.0, "r1")]]
    problem = Problem(groups={"g": Group("g", ["a", "b", "c"], usage)}, couplings=[], line_offers={}, fees={}, factor=4.16)
    opt, ids, names, units = prune._needs(problem, "g")
    rows = sorted((o, names[i], q) for o, i, q in zip(opt.tolist(), ids.tolist(), units.tolist()))
    assert [(o, line) for o, line, _q in rows] == [(0, "A"), (0, "B"), (2, "B")]
    assert [q for *_k, q in rows] == pytest.approx([6.24, 8.32, 4.16], abs=1e-12)


@settings(**SETTINGS)
@given(problems(), st.sampled_from(["cbc", "highs"]))
@pytest.mark.parametrize("set_bounds", [True, False])
def test_the_start_design_steps_keep_the_optimum_and_its_tie_break(set_bounds: bool, problem: Problem, solver: str) -> None:
    """With the start-design steps on every threshold problem (no size floor), the loop still gives the brute force's optimum.

    With supplier-set bounds the step is the first design from the cheapest
    sets; without them (none at all here) it is the fee-free supplier step,
    on every threshold problem with a design in hand.
    """
    from partpick.optimize import milp

    exact = brute_force(problem)
    with pytest.MonkeyPatch.context() as m:
        m.setattr(milp, "FIRST_DESIGN_MIN_OPTIONS", 0)
        if not set_bounds:
            m.setattr(prune, "FEE_SUBSETS_MAX_SUPPLIERS", 0)
        pruned = solve(problem, solver)
    whole = solve(problem, solver, prune=False)
    if exact is None:
        assert pruned.status == "infeasible"
        return
    assert pruned.status == "optimal"
    assert pruned.total == pytest.approx(exact.cost, abs=COST_TOL)
    assert pruned.choice == whole.choice


def test_the_first_design_comes_from_the_cheapest_supplier_sets(monkeypatch) -> None:
    """The hand-worked problem of test_supplier_set_bounds_by_hand, plus a1 (50.00 at S1): S1 or S2 alone give 12.00.

    The bounds: a0 3 (parts 2, fees 1), a1 52. The loop's first threshold
    problem that holds a0 (threshold 14.39: 3 + 1 x 1.5^6; below it a0's set
    bound 12 leaves it out) gets its start design from the two cheapest sets
    (S1 alone and S2 alone, floors 12, before both at 13), and the warm solve
    proves 12.00.
    """
    from partpick.optimize import milp

    a = Group("a", ["a0", "a1"], [[("LA", 1.0, "r")], [("LX", 1.0, "r")]])
    b = Group("b", ["b0"], [[("LB", 1.0, "s")]])
    offers = {"LA": [Offer("S1", 1, 10.0, 10, 1), Offer("S2", 1, 1.0, 10, 1)],
              "LB": [Offer("S1", 1, 1.0, 10, 1), Offer("S2", 1, 1.0, 10, 1)], "LX": [Offer("S1", 1, 50.0, 10, 1)]}
    p = Problem({"a": a, "b": b}, [], offers, {"S1": 1.0, "S2": 10.0}, 1.0)
    assert prune.design_bounds(p)["a"].tolist() == [3.0, 52.0]
    tried, starts = [], []
    real_with, real_model = milp._with_suppliers, milp.solve_model

    def spy_with(problem, tie, solver, allowed, time_limit):
        tried.append(sorted(allowed))
        return real_with(problem, tie, solver, allowed, time_limit)

    def spy_model(problem, tie, solver="cbc", time_limit=None, start=None):
        starts.append(None if start is None else round(start.total, 6))
        return real_model(problem, tie, solver, time_limit, start=start)

    monkeypatch.setattr(milp, "FIRST_DESIGN_MIN_OPTIONS", 0)
    monkeypatch.setattr(milp, "_with_suppliers", spy_with)
    monkeypatch.setattr(milp, "solve_model", spy_model)
    sol = solve(p, "cbc")
    assert tried == [["S1"], ["S2"]]
    assert starts[-1] == 12.0  # the full solve starts from the design found
    assert sol.status == "optimal" and sol.total == pytest.approx(12.0)


def _fee_free_problem() -> Problem:
    """a0 needs LA (P only: 1.00, fee 5), a1 needs LB (F2 only, no fee: 0.50); b0 needs LC (P or F1, no fee: 1.00 each).

    Worked by hand: from P alone the only design is a0 + b0, 1.00 + 1.00 +
    5.00 fee = 7.00; with the fee-free F1 and F2 added, a1 + b0 costs 0.50 +
    1.00 = 1.50 and pays no fee (b0's LC bought from F1).
    """
    a = Group("a", ["a0", "a1"], [[("LA", 1.0, "r")], [("LB", 1.0, "r")]])
    b = Group("b", ["b0"], [[("LC", 1.0, "s")]])
    offers = {"LA": [Offer("P", 1, 1.0, 10, 1)], "LB": [Offer("F2", 1, 0.5, 10, 1)],
              "LC": [Offer("P", 1, 1.0, 10, 1), Offer("F1", 1, 1.0, 10, 1)]}
    return Problem({"a": a, "b": b}, [], offers, {"P": 5.0, "F1": 0.0, "F2": 0.0}, 1.0)


def test_free_sellers_add_every_fee_free_supplier_to_the_design_s_own_by_hand(monkeypatch) -> None:
    """From the 7.00 design bought at P, its suppliers plus F1 and F2 give the 1.50 design; each set is solved once."""
    from partpick.optimize import milp

    p = _fee_free_problem()
    tie = tie_weights(p)
    start = milp._with_suppliers(p, tie, "cbc", {"P"}, 10.0)
    assert start.total == pytest.approx(7.0) and start.suppliers_used == ["P"]
    tried_sets, starts = [], []
    real_with, real_model = milp._with_suppliers, milp.solve_model

    def spy_with(problem, tie, solver, allowed, time_limit, start=None):
        tried_sets.append(sorted(allowed))
        return real_with(problem, tie, solver, allowed, time_limit, start=start)

    def spy_model(problem, tie, solver="cbc", time_limit=None, start=None):
        starts.append(None if start is None else round(start.total, 6))
        return real_model(problem, tie, solver, time_limit, start=start)

    monkeypatch.setattr(milp, "_with_suppliers", spy_with)
    monkeypatch.setattr(milp, "solve_model", spy_model)
    keep = {g: np.arange(len(grp)) for g, grp in p.groups.items()}
    tried: set[frozenset[str]] = set()
    found = milp._free_sellers(p, keep, tie, "cbc", start, tried, None)
    assert tried_sets == [["F1", "F2", "P"]] and starts == [7.0]  # started from the design in hand
    assert found.total == pytest.approx(1.5) and found.fees_cost == 0.0
    assert found.choice == {"a": 1, "b": 0} and found.status == "not proven optimal"
    assert milp._free_sellers(p, keep, tie, "cbc", start, tried, None) is None  # that set was solved already
    assert found.suppliers_used == ["F1", "F2"]
    assert milp._free_sellers(p, keep, tie, "cbc", found, set(), None) is None  # every fee-free supplier is in already
    assert len(tried_sets) == 1  # neither of the last two calls solved anything


def test_free_sellers_keep_to_the_options_given_by_hand() -> None:
    """Without a1 among the options, adding F1 and F2 only moves LC's purchase: a0 + b0 from P still pays P's fee (7.00), no cheaper."""
    from partpick.optimize import milp

    p = _fee_free_problem()
    tie = tie_weights(p)
    start = milp._with_suppliers(p, tie, "cbc", {"P"}, 10.0)
    keep = {"a": np.array([0]), "b": np.array([0])}
    tried: set[frozenset[str]] = set()
    assert milp._free_sellers(p, keep, tie, "cbc", start, tried, None) is None
    assert tried == {frozenset({"P", "F1", "F2"})}  # solved, and nothing cheaper found


def test_fee_free_start_by_hand(monkeypatch) -> None:
    """_fee_free_problem with the fee-free F1 and F2 alone: a1 + b0 at 1.50, proven, so their set needs no later try.

    Past the size floor and the set-bound limit only (both lowered here: the
    problem has 3 options and 3 suppliers); a start no dearer is kept.
    """
    from partpick.optimize import milp

    p = _fee_free_problem()
    solved = []
    real = milp.solve

    def spy(problem, solver="cbc", time_limit=None, *a, **k):
        solved.append(sorted(problem.fees))
        return real(problem, solver, time_limit, *a, **k)

    monkeypatch.setattr(milp, "solve", spy)
    tried: set[frozenset[str]] = set()
    assert milp._fee_free_start(p, "cbc", None, None, tried) is None  # 3 suppliers: the set bounds cover them
    monkeypatch.setattr(prune, "FEE_SUBSETS_MAX_SUPPLIERS", 3)
    monkeypatch.setattr(milp, "FIRST_DESIGN_MIN_OPTIONS", 3)
    assert milp._fee_free_start(p, "cbc", None, None, tried) is None  # still: they enumerate 3
    monkeypatch.setattr(milp, "FIRST_DESIGN_MIN_OPTIONS", 4)
    monkeypatch.setattr(prune, "FEE_SUBSETS_MAX_SUPPLIERS", 2)
    assert milp._fee_free_start(p, "cbc", None, None, tried) is None  # 3 options, under the size floor of 4
    assert solved == [] and tried == set()
    monkeypatch.setattr(milp, "FIRST_DESIGN_MIN_OPTIONS", 3)
    found = milp._fee_free_start(p, "cbc", None, 60.0, tried)
    assert solved == [["F1", "F2"]]
    assert found.total == pytest.approx(1.5) and found.fees_cost == 0.0 and found.choice == {"a": 1, "b": 0}
    assert found.status == "not proven optimal" and found.bounds is None
    assert tried == {frozenset({"F1", "F2"})}
    dear = milp._with_suppliers(p, tie_weights(p), "cbc", {"P"}, 10.0)
    assert dear.total == pytest.approx(7.0)
    assert milp._fee_free_start(p, "cbc", dear, None, set()).total == pytest.approx(1.5)  # cheaper than the start
    assert milp._fee_free_start(p, "cbc", found, None, set()) is found  # no cheaper: the start stays
    every_free = replace(p, fees={s: 0.0 for s in p.fees})
    assert milp._fee_free_start(every_free, "cbc", None, None, set()) is None  # no fee to leave out
    assert len(solved) == 3
    whole = real(p, "cbc")
    assert whole.status == "optimal" and whole.total == pytest.approx(1.5)


@settings(**SETTINGS)
@given(problems(), st.data())
def test_fee_free_start_is_the_brute_force_optimum_with_the_fee_free_suppliers_alone(problem: Problem, data) -> None:
    """Without a start, the step's design is the brute force's optimum over the fee-free suppliers' offers (None: they hold no design).

    It meets every rule of the whole problem, and the fee-free set is
    marked as tried exactly when the step's solve proved its optimum.
    """
    from partpick.optimize import milp

    names = sorted(problem.fees)
    assume(len(names) >= 2)
    free = data.draw(st.sets(st.sampled_from(names), min_size=1, max_size=len(names) - 1))
    problem = replace(problem, fees={s: 0.0 if s in free else max(fee, 1.0) for s, fee in problem.fees.items()})
    narrow = replace(problem, line_offers={line: [o for o in offs if o.supplier in free] for line, offs in problem.line_offers.items()},
                     fees={s: 0.0 for s in free})
    exact = brute_force(narrow)
    tried: set[frozenset[str]] = set()
    with pytest.MonkeyPatch.context() as m:
        m.setattr(milp, "FIRST_DESIGN_MIN_OPTIONS", 0)
        m.setattr(prune, "FEE_SUBSETS_MAX_SUPPLIERS", 0)
        found = milp._fee_free_start(problem, "cbc", None, None, tried)
    if exact is None:
        assert found is None and tried == set()
        return
    assert found is not None and found.total == pytest.approx(exact.cost, abs=COST_TOL)
    assert set(found.suppliers_used) <= free and found.fees_cost == 0.0
    assert check_choice(problem, found.choice) == []
    assert tried == {frozenset(free)}


@settings(**SETTINGS)
@given(problems(), st.data())
def test_free_sellers_give_the_brute_force_optimum_over_the_design_s_and_the_fee_free_suppliers(problem: Problem, data) -> None:
    """A start bought from some suppliers with fees; the step's design is the brute force's optimum with those and the fee-free ones.

    None exactly when that optimum is no cheaper than the start (or no
    fee-free supplier is new); a design returned buys from those suppliers
    alone and meets every rule.
    """
    from partpick.optimize import milp

    names = sorted(problem.fees)
    assume(len(names) >= 2)
    free = data.draw(st.sets(st.sampled_from(names), min_size=1, max_size=len(names) - 1))
    problem = replace(problem, fees={s: 0.0 if s in free else max(fee, 1.0) for s, fee in problem.fees.items()})
    tie = tie_weights(problem)
    subset = data.draw(st.sets(st.sampled_from([s for s in names if s not in free]), min_size=1))
    start = milp._with_suppliers(problem, tie, "cbc", subset, 30.0)
    assume(start is not None)
    allowed = set(start.suppliers_used) | {s for s, fee in problem.fees.items() if fee == 0.0}
    narrow = replace(problem, line_offers={line: [o for o in offs if o.supplier in allowed] for line, offs in problem.line_offers.items()},
                     fees={s: fee for s, fee in problem.fees.items() if s in allowed})
    exact = brute_force(narrow)
    assert exact is not None and exact.cost <= start.total + COST_TOL  # the start is one of its designs
    keep = {g: np.arange(len(grp)) for g, grp in problem.groups.items()}
    found = milp._free_sellers(problem, keep, tie, "cbc", start, set(), None)
    if allowed == set(start.suppliers_used) or exact.cost > start.total - COST_TOL:
        if found is not None:  # equal cost, a better tie-break
            assert found.total == pytest.approx(start.total, abs=COST_TOL)
        else:
            assert allowed == set(start.suppliers_used) or exact.cost == pytest.approx(start.total, abs=COST_TOL)
        return
    assert found is not None and found.total == pytest.approx(exact.cost, abs=COST_TOL)
    assert set(found.suppliers_used) <= allowed and check_choice(problem, found.choice) == []
    assert found.status == "not proven optimal"


@settings(**SETTINGS)
@given(st.integers(0, 12), st.lists(st.tuples(st.integers(0, 11), st.integers(0, 199)), max_size=120))
def test_set_classes_group_rows_by_their_exact_member_sets(n_rows: int, pairs: list[tuple[int, int]]) -> None:
    """Rows share a class exactly when their member sets (frozensets, by hand) are equal; members past 62 included."""
    pairs = [(r, m) for r, m in pairs if r < n_rows]
    rows = np.array([r for r, _m in pairs], dtype=np.int64)
    members = np.array([m for _r, m in pairs], dtype=np.int64)
    classes = set_classes(rows, members, n_rows)
    sets = [frozenset(m for r, m in pairs if r == i) for i in range(n_rows)]
    assert len(classes) == n_rows
    for i in range(n_rows):
        for j in range(n_rows):
            assert (classes[i] == classes[j]) == (sets[i] == sets[j])


def test_set_classes_tell_apart_sets_that_differ_in_a_later_slice_of_62_by_hand() -> None:
    # Rows 0 and 1 agree on members 0-61 and differ at 70; row 2 equals row 0.
    rows = np.array([0, 0, 1, 1, 2, 2])
    members = np.array([3, 70, 3, 71, 70, 3])
    classes = set_classes(rows, members, 4)
    assert classes[0] == classes[2] and classes[0] != classes[1] and len(set(classes.tolist())) == 3


@settings(**SETTINGS)
@given(st.data(), st.integers(1, 9), st.integers(1, 6), st.integers(1, 3), st.booleans())
def test_links_minima_match_a_loop_over_the_compat_lists(data, n_parent: int, n_kid: int, width: int, classes: bool) -> None:
    """Least over children per parent and over parents per child, against plain loops (inf where none)."""
    compat = [np.array(sorted(data.draw(st.sets(st.integers(0, n_parent - 1), max_size=n_parent))), dtype=np.int64)
              for _ in range(n_kid)]
    parent = Group("p", [f"p{i}" for i in range(n_parent)], [[] for _ in range(n_parent)])
    child = Group("c", [f"c{i}" for i in range(n_kid)], [[] for _ in range(n_kid)], parent="p", compat=compat)
    problem = Problem({"p": parent, "c": child}, [], {}, {"S": 0.0}, 1.0)
    links = prune._Links.of(problem, "c", classes=classes)
    kid_value = np.array(data.draw(st.lists(st.lists(st.integers(0, 9), min_size=width, max_size=width), min_size=n_kid, max_size=n_kid)), float)
    parent_value = np.array(data.draw(st.lists(st.lists(st.integers(0, 9), min_size=width, max_size=width), min_size=n_parent, max_size=n_parent)), float)
    down = links.min_over_children(kid_value)
    up = links.min_over_parents(parent_value)
    for p in range(n_parent):
        suits = [k for k in range(n_kid) if p in compat[k].tolist()]
        want = kid_value[suits].min(axis=0) if suits else np.full(width, np.inf)
        assert np.array_equal(down[p], want)
    for k in range(n_kid):
        want = parent_value[compat[k]].min(axis=0) if len(compat[k]) else np.full(width, np.inf)
        assert np.array_equal(up[k], want)


@settings(**SETTINGS)
@given(problems(), st.integers(0, 2**10 - 1))
def test_seller_bits_hold_each_options_sorted_seller_masks(problem: Problem, salt: int) -> None:
    """The fee floors' per-option seller-mask sets against the per-option Python they replace."""
    import zlib

    sellers = {line: (zlib.crc32(line.encode()) ^ salt) & 0x3FF for line in problem.line_offers}
    for g, grp in problem.groups.items():
        opt, ids, names, _units = prune._needs(problem, g)
        masks, bits, key_of = prune._seller_bits(len(grp), opt, ids, names, sellers)
        keys = [tuple(masks[b].tolist()) for b in bits]
        assert len(set(keys)) == len(keys)
        for o, usage in enumerate(grp.usage):
            assert keys[key_of[o]] == tuple(sorted({sellers.get(line, 0) for line, _q, _r in usage}))


def _every_purchase(offers: list[Offer], need: int) -> float:
    """The cheapest purchase of ``need`` units by trying every plan: per supplier nothing, or one break and a quantity on it."""
    by_supplier: dict[str, list[tuple[int, float, int]]] = {}
    for off in offers:
        by_supplier.setdefault(off.supplier, []).append((max(off.min_qty, off.moq, 1), off.unit_price, off.stock))
    choices = [[(0, 0.0)] + [(q, q * p) for low, p, stock in rows for q in range(low, stock + 1)] for rows in by_supplier.values()]
    best = math.inf
    for plan in itertools.product(*choices):
        if sum(q for q, _c in plan) >= need:
            best = min(best, sum(c for _q, c in plan))
    return best


@settings(**SETTINGS)
@given(
    st.lists(st.tuples(st.sampled_from(["S0", "S1", "S2"]), st.integers(1, 8), st.integers(5, 300), st.integers(0, 4), st.sampled_from([1, 3])),
             min_size=1, max_size=5),
    st.integers(1, 6),
)
def test_cheapest_purchase_when_every_break_holds_the_need(rows, need: int) -> None:
    """Stock of every break at least the need: one purchase on one break is cheapest (the shortcut in
    cheapest_of_rows), checked against every plan of every supplier (independent enumeration)."""
    offers = [Offer(s, q, c / 100.0, max(q, moq, need) + extra, moq) for s, q, c, extra, moq in rows]
    assert cheapest_purchase(offers, need) == pytest.approx(_every_purchase(offers, need), abs=1e-9)


def test_cheapest_purchase_by_hand() -> None:
    # Hand-worked. Need 6; S0 sells from 1 at 1.00 (stock 50), S1 from 10 at 0.50 (stock 50):
    # 6 x 1.00 = 6.00 against 10 x 0.50 = 5.00, so one purchase of 10 at S1.
    offers = [Offer("S0", 1, 1.00, 50, 1), Offer("S1", 10, 0.50, 50, 1)]
    assert cheapest_purchase(offers, 6) == pytest.approx(5.00)
    # Need 12: 12 x 0.50 = 6.00 at S1 against 12.00 at S0.
    assert cheapest_purchase(offers, 12) == pytest.approx(6.00)
    # S1 holds only 8 of its break-10 offer: it cannot sell at all (10 > 8); 6 x 1.00 at S0.
    assert cheapest_purchase([Offer("S0", 1, 1.00, 50, 1), Offer("S1", 10, 0.50, 8, 1)], 6) == pytest.approx(6.00)
    # S0 holds 4 at 0.40, S1 any number at 1.00: a split, 4 x 0.40 + 2 x 1.00 = 3.60.
    assert cheapest_purchase([Offer("S0", 1, 0.40, 4, 1), Offer("S1", 1, 1.00, 50, 1)], 6) == pytest.approx(3.60)


def test_usable_offers_follow_a_list_changed_in_place() -> None:
    # usable() remembers its answer per offer list; a list changed since must not get the old answer.
    from partpick.optimize.buying import usable

    offers = [Offer("S0", 10, 0.50, 8, 1)]  # break 10 above its stock of 8: nothing can be bought
    assert usable(offers) == ()
    offers.append(Offer("S1", 1, 1.00, 50, 5))  # MOQ 5: smallest purchase 5
    assert usable(offers) == (("S1", 5, 1.00, 50),)
    offers[0] = Offer("S0", 10, 0.50, 80, 1)  # same length, the first offer replaced: now it sells
    assert usable(offers) == (("S0", 10, 0.50, 80), ("S1", 5, 1.00, 50))
    assert cheapest_purchase(offers, 6) == pytest.approx(5.00)  # 10 x 0.50 against 6 x 1.00
    offers.clear()
    assert usable(offers) == () and cheapest_purchase(offers, 6) == math.inf
    with pytest.raises(dataclasses.FrozenInstanceError):  # an offer cannot change under a remembered list
        Offer("S0", 1, 1.0, 5, 1).stock = 0


@settings(**SETTINGS)
@given(
    st.lists(st.tuples(st.sampled_from(["S0", "S1", "S2", "S3"]), st.sampled_from([1, 2, 5, 10, 25]), st.integers(5, 300),
                       st.sampled_from([0, 3, 8, 40, 1000]), st.sampled_from([1, 5])), min_size=1, max_size=7),
    st.integers(1, 30),
    st.booleans(),
)
def test_a_need_priced_for_every_supplier_set(rows, need: int, shared: bool) -> None:
    """The supplier-set bounds' price of one need, for each set of S0..S2 (S3 has no fee: never in a set),
    against the independent pricer on that set's offers (a shared line: its units at the set's least price)."""
    from partpick.optimize.buying import usable

    offers = [Offer(s, q, c / 100.0, stock, moq) for s, q, c, stock, moq in rows]
    suppliers = ("S0", "S1", "S2")
    got = prune._over_sets_of(usable(offers), suppliers, shared, float(need) if shared else need)
    for y in range(1 << len(suppliers)):
        allowed = frozenset(s for i, s in enumerate(suppliers) if (y >> i) & 1)
        if shared:
            prices = [o.unit_price for o in offers if o.supplier in allowed and max(o.min_qty, o.moq, 1) <= o.stock]
            expected = need * min(prices) if prices else math.inf
        else:
            expected = cheapest_line_cost(offers, need, allowed)
        assert got[y] == pytest.approx(expected, abs=1e-9), (y, allowed)


def test_with_parents_drops_children_whose_parents_are_all_left_out() -> None:
    # p has 3 options; c's options go with parents {0}, {1, 2}, {2}, {} ; d (child of c) with {0}, {1}, {3}.
    usage = lambda n: [[] for _ in range(n)]  # noqa: E731
    groups = {
        "p": Group("p", ["p0", "p1", "p2"], usage(3)),
        "c": Group("c", ["c0", "c1", "c2", "c3"], usage(4), "p", [np.array([0]), np.array([1, 2]), np.array([2]), np.array([], dtype=np.int64)]),
        "d": Group("d", ["d0", "d1", "d2"], usage(3), "c", [np.array([0]), np.array([1]), np.array([3])]),
    }
    problem = Problem(groups=groups, couplings=[], line_offers={}, fees={}, factor=1.0)
    every = {g: np.arange(len(grp)) for g, grp in problem.groups.items()}
    kept = prune.with_parents(problem, every)
    # c3 has no parent at all, so d2 (whose only parent is c3) goes too.
    assert {g: k.tolist() for g, k in kept.items()} == {"p": [0, 1, 2], "c": [0, 1, 2], "d": [0, 1]}
    # Without p2: c2 goes (its only parent), c1 stays (p1); without p0 too, c0 goes and so does d0.
    kept = prune.with_parents(problem, {**every, "p": np.array([1])})
    assert {g: k.tolist() for g, k in kept.items()} == {"p": [1], "c": [1], "d": [1]}


@settings(**SETTINGS)
@given(problems(), st.floats(0.2, 1.0))
def test_with_parents_keeps_every_design_of_the_restriction(problem: Problem, share: float) -> None:
    """The restriction to some options and to those with_parents keeps have the same optimum (brute force)."""
    keep = {g: np.arange(len(grp))[np.arange(len(grp)) < max(1, round(share * len(grp)))] for g, grp in problem.groups.items()}
    thinned = prune.with_parents(problem, keep)
    for g in keep:
        assert set(thinned[g].tolist()) <= set(keep[g].tolist())
    before = brute_force(prune.restrict(problem, keep), "cost")
    if not all(len(k) for k in thinned.values()):
        assert before is None
        return
    after = brute_force(prune.restrict(problem, thinned), "cost")
    assert (before is None) == (after is None)
    if before is not None:
        assert after.cost == pytest.approx(before.cost, abs=1e-9)
