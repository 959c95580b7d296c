"""distinct_rows against a plain comparison of every row, blanks included."""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partpick.evaluate import distinct
from partpick.evaluate.distinct import distinct_rows


def _same(u: tuple, v: tuple) -> bool:
    return all(x == y or (pd.isna(x) and pd.isna(y)) for x, y in zip(u, v))


@pytest.mark.parametrize("sort", [False, True])
@pytest.mark.parametrize("wide", [False, True])
@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.tuples(st.sampled_from([3, 1, -1]), st.sampled_from(["x", "y", "", None]), st.sampled_from([0.5, 0.25, np.nan])),
                max_size=30))
def test_each_row_maps_to_its_own_distinct_row(monkeypatch, wide, sort, records):
    # The same patch on every example (the route for keys too wide for one integer), so sharing the fixture is sound.
    if wide:
        monkeypatch.setattr(distinct.math, "prod", lambda sizes: 2**63)
    frame = pd.DataFrame(records, columns=["a", "b", "c"])
    first, of_row = distinct_rows([frame[c].to_numpy() for c in frame.columns], sort=sort)
    all_rows = list(frame.itertuples(index=False, name=None))
    rows = [all_rows[i] for i in first.tolist()]
    assert len(of_row) == len(records)
    for record, i in zip(all_rows, of_row.tolist()):
        assert _same(record, rows[i])
    for u, v in itertools.combinations(rows, 2):
        assert not _same(u, v)
    # First means first: no earlier row has the same values.
    for j, i in enumerate(first.tolist()):
        assert of_row[:i].tolist().count(j) == 0
    # Sorted: the distinct rows in the order of their values (rows without blanks compared).
    plain = [r for r in rows if not any(pd.isna(x) for x in r)]
    if sort:
        assert plain == sorted(plain)
