"""What would make an infeasible spec feasible: the searches against designs run in full."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import DEMO_CATALOG, ROOT
from hypothesis import HealthCheck, given, settings

from partpick.catalog import load_catalog
from partpick.cli import main
from partpick.errors import SizeLimitError
from partpick.evaluate import stage
from partpick.optimize import explain
from partpick.optimize.design import run
from partpick.optimize.milp import check_choice, solve
from partpick.spec import load_spec

from .test_milp_exhaustive import assert_plan_valid, brute_force, problems

BENCH = ROOT / "examples" / "bench_2x25w_split.toml"


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(DEMO_CATALOG)


@settings(max_examples=60, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(problems())
def test_any_design_is_a_design_exactly_when_one_exists(problem) -> None:
    exact = brute_force(problem, "cost")
    sol = solve(problem, "cbc", any_design=True)
    if exact is None:
        assert sol.status == "infeasible"
    else:
        assert sol.status in ("optimal", "not proven optimal")
        assert not check_choice(problem, sol.choice)
        assert_plan_valid(problem, sol)


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
