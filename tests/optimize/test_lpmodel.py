"""The faster model file of :class:`partpick.optimize.lpmodel.Model` against PuLP's own writer.

The independent route is PuLP: the same model built as a plain
``pulp.LpProblem`` (or the same object handed to ``pulp.mps_lp.writeMPS``)
must give the same file byte for byte, the same column and row names, and
the same answer from the solver.
"""

from __future__ import annotations

import filecmp
import random

import numpy as np
import pulp
import pytest
from pulp import mps_lp

from partpick.optimize import milp
from partpick.optimize.lpmodel import Model
from partpick.optimize.milp import Group, Offer, Problem


def _twins(seed: int) -> tuple[Model, pulp.LpProblem]:
    """The same random model twice: as a Model and as a plain PuLP problem (every kind of bound, sense and row)."""
    pair = []
    for cls in (Model, pulp.LpProblem):
        r = random.Random(seed)
        m = cls("twin", pulp.LpMinimize)
        vs = []
        for i in range(r.randint(3, 25)):
            kind = r.choice(["bin", "int", "cont", "free", "fixed", "neg", "upper"])
            name = f"v{r.randint(0, 999):03d}_{i}"  # name order differs from creation order
            if kind == "bin":
                v = pulp.LpVariable(name, cat="Binary")
            elif kind == "int":
                v = pulp.LpVariable(name, lowBound=0, upBound=r.randint(1, 50), cat="Integer")
            elif kind == "cont":
                v = pulp.LpVariable(name, lowBound=0)
            elif kind == "free":
                v = pulp.LpVariable(name)
            elif kind == "fixed":
                v = pulp.LpVariable(name, lowBound=2.5, upBound=2.5)
            elif kind == "neg":
                v = pulp.LpVariable(name, lowBound=-r.randint(1, 9), upBound=r.randint(0, 9))
            else:
                v = pulp.LpVariable(name, upBound=r.uniform(1, 9))
            vs.append(v)
        for k in range(r.randint(1, 30)):
            terms = [(v, r.choice([1.0, -1.0, 0.5, r.uniform(-100, 100), 1e-7 * r.randint(1, 9)]))
                     for v in r.sample(vs, r.randint(1, len(vs)))]
            expr = pulp.LpAffineExpression(terms)
            rhs = r.choice([0, 1, r.uniform(-50, 50)])
            row = r.choice([expr <= rhs, expr >= rhs, expr == rhs])
            if r.random() < 0.5:
                m += row, f"row_{k}"
            else:
                m += row
        if r.random() < 0.8:
            m.setObjective(pulp.LpAffineExpression([(v, r.uniform(-5, 5)) for v in r.sample(vs, r.randint(1, len(vs)))]))
        else:
            m.setObjective(pulp.LpAffineExpression())  # PuLP adds its dummy column
        pair.append(m)
    return pair[0], pair[1]


@pytest.mark.parametrize("seed", range(40))
def test_model_file_is_pulps_byte_for_byte(seed, tmp_path) -> None:
    ours, plain = _twins(seed)
    got = ours.writeMPS(str(tmp_path / "ours.mps"), rename=1)
    want = plain.writeMPS(str(tmp_path / "pulp.mps"), rename=1)
    assert filecmp.cmp(tmp_path / "ours.mps", tmp_path / "pulp.mps", shallow=False)
    assert [v.name for v in got[0]] == [v.name for v in want[0]]
    assert got[1:] == want[1:]
    assert ours.normalisedNames() == plain.normalisedNames()
    assert sorted(ours.variablesDict()) == sorted(plain.variablesDict())
    # Written twice (a second solve of the same model; an empty objective keeps
    # PuLP's dummy column at 0 after the first): the same file as PuLP's again.
    ours.writeMPS(str(tmp_path / "ours2.mps"), rename=1)
    plain.writeMPS(str(tmp_path / "pulp2.mps"), rename=1)
    assert filecmp.cmp(tmp_path / "ours2.mps", tmp_path / "pulp2.mps", shallow=False)


@pytest.mark.parametrize("seed", range(12))
def test_model_solves_as_pulps(seed) -> None:
    ours, plain = _twins(seed)
    for m in (ours, plain):
        for v in m.variables():  # keep every random model bounded
            v.lowBound = -100 if v.lowBound is None else v.lowBound
            v.upBound = 100 if v.upBound is None else v.upBound
        m.solve(pulp.PULP_CBC_CMD(msg=False, options=["randomSeed 1"]))
    assert ours.status == plain.status
    if plain.status == pulp.LpStatusOptimal:
        assert pulp.value(ours.objective) == pytest.approx(pulp.value(plain.objective), abs=1e-6)
        assert {v.name: v.value() for v in ours.variables()} == pytest.approx({v.name: v.value() for v in plain.variables()}, abs=1e-6)


def test_the_design_model_file_is_pulps(monkeypatch, tmp_path) -> None:
    # The model solve_model builds (choice rows, links, purchases, a start design) and the one without prices.
    g1 = Group("g1", ["a", "b", "c"], [[("L", 2.0, "r")], [("M", 1.0, "r")], [("L", 1.0, "r"), ("M", 1.0, "s")]])
    g2 = Group("g2", ["d", "e"], [[("L", 1.0, "t")], [("N", 3.0, "t")]], parent="g1",
               compat=[np.array([0, 2]), np.array([0, 1])])
    offers = {
        "L": [Offer("S1", 1, 1.00, 100, 1), Offer("S1", 10, 0.70, 100, 1), Offer("S2", 1, 1.10, 5, 1)],
        "M": [Offer("S2", 1, 2.00, 100, 1), Offer("S3", 5, 1.50, 100, 5)],
        "N": [Offer("S3", 1, 0.30, 100, 1)],
    }
    p = Problem({"g1": g1, "g2": g2}, [], offers, {"S1": 4.0, "S2": 3.0, "S3": 5.0}, 2.0)
    models = []
    real_run = milp._run

    def keep(m, sol, name, first=None):
        models.append(m)
        return real_run(m, sol, name, first)

    monkeypatch.setattr(milp, "_run", keep)
    tie = milp.tie_weights(p)
    first = milp.solve_model(p, tie)
    milp.solve_model(p, tie, start=first)
    milp._any_design_model(p, "cbc", None)
    assert [type(m) for m in models] == [Model, Model, Model]
    for i, m in enumerate(models):
        ours, pulps = tmp_path / f"o{i}.mps", tmp_path / f"p{i}.mps"
        m.writeMPS(str(ours), rename=1)
        mps_lp.writeMPS(m, str(pulps), rename=1)
        assert filecmp.cmp(ours, pulps, shallow=False)


def test_a_row_changed_after_it_was_added_still_gives_pulps_file(tmp_path) -> None:
    # Hand-made: row r gains column c after it was added; the fast writer would
    # miss c, so it must hand over to PuLP's writer, which walks every row.
    files = []
    for cls in (Model, pulp.LpProblem):
        a, b, c = (pulp.LpVariable(n, lowBound=0, upBound=5, cat="Integer") for n in "abc")
        m = cls("changed", pulp.LpMinimize)
        row = pulp.LpAffineExpression([(a, 1.0), (b, 2.0)]) >= 3
        m += row, "r"
        m.setObjective(pulp.LpAffineExpression([(a, 1.0), (b, 1.0)]))
        row.expr.addterm(c, 4.0)
        path = tmp_path / f"{cls.__name__}.mps"
        got = m.writeMPS(str(path), rename=1)
        assert "c" in got[1]
        files.append(path)
    assert filecmp.cmp(*files, shallow=False)
    assert "X0000002  C0000000   4.000000000000e+00" in files[0].read_text()
