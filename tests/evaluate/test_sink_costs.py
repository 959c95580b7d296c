"""The least heatsink cost per row (``SinkCosts.least``, by sorted ladders and binary search) against a brute force.

The brute force is the rule itself, heatsink by heatsink: a heatsink suits a
row when it holds the row's devices, mounts the row's package (and the
sources' package when they sit on the sink), and its Rth_sa is at or below
the row's limit for the heatsink's mounting class; the row's figure is the
least cost over the heatsinks that suit it (inf when none does).
"""
from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from partpick.evaluate.stage import SinkCosts

SETTINGS = dict(max_examples=80, deadline=None, derandomize=True)


def brute_least(s: SinkCosts, limits: np.ndarray, package: np.ndarray, source_package: int, devices: int) -> np.ndarray:
    out = np.full(len(package), np.inf)
    if source_package == -2:
        return out
    for r, code in enumerate(package.tolist()):
        if code < 0:
            continue
        for h in range(len(s.rth)):
            suits = (s.max_devices[h] >= devices and s.holds[h, code] and (source_package < 0 or s.holds[h, source_package])
                     and s.rth[h] <= limits[r, s.class_i[h]])
            if suits:
                out[r] = min(out[r], s.cost[h])
    return out


@st.composite
def sink_cases(draw):
    n_sinks, n_rows = draw(st.integers(0, 9)), draw(st.integers(1, 12))
    n_pkg, n_cls = draw(st.integers(1, 3)), draw(st.integers(1, 3))
    rth = np.array(draw(st.lists(st.sampled_from([0.5, 0.8, 1.0, 1.2, 2.5]), min_size=n_sinks, max_size=n_sinks)), float)
    cost = np.array(draw(st.lists(st.sampled_from([3.0, 5.5, 9.0, 12.0, np.inf]), min_size=n_sinks, max_size=n_sinks)), float)
    class_i = np.array(draw(st.lists(st.integers(0, n_cls - 1), min_size=n_sinks, max_size=n_sinks)), np.int64)
    holds = np.array(draw(st.lists(st.lists(st.booleans(), min_size=n_pkg, max_size=n_pkg), min_size=n_sinks, max_size=n_sinks)),
                     bool).reshape(n_sinks, n_pkg)
    max_devices = np.array(draw(st.lists(st.sampled_from([2, 4, 6]), min_size=n_sinks, max_size=n_sinks)), np.int64)
    core_package = np.array(draw(st.lists(st.integers(-1, n_pkg - 1), min_size=n_rows, max_size=n_rows)), np.int64)
    sinks = SinkCosts(rth, class_i, holds, max_devices, cost, {f"P{i}": i for i in range(n_pkg)}, core_package, 2, 1)
    limits = np.array(draw(st.lists(st.lists(st.sampled_from([0.4, 0.8, 1.1, 2.0, 3.0]), min_size=n_cls, max_size=n_cls),
                                    min_size=n_rows, max_size=n_rows)), float).reshape(n_rows, n_cls)
    return sinks, limits


@settings(**SETTINGS)
@given(sink_cases(), st.data())
def test_least_is_the_cheapest_suitable_heatsink_per_row(case, data) -> None:
    """Own (no sources on the sink) and with sources of each package, twice each (the second from the kept ladders)."""
    sinks, limits = case
    for _again in range(2):
        assert np.array_equal(sinks.own(limits), brute_least(sinks, limits, sinks.core_package, -1, sinks.n_dev))
        for name in [*sinks.packages, "no such package"]:
            code = sinks.packages.get(name, -2)
            want = brute_least(sinks, limits, sinks.core_package, code, sinks.n_dev + 2 * sinks.channels)
            assert np.array_equal(sinks.with_sources(limits, name), want)
    # Other limits with the same heatsinks (the ladders are kept between calls; the limits are not).
    other = np.array(data.draw(st.lists(st.sampled_from([0.5, 1.0, 2.6]), min_size=limits.size, max_size=limits.size)),
                     float).reshape(limits.shape)
    assert np.array_equal(sinks.own(other), brute_least(sinks, other, sinks.core_package, -1, sinks.n_dev))
    # Rows of another package array than the core configurations'.
    package = sinks.core_package[::-1].copy()
    assert np.array_equal(sinks.least(limits, package, -1, 4), brute_least(sinks, limits, package, -1, 4))


def test_least_by_hand() -> None:
    """Two heatsinks of one class mounting package 0: 1.0 K/W at 9.00 and 0.5 K/W at 12.00.

    A row allowing 1.2 K/W takes the 9.00 one; a row allowing 0.6 K/W only
    the 12.00 one; a row allowing 0.4 K/W none (inf); a row of package -1
    (no heatsink mounts it) none.
    """
    sinks = SinkCosts(np.array([1.0, 0.5]), np.array([0, 0]), np.array([[True], [True]]), np.array([4, 4]),
                      np.array([9.0, 12.0]), {"P0": 0}, np.array([0, 0, 0, -1]), 2, 1)
    limits = np.array([[1.2], [0.6], [0.4], [5.0]])
    assert sinks.own(limits).tolist() == [9.0, 12.0, np.inf, np.inf]
    assert sinks.with_sources(limits, "P0").tolist() == [9.0, 12.0, np.inf, np.inf]  # 2 + 2 devices: both hold 4
    assert sinks.least(limits, sinks.core_package, 0, 6).tolist() == [np.inf] * 4  # neither holds 6
