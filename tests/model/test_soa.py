"""Tests of partpick.model.soa: curve parsing, the boundary, derating, load lines."""

import math

import numpy as np
import pytest

from partpick.model import soa

# A hand-made curve (fictional device): Ic_max 8 A, Pd 100 W, Vceo 120 V and the
# breakpoints 10 V : 10 A, 40 V : 2.5 A (the 100 W hyperbola, slope -1 in log-log),
# 80 V : 0.5 A (second breakdown, slope log(0.2)/log(2) = -2.32).
CURVE_TEXT = "10:10; 40:2.5; 80:0.5"
IC_MAX_A, PD_W, VCEO_V = 8.0, 100.0, 120.0
SLOPE_2 = math.log(0.5 / 2.5) / math.log(80.0 / 40.0)


def test_parse_soa_dc():
    v, a = soa.parse_soa_dc(CURVE_TEXT)
    np.testing.assert_array_equal(v, [10.0, 40.0, 80.0])
    np.testing.assert_array_equal(a, [10.0, 2.5, 0.5])
    v2, _ = soa.parse_soa_dc(" 5:3;20:1; ")
    np.testing.assert_array_equal(v2, [5.0, 20.0])


@pytest.mark.parametrize(
    "text, reason",
    [
        ("", "empty"),
        ("10:5", "two breakpoints"),
        ("10-5;20:2", "form"),
        ("10:5;;20:2", "form"),
        ("10:a;20:2", "numeric"),
        ("10:5;20:0", "positive"),
        ("-1:5;20:2", "positive"),
        ("10:5;nan:2", "positive"),
        ("20:5;10:2", "increase"),
        ("10:5;10:2", "increase"),
        ("10:2;20:5", "rise"),
    ],
)
def test_parse_soa_dc_rejects(text, reason):
    with pytest.raises(ValueError, match=reason):
        soa.parse_soa_dc(text)


def test_pad_curves():
    bp_v, bp_a = soa.pad_curves([soa.parse_soa_dc(CURVE_TEXT), None,
                                 soa.parse_soa_dc("5:3;20:1")])
    assert bp_v.shape == bp_a.shape == (3, 3)
    np.testing.assert_array_equal(bp_v[0], [10.0, 40.0, 80.0])
    assert np.all(np.isnan(bp_v[1])) and np.all(np.isnan(bp_a[1]))
    np.testing.assert_array_equal(bp_a[2, :2], [3.0, 1.0])
    assert np.isnan(bp_a[2, 2])


def test_interpolation_on_hand_made_curve_float():
    v, a = soa.parse_soa_dc(CURVE_TEXT)
    cases = {
        5.0: 8.0,  # below the first breakpoint: 10 A held, capped at Ic_max 8 A
        20.0: 100.0 / 20.0,  # on the 100 W hyperbola
        40.0: 2.5,  # at a breakpoint
        math.sqrt(40.0 * 80.0): math.sqrt(2.5 * 0.5),  # log-log midpoint: geometric mean
        100.0: 0.5 * (100.0 / 80.0) ** SLOPE_2,  # last slope extended above 80 V
        120.0: 0.5 * (120.0 / 80.0) ** SLOPE_2,  # at Vceo still the curve
        121.0: 0.0,  # beyond Vceo
    }
    for vce, expected in cases.items():
        got = soa.soa_current_limit_a(vce, v, a, IC_MAX_A, PD_W, VCEO_V)
        assert got == pytest.approx(expected, rel=1e-12), vce


def test_limit_without_breakpoints_boundary():
    nan = np.full(3, np.nan)
    vce = np.array([5.0, 12.5, 20.0, 100.0, 120.0, 120.5])
    # min(Ic_max 8 A, 100 W / Vce) up to Vceo 120 V; the corner is at 12.5 V
    expected = [8.0, 8.0, 5.0, 1.0, 100.0 / 120.0, 0.0]
    np.testing.assert_allclose(soa.soa_current_limit_a(vce, nan, nan, IC_MAX_A, PD_W, VCEO_V),
                               expected)


def test_limit_vectorised_over_devices_and_samples():
    bp_v, bp_a = soa.pad_curves([soa.parse_soa_dc(CURVE_TEXT), None,
                                 soa.parse_soa_dc("5:3;20:1")])
    ic_max = np.array([8.0, 8.0, 2.0])
    pd = np.array([100.0, 100.0, 20.0])
    vceo = np.array([120.0, 120.0, 60.0])
    vce = np.array([[20.0, 100.0, 130.0],
                    [20.0, 100.0, 130.0],
                    [2.0, 10.0, 40.0]])
    slope_c = math.log(1.0 / 3.0) / math.log(20.0 / 5.0)
    expected = np.array([
        [5.0, 0.5 * 1.25**SLOPE_2, 0.0],
        [5.0, 1.0, 0.0],
        [2.0, 3.0 * 2.0**slope_c, 1.0 * 2.0**slope_c],  # 3 A held, capped at 2 A
    ])
    got = soa.soa_current_limit_a(vce, bp_v, bp_a, ic_max, pd, vceo)
    np.testing.assert_allclose(got, expected, rtol=1e-12)
    # one sample per device (vce shaped like the devices) and a shared scalar Vce
    np.testing.assert_allclose(soa.soa_current_limit_a(vce[:, 0], bp_v, bp_a, ic_max, pd, vceo),
                               expected[:, 0])
    np.testing.assert_allclose(soa.soa_current_limit_a(20.0, bp_v, bp_a, ic_max, pd, vceo),
                               [5.0, 5.0, 1.0])


def test_derating_factor_float_and_array():
    assert soa.derating_factor(150.0, 150.0) == 0.0  # at Tj_max nothing is left
    np.testing.assert_allclose(soa.derating_factor(150.0, [0.0, 25.0, 87.5, 150.0, 175.0]),
                               [1.0, 1.0, 0.5, 0.0, 0.0])  # no uprating below 25 degC


def test_derating_at_tj_max_gives_zero_limit_and_negative_margin():
    v, a = soa.parse_soa_dc(CURVE_TEXT)
    vce, ic = soa.load_line(30.0, 20.0, 2.0, 0.0)
    limit = soa.derating_factor(150.0, 150.0) * soa.soa_current_limit_a(vce, v, a, IC_MAX_A,
                                                                        PD_W, VCEO_V)
    assert np.all(limit == 0.0)
    m = soa.soa_margin(vce, ic, limit)
    assert np.isfinite(m) and m <= -1e8


def test_load_line_samples_float_and_array():
    vce, ic = soa.load_line(30.0, 20.0, 5.0, 0.0, n=4)  # t = 0, pi/2, pi, 3pi/2
    np.testing.assert_allclose(vce, [30.0, 10.0, 30.0, 50.0])
    np.testing.assert_allclose(ic, [0.0, 5.0, 0.0, 0.0], atol=1e-12)
    vce2, ic2 = soa.load_line(np.array([[20.0], [30.0]]), 15.0, 3.0, np.array([0.0, 0.5]))
    assert vce2.shape == ic2.shape == (2, 2, soa.LOAD_LINE_SAMPLES)
    assert np.all(ic2 >= 0.0) and ic2.max() == pytest.approx(3.0, rel=1e-4)


def test_load_line_locus_same_for_both_signs_of_phase():
    # model s.13: the -phi locus is the +phi locus mirrored in time, so one sign suffices
    phi = np.radians(60.0)
    n = soa.LOAD_LINE_SAMPLES
    pos = np.column_stack(soa.load_line(30.0, 25.0, 6.0, phi))
    neg = np.column_stack(soa.load_line(30.0, 25.0, 6.0, -phi))
    # sample k of -phi is sample n/2 - k of +phi (t -> pi - t): the same set of points
    mirrored = (n // 2 - np.arange(n)) % n
    np.testing.assert_allclose(neg, pos[mirrored], atol=1e-9)
    assert not np.allclose(neg, pos)  # the sample order does differ
    # with a reactive load the device conducts at Vce above the rail (model s.5)
    assert np.max(pos[pos[:, 1] > 0.0, 0]) > 30.0
    v, a = soa.parse_soa_dc(CURVE_TEXT)
    margins = soa.load_line_soa_margin(30.0, 25.0, 6.0, np.array([phi, -phi]), v, a,
                                       IC_MAX_A, PD_W, VCEO_V)
    assert margins[0] == pytest.approx(margins[1], abs=1e-12)


def test_soa_margin_hand_values_float_and_array():
    # samples: (Ic 0, limit 0) ignored; 1 - 1/4 = 0.75; 1 - 2/4 = 0.5 -> 0.5
    assert soa.soa_margin([50, 40, 30], [0.0, 1.0, 2.0], [0.0, 4.0, 4.0]) == pytest.approx(0.5)
    m = soa.soa_margin(np.zeros((2, 3)), np.array([[0.0, 1.0, 3.0], [0.0, 0.0, 0.0]]),
                       np.array([[1.0, 2.0, 2.0], [1.0, 1.0, 1.0]]))
    np.testing.assert_allclose(m, [-0.5, 1.0])  # no conducting sample: margin 1


def test_load_line_soa_margin_resistive_hand_value():
    # Resistive 4 ohm, Vs 30 V, Vp 20 V: Ic = (30 - Vce) / 4 along the line; against the
    # no-breakpoint 100 W hyperbola the worst ratio Ic * Vce / 100 is at Vce = 15 V
    # (Ic 3.75 A): 56.25 W / 100 W, margin 0.4375 (Ic_max 20 A keeps the cap out of play).
    nan = np.full(1, np.nan)
    m = soa.load_line_soa_margin(30.0, 20.0, 5.0, 0.0, nan, nan, 20.0, PD_W, VCEO_V)
    assert m == pytest.approx(1.0 - 56.25 / 100.0, abs=1e-4)
    m2 = soa.load_line_soa_margin(np.array([30.0, 30.0]), 20.0, 5.0, 0.0,
                                  np.full((2, 1), np.nan), np.full((2, 1), np.nan),
                                  20.0, np.array([100.0, 50.0]), VCEO_V,
                                  derating=np.array([1.0, 1.0]))
    np.testing.assert_allclose(m2, [0.4375, 1.0 - 56.25 / 50.0], atol=1e-4)
    # with Ic_max 8 A the cap bites at Vce = 10 V (Ic 5 A): margin 1 - 5/8
    m3 = soa.load_line_soa_margin(30.0, 20.0, 5.0, 0.0, nan, nan, IC_MAX_A, PD_W, VCEO_V)
    assert m3 == pytest.approx(1.0 - 5.0 / 8.0, abs=1e-9)


def test_short_circuit_margin_float_and_array():
    nan = np.full(1, np.nan)
    # Vce = 25 V on the 100 W hyperbola: 4 A allowed, Ip 2 A -> 0.5; derated by half -> 0
    assert soa.short_circuit_margin(25.0, 2.0, nan, nan, IC_MAX_A, PD_W, VCEO_V) == \
        pytest.approx(0.5)
    m = soa.short_circuit_margin(np.array([25.0, 25.0]), 2.0, np.full((2, 1), np.nan),
                                 np.full((2, 1), np.nan), IC_MAX_A, PD_W, VCEO_V,
                                 derating=np.array([1.0, 0.5]))
    np.testing.assert_allclose(m, [0.5, 0.0], atol=1e-12)


def test_vceo_and_ic_max_margins_float_and_array():
    # 20 % breakdown margin (common practice): 100 V part, 2 x 40 V span -> 100 - 96 = 4 V
    assert soa.vceo_margin_v(100.0, 80.0) == pytest.approx(4.0)
    np.testing.assert_allclose(soa.vceo_margin_v([100.0, 60.0], 80.0), [4.0, -36.0])
    assert soa.ic_max_margin_a(8.0, 5.0) == pytest.approx(3.0)
    np.testing.assert_allclose(soa.ic_max_margin_a([8.0, 4.0], 5.0), [3.0, -1.0])
