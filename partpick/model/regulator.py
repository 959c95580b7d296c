"""The optional linear pre-regulator: set point, set resistors, dropout, current, heat.

Model s.10 with the readings of s.13. ``vout_v`` is always the whole
regulated supply; in ``single`` the rail Vs is half of it. Every check
returns a signed margin (positive = satisfied).

References
----------
.. [1] P. Horowitz and W. Hill, The Art of Electronics, Cambridge University
   Press: three-terminal adjustable regulators, Vout = Vref (1 + R2/R1) + Iadj R2.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from partpick.model import eseries
from partpick.model.defaults import (
    REGULATOR_R1_MAX_OHM,
    REGULATOR_R1_MIN_OHM,
    REGULATOR_STEP_V,
)

Array = NDArray[np.float64]


def _f(x: ArrayLike) -> Array:
    return np.asarray(x, dtype=np.float64)


def adjustable_vout_v(
    vref_v: ArrayLike, iadj_a: ArrayLike, r1_ohm: ArrayLike, r2_ohm: ArrayLike
) -> Array:
    """Output of an adjustable regulator: Vout = Vref (1 + R2 / R1) + Iadj R2 [1].

    R1 runs from the output to the adjust pin (it carries Vref), R2 from the
    adjust pin to ground; the adjust-pin current Iadj also flows in R2.

    Parameters
    ----------
    vref_v : float or array_like
        Reference voltage between output and adjust pin [V].
    iadj_a : float or array_like
        Adjust-pin current [A].
    r1_ohm, r2_ohm : float or array_like
        Set resistors [ohm].

    Returns
    -------
    numpy.ndarray
        Output voltage [V].

    Examples
    --------
    >>> round(float(adjustable_vout_v(1.25, 50e-6, 240.0, 2400.0)), 4)
    13.87
    """
    r2 = _f(r2_ohm)
    return _f(vref_v) * (1.0 + r2 / _f(r1_ohm)) + _f(iadj_a) * r2


def set_pair(
    vout_target_v: ArrayLike,
    vref_v: float,
    iadj_a: float,
    series: str,
    r1_lo: float = REGULATOR_R1_MIN_OHM,
    r1_hi: float = REGULATOR_R1_MAX_OHM,
) -> tuple[NDArray[np.float64] | np.float64, ...]:
    """Set-resistor pair (R1, R2) from an E-series nearest a target output.

    Exhaustive over R1 in [r1_lo, r1_hi] (100..1k by default: Vref / R1 of a
    few mA keeps the regulator loaded with nothing connected; common
    practice), exact over R2 (Vout rises linearly with R2, so the best R2 for
    each R1 is one of the two series values around
    R2* = (Vout - Vref) / (Vref / R1 + Iadj)). Iadj is included (model s.13).
    Ties go to the lowest R1, then the lowest R2.

    Parameters
    ----------
    vout_target_v : float or array_like
        Wanted output(s) [V], > vref_v.
    vref_v : float
        Reference voltage [V].
    iadj_a : float
        Adjust-pin current [A], >= 0.
    series : str
        E-series of the resistor family (E24 or E96 in the model).
    r1_lo, r1_hi : float, optional
        Range of R1 [ohm].

    Returns
    -------
    r1_ohm, r2_ohm, vout_achieved_v, rel_error
        rel_error = achieved / target - 1 (signed). nan where the target is
        not above vref_v.

    Examples
    --------
    >>> r1, r2, v, e = set_pair(13.75, 1.25, 0.0, "E24")
    >>> float(r1), float(r2), float(v)
    (100.0, 1000.0, 13.75)
    """
    target = _f(vout_target_v)
    flat = np.atleast_1d(target).ravel()
    valid = np.isfinite(flat) & (flat > vref_v)
    safe = np.where(valid, flat, 2.0 * vref_v + 1.0)
    r1_values = eseries.series_values(series, r1_lo, r1_hi)
    ideal_r2 = (safe[:, None] - vref_v) / (vref_v / r1_values[None, :] + iadj_a)
    r2_values = eseries.series_values(series, ideal_r2.min() / 10.0, ideal_r2.max() * 10.0)
    r2, r1, got = eseries.best_linear_pair(
        r1_values,
        r2_values,
        ideal_r2,
        lambda a, b: adjustable_vout_v(vref_v, iadj_a, b, a),
        safe,
    )
    out = (r1, r2, got, got / safe - 1.0)
    return tuple(
        eseries.scalar_or_array(np.where(valid, v, np.nan).reshape(target.shape)) for v in out
    )


def set_point_grid_v(
    vout_lo_v: float, vout_hi_v: float, step: float = REGULATOR_STEP_V
) -> NDArray[np.float64]:
    """Set points on a step grid inside [vout_lo, vout_hi], both ends inclusive.

    The points are the multiples of ``step`` in the range (0.1 V, model s.10),
    rounded to the step's decimals so 12.3 is the float 12.3.

    Parameters
    ----------
    vout_lo_v, vout_hi_v : float
        Range the regulator can be set to [V].
    step : float, optional
        Grid step [V], > 0.

    Returns
    -------
    numpy.ndarray
        Ascending set points [V] (empty when the range holds none).

    Examples
    --------
    >>> set_point_grid_v(1.25, 1.6).tolist()
    [1.3, 1.4, 1.5, 1.6]
    """
    if step <= 0.0:
        raise ValueError("step must be positive")
    first = np.ceil(vout_lo_v / step - eseries.REL_TOL)
    last = np.floor(vout_hi_v / step + eseries.REL_TOL)
    decimals = max(0, int(np.ceil(-np.log10(step))) + 1)
    return np.round(np.arange(first, last + 1.0) * step, decimals)


def dropout_margin_v(v_min_v: ArrayLike, vout_v: ArrayLike, dropout_v: ArrayLike) -> Array:
    """Dropout margin at the lowest input: v_min - Vout - dropout (model s.10).

    Parameters
    ----------
    v_min_v : float or array_like
        Lowest DC input [V].
    vout_v : float or array_like
        Regulated output (whole supply) [V].
    dropout_v : float or array_like
        Dropout at the peak current (catalogue) [V].

    Returns
    -------
    numpy.ndarray
        Margin [V], positive = satisfied.
    """
    return _f(v_min_v) - _f(vout_v) - _f(dropout_v)


def vin_max_margin_v(vin_max_v: ArrayLike, v_max_v: ArrayLike) -> Array:
    """Input-voltage margin at the highest input: Vin_max - v_max (model s.10) [V]."""
    return _f(vin_max_v) - _f(v_max_v)


def regulator_current_peak_a(channels: ArrayLike, i_peak_a: ArrayLike) -> Array:
    """Peak regulator current: channels * Ip (all channels at peak together; model s.13) [A]."""
    return _f(channels) * _f(i_peak_a)


def regulator_current_avg_a(
    channels: ArrayLike, i_peak_a: ArrayLike, standing_a: ArrayLike
) -> Array:
    """Average regulator current: channels * Ip / pi + all standing currents.

    A sine half-wave drawn from the one positive supply averages Ip / pi per
    channel (model s.2); quiescent, bias-string and divider currents add
    (model s.13).

    Parameters
    ----------
    channels : int or array_like
        Amplifier channels.
    i_peak_a : float or array_like
        Peak output current per channel [A].
    standing_a : float or array_like
        Sum of quiescent and bias currents drawn from the regulator [A].

    Returns
    -------
    numpy.ndarray
        Average current [A].

    Examples
    --------
    >>> round(float(regulator_current_avg_a(2, 3.14159265, 0.1)), 6)
    2.1
    """
    return _f(channels) * _f(i_peak_a) / np.pi + _f(standing_a)


def regulator_current_margin_a(iout_max_a: ArrayLike, i_peak_a: ArrayLike) -> Array:
    """Margin of the regulator's current rating over the peak draw: Iout_max - I_peak [A]."""
    return _f(iout_max_a) - _f(i_peak_a)


def regulator_dissipation_w(v_max_v: ArrayLike, vout_v: ArrayLike, i_avg_a: ArrayLike) -> Array:
    """Regulator dissipation at the highest input: (v_max - Vout) * I_avg (model s.10).

    Valid for v_max >= Vout (a regulator in dropout fails ``dropout_margin_v``).

    Parameters
    ----------
    v_max_v : float or array_like
        Highest DC input [V].
    vout_v : float or array_like
        Regulated output [V].
    i_avg_a : float or array_like
        Average load current including standing currents [A].

    Returns
    -------
    numpy.ndarray
        Power [W].
    """
    return (_f(v_max_v) - _f(vout_v)) * _f(i_avg_a)


def regulator_junction_temp_c(
    ambient_c: ArrayLike, p_w: ArrayLike, rth_ja_k_w: ArrayLike
) -> Array:
    """Junction temperature without a heatsink: Tj = Ta + P * Rth_ja (model s.10).

    Parameters
    ----------
    ambient_c : float or array_like
        Ambient temperature [degC].
    p_w : float or array_like
        Dissipation [W].
    rth_ja_k_w : float or array_like
        Junction-to-ambient thermal resistance [K/W].

    Returns
    -------
    numpy.ndarray
        Junction temperature [degC].

    Examples
    --------
    >>> float(regulator_junction_temp_c(40.0, 1.5, 50.0))
    115.0
    """
    return _f(ambient_c) + _f(p_w) * _f(rth_ja_k_w)
