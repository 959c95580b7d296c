"""Quiescent current and thermal stability of the output stage (model s.7, s.13).

All functions take floats or numpy arrays (broadcast together) and return
``np.float64`` or ``np.ndarray``.

References
----------
.. [1] B. M. Oliver, "Distortion in complementary-pair class-B amplifiers",
   Hewlett-Packard Journal, Feb. 1971 (from memory): optimum bias of a
   complementary emitter follower at ``Iq * Re`` close to VT per device.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from partpick.model.defaults import DVBE_DT_V_K, VT_V

FloatOrArray = np.float64 | np.ndarray


def _f(x: npt.ArrayLike) -> np.ndarray:
    return np.asarray(x, dtype=float)


def quiescent_current_a(re_ohm: npt.ArrayLike) -> FloatOrArray:
    """Quiescent current for the optimum bias of the complementary follower.

    ``Iq = VT / Re`` with VT = 26 mV exactly (model s.13).

    Parameters
    ----------
    re_ohm : emitter resistor [ohm], > 0 (0 gives ``inf``)

    Returns
    -------
    Quiescent current [A].

    References
    ----------
    .. [1] Oliver, Hewlett-Packard Journal, Feb. 1971 (from memory).

    Examples
    --------
    >>> round(float(quiescent_current_a(0.47)) * 1000.0, 1)
    55.3
    """
    with np.errstate(divide="ignore"):
        return VT_V / _f(re_ohm)


def loop_theta_k_w(
    rth_jc_k_w: npt.ArrayLike,
    rth_cs_k_w: npt.ArrayLike,
    rth_sa_k_w: npt.ArrayLike,
    n_devices_on_sink: npt.ArrayLike,
) -> FloatOrArray:
    """Thermal resistance seen by one device in the bias loop.

    ``theta = Rth_jc + Rth_cs + n_devices_on_sink * Rth_sa`` (model s.13: all
    devices on the sink heat it, each at the same power).

    Parameters
    ----------
    rth_jc_k_w : junction-to-case [K/W]
    rth_cs_k_w : case-to-sink [K/W]
    rth_sa_k_w : sink-to-ambient [K/W]
    n_devices_on_sink : output devices sharing the sink [1]

    Returns
    -------
    theta [K/W].
    """
    return _f(rth_jc_k_w) + _f(rth_cs_k_w) + _f(n_devices_on_sink) * _f(rth_sa_k_w)


def thermal_loop_gain(
    theta_k_w: npt.ArrayLike,
    rail_v: npt.ArrayLike,
    re_ohm: npt.ArrayLike,
    iq_a: npt.ArrayLike,
    dvbe_dt_v_k: npt.ArrayLike = DVBE_DT_V_K,
) -> FloatOrArray:
    """Loop gain of the bias thermal-runaway loop.

    ``L = theta * Vs * |dVbe/dT| / (Re + re)``, ``re = VT / Iq``.
    A rise dT of the junction raises Ic by ``dT |dVbe/dT| / (Re + re)`` (bias
    diodes at ambient), which dissipates ``Vs`` times that and heats the
    junction through theta. Stable for ``L < 1``; the design requires
    ``L <= 0.5`` (model s.7; margin, common practice).

    Parameters
    ----------
    theta_k_w : thermal resistance of the loop (:func:`loop_theta_k_w`) [K/W]
    rail_v : rail voltage, at the maximum DC input [V]
    re_ohm : emitter resistor [ohm]
    iq_a : quiescent current [A], > 0
    dvbe_dt_v_k : magnitude of the Vbe temperature coefficient [V/K]
        (2.2 mV/K, common practice)

    Returns
    -------
    Loop gain L [1].
    """
    emitter_ohm = _f(re_ohm) + VT_V / _f(iq_a)
    return _f(theta_k_w) * _f(rail_v) * np.abs(_f(dvbe_dt_v_k)) / emitter_ohm


def re_power_w(i_peak_a: npt.ArrayLike, re_ohm: npt.ArrayLike) -> FloatOrArray:
    """Average dissipation of one emitter resistor over a full sine cycle.

    ``P_Re = Ip^2 * Re / 4``: the resistor carries a half-wave of peak Ip,
    whose mean square over the cycle is ``Ip^2 / 4`` (quiescent part
    negligible). Its rating must be at least twice this (model s.7; common
    practice).

    Parameters
    ----------
    i_peak_a : peak output current [A]
    re_ohm : emitter resistor [ohm]

    Returns
    -------
    Dissipation [W].
    """
    return _f(i_peak_a) ** 2 * _f(re_ohm) / 4.0
