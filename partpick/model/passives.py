"""Passive parts around the amplifier: coupling capacitors, Zobel, mid-rail divider, gain pair.

Model s.9 with the readings of s.13. Values are chosen from E-series by
``partpick.model.eseries``.

References
----------
.. [1] P. Horowitz and W. Hill, The Art of Electronics, Cambridge University
   Press: RC high-pass corner f = 1 / (2 pi R C), series RC impedance.
.. [2] IEC 60063:2015, Preferred number series for resistors and capacitors.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from partpick.model import eseries
from partpick.model.defaults import (
    CAP_VOLTAGE_MARGIN,
    INPUT_CORNER_FACTOR,
    MIDRAIL_R_MAX_OHM,
    MIDRAIL_R_MIN_OHM,
    MIDRAIL_R_TARGET_OHM,
    RG_MAX_OHM,
    RG_MIN_OHM,
    ZOBEL_C_F,
    ZOBEL_R_OHM,
)

Array = NDArray[np.float64]


def _f(x: ArrayLike) -> Array:
    return np.asarray(x, dtype=np.float64)


def output_cap_min_f(f_low_hz: ArrayLike, z_min_ohm: ArrayLike) -> Array:
    """Smallest output coupling capacitor: C = 1 / (2 pi f_low |Z_min|).

    The capacitor and the load form a high-pass with its corner at f_low [1]
    (model s.9, ``single`` only). Take the next series value up.

    Parameters
    ----------
    f_low_hz : float or array_like
        Lower band edge [Hz], > 0.
    z_min_ohm : float or array_like
        Lowest load impedance magnitude [ohm], > 0.

    Returns
    -------
    numpy.ndarray
        Capacitance [F].

    Examples
    --------
    >>> round(float(output_cap_min_f(20.0, 8.0)) * 1e6, 1)
    994.7
    """
    return 1.0 / (2.0 * np.pi * _f(f_low_hz) * _f(z_min_ohm))


def input_cap_min_f(
    f_low_hz: ArrayLike, r_in_ohm: ArrayLike, factor: float = INPUT_CORNER_FACTOR
) -> Array:
    """Smallest input coupling capacitor: 1/(2 pi R_in C) <= f_low / factor.

    C = factor / (2 pi R_in f_low): the input corner sits a factor below
    f_low so that it does not add to the output corner (common practice,
    model s.9) [1].

    Parameters
    ----------
    f_low_hz : float or array_like
        Lower band edge [Hz], > 0.
    r_in_ohm : float or array_like
        Input resistance [ohm], > 0.
    factor : float, optional
        Ratio f_low / input corner [1].

    Returns
    -------
    numpy.ndarray
        Capacitance [F].

    Examples
    --------
    >>> round(float(input_cap_min_f(20.0, 22e3)) * 1e6, 3)
    1.447
    """
    return factor / (2.0 * np.pi * _f(r_in_ohm) * _f(f_low_hz))


def cap_voltage_required_v(supply_v: ArrayLike, margin: float = CAP_VOLTAGE_MARGIN) -> Array:
    """Voltage rating an electrolytic across the supply needs: margin * Vsupply at v_max.

    Parameters
    ----------
    supply_v : float or array_like
        Whole supply at the highest input [V].
    margin : float, optional
        Rating margin (1.25, common practice; model s.9) [1].

    Returns
    -------
    numpy.ndarray
        Required rating [V].
    """
    return margin * _f(supply_v)


def cap_ripple_required_a(i_peak_a: ArrayLike) -> Array:
    """Ripple-current rating of the output capacitor: Ip / sqrt(2).

    The capacitor is in series with the load and carries the whole sine load
    current, whose RMS value is Ip / sqrt(2) (model s.9).

    Parameters
    ----------
    i_peak_a : float or array_like
        Peak load current [A].

    Returns
    -------
    numpy.ndarray
        RMS current [A].

    Examples
    --------
    >>> round(float(cap_ripple_required_a(2.0)), 4)
    1.4142
    """
    return _f(i_peak_a) / np.sqrt(2.0)


def zobel_resistor_power_w(
    v_peak_v: ArrayLike,
    f_high_hz: ArrayLike,
    r_ohm: ArrayLike = ZOBEL_R_OHM,
    c_f: ArrayLike = ZOBEL_C_F,
) -> Array:
    """Dissipation of the Zobel resistor with full output at f_high.

    I_rms = V_rms / |R + 1 / (j w C)|, P = I_rms^2 R
          = (Vp^2 / 2) R / (R^2 + 1 / (w C)^2),  w = 2 pi f_high [1].

    Sine at the top of the band is the conservative case (model s.13): the
    capacitor's reactance, hence the current, falls as frequency rises.

    Parameters
    ----------
    v_peak_v : float or array_like
        Peak output voltage [V].
    f_high_hz : float or array_like
        Upper band edge [Hz], > 0.
    r_ohm : float or array_like, optional
        Zobel resistor [ohm] (10 ohm, common practice).
    c_f : float or array_like, optional
        Zobel capacitor [F] (100 nF, common practice).

    Returns
    -------
    numpy.ndarray
        Resistor dissipation [W].

    Examples
    --------
    >>> round(float(zobel_resistor_power_w(20.0, 20e3)), 4)
    0.3109
    """
    r = _f(r_ohm)
    x_c = 1.0 / (2.0 * np.pi * _f(f_high_hz) * _f(c_f))
    return 0.5 * _f(v_peak_v) ** 2 * r / (r**2 + x_c**2)


def midrail_resistor_ohm(name: str = "E24") -> np.float64:
    """Resistor of the mid-rail divider (two equal resistors, ``single`` only).

    The series value nearest MIDRAIL_R_TARGET_OHM (47 kohm, common practice)
    within MIDRAIL_R_MIN_OHM..MIDRAIL_R_MAX_OHM (10k..100k, model s.13).
    The model asks for E24, where this is 47 kohm exactly.

    Parameters
    ----------
    name : str, optional
        E-series of the resistor family.

    Returns
    -------
    numpy.float64
        Resistance [ohm].

    Examples
    --------
    >>> float(midrail_resistor_ohm()), float(midrail_resistor_ohm("E96"))
    (47000.0, 47500.0)
    """
    return eseries.nearest_value(MIDRAIL_R_TARGET_OHM, name, MIDRAIL_R_MIN_OHM, MIDRAIL_R_MAX_OHM)


def midrail_current_a(supply_v: ArrayLike, r_ohm: ArrayLike) -> Array:
    """Current through the mid-rail divider: I = Vsupply / (2 R).

    Parameters
    ----------
    supply_v : float or array_like
        Whole supply [V].
    r_ohm : float or array_like
        Each of the two equal divider resistors [ohm].

    Returns
    -------
    numpy.ndarray
        Divider current [A] (a standing current the supply carries).
    """
    return _f(supply_v) / (2.0 * _f(r_ohm))


def midrail_resistor_power_w(supply_v: ArrayLike, r_ohm: ArrayLike) -> Array:
    """Dissipation in each mid-rail resistor: P = (Vsupply / 2)^2 / R.

    Parameters
    ----------
    supply_v : float or array_like
        Whole supply, at v_max for the rating check [V].
    r_ohm : float or array_like
        Each divider resistor [ohm].

    Returns
    -------
    numpy.ndarray
        Power [W].

    Examples
    --------
    >>> round(float(midrail_resistor_power_w(24.0, 47e3)) * 1e3, 3)
    3.064
    """
    return (0.5 * _f(supply_v)) ** 2 / _f(r_ohm)


def gain_pair(
    gain: ArrayLike,
    series: str,
    rg_lo_ohm: float = RG_MIN_OHM,
    rg_hi_ohm: float = RG_MAX_OHM,
    rf_lo_ohm: float | None = None,
    rf_hi_ohm: float | None = None,
) -> tuple[NDArray[np.float64] | np.float64, ...]:
    """Feedback pair for a non-inverting gain G = 1 + Rf / Rg, with the smallest gain error.

    Rf / Rg is chosen nearest G - 1 with ``eseries.best_ratio_pair``; since the
    gain error 1 + Rf/Rg - G equals the ratio error, this minimises the gain
    error. Rg in 1k..10k (common practice impedance level; model s.9).

    Parameters
    ----------
    gain : float or array_like
        Wanted gain G [1], > 1.
    series : str
        E-series of the resistor family.
    rg_lo_ohm, rg_hi_ohm : float, optional
        Range of Rg [ohm].
    rf_lo_ohm, rf_hi_ohm : float, optional
        Range of Rf [ohm] (the family's value range), unbounded by default.

    Returns
    -------
    rf_ohm, rg_ohm, achieved_gain, rel_error
        rel_error = achieved_gain / G - 1 (signed; warn above 2 % in magnitude,
        model s.13). nan where G <= 1.

    Examples
    --------
    >>> rf, rg, g, e = gain_pair(23.0, "E24")
    >>> float(rf), float(rg), float(g), float(e)
    (22000.0, 1000.0, 23.0, 0.0)
    """
    g = _f(gain)
    rf, rg, ratio, _ = eseries.best_ratio_pair(
        g - 1.0, series, rg_lo_ohm, rg_hi_ohm, rf_lo_ohm, rf_hi_ohm
    )
    achieved = 1.0 + ratio
    return rf, rg, achieved, achieved / g - 1.0
