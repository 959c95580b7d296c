"""Tests of partpick.model.regulator: hand-worked values, brute force, numerical integration."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy.integrate import quad

from partpick.model.defaults import REGULATOR_R1_MAX_OHM, REGULATOR_R1_MIN_OHM
from partpick.model.eseries import series_values
from partpick.model.regulator import (
    adjustable_vout_v,
    dropout_margin_v,
    regulator_current_avg_a,
    regulator_current_margin_a,
    regulator_current_peak_a,
    regulator_dissipation_w,
    regulator_junction_temp_c,
    set_pair,
    set_point_grid_v,
    vin_max_margin_v,
)


def test_adjustable_vout_hand_values() -> None:
    # 1.25 V * (1 + 2400/240) = 13.75 V, plus 50 uA * 2.4 kohm = 0.12 V -> 13.87 V
    assert adjustable_vout_v(1.25, 0.0, 240.0, 2400.0) == pytest.approx(13.75)
    assert adjustable_vout_v(1.25, 50e-6, 240.0, 2400.0) == pytest.approx(13.87)
    got = adjustable_vout_v(1.25, 100e-6, np.array([100.0, 1000.0]), np.array([1000.0, 1000.0]))
    np.testing.assert_allclose(got, [13.85, 2.6])


def test_adjustable_vout_from_the_divider_equations() -> None:
    # independent route: solve the adjust-node equation for the output.
    # Vout - Vadj = Vref across R1; current into R2 is Vref/R1 + Iadj; Vadj = R2 * that.
    vref, iadj, r1, r2 = 1.24, 65e-6, 330.0, 5600.0
    a = np.array([[1.0, -1.0], [0.0, 1.0]])  # unknowns [Vout, Vadj]
    rhs = np.array([vref, r2 * (vref / r1 + iadj)])
    vout, _ = np.linalg.solve(a, rhs)
    assert adjustable_vout_v(vref, iadj, r1, r2) == pytest.approx(vout, rel=1e-12)


def test_set_pair_hand_values() -> None:
    # 13.75 V from 1.25 V with no Iadj: R2/R1 = 10, lowest R1 in 100..1k -> 100 / 1k
    r1, r2, v, e = set_pair(13.75, 1.25, 0.0, "E24")
    assert (r1, r2, v, e) == (100.0, 1000.0, 13.75, 0.0)
    # below the reference: impossible
    r1, r2, v, e = set_pair(np.array([1.0, 13.75]), 1.25, 0.0, "E24")
    assert np.isnan(r1[0]) and np.isnan(v[0]) and r1[1] == 100.0
    assert (REGULATOR_R1_MIN_OHM, REGULATOR_R1_MAX_OHM) == (100.0, 1000.0)


def _brute_set_pair(target: float, vref: float, iadj: float, name: str):
    r1_values = series_values(name, REGULATOR_R1_MIN_OHM, REGULATOR_R1_MAX_OHM)
    r2_values = series_values(name, 10.0, 1e6)
    best = None
    for r1, r2 in itertools.product(r1_values, r2_values):  # R1 outer, R2 inner: ascending
        err = abs(vref * (1 + r2 / r1) + iadj * r2 - target)
        if best is None or err < best[0] - 1e-9 * target:
            best = (err, r1, r2)
    return best


@pytest.mark.parametrize("name", ["E24", "E96"])
def test_set_pair_brute_force(name: str) -> None:
    targets = np.array([12.0, 17.3, 22.8, 30.1, 5.0])
    vref, iadj = 1.25, 50e-6
    r1, r2, v, e = set_pair(targets, vref, iadj, name)
    assert r1.shape == targets.shape
    for i, target in enumerate(targets):
        err, r1_ref, r2_ref = _brute_set_pair(target, vref, iadj, name)
        assert abs(v[i] - target) == pytest.approx(err, abs=1e-9)
        assert (r1[i], r2[i]) == (r1_ref, r2_ref)
        assert v[i] == pytest.approx(adjustable_vout_v(vref, iadj, r1[i], r2[i]))
        assert e[i] == pytest.approx(v[i] / target - 1)


def test_set_pair_accuracy_e96() -> None:
    targets = set_point_grid_v(5.0, 35.0)
    _, _, _, e = set_pair(targets, 1.25, 50e-6, "E96")
    assert np.all(np.abs(e) < 0.005)  # far inside one E96 step (about 2.4 %)


def test_set_point_grid() -> None:
    assert set_point_grid_v(1.25, 1.6).tolist() == [1.3, 1.4, 1.5, 1.6]
    assert set_point_grid_v(12.0, 12.3).tolist() == [12.0, 12.1, 12.2, 12.3]  # exact floats
    grid = set_point_grid_v(1.25, 37.0)
    assert grid[0] == 1.3 and grid[-1] == 37.0 and grid.size == 358
    assert set_point_grid_v(12.01, 12.09).size == 0
    assert set_point_grid_v(10.0, 11.0, step=0.5).tolist() == [10.0, 10.5, 11.0]
    with pytest.raises(ValueError):
        set_point_grid_v(1.0, 2.0, step=0.0)


def test_dropout_and_vin_margins() -> None:
    # 24 V in, 20 V out, 2 V dropout: 2 V margin; 40 V rating at 37 V max: 3 V
    assert dropout_margin_v(24.0, 20.0, 2.0) == pytest.approx(2.0)
    assert vin_max_margin_v(40.0, 37.0) == pytest.approx(3.0)
    np.testing.assert_allclose(
        dropout_margin_v(np.array([21.0, 30.0]), np.array([20.0, 25.0]), 1.5), [-0.5, 3.5]
    )
    np.testing.assert_allclose(vin_max_margin_v(np.array([35.0, 40.0]), 37.0), [-2.0, 3.0])


def test_regulator_currents_hand_values() -> None:
    # two channels at 3 A peak: 6 A peak; 2 * 3 / pi + 0.1 = 2.0099 A average
    assert regulator_current_peak_a(2, 3.0) == pytest.approx(6.0)
    assert regulator_current_avg_a(2, 3.0, 0.1) == pytest.approx(2.00986, rel=1e-5)
    np.testing.assert_allclose(
        regulator_current_peak_a(np.array([1, 2]), np.array([2.0, 2.5])), [2.0, 5.0]
    )
    np.testing.assert_allclose(
        regulator_current_avg_a(np.array([1, 4]), np.pi, np.array([0.0, 0.2])), [1.0, 4.2]
    )
    assert regulator_current_margin_a(5.0, 6.0) == pytest.approx(-1.0)


def test_average_current_by_integration() -> None:
    # independent route: the positive supply carries the positive half-waves of
    # the load current; average over a period by numerical integration.
    ip = 2.7
    avg, _ = quad(lambda t: max(ip * np.sin(2 * np.pi * t), 0.0), 0.0, 1.0, points=[0.5])
    assert regulator_current_avg_a(1, ip, 0.0) == pytest.approx(avg, rel=1e-9)


def test_dissipation_and_junction_temperature() -> None:
    # (26 V - 20 V) * 2 A = 12 W; 40 degC + 1.5 W * 50 K/W = 115 degC
    assert regulator_dissipation_w(26.0, 20.0, 2.0) == pytest.approx(12.0)
    assert regulator_junction_temp_c(40.0, 1.5, 50.0) == pytest.approx(115.0)
    p = regulator_dissipation_w(np.array([26.0, 30.0]), np.array([20.0, 24.0]), 0.5)
    np.testing.assert_allclose(p, [3.0, 3.0])
    np.testing.assert_allclose(
        regulator_junction_temp_c(np.array([25.0, 40.0]), p, np.array([20.0, 62.0])),
        [85.0, 226.0],
    )
