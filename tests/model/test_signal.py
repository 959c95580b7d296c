"""Tests of partpick.model.signal against a textbook worked example and hand values."""

import numpy as np
import pytest

from partpick.model import signal as sg

# Sedra & Smith, Microelectronic Circuits, class B output stage worked example
# (from memory): 20 W into 8 ohm with Vcc = 23 V gives Vp = 17.9 V, Ip = 2.24 A,
# P_supply = 32.7 W, eta = 61 %, total P_D,max = 13.4 W.
SEDRA_P_W, SEDRA_R_OHM, SEDRA_VCC_V = 20.0, 8.0, 23.0


def test_sedra_smith_class_b_example():
    vp = sg.peak_voltage_v(SEDRA_P_W, SEDRA_R_OHM)
    ip = sg.peak_current_a(vp, SEDRA_R_OHM)
    assert vp == pytest.approx(17.9, abs=0.05)
    assert ip == pytest.approx(2.24, abs=0.005)
    assert sg.supply_power_w(SEDRA_VCC_V, ip) == pytest.approx(32.7, abs=0.05)
    assert sg.efficiency(vp, SEDRA_VCC_V) == pytest.approx(0.61, abs=0.005)
    assert sg.class_b_total_dissipation_max_w(SEDRA_VCC_V, SEDRA_R_OHM) == pytest.approx(
        13.4, abs=0.05
    )
    # energy balance: supply power = load power + dissipation at this level
    p_d = sg.supply_power_w(SEDRA_VCC_V, ip) - SEDRA_P_W
    assert p_d == pytest.approx(12.7, abs=0.05)


def test_peak_voltage_float_and_array():
    assert isinstance(sg.peak_voltage_v(10.0, 8.0), np.floating)
    # 2 * 25 W * 8 ohm = 400 -> 20 V; 2 * 50 W * 4 ohm = 400 -> 20 V; 2 * 1 * 2 = 4 -> 2 V
    np.testing.assert_allclose(sg.peak_voltage_v([25.0, 50.0, 1.0], [8.0, 4.0, 2.0]),
                               [20.0, 20.0, 2.0])


def test_peak_current_float_and_array():
    assert sg.peak_current_a(20.0, 8.0) == pytest.approx(2.5)
    np.testing.assert_allclose(sg.peak_current_a(np.array([20.0, 12.0]), 4.0), [5.0, 3.0])


def test_closed_loop_gain_float_and_array():
    # 1 V rms in -> 1.414 V peak; 14.14 V peak out is a gain of 10
    assert sg.closed_loop_gain(10.0 * np.sqrt(2.0), 1.0) == pytest.approx(10.0)
    np.testing.assert_allclose(sg.closed_loop_gain(np.sqrt(2.0) * np.array([5.0, 20.0]), 0.5),
                               [10.0, 40.0])


def test_supply_current_avg_float_and_array():
    # mean of a half-wave rectified sine of peak 1 over the full cycle is 1/pi
    assert sg.supply_current_avg_a(np.pi) == pytest.approx(1.0)
    np.testing.assert_allclose(sg.supply_current_avg_a([0.0, 2.0 * np.pi]), [0.0, 2.0])


def test_supply_current_avg_against_numerical_mean():
    t = np.linspace(0.0, 2.0 * np.pi, 200_001)
    half_wave = np.maximum(3.0 * np.sin(t), 0.0)
    assert sg.supply_current_avg_a(3.0) == pytest.approx(np.trapezoid(half_wave, t) / (2 * np.pi),
                                                         rel=1e-6)


def test_supply_power_quiescent_float_and_array():
    # idle: 2 rails * 23 V * 50 mA = 2.3 W
    assert sg.supply_power_w(23.0, 0.0, 0.05) == pytest.approx(2.3)
    np.testing.assert_allclose(sg.supply_power_w([10.0, 20.0], np.pi, [0.0, 0.1]),
                               [20.0, 40.0 + 4.0])


def test_efficiency_float_and_array():
    # the class B limit pi/4 = 78.5 % at Vp = Vs (Sedra & Smith)
    assert sg.efficiency(23.0, 23.0) == pytest.approx(0.785, abs=5e-4)
    np.testing.assert_allclose(sg.efficiency([0.0, 10.0], [20.0, 20.0]), [0.0, np.pi / 8])


def test_class_b_total_dissipation_array():
    # scales with Vs^2 / R
    np.testing.assert_allclose(sg.class_b_total_dissipation_max_w([23.0, 46.0], [8.0, 16.0]),
                               [13.40, 26.80], atol=0.01)
