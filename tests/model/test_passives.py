"""Tests of partpick.model.passives: hand-worked values, circuit simulation, brute force."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy import signal
from scipy.integrate import solve_ivp

from partpick.model.defaults import (
    MIDRAIL_R_MAX_OHM,
    MIDRAIL_R_MIN_OHM,
    RG_MAX_OHM,
    RG_MIN_OHM,
    ZOBEL_C_F,
    ZOBEL_R_OHM,
)
from partpick.model.eseries import next_up, series_values
from partpick.model.passives import (
    cap_ripple_required_a,
    cap_voltage_required_v,
    gain_pair,
    input_cap_min_f,
    midrail_current_a,
    midrail_resistor_ohm,
    midrail_resistor_power_w,
    output_cap_min_f,
    zobel_resistor_power_w,
)


def test_output_cap_hand_value_and_next_e6() -> None:
    # 1 / (2 pi * 20 Hz * 8 ohm) = 994.7 uF, next E6 value up 1000 uF
    c = output_cap_min_f(20.0, 8.0)
    assert c == pytest.approx(994.72e-6, rel=1e-4)
    assert next_up(c, "E6") == pytest.approx(1000e-6)
    np.testing.assert_allclose(
        output_cap_min_f(np.array([20.0, 40.0]), np.array([4.0, 8.0])),
        [1989.44e-6, 497.36e-6],
        rtol=1e-4,
    )


def test_output_cap_corner_is_f_low() -> None:
    # independent route: the series C into the load is a first-order high-pass;
    # its response at f_low is -3 dB (1/sqrt 2).
    f_low, z = 30.0, 6.0
    c = output_cap_min_f(f_low, z)
    _, h = signal.freqs([z * c, 0.0], [z * c, 1.0], worN=[2 * np.pi * f_low])
    assert abs(h[0]) == pytest.approx(1 / np.sqrt(2), rel=1e-9)


def test_input_cap_hand_value_and_corner() -> None:
    # 4 / (2 pi * 22 kohm * 20 Hz) = 1.447 uF; corner 5 Hz = f_low / 4 (common practice)
    c = input_cap_min_f(20.0, 22e3)
    assert c == pytest.approx(1.4469e-6, rel=1e-4)
    assert 1 / (2 * np.pi * 22e3 * c) == pytest.approx(5.0)
    assert next_up(c, "E6") == pytest.approx(1.5e-6)
    np.testing.assert_allclose(
        input_cap_min_f(np.array([10.0, 20.0]), 10e3, factor=2.0),
        [3.1831e-6, 1.59155e-6],
        rtol=1e-4,
    )


def test_cap_voltage_and_ripple() -> None:
    assert cap_voltage_required_v(24.0) == pytest.approx(30.0)  # 1.25 * 24 V
    np.testing.assert_allclose(cap_voltage_required_v(np.array([12.0, 40.0]), 1.5), [18.0, 60.0])
    # RMS of a sine of peak 2 A
    assert cap_ripple_required_a(2.0) == pytest.approx(1.41421, rel=1e-5)
    t = np.linspace(0, 1, 100_001)
    rms = np.sqrt(np.mean((3.0 * np.sin(2 * np.pi * t)) ** 2))
    np.testing.assert_allclose(cap_ripple_required_a(np.array([3.0])), [rms], rtol=1e-4)


def test_zobel_hand_value() -> None:
    # 10 ohm + 100 nF at 20 kHz: Xc = 79.577 ohm, |Z|^2 = 6432.4 ohm^2,
    # P = (20^2 / 2) * 10 / 6432.4 = 0.3109 W
    assert ZOBEL_R_OHM == 10.0 and ZOBEL_C_F == 100e-9
    assert zobel_resistor_power_w(20.0, 20e3) == pytest.approx(0.3109, abs=5e-5)
    got = zobel_resistor_power_w(np.array([10.0, 20.0]), np.array([20e3, 40e3]))
    assert got[0] == pytest.approx(0.3109 / 4, abs=2e-5)
    assert got[1] > 0.3109  # more current at higher frequency


def test_zobel_against_circuit_simulation() -> None:
    # independent route: integrate the series RC driven by Vp sin(wt) to steady
    # state and average R i^2 over the last period.
    vp, f, r, c = 25.0, 30e3, 10.0, 100e-9
    w = 2 * np.pi * f

    def dvc_dt(t: float, vc: np.ndarray) -> np.ndarray:
        return (vp * np.sin(w * t) - vc) / (r * c)

    periods = 20  # RC = 1 us, period 33 us: the transient is long gone
    t_end = periods / f
    t_eval = np.linspace(t_end - 1 / f, t_end, 4001)
    sol = solve_ivp(dvc_dt, (0, t_end), [0.0], t_eval=t_eval, rtol=1e-10, atol=1e-12,
                    max_step=1 / (f * 200))  # fmt: skip
    i = (vp * np.sin(w * sol.t) - sol.y[0]) / r
    p_sim = np.trapezoid(r * i**2, sol.t) * f
    assert zobel_resistor_power_w(vp, f, r, c) == pytest.approx(p_sim, rel=1e-4)


def test_midrail_resistor() -> None:
    # two equal 47 kohm (common practice), inside 10k..100k (model s.13)
    assert midrail_resistor_ohm() == 47e3
    assert midrail_resistor_ohm("E12") == 47e3
    assert midrail_resistor_ohm("E96") == 47.5e3  # E96 has 4.64, 4.75: 4.75 is nearer 4.7
    for name in ("E3", "E6", "E24", "E48", "E192"):
        assert MIDRAIL_R_MIN_OHM <= midrail_resistor_ohm(name) <= MIDRAIL_R_MAX_OHM


def test_midrail_current_and_power() -> None:
    # 24 V across 2 x 47 kohm: 0.2553 mA; each resistor 12 V^2 / 47k = 3.064 mW
    assert midrail_current_a(24.0, 47e3) == pytest.approx(0.25532e-3, rel=1e-4)
    assert midrail_resistor_power_w(24.0, 47e3) == pytest.approx(3.0638e-3, rel=1e-4)
    v = np.array([12.0, 36.0])
    np.testing.assert_allclose(
        midrail_resistor_power_w(v, 10e3), midrail_current_a(v, 10e3) ** 2 * 10e3
    )


def test_gain_pair_hand_values() -> None:
    # G = 23: 22k / 1k exact; G = 11: 10k / 1k exact (lowest Rg among exact pairs)
    rf, rg, g, e = gain_pair(23.0, "E24")
    assert (rf, rg, g, e) == (22e3, 1e3, 23.0, 0.0)
    rf, rg, g, e = gain_pair(11.0, "E12")
    assert (rf, rg, g, e) == (10e3, 1e3, 11.0, 0.0)
    rf, rg, g, e = gain_pair(np.array([1.0, 0.5]), "E24")
    assert np.all(np.isnan(rf)) and np.all(np.isnan(e))


@pytest.mark.parametrize("name", ["E12", "E24", "E96"])
def test_gain_pair_brute_force(name: str) -> None:
    gains = np.array([5.0, 12.3, 19.6, 20.0, 27.7, 33.3])
    rf, rg, g, e = gain_pair(gains, name)
    assert rf.shape == gains.shape
    rg_values = series_values(name, RG_MIN_OHM, RG_MAX_OHM)
    rf_values = series_values(name, 100.0, 1e6)
    for i, gain in enumerate(gains):
        best = min(
            itertools.product(rg_values, rf_values),
            key=lambda p: (round(abs(1 + p[1] / p[0] - gain) / gain, 12), p[0], p[1]),
        )
        assert abs(e[i]) == pytest.approx(abs(1 + best[1] / best[0] - gain) / gain, abs=1e-12)
        assert (rg[i], rf[i]) == best
        assert g[i] == pytest.approx(1 + rf[i] / rg[i])
        assert e[i] == pytest.approx(g[i] / gain - 1)
    assert np.all((rg >= RG_MIN_OHM) & (rg <= RG_MAX_OHM))


def test_gain_pair_e96_within_half_a_step() -> None:
    # Even with Rg fixed, the nearer of the two Rf values around (G - 1) Rg is
    # within half the largest E96 step of the ratio, and the gain error is
    # smaller still by (G - 1) / G; the 2 % warning is never reached in E96.
    values = series_values("E96", 1e3, 1e5)
    half_step = np.max(values[1:] / values[:-1] - 1) / 2
    gains = np.linspace(2.0, 50.0, 97)
    _, _, _, e = gain_pair(gains, "E96")
    assert np.all(np.abs(e) <= half_step * (gains - 1) / gains)
    assert half_step < 0.02  # largest E96 step 1.33 -> 1.37 is 3.0 %
