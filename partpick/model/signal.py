"""Signal levels of the output stage: peak voltage and current, gain, supply power.

All functions take floats or numpy arrays (broadcast together) and return
``np.float64`` or ``np.ndarray``. Sine signals throughout (model s.2).

References
----------
.. [1] A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, chapter on output
   stages and power amplifiers, class B output stage (power conversion
   efficiency and power dissipation).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

FloatOrArray = np.float64 | np.ndarray


def peak_voltage_v(power_w: npt.ArrayLike, load_ohm: npt.ArrayLike) -> FloatOrArray:
    """Peak output voltage for a continuous sine power into a resistive load.

    ``Vp = sqrt(2 * P * R)``

    Parameters
    ----------
    power_w : continuous sine output power per channel [W], >= 0
    load_ohm : nominal load resistance [ohm], > 0

    Returns
    -------
    Peak output voltage [V].

    References
    ----------
    .. [1] Sedra & Smith, *Microelectronic Circuits*, class B output stage.

    Examples
    --------
    >>> round(float(peak_voltage_v(20.0, 8.0)), 2)
    17.89
    """
    return np.sqrt(2.0 * np.asarray(power_w, dtype=float) * np.asarray(load_ohm, dtype=float))


def peak_current_a(v_peak_v: npt.ArrayLike, z_min_ohm: npt.ArrayLike) -> FloatOrArray:
    """Peak output current into the lowest load impedance magnitude.

    ``Ip = Vp / |Z_min|``

    Parameters
    ----------
    v_peak_v : peak output voltage [V]
    z_min_ohm : lowest load impedance magnitude |Z_min| [ohm], > 0

    Returns
    -------
    Peak output current [A].
    """
    return np.asarray(v_peak_v, dtype=float) / np.asarray(z_min_ohm, dtype=float)


def closed_loop_gain(v_peak_v: npt.ArrayLike, input_vrms: npt.ArrayLike) -> FloatOrArray:
    """Voltage gain that turns the rated input into full output.

    ``G = Vp / (sqrt(2) * Vin_rms)``

    Parameters
    ----------
    v_peak_v : peak output voltage at full power [V]
    input_vrms : input voltage for full power, rms [V], > 0

    Returns
    -------
    Closed-loop voltage gain [V/V].
    """
    return np.asarray(v_peak_v, dtype=float) / (np.sqrt(2.0) * np.asarray(input_vrms, dtype=float))


def supply_current_avg_a(i_peak_a: npt.ArrayLike) -> FloatOrArray:
    """Average current drawn from each rail by the class B part of a sine.

    ``I_avg = Ip / pi`` (each rail conducts one half-wave of peak Ip).

    Parameters
    ----------
    i_peak_a : peak output current [A]

    Returns
    -------
    Average current per rail [A], quiescent current not included.

    References
    ----------
    .. [1] Sedra & Smith, *Microelectronic Circuits*, class B output stage.
    """
    return np.asarray(i_peak_a, dtype=float) / np.pi


def supply_power_w(
    rail_v: npt.ArrayLike, i_peak_a: npt.ArrayLike, iq_a: npt.ArrayLike = 0.0
) -> FloatOrArray:
    """Power drawn from both rails of a split supply by one channel.

    ``P_supply = 2 * Vs * Ip / pi + 2 * Vs * Iq``

    Parameters
    ----------
    rail_v : rail voltage Vs (each rail of the split supply) [V]
    i_peak_a : peak output current [A]
    iq_a : quiescent current of the output stage [A]

    Returns
    -------
    Supply power [W].

    References
    ----------
    .. [1] Sedra & Smith, *Microelectronic Circuits*, class B output stage.
    """
    rail = np.asarray(rail_v, dtype=float)
    return 2.0 * rail * supply_current_avg_a(i_peak_a) + 2.0 * rail * np.asarray(iq_a, dtype=float)


def efficiency(v_peak_v: npt.ArrayLike, rail_v: npt.ArrayLike) -> FloatOrArray:
    """Power conversion efficiency of a class B stage into a resistive load.

    ``eta = pi/4 * Vp / Vs`` (quiescent power neglected).

    Parameters
    ----------
    v_peak_v : peak output voltage [V], 0 <= Vp <= Vs
    rail_v : rail voltage Vs [V], > 0

    Returns
    -------
    Efficiency [1], at most pi/4 = 78.5 %.

    References
    ----------
    .. [1] Sedra & Smith, *Microelectronic Circuits*, class B output stage.
    """
    return np.pi / 4.0 * np.asarray(v_peak_v, dtype=float) / np.asarray(rail_v, dtype=float)


def class_b_total_dissipation_max_w(
    rail_v: npt.ArrayLike, load_ohm: npt.ArrayLike
) -> FloatOrArray:
    """Largest total dissipation of both class B output devices, resistive load.

    ``P_D,max = 2 * Vs^2 / (pi^2 * R)``, reached at ``Vp = 2 Vs / pi``.

    Parameters
    ----------
    rail_v : rail voltage Vs [V]
    load_ohm : load resistance [ohm], > 0

    Returns
    -------
    Total dissipation of the two devices [W], quiescent part not included.

    References
    ----------
    .. [1] Sedra & Smith, *Microelectronic Circuits*, class B output stage.
    """
    rail = np.asarray(rail_v, dtype=float)
    return 2.0 * rail**2 / (np.pi**2 * np.asarray(load_ohm, dtype=float))
