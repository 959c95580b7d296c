"""Assembly of the MILP from the evaluated tables, against plain per-row routes.

The array routes of :mod:`partpick.optimize.problem` (one use per distinct
part, the bias-feed options grouped by sorting, the line order) are checked
against the obvious per-row computations they replace: a dictionary per row,
pandas ``groupby`` and a scan of every row's uses.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import DEMO_CATALOG, EXAMPLES
from partpick.catalog import load_catalog
from partpick.evaluate.context import Targets, make_pool
from partpick.evaluate.stage import evaluate_stage
from partpick.optimize import problem as P
from partpick.spec import load_spec


def _recorder():
    calls = []

    def use(source, value, per_board, role):
        calls.append((source, per_board))
        return (P.line_key(source, value), float(per_board), role)

    return use, calls


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.sampled_from([None, "QA1", "QB2", "QC3"]), st.sampled_from([2.0, 4.0, 8.0])), max_size=40))
def test_shared_uses_are_one_per_distinct_part_and_quantity(rows):
    sources = np.array([s for s, _q in rows] or [], dtype=object)
    per = np.array([q for _s, q in rows], dtype=float)
    use, calls = _recorder()
    made, of_row = P._shared(use, sources, per, "role")
    got = made[of_row].tolist() if len(rows) else []
    # Per row: the use of its (source, quantity), None without a source.
    assert got == [None if s is None else (s, q, "role") for s, q in rows]
    assert sorted(calls, key=str) == sorted({(s, q) for s, q in rows if s is not None}, key=str)
    # Rows with the same part and quantity share one tuple.
    seen = {}
    for (s, q), u in zip(rows, got):
        if s is not None:
            assert seen.setdefault((s, q), u) is u


@st.composite
def _feed_lines(draw):
    n = draw(st.integers(0, 60))
    kind = draw(st.lists(st.sampled_from(["bias_resistor", "ccs_resistors"]), min_size=n, max_size=n))
    family = draw(st.lists(st.sampled_from(["RF-B", "RF-A", "RF-C"]), min_size=n, max_size=n))
    v1 = draw(st.lists(st.sampled_from([10.0, 4.7, 100.0, 0.22]), min_size=n, max_size=n))
    v2 = [np.nan if a == "bias_resistor" else draw(st.sampled_from([1000.0, 220.0])) for a in kind]
    k = draw(st.lists(st.integers(0, 9), min_size=n, max_size=n))
    return pd.DataFrame(dict(k=k, family=family, kind=kind, v1=v1, v2=v2, p1_w=0.1, p2_w=np.nan))


@settings(max_examples=300, deadline=None)
@given(_feed_lines())
def test_feed_groups_are_those_of_pandas_groupby(fo):
    got = P._feed_groups(fo)
    ref = (fo.assign(v2=fo["v2"].fillna(-1.0))
           .groupby(["kind", "family", "v1", "v2"], sort=True)["k"].apply(lambda s: np.unique(s.to_numpy())).reset_index())
    assert list(got.columns) == ["kind", "family", "v1", "v2", "k"]
    assert len(got) == len(ref)
    for c in ("kind", "family", "v1", "v2"):
        assert got[c].tolist() == ref[c].tolist()
    assert [a.tolist() for a in got["k"]] == [b.tolist() for b in ref["k"]]


@pytest.fixture(scope="module")
def demo_assemblies():
    catalog = load_catalog(DEMO_CATALOG)
    out = []
    for path in EXAMPLES:
        spec = load_spec(path)
        pool = make_pool(spec, catalog)
        targets = Targets.from_spec(spec)
        out.append((path.name, P.assemble(spec, pool, targets, evaluate_stage(spec, pool, targets))))
    return out


def test_lines_come_in_the_order_a_row_by_row_scan_meets_them(demo_assemblies):
    sources_seen = False
    for name, asm in demo_assemblies:
        stage = asm.problem.groups["stage"]
        scan = list(dict.fromkeys(key for uses in stage.usage for key, _q, _r in uses))
        assert list(asm.lines)[: len(scan)] == scan, name
        sources_seen |= any(role == "bias_source_transistor" for uses in stage.usage for _k, _q, role in uses)
    assert sources_seen  # some example uses current sources, so every column of a row is exercised


def test_offers_read_once_per_pool_and_given_as_lists_of_their_own() -> None:
    catalog = load_catalog(DEMO_CATALOG)
    pool = make_pool(load_spec(next(p for p in EXAMPLES if p.name == "desk_2ch_12v_single.toml")), catalog)
    mpns = pool.transistors["mpn"].tolist()[:3]
    first = P.offers_by_part(pool, mpns + mpns[:1])
    assert set(pool.offer_memo) == set(mpns)
    # Straight from the pool's offer table, sorted by supplier and quantity.
    for mpn, got in zip(mpns, first):
        rows = pool.offers[pool.offers["mpn"] == mpn].sort_values(["supplier", "min_qty"])
        assert [(o.supplier, o.min_qty, o.unit_price, o.stock) for o in got] == list(
            zip(rows["supplier"], rows["min_qty"], rows["unit_price"], rows["stock"]))
        assert len(got) > 0
    again = P.offers_by_part(pool, mpns)
    assert again == first[:3] and all(a is not b for a, b in zip(again, first))  # equal, not the same lists
    assert first[0] == first[3]  # the same part asked twice
    first[0].clear()  # a caller's list is its own: the next reading is whole
    assert P.offers_by_part(pool, mpns[:1])[0] == again[0] and len(again[0]) > 0
