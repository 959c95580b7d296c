"""Re-design after a part runs out, stock risk and sweeps, against fresh designs."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from partpick.catalog import load_catalog
from partpick.cli import main
from partpick.optimize.design import run
from partpick.optimize.revise import _holders, load_previous, redesign, stock_risk
from partpick.optimize.sweep import spec_at, sweep
from partpick.spec import load_spec

ROOT = Path(__file__).resolve().parents[2]
CATALOG = ROOT / "catalog"
BENCH = ROOT / "examples" / "bench_2x25w_split.toml"
MODULE = ROOT / "examples" / "module_60w_4ohm_reactive.toml"


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(CATALOG)


@pytest.fixture(scope="module")
def previous(tmp_path_factory):
    out = tmp_path_factory.mktemp("prev") / "r.json"
    assert main(["--quiet", "design", str(BENCH), "--catalog", str(CATALOG), "--json", str(out)]) == 0
    return out


def _by_role(rep_or_result) -> dict[str, list]:
    from partpick.report.build import build_report

    rep = build_report(rep_or_result) if not isinstance(rep_or_result, dict) else rep_or_result
    out: dict[str, list] = {}
    for p in rep["parts"]:
        out.setdefault(p["role"], []).append((p["mpn"], p["value"], p["package"], p["pinout"]))
    return {k: sorted(v, key=str) for k, v in out.items()}


def test_excluding_the_chosen_npn_changes_the_pair_and_little_else(catalog, previous):
    spec = load_spec(BENCH)
    prev_rep = json.loads(previous.read_text())
    old = _by_role(prev_rep)
    npn = old["output_npn"][0][0]
    rd = redesign(spec, catalog, load_previous(previous), exclude=(npn,))
    assert rd.result.feasible
    new = _by_role(rd.result)
    assert new["output_npn"][0][0] != npn
    assert new["output_pnp"][0][0] != old["output_pnp"][0][0]  # the complement follows
    changed = {c.role for c in rd.changes}
    assert {"output_npn", "output_pnp"} <= changed
    assert all(old.get(r) == new.get(r) for r in set(old) | set(new) if r not in changed)
    # Fewest changes: forcing back any other changed role to its previous part
    # cannot give a design with fewer changed roles (each such design is solved in full).
    for role in changed - {"output_npn", "output_pnp"}:
        mpn = old[role][0][0] if role in old else None
        if mpn is None or role not in ("heatsink", "driver_opamp", "bias_diode"):
            continue
        forced = run(spec, catalog, exclude=(npn,), forced={role: mpn})
        if forced.feasible:
            kept = _by_role(forced)
            n_forced = sum(1 for r in set(old) | set(kept) if old.get(r, [])[:1] and kept.get(r) != old.get(r)) + sum(1 for r in kept if r not in old)
            assert n_forced >= len(changed)


def test_keep_footprints_keeps_package_and_pinout(catalog, previous):
    spec = load_spec(BENCH)
    prev_rep = json.loads(previous.read_text())
    old = _by_role(prev_rep)
    npn = old["output_npn"][0][0]
    rd = redesign(spec, catalog, load_previous(previous), exclude=(npn,), keep_footprints=True)
    assert rd.result.feasible
    new = _by_role(rd.result)
    for role in ("output_npn", "output_pnp", "driver_opamp", "bias_diode", "bias_source_transistor"):
        if role in old and role not in rd.no_drop_in:
            assert [(p[2], p[3]) for p in new[role]] == [(p[2], p[3]) for p in old[role]], role


def test_risk_totals_equal_fresh_designs_with_the_part_excluded(catalog):
    spec = load_spec(MODULE)
    r = run(spec, catalog)
    risks = stock_risk(r)
    assert risks, "every design has non-passive lines"
    for risk in risks[:4]:
        fresh = run(spec, catalog, exclude=(risk.mpn,))
        if risk.total_without is None:
            assert not fresh.feasible
        else:
            assert fresh.feasible
            assert fresh.solution.total == pytest.approx(risk.total_without, abs=1e-6)
        stocked = {o.supplier for o in r.assembly.problem.line_offers[risk.mpn] if o.stock >= r.solution.need[risk.mpn]}
        assert set(risk.suppliers_with_stock) == stocked
        assert risk.single_source == (len(stocked) <= 1)


def test_risk_re_solves_start_from_designs_found_without_the_part(catalog, monkeypatch):
    # Each re-solve after the first may start from a design found before that
    # also does without its part; every row still equals a fresh design with
    # the part excluded (an independent route: evaluation and search again).
    from partpick.optimize import milp

    spec = load_spec(BENCH)
    r = run(spec, catalog)
    real = milp.solve
    starts = []

    def spy(problem, solver="cbc", time_limit=None, prune=True, bounds=None, start=None):
        starts.append(start)
        return real(problem, solver=solver, time_limit=time_limit, prune=prune, bounds=bounds, start=start)

    monkeypatch.setattr(milp, "solve", spy)
    risks = stock_risk(r)
    monkeypatch.setattr(milp, "solve", real)
    assert len(starts) == len(risks) and starts[0] is None
    assert any(s is not None for s in starts)
    holders = _holders(r)
    for risk, start in zip(risks, starts):
        if start is not None:  # a design of the problem without this part
            assert not any(start.choice[g] in holders[risk.mpn].get(g, ()) for g in start.choice)
        fresh = run(spec, catalog, exclude=(risk.mpn,))
        assert fresh.feasible == (risk.total_without is not None)
        if fresh.feasible:
            assert fresh.solution.total == pytest.approx(risk.total_without, abs=1e-6)


def test_sweep_points_equal_single_designs_and_infeasibility_matches_exit_4(catalog, tmp_path):
    spec = load_spec(BENCH)
    values = np.array([20.0, 25.0, 30.0])
    points = sweep(spec, catalog, "power", values)
    for p in points:
        single = run(spec_at(spec, "power", p.value), catalog)
        assert p.feasible == single.feasible
        if p.feasible:
            assert p.total == pytest.approx(round(single.solution.total, 2))
    assert [p.feasible for p in points] == [True, True, False]
    # `design` exits 4 exactly where the sweep stops marking points feasible.
    text = BENCH.read_text().replace("power_w = 25.0", "power_w = 30.0")
    f = tmp_path / "s30.toml"
    f.write_text(text)
    assert main(["--quiet", "design", str(f), "--catalog", str(CATALOG)]) == 4


def test_previous_report_errors_are_input_errors(tmp_path, capsys):
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    assert main(["design", str(BENCH), "--catalog", str(CATALOG), "--previous", str(bad)]) == 3
    assert "Traceback" not in capsys.readouterr().err
