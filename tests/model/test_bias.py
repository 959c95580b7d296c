"""Tests of partpick.model.bias: quiescent current and the thermal-runaway loop (model s.7)."""

import numpy as np
import pytest

from partpick.model import bias as bs
from partpick.model.defaults import DVBE_DT_V_K, LOOP_GAIN_MAX


def test_vbe_tempco_default_is_about_minus_2_mv_per_k():
    # Vbe falls by about 2 mV/K, 2 to 2.5 mV/K (common practice)
    assert 0.002 <= DVBE_DT_V_K <= 0.0025


def test_quiescent_current_float_and_array():
    # Oliver, Hewlett-Packard Journal, Feb. 1971 (from memory): Iq * Re = 26 mV;
    # sub-ohm emitter resistors give tens of mA (common practice): 0.47 ohm -> 55 mA
    assert bs.quiescent_current_a(0.47) == pytest.approx(0.055, abs=0.0005)
    iq = bs.quiescent_current_a(np.array([0.22, 0.33, 0.47, 1.0]))
    np.testing.assert_allclose(iq, [0.1182, 0.0788, 0.0553, 0.026], atol=1e-4)
    assert np.all((iq >= 0.02) & (iq <= 0.15))


def test_loop_theta_float_and_array():
    # two TO-220 devices on a 5 K/W sink: 3 + 0.8 + 2 * 5 = 13.8 K/W
    assert bs.loop_theta_k_w(3.0, 0.8, 5.0, 2) == pytest.approx(13.8)
    np.testing.assert_allclose(bs.loop_theta_k_w(3.0, 0.8, 5.0, np.array([2, 4])), [13.8, 23.8])


# A small runaway-prone stage (common practice): TO-220 devices (Rth_jc 3 K/W,
# insulated Rth_cs 0.8 K/W) on a small 5 K/W sink, rail 10 V, theta = 13.8 K/W.
THETA_SMALL = 3.0 + 0.8 + 2 * 5.0


def test_no_emitter_resistor_runs_away():
    # Re = 0, biased at 100 mA: only re = 26 mV / 0.1 A = 0.26 ohm limits the loop,
    # L = 13.8 * 10 * 2.2e-3 / 0.26 = 1.17 > 1
    gain = bs.thermal_loop_gain(THETA_SMALL, 10.0, 0.0, 0.1)
    assert gain == pytest.approx(13.8 * 10.0 * 2.2e-3 / 0.26)
    assert gain > 1.0


def test_sub_ohm_emitter_resistors_stabilise_array():
    # Re 0.22 / 0.47 ohm at Oliver's Iq: Re + re = 2 Re, L = 0.3036 / (2 Re) = 0.69, 0.32
    re = np.array([0.22, 0.47])
    gain = bs.thermal_loop_gain(THETA_SMALL, 10.0, re, bs.quiescent_current_a(re))
    np.testing.assert_allclose(gain, 13.8 * 10.0 * 2.2e-3 / (2.0 * re))
    assert np.all(gain < 1.0)
    assert gain[1] <= LOOP_GAIN_MAX < gain[0]  # only the larger one meets the 0.5 margin


def test_loop_gain_sign_of_tempco_ignored():
    assert bs.thermal_loop_gain(10.0, 20.0, 0.33, 0.08, -0.0022) == pytest.approx(
        bs.thermal_loop_gain(10.0, 20.0, 0.33, 0.08, 0.0022))


def test_re_power_float_and_array():
    # half-wave of peak 4 A through 0.22 ohm: 16 * 0.22 / 4 = 0.88 W
    assert bs.re_power_w(4.0, 0.22) == pytest.approx(0.88)
    np.testing.assert_allclose(bs.re_power_w(np.array([2.0, 4.0]), 0.5), [0.5, 2.0])


def test_re_power_against_numerical_average():
    # independent route: mean of (Ip sin t)^2 Re over the conducting half, divided by 2 pi
    t = np.linspace(0.0, np.pi, 100_001)
    p_num = np.trapezoid((3.0 * np.sin(t)) ** 2 * 0.33, t) / (2.0 * np.pi)
    assert bs.re_power_w(3.0, 0.33) == pytest.approx(p_num, rel=1e-8)
