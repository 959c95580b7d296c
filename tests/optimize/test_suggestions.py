"""What would make an infeasible spec feasible: the searches against designs run in full."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from conftest import DEMO_CATALOG, ROOT
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partpick.catalog import load_catalog
from partpick.cli import main
from partpick.errors import SizeLimitError
from partpick.evaluate import stage
from partpick.optimize import explain
from partpick.optimize.design import run
from partpick.optimize import milp
from partpick.optimize.milp import Offer, Problem, has_design
from partpick.spec import load_spec

from .test_milp_exhaustive import brute_force, crowded_line_problem, problems

BENCH = ROOT / "examples" / "bench_2x25w_split.toml"


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(DEMO_CATALOG)


def _dearer(problem: Problem, k: float) -> Problem:
    """The problem with every price and fee k times as high: the same designs, cost bounds k times as far apart."""
    offers = {l: [replace(o, unit_price=o.unit_price * k) for o in offs] for l, offs in problem.line_offers.items()}
    return replace(problem, line_offers=offers, fees={s: f * k for s, f in problem.fees.items()})


@settings(max_examples=60, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(problems(repeat=True), st.sampled_from([1.0, 100.0]), st.sampled_from(["cost", "lines"]))
def test_has_design_exactly_when_one_exists(problem, k, objective) -> None:
    # Against the brute force (every choice, every order). At 100 x the prices
    # the first thresholds hold only some options, so the answer "none" needs
    # the last one.
    problem = replace(_dearer(problem, k), objective=objective)
    assert has_design(problem, "cbc") == (brute_force(problem, "cost") is not None)


def test_has_design_looks_among_the_cheap_options_first(monkeypatch) -> None:
    # crowded_line_problem: the first threshold (6 + 1) holds a and c alone
    # and has no design, so the search widens (each distinct set solved once)
    # until d comes in.
    p = crowded_line_problem()
    seen: list[int] = []
    real = milp._any_design_model

    def spy(sub, *a):
        seen.append(len(sub.groups["g2"]))
        return real(sub, *a)

    monkeypatch.setattr(milp, "_any_design_model", spy)
    assert has_design(p)
    assert seen == [1, 2]
    seen.clear()
    p.line_offers["D"] = [Offer("S", 1, 100.0, 2, 1)]  # 2 < 3 units: no design at all
    assert not has_design(p)
    assert seen == [1]  # d's bound is now inf: the only set is the whole problem's
    # A second seller of A with 3 in stock but an MOQ of 5 cannot sell any.
    p.line_offers["A"].append(Offer("T", 1, 1.0, 3, 5))
    p.fees["T"] = 0.0
    assert not has_design(p)
    p.line_offers["A"][-1] = Offer("T", 1, 1.0, 5, 5)  # 5 in stock: it sells 5, and 4 + 5 cover 6
    assert has_design(p)
    seen.clear()
    p.line_offers["D"] = [Offer("S", 1, 100.0, 50, 1)]
    p.line_offers["A"] = [Offer("S", 1, 1.0, 40, 20)]  # MOQ 20 with 40 in stock: 20 cover a and c
    assert has_design(p) and seen == [1]


def test_has_design_names_the_callers_time_limit(monkeypatch) -> None:
    # A solve that runs out of what was left of the budget says "neither
    # answer known" in the caller's terms: the whole limit, not the rest.
    from partpick.errors import SolverTimeout

    def out_of_time(sub, solver, left):
        raise SolverTimeout(left)

    monkeypatch.setattr(milp, "_any_design_model", out_of_time)
    with pytest.raises(SolverTimeout) as caught:
        has_design(crowded_line_problem(), time_limit=5.0)
    assert caught.value.time_limit == 5.0


def test_the_feasibility_check_agrees_with_full_designs(catalog) -> None:
    # The bench spec designs at 25 W and not at 30 W on the demo catalogue
    # (test_revise's sweep); around the edge and on other rails, the first design
    # found and the proven optimum say the same.
    spec = load_spec(BENCH)
    cases = [explain._with(spec, "output", power_w=p) for p in (20.0, 26.0, 26.2, 30.0)]
    cases += [explain._with(spec, "supply", v_min=v, v_max=v + 2.0) for v in (20.0, 24.5, 25.0)]
    answers = [explain._designs(s, catalog, ()) for s in cases]
    assert answers == [run(s, catalog).feasible for s in cases]
    assert True in answers and False in answers


def test_highest_feasible_power_against_a_fine_scan(catalog) -> None:
    # The search's answer designs, and a scan of full designs in 0.05 W steps
    # down from the asked 30 W finds its first design within the search's 1 %.
    spec = explain._with(load_spec(BENCH), "output", power_w=30.0)
    found = explain.max_feasible_power_w(spec, catalog, known_infeasible=True)
    assert found is not None and run(explain._with(spec, "output", power_w=found), catalog).feasible
    scan = next(p for p in np.arange(30.0, 20.0, -0.05) if run(explain._with(spec, "output", power_w=float(p)), catalog).feasible)
    assert found <= scan + 1e-9
    assert scan - found <= 0.01 * found + 0.05


def test_a_search_that_meets_the_size_limit_is_left_out_and_named(monkeypatch, catalog) -> None:
    spec = explain._with(load_spec(BENCH), "output", power_w=30.0)

    def too_many():
        raise SizeLimitError("too many configurations")

    monkeypatch.setattr(explain, "max_feasible_power_w", lambda *a, **k: too_many())
    notes: list[str] = []
    out = explain.suggestions(spec, catalog, (), notes)
    assert "highest_feasible_power_w" not in out
    assert out["lowest_feasible_rail_v"] == {"v_min": 25.0, "v_max": 27.0}
    assert notes == ["the highest feasible power was not searched: a trial design stopped at the size limit: too many configurations"]


def test_an_infeasible_spec_stays_exit_4_when_the_searches_meet_the_size_limit(monkeypatch, tmp_path, capsys) -> None:
    # With a limit of 50 stage configurations, the spec's own evaluation passes
    # (30 W: none is left) but the trial designs at lower powers and higher
    # rails stop at the limit: the answer is still "infeasible" (exit 4), with
    # those searches left out of the report and named as warnings.
    import json

    spec = tmp_path / "s30.toml"
    spec.write_text(BENCH.read_text().replace("power_w = 25.0", "power_w = 30.0"))
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 50)
    out = tmp_path / "r.json"
    code = main(["design", str(spec), "--catalog", str(DEMO_CATALOG), "--json", str(out)])
    err = capsys.readouterr()
    assert code == 4, err
    rep = json.loads(out.read_text(encoding="utf-8"))
    assert rep["status"] == "infeasible"
    skipped = [w for w in rep["warnings"] if "was not searched" in w]
    assert skipped and all("size limit" in w for w in skipped)
    assert not {"highest_feasible_power_w", "lowest_feasible_rail_v"} <= set(rep["suggestions"])


def test_a_trial_that_finds_nothing_in_time_leaves_its_search_out(catalog) -> None:
    # With a budget that is over before the first solve, no trial can say
    # whether it has a design: both searches are left out and named, never
    # answered with a guess.
    spec = explain._with(load_spec(BENCH), "output", power_w=30.0)
    notes: list[str] = []
    out = explain.suggestions(spec, catalog, (), notes, time_limit=1e-6)
    assert out == {}
    assert notes == [
        "the highest feasible power was not searched to the end: a trial design's search found nothing within the time limit of 1e-06 s",
        "the lowest feasible supply was not searched to the end: a trial design's search found nothing within the time limit of 1e-06 s",
    ]
    # With time enough, the same searches answer (26.022 W, 25 V: see the scan above).
    assert explain.suggestions(spec, catalog, (), [], time_limit=60.0)["lowest_feasible_rail_v"] == {"v_min": 25.0, "v_max": 27.0}
