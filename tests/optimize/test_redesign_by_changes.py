"""Re-design (``--previous``) on tables built by changed roles, against the whole table, and past the stage size limit.

The independent route is the same re-design on the whole stage table
(``by_changes=False``, the size limit patched down only for the other
run): the same total and the same changed roles, part for part; and each
row's bound against the change count the whole table gives it.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import DEMO_CATALOG, ROOT

from partpick.catalog import load_catalog
from partpick.cli import main
from partpick.errors import SizeLimitError
from partpick.evaluate import stage
from partpick.optimize.design import changed_roles, prepare, proven_whole, run
from partpick.optimize.explain import _with, compare_feeds
from partpick.optimize.revise import load_previous, redesign, stock_risk
from partpick.optimize.sweep import spec_at
from partpick.report.build import build_report
from partpick.spec import load_spec


CASES = {
    # auto feed: the resistor feed designs, the current sources multiply the table
    "bench 20 W auto": lambda: spec_at(load_spec(ROOT / "examples" / "bench_2x25w_split.toml"), "power", 20.0),
    "bench 22 W current source": lambda: _with(spec_at(load_spec(ROOT / "examples" / "bench_2x25w_split.toml"), "power", 22.0),
                                               "stage", bias_feed="current_source"),
}


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(DEMO_CATALOG)


def _previous(spec, catalog, tmp_path):
    first = run(spec, catalog)
    assert first.status == "ok" and first.stage.cost_bound is None
    path = tmp_path / "previous.json"
    path.write_text(json.dumps(build_report(first)), encoding="utf-8")
    return first, load_previous(path)


def _changes(rd) -> list[tuple[str, str, str]]:
    return [(c.role, c.previous, c.new) for c in rd.changes]


@pytest.mark.parametrize("name, share", [("bench 20 W auto", None), ("bench 20 W auto", 0.5), ("bench 22 W current source", 0.25)])
def test_a_redesign_by_changed_roles_equals_the_whole_tables(name, share, catalog, monkeypatch, tmp_path) -> None:
    """Each chosen non-passive part excluded in turn; ``share``: the size limit as a share of the whole table (None: as shipped)."""
    spec = CASES[name]()
    first, previous = _previous(spec, catalog, tmp_path)
    rows = len(first.stage.configs)
    families = set(catalog.passives["family"])
    parts = sorted({m for v in previous.parts.values() for m, _v in v} - families)
    assert len(parts) >= 5
    whole = {x: redesign(spec, catalog, previous, exclude=(x,), by_changes=False) for x in parts}
    if share is not None:
        monkeypatch.setattr(stage, "STAGE_ROWS_MAX", int(share * rows) - 1)
        with pytest.raises(SizeLimitError):
            prepare(spec, catalog)
    levels = set()
    for x in parts:
        w, b = whole[x].result, redesign(spec, catalog, previous, exclude=(x,))
        assert w.stage.change_bound is None and b.result.stage.change_bound is not None
        assert b.result.status == w.status == "ok", x
        assert len(b.result.stage.configs) < len(w.stage.configs)
        assert b.result.solution.total == pytest.approx(w.solution.total, abs=1e-6), x
        assert _changes(b) == _changes(whole[x]), x
        assert changed_roles(b.result.assembly.problem, b.result.solution) <= b.result.stage.change_bound
        assert not b.result.check.failing()
        levels.add(b.result.stage.change_bound)
    assert len(levels) > 1  # some designs were proven at a higher level than the first


@pytest.mark.parametrize("name", sorted(CASES))
def test_a_rows_change_bound_is_its_own_changed_roles(name, catalog, tmp_path) -> None:
    """ChangeBound against the stage group's change counts of the whole table's re-design.

    Without a regulator, a stage row's roles are the output pair and, fed by
    current sources, the source pair and reference: the bound counts them
    all, so it equals the row's count exactly (an overestimate would leave
    rows out of the tables that must hold them; an underestimate only
    builds more).
    """
    from types import SimpleNamespace

    from partpick.optimize.revise import _change_bound

    spec = CASES[name]()
    first, previous = _previous(spec, catalog, tmp_path)
    seen: set[float] = set()
    for excluded in ((), (previous.parts["output_npn"][0][0],)):
        rd = redesign(spec, catalog, previous, exclude=excluded, by_changes=False).result
        assert rd.stage.change_bound is None
        k = rd.assembly.tables["stage"]
        assert not k["rail_i"].map(lambda r: bool(rd.stage.rails.iloc[r]["regulated"])).any()
        cores = stage.stage_cores(spec, rd.pool, rd.targets)
        bound = _change_bound(previous, rd.pool, cores)
        ccs = k["feed"].to_numpy() == "current_source"
        assert ccs.any()
        row_bound = np.array([
            bound.row_bound(SimpleNamespace(npn_i=int(r.ccs_n_i), pnp_i=int(r.ccs_p_i)), int(r.ref_i), int(r.ref_per_source), 1)[int(r.core_i)]
            for r in k[ccs].itertuples(index=False)
        ])
        own = rd.assembly.problem.change_cost["stage"][ccs]
        assert np.array_equal(row_bound, own)
        seen |= set(own.tolist())
    assert len(seen) >= 2  # rows with different counts


def test_nothing_excluded_keeps_every_part_with_no_change_counted(catalog, tmp_path) -> None:
    """A role two groups fill (the decoupling capacitors) counts no change when both keep their parts."""
    spec = CASES["bench 20 W auto"]()
    first, previous = _previous(spec, catalog, tmp_path)
    for by_changes in (True, False):
        rd = redesign(spec, catalog, previous, by_changes=by_changes)
        assert rd.changes == []
        assert rd.result.solution.total == pytest.approx(first.solution.total, abs=1e-6)
        assert changed_roles(rd.result.assembly.problem, rd.result.solution) == 0
        assert (rd.result.stage.change_bound == 0) == by_changes


def test_no_output_pair_left_is_infeasible_both_ways(catalog, tmp_path) -> None:
    """Every transistor excluded: no core configuration at all (the stage table is empty)."""
    spec = CASES["bench 20 W auto"]()
    _first, previous = _previous(spec, catalog, tmp_path)
    every = tuple(catalog.transistors["mpn"])
    for by_changes in (True, False):
        rd = redesign(spec, catalog, previous, exclude=every, by_changes=by_changes)
        assert rd.result.status == "infeasible" and not rd.result.feasible and rd.changes == []


def test_footprints_and_change_weight_keep_the_size_limit_error(catalog, monkeypatch, tmp_path) -> None:
    spec = CASES["bench 20 W auto"]()
    first, previous = _previous(spec, catalog, tmp_path)
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", len(first.stage.configs) // 2)
    with pytest.raises(SizeLimitError):
        redesign(spec, catalog, previous, keep_footprints=True)
    with pytest.raises(SizeLimitError):
        redesign(spec, catalog, previous, change_weight=1.0)
    # The whole table asked for (as --risk does) goes by levels when it is past the limit.
    rd = redesign(spec, catalog, previous, by_changes=False)
    assert rd.result.stage.change_bound == 0 and rd.changes == []


@pytest.mark.parametrize("name, limit", [("bench 20 W auto", 2590), ("bench 22 W current source", 1000)])
def test_risk_and_feed_comparison_on_a_redesign_table_are_exact_or_say_not_proven(name, limit, catalog, monkeypatch, tmp_path) -> None:
    """stock_risk and compare_feeds after a re-design past the limit, against the same after the whole table's re-design.

    With the output npn excluded the whole tables have 2,591 and 2,000 rows.
    A risk row whose re-solve needs more changes than the table holds is
    re-designed with the part excluded as well, from the level of its
    changes; where that table is past the limit too it says "not proven".
    """
    spec = CASES[name]()
    first, previous = _previous(spec, catalog, tmp_path)
    npn = previous.parts["output_npn"][0][0]
    whole = redesign(spec, catalog, previous, exclude=(npn,), by_changes=False).result
    assert whole.stage.change_bound is None and len(whole.stage.configs) > limit
    whole_risks = {r.mpn: r for r in stock_risk(whole)}
    whole_feed = compare_feeds(whole, catalog, (npn,))
    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", limit)
    bounded = redesign(spec, catalog, previous, exclude=(npn,)).result
    assert bounded.stage.change_bound is not None and proven_whole(bounded, bounded.solution)
    assert bounded.solution.total == pytest.approx(whole.solution.total, abs=1e-6)
    risks = stock_risk(bounded)
    assert [r.mpn for r in risks] == list(whole_risks)
    proven = 0
    for r in risks:
        w = whole_risks[r.mpn]
        if "not proven" in (r.replacement or ""):
            continue  # a design with fewer changes cannot be ruled out, so its cost compares with nothing
        assert r.total_without == pytest.approx(w.total_without, abs=1e-6), r.mpn
        assert r.replacement == w.replacement
        proven += 1
    assert 0 < proven
    # The auto spec's other feed (current sources: none in the table) is re-designed with that feed fixed.
    assert compare_feeds(bounded, catalog, (npn,)) == whole_feed
    assert (whole_feed is None) == (spec.stage.bias_feed != "auto")


def test_the_command_redesigns_the_desk_example_at_half_a_watt(tmp_path, capsys) -> None:
    """The shipped desk example at 0.5 W is past the limit on the demo catalogue (no patching): --previous designs."""
    spec_path = tmp_path / "desk.toml"
    text = (ROOT / "examples" / "desk_2ch_12v_single.toml").read_text(encoding="utf-8")
    assert "power_w = 2.0" in text
    spec_path.write_text(text.replace("power_w = 2.0", "power_w = 0.5"), encoding="utf-8")
    with pytest.raises(SizeLimitError):
        prepare(load_spec(spec_path), load_catalog(DEMO_CATALOG))
    first = tmp_path / "first.json"
    assert main(["--quiet", "design", str(spec_path), "--catalog", str(DEMO_CATALOG), "--json", str(first)]) == 0
    previous = json.loads(first.read_text())
    opamp = next(p["mpn"] for p in previous["parts"] if p["role"] == "driver_opamp")
    again = tmp_path / "again.json"
    capsys.readouterr()
    assert main(["--no-color", "design", str(spec_path), "--catalog", str(DEMO_CATALOG), "--previous", str(first),
                 "--exclude", opamp, "--json", str(again)]) == 0
    out = capsys.readouterr().out
    rep = json.loads(again.read_text())
    assert rep["status"] == "ok"
    assert [c["role"] for c in rep["changes"]] == ["driver_opamp"]
    assert not any("not proven" in w for w in rep["warnings"])
    assert "Changes against the previous design" in out
