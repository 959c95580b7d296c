"""Tests of partpick.model.swing: headroom, base drive and the bias feeds (model s.3, s.13)."""

import numpy as np
import pytest

from partpick.model import swing as sw
from partpick.model.defaults import DIODE_DROP_V, VT_V


def test_vce_sat_float_and_array():
    # at or below its test current the catalogue value holds; above it grows linearly
    assert sw.vce_sat_at_v(1.0, 4.0, 2.0) == pytest.approx(1.0)
    np.testing.assert_allclose(sw.vce_sat_at_v(1.0, 4.0, [0.0, 4.0, 8.0, 12.0]),
                               [1.0, 1.0, 2.0, 3.0])


def test_vbe_float_and_array():
    # Exponential law: about 60 mV per decade of collector current at 26 mV thermal
    # voltage (Horowitz & Hill, The Art of Electronics; common practice).
    assert sw.vbe_at_v(0.7, 0.5, 5.0) - 0.7 == pytest.approx(0.060, abs=0.001)
    np.testing.assert_allclose(
        sw.vbe_at_v(0.7, 1.0, np.array([0.0, 0.1, 1.0, np.e])),
        [0.7, 0.7, 0.7, 0.7 + VT_V],  # never below the catalogue value
    )


def test_hfe_float_and_array():
    assert sw.hfe_at(40.0, 3.0, 1.0) == pytest.approx(40.0)
    np.testing.assert_allclose(sw.hfe_at(40.0, 3.0, [0.0, 3.0, 6.0, 12.0]),
                               [40.0, 40.0, 20.0, 10.0])


def test_transistor_headroom_float_and_array():
    # 24 - (20 + 3 A * 0.22 ohm + 1.5) = 24 - 22.16 = 1.84 V
    assert sw.transistor_headroom_margin_v(24.0, 20.0, 3.0, 0.22, 1.5) == pytest.approx(1.84)
    np.testing.assert_allclose(
        sw.transistor_headroom_margin_v(np.array([24.0, 21.0]), 20.0, 3.0, 0.22, 1.5),
        [1.84, -1.16],
    )


def test_base_voltage_and_drive_level_float_and_array():
    # 20 + 0.66 + 1.0 = 21.66 V at the base; the op-amp output sits one diode below
    assert sw.base_voltage_peak_v(20.0, 3.0, 0.22, 1.0) == pytest.approx(21.66)
    assert sw.drive_level_v(20.0, 3.0, 0.22, 1.0, DIODE_DROP_V) == pytest.approx(21.01)
    np.testing.assert_allclose(sw.base_voltage_peak_v([10.0, 20.0], [1.0, 3.0], 0.22, 0.7),
                               [10.92, 21.36])
    np.testing.assert_allclose(sw.drive_level_v([10.0, 20.0], [1.0, 3.0], 0.22, 0.7, 0.7),
                               [10.22, 20.66])


def test_driver_headroom_float_and_array():
    assert sw.driver_headroom_margin_v(24.0, 1.5, 21.01) == pytest.approx(1.49)
    np.testing.assert_allclose(sw.driver_headroom_margin_v(24.0, [1.5, 3.5], 21.0), [1.5, -0.5])


def test_base_current_float_and_array():
    assert sw.base_current_peak_a(3.0, 40.0) == pytest.approx(0.075)
    np.testing.assert_allclose(sw.base_current_peak_a([3.0, 3.0], [40.0, 1000.0]),
                               [0.075, 0.003])


def test_bias_resistor_max_float_and_array():
    # (20 - 17) / (1.5 * 20 mA) = 3 / 0.03 = 100 ohm
    assert sw.bias_resistor_max_ohm(20.0, 17.0, 0.020) == pytest.approx(100.0)
    r = sw.bias_resistor_max_ohm(np.array([20.0, 17.0, 16.0]), 17.0, 0.020)
    assert r[0] == pytest.approx(100.0)
    assert np.isnan(r[1]) and np.isnan(r[2])  # no headroom: no resistor can feed the base
    assert np.isnan(sw.bias_resistor_max_ohm(17.0, 17.0, 0.02))


def test_bias_standing_current_float_and_array():
    assert sw.bias_standing_current_a(24.65, 0.65, 1200.0) == pytest.approx(0.020)
    np.testing.assert_allclose(sw.bias_standing_current_a([10.65, 20.65], 0.65, 100.0),
                               [0.1, 0.2])


def test_bias_resistor_power_against_numerical_average():
    # independent route: average of (Vs - Vd - Vb sin t)^2 / R1 over the cycle
    vs, vd, vb, r1 = 28.0, 0.65, 21.66, 30.0
    t = np.linspace(0.0, 2.0 * np.pi, 100_001)
    p_num = np.trapezoid((vs - vd - vb * np.sin(t)) ** 2 / r1, t) / (2.0 * np.pi)
    assert sw.bias_resistor_power_w(vs, vd, vb, r1) == pytest.approx(p_num, rel=1e-6)
    # idle only: (10.65 - 0.65)^2 / 100 = 1 W; with a 10 V base swing + 100 / 2 / 100 = 0.5 W
    np.testing.assert_allclose(sw.bias_resistor_power_w(10.65, 0.65, [0.0, 10.0], 100.0),
                               [1.0, 1.5])


def test_resistor_feed_burns_watts_for_ordinary_pairs():
    # Model s.3 "consequence worth knowing": hFE 40 at 3 A peak needs R1 of tens of
    # ohms and watts of dissipation; a Darlington pair (hFE 1000, Vbe ~ 2 V) does not.
    vs_min, vs_max, vp, ip, re = 25.0, 28.0, 20.0, 3.0, 0.22
    vb = sw.base_voltage_peak_v(vp, ip, re, np.array([1.0, 2.0]))
    ib = sw.base_current_peak_a(ip, np.array([40.0, 1000.0]))
    r1 = sw.bias_resistor_max_ohm(vs_min, vb, ib)
    p = sw.bias_resistor_power_w(vs_max, DIODE_DROP_V, vb, r1)
    assert r1[0] < 50.0 and p[0] > 10.0
    assert r1[1] > 500.0 and p[1] < 2.0


def test_ccs_current_required_float_and_array():
    assert sw.ccs_current_required_a(0.02) == pytest.approx(0.03)
    np.testing.assert_allclose(sw.ccs_current_required_a([0.01, 0.02], 2.0), [0.02, 0.04])


def test_ccs_compliance_float_and_array():
    assert sw.ccs_compliance_margin_v(25.0, 21.66) == pytest.approx(2.34)
    np.testing.assert_allclose(sw.ccs_compliance_margin_v([25.0, 22.0], 21.66, 1.0),
                               [2.34, -0.66])


def test_ccs_transistor_dissipation_float_and_array():
    # base swings to the far rail: 2 * 28 V * 20 mA = 1.12 W
    assert sw.ccs_transistor_dissipation_w(28.0, 0.02) == pytest.approx(1.12)
    np.testing.assert_allclose(sw.ccs_transistor_dissipation_w([10.0, 20.0], 0.01), [0.2, 0.4])


def test_ccs_emitter_resistor_float_and_array():
    # two-diode reference 1.3 V minus Vbe 0.65 V across R_E: 0.65 V / 10 mA = 65 ohm
    assert sw.ccs_emitter_resistor_ohm(1.3, 0.65, 0.010) == pytest.approx(65.0)
    np.testing.assert_allclose(sw.ccs_emitter_resistor_ohm([1.3, 1.8], 0.65, [0.01, 0.023]),
                               [65.0, 50.0])


def test_ccs_reference_resistor_float_and_array():
    # default 2 mA reference: (20 - 1.3) / 2 mA = 9350 ohm
    assert sw.ccs_reference_resistor_ohm(20.0, 1.3) == pytest.approx(9350.0)
    np.testing.assert_allclose(sw.ccs_reference_resistor_ohm([11.0, 21.0], 1.0, 0.005),
                               [2000.0, 4000.0])


def test_ccs_junction_temp_float_and_array():
    assert sw.ccs_junction_temp_c(40.0, 0.5, 200.0) == pytest.approx(140.0)
    np.testing.assert_allclose(sw.ccs_junction_temp_c(25.0, [0.1, 1.0], [200.0, 62.0]),
                               [45.0, 87.0])


def test_ccs_pair_sink_heat_float_and_array():
    # Hand-worked: the upper source sees Vs - v, the lower Vs + v; at v = 0, +Vs and -Vs
    # alike the two add to 2 * Vs, so 2 * 25.5 V * 0.147 A = 7.497 W on the sink.
    assert sw.ccs_pair_sink_heat_w(25.5, 0.147) == pytest.approx(7.497)
    np.testing.assert_allclose(sw.ccs_pair_sink_heat_w([10.0, 20.0], [0.1, 0.05]), [2.0, 2.0])


def test_ccs_pair_sink_heat_bounds_the_sum_over_a_cycle():
    # Independent route: sample a full cycle of the output; each source carries I and
    # sees (rail - its base node); the two base nodes differ by the bias string.
    vs, i, vp, string = 25.5, 0.147, 20.0, 1.4
    v = vp * np.sin(np.linspace(0.0, 2 * np.pi, 721))
    top = (vs - (v + string / 2)) * i
    bottom = ((v - string / 2) + vs) * i
    assert np.all(top + bottom <= sw.ccs_pair_sink_heat_w(vs, i) + 1e-12)
    # ... and neither source alone exceeds the per-transistor bound 2 * Vs * I (model s.3).
    assert max(top.max(), bottom.max()) <= sw.ccs_transistor_dissipation_w(vs, i)
    # the mean over the cycle is the idle figure, (2 Vs - string) * I
    assert np.mean((top + bottom)[:-1]) == pytest.approx((2 * vs - string) * i)


def test_ccs_reference_current_float_and_array():
    # Hand-worked: 2 mA for the reference plus a 147 mA source's base current at hFE 60:
    # 2 mA + 147 mA / 60 = 4.45 mA.
    assert sw.ccs_reference_current_a(0.147, 60.0) == pytest.approx(0.00445)
    np.testing.assert_allclose(sw.ccs_reference_current_a([0.01, 0.1], [100.0, 50.0], 0.001),
                               [0.0011, 0.003])


@pytest.mark.parametrize("vref, r_e, vbe_on, at", [
    (1.8, 6.8, 0.65, 0.01),    # red LED, TO-92-like device run far above its Vbe test current
    (1.3, 65.0, 0.65, 0.01),   # two diodes, 10 mA: Vbe stays at its floor
    (2.0, 8.2, 0.8, 0.15),     # green LED, driver-class device
])
def test_ccs_current_bounds_bracket_the_true_current(vref, r_e, vbe_on, at):
    # Independent route: solve I = (Vref - Vbe(I)) / R_E by root finding (scipy brentq).
    from scipy.optimize import brentq

    true = brentq(lambda i: i - (vref - sw.vbe_at_v(vbe_on, at, i)) / r_e, 1e-9, vref / r_e)
    lo, hi = sw.ccs_current_bounds_a(vref, r_e, vbe_on, at)
    assert lo <= true + 1e-12 <= hi + 2e-12
    assert hi == pytest.approx((vref - vbe_on) / r_e)
    # The lower bound is close: it errs by Vbe(hi) - Vbe(true) <= VT ln(hi / true) only.
    assert (true - lo) * r_e <= 0.026 * np.log(hi / true) + 1e-9


def test_ccs_current_bounds_float_and_array():
    lo, hi = sw.ccs_current_bounds_a(np.array([1.8, 1.3]), np.array([6.8, 65.0]), 0.65, 0.01)
    np.testing.assert_allclose(hi, [1.15 / 6.8, 0.01])
    assert lo[1] == pytest.approx(0.01)  # at its test current Vbe is exactly vbe_on
    assert lo[0] < hi[0]
