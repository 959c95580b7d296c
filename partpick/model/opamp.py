"""The op-amp driver: supply span, slew rate, gain-bandwidth, common mode, offset, drive.

Model s.8 with the readings of s.13. Every check returns a signed margin in
its own unit (positive = satisfied).

References
----------
.. [1] A. S. Sedra and K. C. Smith, Microelectronic Circuits, Oxford University
   Press: full-power bandwidth, gain-bandwidth product, offset voltage.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from partpick.model.defaults import BASE_DRIVE_MARGIN, GBW_MARGIN, OFFSET_MAX_V

ARRANGEMENTS: tuple[str, ...] = ("split", "single")

Array = NDArray[np.float64]


def _f(x: ArrayLike) -> Array:
    return np.asarray(x, dtype=np.float64)


def supply_span_v(rail_v: ArrayLike, arrangement: str) -> Array:
    """Total supply span across the op-amp.

    span = 2 * Vs in both arrangements: in ``split`` the op-amp sits between
    +Vs and -Vs; in ``single`` it sits across the whole supply, which is
    2 * Vs with Vs = Vsupply / 2 (model s.1, s.8).

    Parameters
    ----------
    rail_v : float or array_like
        Per-half rail Vs [V].
    arrangement : str
        ``"split"`` or ``"single"``.

    Returns
    -------
    numpy.ndarray
        Span [V].

    Raises
    ------
    ValueError
        For an unknown arrangement.

    Examples
    --------
    >>> float(supply_span_v(15.0, "split")), float(supply_span_v(12.0, "single"))
    (30.0, 24.0)
    """
    if arrangement not in ARRANGEMENTS:
        raise ValueError(f"unknown arrangement {arrangement!r}; expected 'split' or 'single'")
    return 2.0 * _f(rail_v)


def supply_min_margin_v(span_min_v: ArrayLike, supply_min_v: ArrayLike) -> Array:
    """Margin of the span at v_min above the op-amp's minimum supply: span_min - supply_min.

    Parameters
    ----------
    span_min_v : float or array_like
        Supply span at the lowest input [V].
    supply_min_v : float or array_like
        Op-amp minimum total supply [V].

    Returns
    -------
    numpy.ndarray
        Margin [V], positive = satisfied (model s.13).
    """
    return _f(span_min_v) - _f(supply_min_v)


def supply_max_margin_v(span_max_v: ArrayLike, supply_max_v: ArrayLike) -> Array:
    """Margin of the op-amp's maximum supply above the span at v_max: supply_max - span_max.

    Parameters
    ----------
    span_max_v : float or array_like
        Supply span at the highest input [V].
    supply_max_v : float or array_like
        Op-amp maximum total supply [V].

    Returns
    -------
    numpy.ndarray
        Margin [V], positive = satisfied (model s.13).
    """
    return _f(supply_max_v) - _f(span_max_v)


def slew_rate_required_v_us(f_high_hz: ArrayLike, v_peak_drive_v: ArrayLike) -> Array:
    """Slew rate for full power at f_high: SR = 2 pi f_high Vp_drive, in V/us.

    The steepest slope of Vp sin(2 pi f t) is 2 pi f Vp [1].

    Parameters
    ----------
    f_high_hz : float or array_like
        Upper band edge [Hz].
    v_peak_drive_v : float or array_like
        Peak the op-amp output must reach (model s.3) [V].

    Returns
    -------
    numpy.ndarray
        Required slew rate [V/us].

    Examples
    --------
    >>> round(float(slew_rate_required_v_us(20e3, 10.0)), 4)
    1.2566
    """
    return 2.0 * np.pi * _f(f_high_hz) * _f(v_peak_drive_v) / 1e6


def slew_rate_margin_v_us(
    slew_rate_v_us: ArrayLike, f_high_hz: ArrayLike, v_peak_drive_v: ArrayLike
) -> Array:
    """Margin of the op-amp slew rate over the requirement: SR - 2 pi f Vp / 1e6 [V/us]."""
    return _f(slew_rate_v_us) - slew_rate_required_v_us(f_high_hz, v_peak_drive_v)


def gbw_required_mhz(gain: ArrayLike, f_high_hz: ArrayLike, margin: float = GBW_MARGIN) -> Array:
    """Gain-bandwidth product needed: GBW = margin * G * f_high, in MHz.

    Closed-loop bandwidth of a non-inverting stage is GBW / G [1]; the margin
    (10, common practice) leaves loop gain at f_high. G is the design gain
    (model s.13).

    Parameters
    ----------
    gain : float or array_like
        Closed-loop gain G [1].
    f_high_hz : float or array_like
        Upper band edge [Hz].
    margin : float, optional
        Loop-gain margin [1].

    Returns
    -------
    numpy.ndarray
        Required GBW [MHz].

    Examples
    --------
    >>> round(float(gbw_required_mhz(20.0, 20e3)), 6)
    4.0
    """
    return margin * _f(gain) * _f(f_high_hz) / 1e6


def gbw_margin_mhz(
    gbw_mhz: ArrayLike, gain: ArrayLike, f_high_hz: ArrayLike, margin: float = GBW_MARGIN
) -> Array:
    """Margin of the op-amp GBW over the requirement: GBW - margin G f_high / 1e6 [MHz]."""
    return _f(gbw_mhz) - gbw_required_mhz(gain, f_high_hz, margin)


def common_mode_margin_v(
    rail_min_v: ArrayLike, input_peak_v: ArrayLike, vcm_headroom_v: ArrayLike
) -> Array:
    """Input common-mode margin: Vs_min - Vin_pk - vcm_headroom.

    The inputs swing by the input peak around ground (split) or mid-rail
    (single), which sits Vs_min from either rail (model s.13).

    Parameters
    ----------
    rail_min_v : float or array_like
        Per-half rail at the lowest input, Vs_min [V].
    input_peak_v : float or array_like
        Peak input signal [V].
    vcm_headroom_v : float or array_like
        Distance the inputs must keep from each rail (catalogue) [V].

    Returns
    -------
    numpy.ndarray
        Margin [V], positive = satisfied.

    Examples
    --------
    >>> round(float(common_mode_margin_v(12.0, 1.414, 1.5)), 3)
    9.086
    """
    return _f(rail_min_v) - _f(input_peak_v) - _f(vcm_headroom_v)


def output_offset_v(vos_max_mv: ArrayLike, gain: ArrayLike) -> Array:
    """DC offset at the output: Vos_max * G (DC gain of the non-inverting stage) [1].

    Parameters
    ----------
    vos_max_mv : float or array_like
        Maximum input offset voltage [mV] (the catalogue's unit).
    gain : float or array_like
        Closed-loop gain G [1].

    Returns
    -------
    numpy.ndarray
        Output offset [V].

    Examples
    --------
    >>> round(float(output_offset_v(2.0, 20.0)), 6)
    0.04
    """
    return _f(vos_max_mv) * 1e-3 * _f(gain)


def offset_margin_v(offset_v: ArrayLike, limit: float = OFFSET_MAX_V) -> Array:
    """Margin of the output offset below its limit: limit - |offset|.

    50 mV for a DC-coupled loudspeaker (common practice; model s.8). A hard
    limit in ``split``, reported in ``single`` (model s.13).

    Parameters
    ----------
    offset_v : float or array_like
        Output offset [V].
    limit : float, optional
        Largest accepted offset [V].

    Returns
    -------
    numpy.ndarray
        Margin [V], positive = satisfied.
    """
    return limit - np.abs(_f(offset_v))


def output_current_required_a(
    ib_peak_a: ArrayLike,
    v_peak_v: ArrayLike,
    rf_ohm: ArrayLike,
    rg_ohm: ArrayLike,
    k: float = BASE_DRIVE_MARGIN,
) -> Array:
    """Op-amp output current at the signal peak: k * Ib_pk + Vp / (Rf + Rg).

    The op-amp supplies the output device's base current (with margin k,
    common practice) and the feedback network's current (model s.3 (b), s.13).

    Parameters
    ----------
    ib_peak_a : float or array_like
        Peak base current of the output device [A].
    v_peak_v : float or array_like
        Peak output voltage [V].
    rf_ohm, rg_ohm : float or array_like
        Feedback and gain resistors [ohm].
    k : float, optional
        Base-drive margin [1].

    Returns
    -------
    numpy.ndarray
        Required output current [A].

    Examples
    --------
    >>> round(float(output_current_required_a(0.01, 20.0, 19e3, 1e3)), 6)
    0.016
    """
    return k * _f(ib_peak_a) + _f(v_peak_v) / (_f(rf_ohm) + _f(rg_ohm))


def output_current_margin_a(iout_max_a: ArrayLike, required_a: ArrayLike) -> Array:
    """Margin of the op-amp's output current rating over the need: Iout_max - required [A]."""
    return _f(iout_max_a) - _f(required_a)


def packages_needed(channels: ArrayLike, per_package: ArrayLike) -> NDArray[np.int64]:
    """Op-amp packages for all channels: ceil(channels / per_package) (model s.8).

    Parameters
    ----------
    channels : int or array_like
        Number of amplifier channels, >= 0.
    per_package : int or array_like
        Op-amps per package (1, 2 or 4), >= 1.

    Returns
    -------
    numpy.ndarray of int

    Raises
    ------
    ValueError
        When any per_package is below 1.

    Examples
    --------
    >>> packages_needed([1, 2, 3, 5], [2, 2, 2, 4]).tolist()
    [1, 1, 2, 2]
    """
    c = np.asarray(channels, dtype=np.int64)
    p = np.asarray(per_package, dtype=np.int64)
    if np.any(p < 1):
        raise ValueError("per_package must be at least 1")
    return -(-c // p)
