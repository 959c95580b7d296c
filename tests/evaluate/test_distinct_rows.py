"""stage._distinct_rows against a plain comparison of every row, blanks included."""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partpick.evaluate import stage


def _same(u: tuple, v: tuple) -> bool:
    return all(x == y or (pd.isna(x) and pd.isna(y)) for x, y in zip(u, v))


@pytest.mark.parametrize("wide", [False, True])
@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.tuples(st.sampled_from([3, 1, -1]), st.sampled_from(["x", "y", "", None]), st.sampled_from([0.5, 0.25, np.nan])),
                max_size=30))
def test_each_row_maps_to_its_own_distinct_row(monkeypatch, wide, records):
    # The same patch on every example (the route for keys too wide for one integer), so sharing the fixture is sound.
    if wide:
        monkeypatch.setattr(stage.math, "prod", lambda sizes: 2**63)
    frame = pd.DataFrame(records, columns=["a", "b", "c"])
    rows, of_row = stage._distinct_rows(frame)
    assert len(of_row) == len(records)
    for record, i in zip(frame.itertuples(index=False, name=None), of_row.tolist()):
        assert _same(record, rows[i])
    for u, v in itertools.combinations(rows, 2):
        assert not _same(u, v)
