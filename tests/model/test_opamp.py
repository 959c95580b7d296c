"""Tests of partpick.model.opamp: hand-worked values, textbook examples, independent routes."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

from partpick.model.defaults import BASE_DRIVE_MARGIN, GBW_MARGIN, OFFSET_MAX_V
from partpick.model.opamp import (
    common_mode_margin_v,
    gbw_margin_mhz,
    gbw_required_mhz,
    offset_margin_v,
    output_current_margin_a,
    output_current_required_a,
    output_offset_v,
    packages_needed,
    slew_rate_margin_v_us,
    slew_rate_required_v_us,
    supply_max_margin_v,
    supply_min_margin_v,
    supply_span_v,
)


def test_supply_span_both_arrangements() -> None:
    assert supply_span_v(15.0, "split") == 30.0  # +-15 V rails
    assert supply_span_v(12.0, "single") == 24.0  # 24 V supply, Vs = 12 V
    np.testing.assert_array_equal(supply_span_v(np.array([9.0, 17.5]), "split"), [18.0, 35.0])
    with pytest.raises(ValueError, match="arrangement"):
        supply_span_v(12.0, "dual")


def test_supply_margins() -> None:
    # span 17 V at v_min against a 5 V minimum; 39 V at v_max against a 36 V maximum
    assert supply_min_margin_v(17.0, 5.0) == 12.0
    assert supply_max_margin_v(39.0, 36.0) == -3.0
    np.testing.assert_allclose(
        supply_max_margin_v(np.array([30.0, 36.0]), np.array([36.0, 44.0])), [6.0, 8.0]
    )
    np.testing.assert_allclose(supply_min_margin_v(np.array([4.0, 10.0]), 5.0), [-1.0, 5.0])


def test_slew_rate_textbook_full_power_bandwidth() -> None:
    # Sedra & Smith, Microelectronic Circuits, full-power bandwidth f_M = SR / (2 pi V_omax)
    # (from memory): SR = 0.5 V/us, V_omax = 10 V gives f_M = 7.96 kHz.
    assert slew_rate_required_v_us(7.96e3, 10.0) == pytest.approx(0.5, abs=0.001)
    # hand-worked: 2 pi * 20 kHz * 14 V = 1.759 V/us
    assert slew_rate_required_v_us(20e3, 14.0) == pytest.approx(1.759, abs=0.0005)


def test_slew_rate_against_numerical_derivative() -> None:
    f, vp = np.array([10e3, 20e3, 40e3]), np.array([5.0, 14.0, 30.0])
    t = np.linspace(0.0, 1.0, 200_001)[:, None] / f[None, :]  # one period each
    v = vp * np.sin(2 * np.pi * f * t)
    slope_v_us = np.max(np.abs(np.gradient(v, axis=0) / np.gradient(t, axis=0)), axis=0) / 1e6
    np.testing.assert_allclose(slew_rate_required_v_us(f, vp), slope_v_us, rtol=1e-6)
    np.testing.assert_allclose(slew_rate_margin_v_us(3.0, f, vp), 3.0 - slope_v_us, rtol=1e-5)


def test_gbw_required_hand_values() -> None:
    # 10 * 20 * 20 kHz = 4 MHz (margin 10, common practice)
    assert GBW_MARGIN == 10.0
    assert gbw_required_mhz(20.0, 20e3) == pytest.approx(4.0)
    np.testing.assert_allclose(gbw_required_mhz(np.array([1.0, 30.0]), 20e3, 5.0), [0.1, 3.0])
    assert gbw_margin_mhz(3.0, 20.0, 20e3) == pytest.approx(-1.0)


def test_gbw_closed_loop_bandwidth_independent_route() -> None:
    # A single-pole op-amp with the required GBW, closed at gain G, has its -3 dB
    # point at GBW / G = margin * f_high (Sedra & Smith, closed-loop bandwidth of
    # the non-inverting amplifier, from memory). Solve |A_cl(f)| = G/sqrt(2) numerically.
    gain, f_high = 20.0, 20e3
    gbw_hz = gbw_required_mhz(gain, f_high) * 1e6
    a0 = 1e5
    f_pole = gbw_hz / a0

    def closed_loop_minus_3db(f: float) -> float:
        a = a0 / (1 + 1j * f / f_pole)
        return abs(a / (1 + a / gain)) - gain / np.sqrt(2)

    f3 = brentq(closed_loop_minus_3db, f_high, 100 * f_high)
    assert f3 == pytest.approx(GBW_MARGIN * f_high, rel=1e-3)


def test_common_mode_margin() -> None:
    # Vs_min 12 V, 1 V rms input (1.414 V peak), 1.5 V headroom: 9.086 V
    assert common_mode_margin_v(12.0, 1.414, 1.5) == pytest.approx(9.086)
    np.testing.assert_allclose(
        common_mode_margin_v(np.array([3.0, 12.0]), 1.0, np.array([2.5, 2.0])), [-0.5, 9.0]
    )


def test_output_offset_and_margin() -> None:
    # 2 mV * 20 = 40 mV; 10 mV inside the 50 mV limit (common practice)
    assert output_offset_v(2.0, 20.0) == pytest.approx(0.040)
    assert OFFSET_MAX_V == 0.050
    assert offset_margin_v(0.040) == pytest.approx(0.010)
    assert offset_margin_v(-0.060) == pytest.approx(-0.010)  # sign of the offset does not matter
    np.testing.assert_allclose(
        output_offset_v(np.array([0.5, 5.0]), np.array([10.0, 30.0])), [0.005, 0.15]
    )
    np.testing.assert_allclose(offset_margin_v(np.array([0.005, 0.15]), 0.1), [0.095, -0.05])


def test_output_current_required() -> None:
    # 1.5 * 10 mA + 20 V / (19k + 1k) = 15 mA + 1 mA = 16 mA
    assert BASE_DRIVE_MARGIN == 1.5
    assert output_current_required_a(0.01, 20.0, 19e3, 1e3) == pytest.approx(0.016)
    got = output_current_required_a(np.array([0.0, 0.02]), 10.0, 9e3, 1e3, k=2.0)
    np.testing.assert_allclose(got, [0.001, 0.041])
    assert output_current_margin_a(0.025, 0.016) == pytest.approx(0.009)


def test_packages_needed() -> None:
    assert packages_needed(2, 2) == 1
    assert packages_needed(3, 2) == 2
    assert packages_needed(2, 4) == 1
    assert packages_needed(0, 1) == 0
    got = packages_needed(np.array([1, 2, 3, 4, 5]), np.array([1, 2, 2, 4, 4]))
    assert got.dtype.kind == "i"
    np.testing.assert_array_equal(got, [1, 1, 2, 1, 2])
    np.testing.assert_array_equal(got, np.ceil(np.array([1, 2, 3, 4, 5]) / [1, 2, 2, 4, 4]))
    with pytest.raises(ValueError):
        packages_needed(2, 0)
