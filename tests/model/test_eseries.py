"""Tests of partpick.model.eseries against IEC 60063, the `eseries` package and brute force."""

from __future__ import annotations

import itertools

import eseries as eseries_ref  # independent reference implementation (PyPI `eseries`)
import numpy as np
import pytest

from partpick.model import eseries
from partpick.model.eseries import (
    SERIES,
    best_ratio_pair,
    format_value,
    nearest_value,
    next_down,
    next_up,
    parse_value,
    series_mantissas,
    series_values,
)

# IEC 60063:2015, table 1 (E3 to E24, two significant figures).
IEC_60063_E3 = [1.0, 2.2, 4.7]
IEC_60063_E6 = [1.0, 1.5, 2.2, 3.3, 4.7, 6.8]
IEC_60063_E12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2]
IEC_60063_E24 = [
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
    3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
]  # fmt: skip

# IEC 60063:2015, table 2 (E48 to E192, three significant figures): spot values.
IEC_60063_E48_SPOT = [1.00, 1.05, 1.10, 1.21, 2.15, 3.16, 4.64, 6.81, 9.53]
IEC_60063_E96_SPOT = [1.00, 1.02, 1.05, 1.07, 1.10, 2.49, 4.99, 7.50, 9.09, 9.31, 9.53, 9.76]
IEC_60063_E192_SPOT = [1.00, 1.01, 1.02, 1.04, 4.70, 9.09, 9.20, 9.31, 9.88]

REFERENCE_KEYS = {
    "E3": eseries_ref.E3,
    "E6": eseries_ref.E6,
    "E12": eseries_ref.E12,
    "E24": eseries_ref.E24,
    "E48": eseries_ref.E48,
    "E96": eseries_ref.E96,
    "E192": eseries_ref.E192,
}
SIZES = {"E3": 3, "E6": 6, "E12": 12, "E24": 24, "E48": 48, "E96": 96, "E192": 192}


@pytest.mark.parametrize(
    ("name", "table"),
    [("E3", IEC_60063_E3), ("E6", IEC_60063_E6), ("E12", IEC_60063_E12), ("E24", IEC_60063_E24)],
)
def test_two_figure_series_match_iec_60063(name: str, table: list[float]) -> None:
    assert series_mantissas(name).tolist() == table


@pytest.mark.parametrize(
    ("name", "spots"),
    [("E48", IEC_60063_E48_SPOT), ("E96", IEC_60063_E96_SPOT), ("E192", IEC_60063_E192_SPOT)],
)
def test_three_figure_series_spot_values_iec_60063(name: str, spots: list[float]) -> None:
    mantissas = series_mantissas(name).tolist()
    assert len(mantissas) == SIZES[name]
    for value in spots:
        assert value in mantissas


def test_e96_ends_at_976_and_e192_has_920_not_919() -> None:
    # IEC 60063:2015, table 2: E96 last value 9.76; E192 lists 9.20 where the
    # geometric series rounds to 9.19.
    assert series_mantissas("E96")[-1] == 9.76
    e192 = series_mantissas("E192").tolist()
    assert 9.20 in e192 and 9.19 not in e192
    assert 9.20 not in series_mantissas("E96").tolist()


@pytest.mark.parametrize("name", SERIES)
def test_every_series_matches_the_eseries_package(name: str) -> None:
    ref = np.array(eseries_ref.series(REFERENCE_KEYS[name]), dtype=float)
    scale = 10.0 if ref.max() < 100 else 100.0
    np.testing.assert_allclose(series_mantissas(name), ref / scale, rtol=0, atol=1e-12)
    assert series_mantissas(name).size == SIZES[name]


@pytest.mark.parametrize("name", ["E48", "E96", "E192"])
def test_three_figure_series_follow_the_geometric_formula(name: str) -> None:
    # IEC 60063: E48..E192 are 10**(i/n) rounded to three figures, with the one
    # listed exception 9.20 in E192.
    n = SIZES[name]
    formula = np.round(10.0 ** (np.arange(n) / n), 2)
    formula[np.isclose(formula, 9.19)] = 9.20
    np.testing.assert_allclose(series_mantissas(name), formula, atol=1e-12)


def test_historical_e24_values_are_not_the_geometric_series() -> None:
    # IEC 60063: E24 keeps 2.7, 3.0, 3.3, ... 8.2, 9.1 although 10**(i/24) rounds
    # to 2.6, 2.9, 3.2, ... 8.3, 9.1.
    formula = np.round(10.0 ** (np.arange(24) / 24), 1)
    differs = series_mantissas("E24") != formula
    assert series_mantissas("E24")[differs].tolist() == [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2]


def test_unknown_series_raises() -> None:
    with pytest.raises(ValueError, match="E7"):
        series_mantissas("E7")
    with pytest.raises(ValueError):
        series_values("e24", 1.0, 10.0)


def test_series_values_across_decades_are_exact_floats() -> None:
    values = series_values("E12", 0.1, 1.0)
    assert values.tolist() == [0.1, 0.12, 0.15, 0.18, 0.22, 0.27, 0.33, 0.39, 0.47, 0.56,
                               0.68, 0.82, 1.0]  # fmt: skip
    assert 0.22 in values.tolist()  # exactly the float 0.22
    assert series_values("E6", 1e-9, 1e-8).tolist()[:3] == [1e-9, 1.5e-9, 2.2e-9]
    assert series_values("E24", 9.1e3, 1.1e4).tolist() == [9100.0, 10000.0, 11000.0]


def test_series_values_counts_and_inclusive_bounds() -> None:
    assert series_values("E96", 1e3, 1e4).size == 97  # 96 per decade plus the 10k end
    # bounds within 1e-9 relative are inclusive despite float noise
    assert series_values("E24", 0.22 * (1 + 1e-12), 0.22 * (1 - 1e-12)).tolist() == [0.22]
    assert series_values("E3", 5.0, 9.0).size == 0
    with pytest.raises(ValueError):
        series_values("E12", 0.0, 1.0)
    with pytest.raises(ValueError):
        series_values("E12", 10.0, 1.0)


def test_next_up_down_hand_values() -> None:
    # IEC 60063 E12: ... 3.9, 4.7, 5.6 ...
    assert next_up(4800.0, "E12") == 5600.0
    assert next_down(4800.0, "E12") == 4700.0
    assert next_up(9.2e3, "E24") == 10e3  # crosses the decade
    assert next_down(1.05e-6, "E6") == 1e-6
    # values already in the series return themselves
    assert next_up(0.22, "E12") == 0.22
    assert next_down(0.22, "E12") == 0.22
    assert next_up(0.1 + 0.12, "E12") == 0.22  # 0.22000000000000003
    assert next_down(3 * 0.1, "E24") == 0.3  # 0.30000000000000004


def test_next_up_down_arrays_and_bounds() -> None:
    x = np.array([[994.7e-6, 1.0e-3], [1.2e-7, 5e-9]])
    up = next_up(x, "E6")
    assert up.shape == (2, 2)
    np.testing.assert_array_equal(up, [[1.0e-3, 1.0e-3], [1.5e-7, 6.8e-9]])
    down = next_down(np.array([0.05, 1e5]), "E3")
    np.testing.assert_array_equal(down, [0.047, 1e5])
    # bounded: nothing above 2200 uF in a family that stops at 2200 uF
    bounded = next_up(np.array([1000e-6, 2500e-6]), "E6", 1e-6, 2200e-6)
    assert bounded[0] == pytest.approx(1000e-6) and np.isnan(bounded[1])
    assert np.isnan(next_down(0.5, "E12", 1.0, 10.0))
    assert np.isnan(next_up(-1.0, "E12"))
    # one-sided bounds, target far outside them
    assert next_up(5.0, "E12", lo=100.0) == 100.0
    assert next_down(1e6, "E12", hi=1e3) == 1e3
    assert nearest_value(1e-3, "E24", lo=10.0) == 10.0
    assert np.isnan(next_up(1e6, "E12", hi=1e3))


def test_next_up_down_agree_with_eseries_package() -> None:
    # eseries.find_greater_than_or_equal / find_less_than_or_equal are an
    # independent implementation of the same look-up.
    rng = np.random.default_rng(1)
    x = 10.0 ** rng.uniform(-2, 6, 200)
    for name in ("E12", "E24", "E96"):
        key = REFERENCE_KEYS[name]
        up_ref = [eseries_ref.find_greater_than_or_equal(key, v) for v in x]
        down_ref = [eseries_ref.find_less_than_or_equal(key, v) for v in x]
        np.testing.assert_allclose(next_up(x, name), up_ref, rtol=1e-12)
        np.testing.assert_allclose(next_down(x, name), down_ref, rtol=1e-12)


def test_nearest_value() -> None:
    # |ln(5.0/4.7)| = 0.062 < |ln(5.6/5.0)| = 0.113
    assert nearest_value(5000.0, "E12") == 4700.0
    assert nearest_value(22e3, "E24") == 22e3
    assert nearest_value(21.9e3, "E96") == 22.1e3
    np.testing.assert_array_equal(
        nearest_value(np.array([1.04, 9.6, 0.23]), "E12"), [1.0, 10.0, 0.22]
    )
    # bounded: the nearest allowed value
    assert nearest_value(25e3, "E24", 10e3, 22e3) == 22e3
    assert nearest_value(3.0, "E24", 10.0, 100.0) == 10.0
    assert np.isnan(nearest_value(0.0, "E24"))


def test_nearest_value_brute_force() -> None:
    rng = np.random.default_rng(2)
    x = 10.0 ** rng.uniform(0, 3, 300)
    grid = series_values("E24", 0.1, 1e4)
    brute = grid[np.argmin(np.abs(np.log(grid[None, :] / x[:, None])), axis=1)]
    np.testing.assert_array_equal(nearest_value(x, "E24"), brute)


def test_best_ratio_pair_hand_values() -> None:
    # G - 1 = 10 and 22 are exact E24 ratios; lowest Rg wins the tie.
    a, b, r, e = best_ratio_pair(10.0, "E24", 1e3, 10e3)
    assert (a, b, r, e) == (10e3, 1e3, 10.0, 0.0)
    a, b, r, e = best_ratio_pair(22.0, "E12", 1e3, 10e3)
    assert (a, b) == (22e3, 1e3) and e == 0.0
    # ratio 1: a = b, lowest b
    a, b, r, e = best_ratio_pair(1.0, "E96", 1e3, 10e3)
    assert (a, b) == (1e3, 1e3)


def _brute_pair(ratio: float, name: str, lo_b: float, hi_b: float, lo_a: float, hi_a: float):
    b_values = series_values(name, lo_b, hi_b)
    a_values = series_values(name, lo_a, hi_a)
    best = None
    for b, a in itertools.product(b_values, a_values):  # b outer, a inner: ascending order
        err = abs(a / b - ratio) / ratio
        if best is None or err < best[0] * (1 - 1e-9) - 1e-15:
            best = (err, a, b)
    return best


@pytest.mark.parametrize("name", ["E6", "E12", "E24"])
def test_best_ratio_pair_brute_force(name: str) -> None:
    rng = np.random.default_rng(3)
    ratios = np.concatenate([rng.uniform(0.5, 40.0, 25), [1.0, 2.0, 4.7, 19.0]])
    a, b, r, e = best_ratio_pair(ratios, name, 1e3, 10e3, 100.0, 1e6)
    for i, ratio in enumerate(ratios):
        err, a_ref, b_ref = _brute_pair(ratio, name, 1e3, 10e3, 100.0, 1e6)
        assert abs(e[i]) == pytest.approx(err, rel=1e-9, abs=1e-15)
        assert (a[i], b[i]) == (a_ref, b_ref)
        assert r[i] == pytest.approx(a[i] / b[i], rel=1e-15)


def test_best_ratio_pair_unbounded_a_equals_wide_bounded_a() -> None:
    ratios = np.array([0.33, 3.7, 19.0, 46.0])
    bounded = best_ratio_pair(ratios, "E96", 1e3, 10e3, 1.0, 1e7)
    unbounded = best_ratio_pair(ratios, "E96", 1e3, 10e3)
    for x, y in zip(bounded, unbounded):
        np.testing.assert_array_equal(x, y)


def test_best_ratio_pair_shapes_and_invalid() -> None:
    a, b, r, e = best_ratio_pair(np.array([[2.0, 3.0]]), "E12", 1e3, 10e3)
    assert a.shape == b.shape == r.shape == e.shape == (1, 2)
    a, b, r, e = best_ratio_pair(np.array([0.0, 2.0]), "E12", 1e3, 10e3)
    assert np.isnan(a[0]) and np.isnan(e[0]) and not np.isnan(a[1])
    # numerator range forces a worse ratio: 19 with Rf <= 10k, Rg >= 1k -> 10k/1k
    a, b, r, e = best_ratio_pair(19.0, "E24", 1e3, 10e3, 1e3, 10e3)
    assert (a, b) == (10e3, 1e3) and e == pytest.approx(10 / 19 - 1)


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (0.22, "0.22"),
        (4700.0, "4.7k"),
        (22100.0, "22.1k"),
        (1e-7, "100n"),
        (2.2e-6, "2.2u"),
        (1e6, "1M"),
        (1.0, "1"),
        (10.0, "10"),
        (0.1, "0.1"),
        (0.047, "47m"),
        (470e-12, "470p"),
        (999.7, "1k"),  # 3 significant figures
        (12345.0, "12.3k"),
        (0.0, "0"),
    ],
)
def test_format_value(value: float, text: str) -> None:
    assert format_value(value) == text


def test_format_value_unit_and_array() -> None:
    assert format_value(100e-6, "F") == "100uF"
    out = format_value(np.array([0.33, 1e3]), "ohm")
    assert out.tolist() == ["0.33ohm", "1kohm"]


@pytest.mark.parametrize("name", ["E24", "E192"])
def test_format_parse_round_trip_over_series(name: str) -> None:
    values = series_values(name, 1e-12, 1e8)
    texts = format_value(values)
    back = np.array([parse_value(t) for t in texts])
    np.testing.assert_array_equal(back, values)  # exact: both are the decimal's float


@pytest.mark.parametrize(
    ("text", "value"),
    [
        ("4.7k", 4700.0),
        ("100n", 1e-7),
        ("1000u", 1e-3),
        ("4k7", 4700.0),  # IEC 60062 letter code
        ("0R22", 0.22),
        ("R47", 0.47),
        ("2u2", 2.2e-6),
        ("47R", 47.0),
        ("1M", 1e6),
        ("1m", 1e-3),
        ("2.2e3", 2200.0),
        (" 22 ", 22.0),
        ("100nF", 1e-7),
    ],
)
def test_parse_value(text: str, value: float) -> None:
    unit = "F" if text.endswith("F") else ""
    assert parse_value(text, unit) == value


@pytest.mark.parametrize("text", ["", "k", "4k7k", "4.7k7", "abc", "1x", "4..7"])
def test_parse_value_rejects(text: str) -> None:
    with pytest.raises(ValueError):
        parse_value(text)


def test_rel_tol_is_tight() -> None:
    # a value 1e-6 away from a series value is not "in the series"
    assert next_up(4700.0 * (1 + 1e-6), "E12") == 5600.0
    assert eseries.REL_TOL == 1e-9
