"""Headroom and base drive of the emitter-follower output stage (model s.3, s.13).

Covers the transistor and driver headroom at the minimum rail, the base current
at the peak, and the two ways of feeding the bases: a bias resistor R1 (R2
mirrored) from each rail, or a constant-current source in its place.
All functions take floats or numpy arrays (broadcast together) and return
``np.float64`` or ``np.ndarray``. Voltages are magnitudes for the positive half
(NPN); the PNP half mirrors them.

References
----------
.. [1] P. Horowitz, W. Hill, *The Art of Electronics*, chapter on transistors:
   push-pull followers, the Ebers-Moll exponential and current sources.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from partpick.model.defaults import (
    BASE_DRIVE_MARGIN,
    CCS_COMPLIANCE_V,
    CCS_REFERENCE_CURRENT_A,
    VT_V,
)

FloatOrArray = np.float64 | np.ndarray


def _f(x: npt.ArrayLike) -> np.ndarray:
    return np.asarray(x, dtype=float)


# --- device characteristics at the peak current (model s.13) ---------------------


def vce_sat_at_v(
    vce_sat_v: npt.ArrayLike, vce_sat_at_a: npt.ArrayLike, i_a: npt.ArrayLike
) -> FloatOrArray:
    """Saturation voltage scaled to a collector current.

    ``Vce_sat(I) = vce_sat_v * max(1, I / vce_sat_at_a)`` (model s.13: linear
    growth above the test current, the bulk resistance dominating; conservative).

    Parameters
    ----------
    vce_sat_v : catalogue saturation voltage [V]
    vce_sat_at_a : collector current it is specified at [A], > 0
    i_a : collector current of interest [A], >= 0

    Returns
    -------
    Saturation voltage at ``i_a`` [V], never below the catalogue value.
    """
    return _f(vce_sat_v) * np.maximum(1.0, _f(i_a) / _f(vce_sat_at_a))


def vbe_at_v(
    vbe_on_v: npt.ArrayLike, vbe_on_at_a: npt.ArrayLike, i_a: npt.ArrayLike
) -> FloatOrArray:
    """Base-emitter voltage scaled to a collector current.

    ``Vbe(I) = max(vbe_on_v, vbe_on_v + VT * ln(I / vbe_on_at_a))`` (model s.13;
    the exponential law gives about 60 mV per decade; never below the
    catalogue value, conservative for headroom).

    Parameters
    ----------
    vbe_on_v : catalogue base-emitter voltage [V]
    vbe_on_at_a : collector current it is specified at [A], > 0
    i_a : collector current of interest [A], >= 0

    Returns
    -------
    Base-emitter voltage at ``i_a`` [V].

    References
    ----------
    .. [1] Horowitz & Hill, *The Art of Electronics*, Ebers-Moll model.
    """
    vbe = _f(vbe_on_v)
    with np.errstate(divide="ignore"):
        rise_v = VT_V * np.log(_f(i_a) / _f(vbe_on_at_a))
    return np.maximum(vbe, vbe + rise_v)


def hfe_at(hfe_min: npt.ArrayLike, hfe_at_a: npt.ArrayLike, i_a: npt.ArrayLike) -> FloatOrArray:
    """Current gain at a collector current, falling above the test current.

    ``hFE(I) = hfe_min * hfe_at_a / I`` for ``I > hfe_at_a``, else ``hfe_min``
    (model s.13; gain falls at high current, common practice, conservative).

    Parameters
    ----------
    hfe_min : catalogue minimum current gain [1]
    hfe_at_a : collector current it is specified at [A], > 0
    i_a : collector current of interest [A], >= 0

    Returns
    -------
    Current gain to use at ``i_a`` [1].
    """
    with np.errstate(divide="ignore"):
        fall = np.minimum(1.0, _f(hfe_at_a) / _f(i_a))
    return _f(hfe_min) * fall


# --- headroom (model s.3) ----------------------------------------------------------


def transistor_headroom_margin_v(
    rail_min_v: npt.ArrayLike,
    v_peak_v: npt.ArrayLike,
    i_peak_a: npt.ArrayLike,
    re_ohm: npt.ArrayLike,
    vce_sat_v: npt.ArrayLike,
) -> FloatOrArray:
    """Headroom margin of the output transistor at the minimum rail.

    ``margin = Vs_min - (Vp + Ip * Re + Vce_sat(Ip))``; positive = satisfied.

    Parameters
    ----------
    rail_min_v : rail voltage at the minimum DC input [V]
    v_peak_v : peak output voltage [V]
    i_peak_a : peak output current [A]
    re_ohm : emitter resistor [ohm]
    vce_sat_v : saturation voltage at Ip (see :func:`vce_sat_at_v`) [V]

    Returns
    -------
    Signed margin [V].
    """
    return _f(rail_min_v) - (_f(v_peak_v) + _f(i_peak_a) * _f(re_ohm) + _f(vce_sat_v))


def base_voltage_peak_v(
    v_peak_v: npt.ArrayLike,
    i_peak_a: npt.ArrayLike,
    re_ohm: npt.ArrayLike,
    vbe_v: npt.ArrayLike,
) -> FloatOrArray:
    """Peak voltage of the output transistor's base.

    ``V_base,pk = Vp + Ip * Re + Vbe(Ip)``

    Parameters
    ----------
    v_peak_v : peak output voltage [V]
    i_peak_a : peak output current [A]
    re_ohm : emitter resistor [ohm]
    vbe_v : base-emitter voltage at Ip (see :func:`vbe_at_v`) [V]

    Returns
    -------
    Peak base voltage [V].
    """
    return _f(v_peak_v) + _f(i_peak_a) * _f(re_ohm) + _f(vbe_v)


def drive_level_v(
    v_peak_v: npt.ArrayLike,
    i_peak_a: npt.ArrayLike,
    re_ohm: npt.ArrayLike,
    vbe_v: npt.ArrayLike,
    v_diode_v: npt.ArrayLike,
) -> FloatOrArray:
    """Peak the op-amp output must reach to drive the stage to full output.

    ``V_drive = Vp + Ip * Re + Vbe(Ip) - Vd``: the op-amp output sits one bias
    diode drop below the NPN base.

    Parameters
    ----------
    v_peak_v : peak output voltage [V]
    i_peak_a : peak output current [A]
    re_ohm : emitter resistor [ohm]
    vbe_v : base-emitter voltage at Ip [V]
    v_diode_v : bias diode forward drop [V] (0.65 V when unknown, common practice)

    Returns
    -------
    Peak op-amp output voltage [V].
    """
    return base_voltage_peak_v(v_peak_v, i_peak_a, re_ohm, vbe_v) - _f(v_diode_v)


def driver_headroom_margin_v(
    rail_min_v: npt.ArrayLike, swing_headroom_v: npt.ArrayLike, drive_level_v: npt.ArrayLike
) -> FloatOrArray:
    """Headroom margin of the op-amp output at the minimum rail.

    ``margin = Vs_min - swing_headroom - V_drive``; positive = satisfied.

    Parameters
    ----------
    rail_min_v : rail voltage at the minimum DC input [V]
    swing_headroom_v : how close the op-amp output gets to its rail [V]
    drive_level_v : peak the op-amp output must reach (:func:`drive_level_v`) [V]

    Returns
    -------
    Signed margin [V].
    """
    return _f(rail_min_v) - _f(swing_headroom_v) - _f(drive_level_v)


# --- base drive (model s.3) --------------------------------------------------------


def base_current_peak_a(i_peak_a: npt.ArrayLike, hfe: npt.ArrayLike) -> FloatOrArray:
    """Peak base current of the output transistor.

    ``Ib_pk = Ip / hFE``

    Parameters
    ----------
    i_peak_a : peak output current [A]
    hfe : current gain at Ip (see :func:`hfe_at`) [1], > 0

    Returns
    -------
    Peak base current [A].
    """
    return _f(i_peak_a) / _f(hfe)


def bias_resistor_max_ohm(
    rail_min_v: npt.ArrayLike,
    v_base_peak_v: npt.ArrayLike,
    ib_peak_a: npt.ArrayLike,
    k: npt.ArrayLike = BASE_DRIVE_MARGIN,
) -> FloatOrArray:
    """Largest bias resistor R1 that still feeds the base at the positive peak.

    ``R1_max = (Vs_min - V_base,pk) / (k * Ib_pk)`` (model s.3 (a); k = 1.5,
    common practice). At the peak the base can take no more than R1's current.

    Parameters
    ----------
    rail_min_v : rail voltage at the minimum DC input [V]
    v_base_peak_v : peak base voltage (:func:`base_voltage_peak_v`) [V]
    ib_peak_a : peak base current [A]
    k : base-drive margin [1]

    Returns
    -------
    Largest R1 [ohm]; ``nan`` where ``Vs_min <= V_base,pk`` (no resistor can
    feed the base: infeasible); ``inf`` where no base current is needed.
    """
    drop_v = _f(rail_min_v) - _f(v_base_peak_v)
    with np.errstate(divide="ignore", invalid="ignore"):
        r_ohm = drop_v / (_f(k) * _f(ib_peak_a))
    return np.where(drop_v > 0.0, r_ohm, np.nan)[()]


def bias_standing_current_a(
    rail_v: npt.ArrayLike, v_diode_v: npt.ArrayLike, r1_ohm: npt.ArrayLike
) -> FloatOrArray:
    """Standing (idle) current of the bias string.

    ``I_bias = (Vs - Vd) / R1``: at idle the op-amp output is at 0 V and the
    top of D1 one diode drop above it.

    Parameters
    ----------
    rail_v : rail voltage [V]
    v_diode_v : bias diode forward drop [V]
    r1_ohm : bias resistor [ohm], > 0

    Returns
    -------
    Standing bias current [A].
    """
    return (_f(rail_v) - _f(v_diode_v)) / _f(r1_ohm)


def bias_resistor_power_w(
    rail_max_v: npt.ArrayLike,
    v_diode_v: npt.ArrayLike,
    v_base_peak_v: npt.ArrayLike,
    r1_ohm: npt.ArrayLike,
) -> FloatOrArray:
    """Average dissipation of the bias resistor R1 at full output and maximum rail.

    ``P_R1 = ((Vs_max - Vd)^2 + V_base,pk^2 / 2) / R1``

    This is the cycle average of ``(Vs_max - Vd - V_base,pk * sin t)^2 / R1``:
    the voltage across R1 is the rail minus the base node, which idles at Vd and
    swings with the signal. Taking the full base peak as the swing amplitude
    (the true swing around Vd is ``V_base,pk - Vd``) and the maximum rail makes
    it conservative; the first term is the idle dissipation, the second what
    the signal adds.

    Parameters
    ----------
    rail_max_v : rail voltage at the maximum DC input [V]
    v_diode_v : bias diode forward drop [V]
    v_base_peak_v : peak base voltage [V]
    r1_ohm : bias resistor [ohm], > 0

    Returns
    -------
    Average dissipation [W].
    """
    idle_v = _f(rail_max_v) - _f(v_diode_v)
    return (idle_v**2 + _f(v_base_peak_v) ** 2 / 2.0) / _f(r1_ohm)


# --- current-source bias feed (model s.3 (a')) -------------------------------------


def ccs_current_required_a(
    ib_peak_a: npt.ArrayLike, k: npt.ArrayLike = BASE_DRIVE_MARGIN
) -> FloatOrArray:
    """Smallest current of the current-source bias feed.

    ``I_ccs >= k * Ib_pk`` (model s.3 (a'); k = 1.5, common practice).

    Parameters
    ----------
    ib_peak_a : peak base current [A]
    k : base-drive margin [1]

    Returns
    -------
    Required source current [A].
    """
    return _f(k) * _f(ib_peak_a)


def ccs_compliance_margin_v(
    rail_min_v: npt.ArrayLike,
    v_base_peak_v: npt.ArrayLike,
    compliance_v: npt.ArrayLike = CCS_COMPLIANCE_V,
) -> FloatOrArray:
    """Compliance margin of the current source at the positive peak.

    ``margin = Vs_min - V_base,pk - V_compliance`` (model s.3 (a'); about 1 V,
    common practice); positive = the source still delivers its current.

    Parameters
    ----------
    rail_min_v : rail voltage at the minimum DC input [V]
    v_base_peak_v : peak base voltage [V]
    compliance_v : voltage the source needs across it [V]

    Returns
    -------
    Signed margin [V].
    """
    return _f(rail_min_v) - _f(v_base_peak_v) - _f(compliance_v)


def ccs_transistor_dissipation_w(
    rail_max_v: npt.ArrayLike, i_ccs_a: npt.ArrayLike
) -> FloatOrArray:
    """Worst-case dissipation of the current-source transistor.

    ``P = 2 * Vs_max * I_ccs`` (model s.3 (a'): the base it feeds swings to the
    far rail, so the whole span can sit across it; conservative upper bound).

    Parameters
    ----------
    rail_max_v : rail voltage at the maximum DC input [V]
    i_ccs_a : source current [A]

    Returns
    -------
    Dissipation [W].
    """
    return 2.0 * _f(rail_max_v) * _f(i_ccs_a)


def ccs_pair_sink_heat_w(
    rail_max_v: npt.ArrayLike, i_ccs_a: npt.ArrayLike
) -> FloatOrArray:
    """Heat the two current sources of one channel put on a shared heatsink.

    ``P = 2 * Vs_max * I_ccs``. The upper source sees ``Vs - v_top`` across
    it and the lower one ``Vs + v_bottom``; the two base nodes move together
    (the bias string between them is a few diode drops), so the two voltages
    add up to at most ``2 * Vs`` at every instant, whatever the signal. Each
    carries ``I_ccs``. The sum is therefore an upper bound that holds at idle,
    at full power and with the output stuck at a rail (it neglects only the
    few volts across the emitter resistors and the bias string).

    Parameters
    ----------
    rail_max_v : rail voltage at the maximum DC input [V]
    i_ccs_a : source current [A]

    Returns
    -------
    Heat of both sources together [W].

    Examples
    --------
    >>> float(ccs_pair_sink_heat_w(26.5, 0.16))
    8.48
    """
    return 2.0 * _f(rail_max_v) * _f(i_ccs_a)


def ccs_reference_current_a(
    i_ccs_a: npt.ArrayLike,
    hfe: npt.ArrayLike,
    i_diode_a: npt.ArrayLike = CCS_REFERENCE_CURRENT_A,
) -> FloatOrArray:
    """Current the reference resistor must carry at the minimum rail.

    ``I_ref = I_diode + I_ccs / hFE``: the resistor from the source
    transistor's base carries the reference's own current plus that base
    current, so the reference keeps at least ``I_diode`` (2 mA by default,
    common practice) however much the base draws.

    Parameters
    ----------
    i_ccs_a : source current [A]
    hfe : current gain of the source transistor at that current [1], > 0
    i_diode_a : current the reference keeps at the least [A]

    Returns
    -------
    Reference resistor current [A].

    Examples
    --------
    >>> round(float(ccs_reference_current_a(0.16, 40.0)) * 1e3, 2)
    6.0
    """
    return _f(i_diode_a) + _f(i_ccs_a) / _f(hfe)


def ccs_current_bounds_a(
    v_ref_v: npt.ArrayLike,
    r_e_ohm: npt.ArrayLike,
    vbe_on_v: npt.ArrayLike,
    vbe_on_at_a: npt.ArrayLike,
) -> tuple[FloatOrArray, FloatOrArray]:
    """Bounds on the current of a source set by ``R_E``: ``I = (Vref - Vbe(I)) / R_E``.

    Vbe grows with the current (model s.13: ``max(vbe_on, vbe_on + VT ln(I / I_on))``),
    so ``I_hi = (Vref - vbe_on) / R_E`` is an upper bound (Vbe never below
    vbe_on) and ``I_lo = (Vref - Vbe(I_hi)) / R_E`` a lower bound (Vbe at a
    current no smaller than the true one). The drive check uses ``I_lo``;
    dissipation, reference loading and the bias-diode rating use ``I_hi``
    (both conservative).

    Parameters
    ----------
    v_ref_v : reference voltage [V]
    r_e_ohm : emitter resistor [ohm], > 0
    vbe_on_v, vbe_on_at_a : the source transistor's Vbe and its test current [V], [A]

    Returns
    -------
    (I_lo, I_hi) [A].

    Examples
    --------
    >>> lo, hi = ccs_current_bounds_a(1.8, 6.8, 0.65, 0.01)
    >>> round(float(hi) * 1e3, 1), round(float(lo) * 1e3, 1)
    (169.1, 158.3)
    """
    hi = (_f(v_ref_v) - _f(vbe_on_v)) / _f(r_e_ohm)
    lo = (_f(v_ref_v) - vbe_at_v(vbe_on_v, vbe_on_at_a, hi)) / _f(r_e_ohm)
    return lo, hi


def ccs_emitter_resistor_ohm(
    v_ref_v: npt.ArrayLike, vbe_v: npt.ArrayLike, i_ccs_a: npt.ArrayLike
) -> FloatOrArray:
    """Emitter resistor that sets the current-source current.

    ``R_E = (Vref - Vbe) / I_ccs``: the reference minus one Vbe sits across it.

    Parameters
    ----------
    v_ref_v : reference voltage (two diodes or an LED) [V]
    vbe_v : base-emitter voltage of the source transistor [V]
    i_ccs_a : source current [A], > 0

    Returns
    -------
    Emitter resistor [ohm].

    References
    ----------
    .. [1] Horowitz & Hill, *The Art of Electronics*, transistor current sources.
    """
    return (_f(v_ref_v) - _f(vbe_v)) / _f(i_ccs_a)


def ccs_reference_resistor_ohm(
    rail_min_v: npt.ArrayLike,
    v_ref_v: npt.ArrayLike,
    i_ref_a: npt.ArrayLike = CCS_REFERENCE_CURRENT_A,
) -> FloatOrArray:
    """Resistor that carries the reference current of the current source.

    ``R_ref = (Vs_min - Vref) / I_ref``. The reference (two diodes or an LED)
    hangs from the rail to the source transistor's base; this resistor runs
    from that base node to ground, so the rail minus the reference sits across
    it. Sized at the minimum rail, the reference gets at least ``I_ref``
    (2 mA by default, common practice).

    Parameters
    ----------
    rail_min_v : rail voltage at the minimum DC input [V]
    v_ref_v : reference voltage [V]
    i_ref_a : reference current [A], > 0

    Returns
    -------
    Reference resistor [ohm].
    """
    return (_f(rail_min_v) - _f(v_ref_v)) / _f(i_ref_a)


def ccs_junction_temp_c(
    ambient_c: npt.ArrayLike, p_w: npt.ArrayLike, rth_ja_k_w: npt.ArrayLike
) -> FloatOrArray:
    """Junction temperature of the current-source transistor in free air.

    ``Tj = T_amb + P * Rth_ja``

    Parameters
    ----------
    ambient_c : ambient temperature [degC]
    p_w : dissipation [W]
    rth_ja_k_w : junction-to-ambient thermal resistance [K/W]

    Returns
    -------
    Junction temperature [degC].
    """
    return _f(ambient_c) + _f(p_w) * _f(rth_ja_k_w)
