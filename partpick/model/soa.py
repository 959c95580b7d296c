"""Safe operating area of the output transistors (model s.5, s.13).

SOA curves of many devices are held as two NaN-padded 2-D arrays
``bp_v, bp_a`` of shape ``[n_devices, n_bp]`` (see :func:`pad_curves`); a device
without curve data has an all-NaN row. Per-device scalars (``ic_max_a``,
``pd_max_w``, ``vceo_v``) have shape ``[n_devices]``. Sampled quantities
(``vce_v``, ``ic_a``) carry the samples on their last axis, after the device
axes. All functions take floats or numpy arrays and return ``np.float64`` or
``np.ndarray``.

References
----------
.. [1] Manufacturers' data sheets for bipolar power transistors: the DC safe
   operating area is drawn on log-log axes as straight segments (Ic_max, the
   power limit Pd/Vce, the second-breakdown limit) ending at Vceo (common
   practice).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import numpy.typing as npt

from partpick.model.defaults import LOAD_LINE_SAMPLES, VCEO_MARGIN

FloatOrArray = np.float64 | np.ndarray

#: Smallest SOA current used as a divisor [A]: a zero limit (beyond Vceo, or
#: fully derated) turns any conducting sample into a very negative margin.
_LIMIT_FLOOR_A = 1e-12
#: Most negative margin returned, so that margins stay finite for the optimiser.
_MARGIN_FLOOR = -1e9


def _f(x: npt.ArrayLike) -> np.ndarray:
    return np.asarray(x, dtype=float)


# --- catalogue curves --------------------------------------------------------------


def parse_soa_dc(text: str) -> tuple[np.ndarray, np.ndarray]:
    """Parse a catalogue DC SOA field ``"V:A;V:A;..."`` into breakpoint arrays.

    Whitespace around numbers and one trailing ``;`` are accepted.

    Parameters
    ----------
    text : breakpoints (Vce [V], Ic [A]) at Tc = 25 degC, increasing in V

    Returns
    -------
    (volts, amps) : two 1-D float arrays of equal length (at least 2)

    Raises
    ------
    ValueError
        If the text is empty or malformed, has fewer than two breakpoints, a
        value that is not a finite positive number, voltages that do not
        strictly increase, or a current that rises with voltage.

    Examples
    --------
    >>> v, a = parse_soa_dc("10:8; 40:2.5; 80:0.5")
    >>> v.tolist(), a.tolist()
    ([10.0, 40.0, 80.0], [8.0, 2.5, 0.5])
    """
    if not isinstance(text, str) or not text.strip():
        raise ValueError("soa_dc: empty; expected 'V:A;V:A;...'")
    items = text.strip().removesuffix(";").split(";")
    volts, amps = [], []
    for item in items:
        parts = item.split(":")
        if len(parts) != 2:
            raise ValueError(f"soa_dc: breakpoint {item.strip()!r} is not of the form 'V:A'")
        try:
            v, a = float(parts[0]), float(parts[1])
        except ValueError:
            raise ValueError(f"soa_dc: breakpoint {item.strip()!r} is not numeric") from None
        if not (np.isfinite(v) and np.isfinite(a) and v > 0.0 and a > 0.0):
            raise ValueError(
                f"soa_dc: breakpoint {item.strip()!r} must have finite positive V and A"
            )
        volts.append(v)
        amps.append(a)
    v_arr, a_arr = np.array(volts), np.array(amps)
    if v_arr.size < 2:
        raise ValueError("soa_dc: at least two breakpoints are needed")
    if np.any(np.diff(v_arr) <= 0.0):
        raise ValueError("soa_dc: voltages must strictly increase")
    if np.any(np.diff(a_arr) > 0.0):
        raise ValueError("soa_dc: current must not rise with voltage")
    return v_arr, a_arr


def pad_curves(
    curves: Sequence[tuple[npt.ArrayLike, npt.ArrayLike] | None],
) -> tuple[np.ndarray, np.ndarray]:
    """Stack curves of different lengths into NaN-padded 2-D arrays.

    Parameters
    ----------
    curves : one ``(volts, amps)`` pair per device, or ``None`` (or empty
        arrays) for a device without SOA data

    Returns
    -------
    (bp_v, bp_a) : arrays ``[n_devices, n_bp]`` [V], [A], NaN after each
        device's last breakpoint; all-NaN rows for devices without data

    Examples
    --------
    >>> bp_v, bp_a = pad_curves([([1.0, 2.0], [3.0, 1.0]), None])
    >>> bp_v.tolist()
    [[1.0, 2.0], [nan, nan]]
    """
    pairs = [(np.ravel(_f(c[0])), np.ravel(_f(c[1]))) if c is not None else None for c in curves]
    n_bp = max([1] + [p[0].size for p in pairs if p is not None])
    bp_v = np.full((len(pairs), n_bp), np.nan)
    bp_a = np.full((len(pairs), n_bp), np.nan)
    for row, pair in enumerate(pairs):
        if pair is None:
            continue
        if pair[0].size != pair[1].size:
            raise ValueError(f"pad_curves: device {row} has {pair[0].size} volts, "
                             f"{pair[1].size} amps")
        bp_v[row, : pair[0].size] = pair[0]
        bp_a[row, : pair[1].size] = pair[1]
    return bp_v, bp_a


# --- the boundary ------------------------------------------------------------------


def soa_current_limit_a(
    vce_v: npt.ArrayLike,
    bp_v: npt.ArrayLike,
    bp_a: npt.ArrayLike,
    ic_max_a: npt.ArrayLike,
    pd_max_w: npt.ArrayLike,
    vceo_v: npt.ArrayLike,
) -> FloatOrArray:
    """DC SOA collector-current limit at Tc = 25 degC for each Vce.

    With breakpoints ``(V_k, I_k)``: log-log interpolation between them,
    ``ln I = ln I_k + (ln Vce - ln V_k) * s_k``, ``s_k`` the segment's slope;
    below the first breakpoint its current is held; above the last the last
    segment's slope is extended (model s.13). Without breakpoints (all-NaN
    row): ``min(Ic_max, Pd / Vce)``. In both cases the limit never exceeds
    ``Ic_max`` and is 0 for ``Vce > Vceo``. Multiply by :func:`derating_factor`
    for another case temperature.

    Parameters
    ----------
    vce_v : collector-emitter voltages [V]; shape ``D + S`` (samples after the
        device axes ``D``), or anything that broadcasts with ``D``
    bp_v, bp_a : breakpoints, shape ``D + [n_bp]``, NaN-padded [V], [A]
    ic_max_a : continuous collector-current rating, shape ``D`` [A]
    pd_max_w : power rating at Tc = 25 degC, shape ``D`` [W]
    vceo_v : collector-emitter breakdown voltage, shape ``D`` [V]

    Returns
    -------
    Current limit [A], shape of ``vce_v`` broadcast with the devices.

    References
    ----------
    .. [1] Data-sheet DC SOA plots of bipolar power transistors (common practice).
    """
    bpv = np.atleast_1d(_f(bp_v))
    bpa = np.atleast_1d(_f(bp_a))
    ic_max, pd, vceo, vce = _f(ic_max_a), _f(pd_max_w), _f(vceo_v), _f(vce_v)
    dev_shape = np.broadcast_shapes(bpv.shape[:-1], bpa.shape[:-1], ic_max.shape, pd.shape,
                                    vceo.shape)
    n_extra = max(vce.ndim - len(dev_shape), 0)

    def per_device(x: np.ndarray) -> np.ndarray:
        # trailing unit axes let per-device values meet the sample axes of vce
        return x.reshape(x.shape + (1,) * n_extra)

    with np.errstate(divide="ignore", invalid="ignore"):
        log_vce = np.log(vce)
        log_bpv, log_bpa = np.log(bpv), np.log(bpa)
        log_curve = per_device(log_bpa[..., 0]) + np.zeros_like(vce)  # held below V_0
        # Segments in order of voltage: each later one overrides above its start,
        # so the last valid segment also covers the extension above V_last.
        for k in range(bpv.shape[-1] - 1):
            v0, v1 = log_bpv[..., k], log_bpv[..., k + 1]
            a0, a1 = log_bpa[..., k], log_bpa[..., k + 1]
            valid = np.isfinite(v0) & np.isfinite(v1) & np.isfinite(a0) & np.isfinite(a1)
            slope = (a1 - a0) / (v1 - v0)
            line = per_device(a0) + (log_vce - per_device(v0)) * per_device(slope)
            above = vce > per_device(bpv[..., k])
            log_curve = np.where(per_device(valid) & above, line, log_curve)
        power_a = np.where(vce > 0.0, per_device(pd) / vce, np.inf)
    has_curve = np.isfinite(bpv[..., 0]) & np.isfinite(bpa[..., 0])
    limit = np.where(per_device(has_curve), np.exp(log_curve), power_a)
    limit = np.minimum(limit, per_device(ic_max))
    return np.where(vce > per_device(vceo), 0.0, limit)[()]


def derating_factor(tj_max_c: npt.ArrayLike, case_c: npt.ArrayLike) -> FloatOrArray:
    """Temperature derating of the SOA at case temperature Tc.

    ``k = clip((Tj_max - Tc) / (Tj_max - 25), 0, 1)``, applied to the whole
    curve (model s.5: conservative, common practice; model s.13: no uprating
    below 25 degC).

    Parameters
    ----------
    tj_max_c : maximum junction temperature [degC], > 25
    case_c : case temperature [degC]

    Returns
    -------
    Derating factor [1] in [0, 1].
    """
    tj_max = _f(tj_max_c)
    return np.clip((tj_max - _f(case_c)) / (tj_max - 25.0), 0.0, 1.0)


# --- load line and margins ---------------------------------------------------------


def load_line(
    rail_v: npt.ArrayLike,
    v_peak_v: npt.ArrayLike,
    i_peak_a: npt.ArrayLike,
    phase_rad: npt.ArrayLike,
    n: int = LOAD_LINE_SAMPLES,
) -> tuple[np.ndarray, np.ndarray]:
    """Sampled operating points of the NPN output device over one sine cycle.

    ``v = Vp sin t``, ``i = Ip sin(t - phi)``, ``t = 2 pi k / n``;
    ``Vce = Vs - v`` and ``Ic = i`` while ``i > 0``, ``Ic = 0`` otherwise (the
    PNP mirrors it). With an even ``n`` the sample set for ``-phi`` is that of
    ``+phi`` mirrored in time (``t -> pi - t``), so one sign suffices (model s.13).

    Parameters
    ----------
    rail_v : rail voltage Vs [V]
    v_peak_v : peak output voltage [V]
    i_peak_a : peak output current [A]
    phase_rad : load phase phi, current lagging [rad]
    n : samples per cycle (model s.5: at least 360)

    Returns
    -------
    (vce_v, ic_a) : arrays of shape ``broadcast(inputs) + [n]`` [V], [A]
    """
    t = 2.0 * np.pi * np.arange(n) / n

    def along_t(x: npt.ArrayLike) -> np.ndarray:
        return _f(x)[..., np.newaxis]

    v = along_t(v_peak_v) * np.sin(t)
    i = along_t(i_peak_a) * np.sin(t - along_t(phase_rad))
    vce, ic = np.broadcast_arrays(along_t(rail_v) - v, np.where(i > 0.0, i, 0.0))
    return vce.copy(), ic.copy()


def soa_margin(
    vce_v: npt.ArrayLike, ic_a: npt.ArrayLike, limit_a: npt.ArrayLike
) -> FloatOrArray:
    """SOA margin of a sampled load line.

    ``margin = min over samples with Ic > 0 of (1 - Ic / I_soa(Vce))``;
    positive = inside the SOA. ``limit_a`` is ``I_soa`` already evaluated at
    ``vce_v`` (and derated); a zero limit is floored at 1e-12 A and the result
    at -1e9, so margins stay finite. No conducting sample gives 1.

    Parameters
    ----------
    vce_v : sampled collector-emitter voltage, samples on the last axis [V]
        (only its shape is used: it must match the other two)
    ic_a : sampled collector current [A]
    limit_a : SOA current limit at each sample [A]

    Returns
    -------
    Signed margin [1], one per load line (last axis reduced).
    """
    _, ic, limit = np.broadcast_arrays(_f(vce_v), _f(ic_a), _f(limit_a))
    ic, limit = np.atleast_1d(ic), np.atleast_1d(limit)
    per_sample = np.where(ic > 0.0, 1.0 - ic / np.maximum(limit, _LIMIT_FLOOR_A), np.inf)
    worst = np.min(per_sample, axis=-1)
    return np.maximum(np.where(np.isposinf(worst), 1.0, worst), _MARGIN_FLOOR)[()]


def load_line_soa_margin(
    rail_v: npt.ArrayLike,
    v_peak_v: npt.ArrayLike,
    i_peak_a: npt.ArrayLike,
    phase_rad: npt.ArrayLike,
    bp_v: npt.ArrayLike,
    bp_a: npt.ArrayLike,
    ic_max_a: npt.ArrayLike,
    pd_max_w: npt.ArrayLike,
    vceo_v: npt.ArrayLike,
    derating: npt.ArrayLike = 1.0,
    n: int = LOAD_LINE_SAMPLES,
) -> FloatOrArray:
    """SOA margin of the full-output load line of each device.

    :func:`load_line` -> :func:`soa_current_limit_a` times ``derating`` ->
    :func:`soa_margin`. Signal and device arguments share the device shape ``D``
    (per device, e.g. ``[n_devices]``).

    Parameters
    ----------
    rail_v, v_peak_v, i_peak_a, phase_rad : as in :func:`load_line`, shape ``D``
    bp_v, bp_a, ic_max_a, pd_max_w, vceo_v : as in :func:`soa_current_limit_a`
    derating : :func:`derating_factor` at the case temperature, shape ``D`` [1]
    n : samples per cycle

    Returns
    -------
    Signed margin [1], shape ``D``.
    """
    vce, ic = load_line(rail_v, v_peak_v, i_peak_a, phase_rad, n)
    limit = soa_current_limit_a(vce, bp_v, bp_a, ic_max_a, pd_max_w, vceo_v)
    return soa_margin(vce, ic, _f(derating)[..., np.newaxis] * limit)


def short_circuit_margin(
    rail_max_v: npt.ArrayLike,
    i_peak_a: npt.ArrayLike,
    bp_v: npt.ArrayLike,
    bp_a: npt.ArrayLike,
    ic_max_a: npt.ArrayLike,
    pd_max_w: npt.ArrayLike,
    vceo_v: npt.ArrayLike,
    derating: npt.ArrayLike = 1.0,
) -> FloatOrArray:
    """SOA margin at an output short at full drive.

    The single point ``Vce = Vs_max``, ``Ic = Ip`` (model s.13):
    ``margin = 1 - Ip / (derating * I_soa(Vs_max))``.

    Parameters
    ----------
    rail_max_v : rail voltage at the maximum DC input [V], shape ``D``
    i_peak_a : peak output current [A], shape ``D``
    bp_v, bp_a, ic_max_a, pd_max_w, vceo_v : as in :func:`soa_current_limit_a`
    derating : :func:`derating_factor` at the case temperature [1]

    Returns
    -------
    Signed margin [1], shape ``D``.
    """
    vce = _f(rail_max_v)
    limit = _f(derating) * soa_current_limit_a(vce, bp_v, bp_a, ic_max_a, pd_max_w, vceo_v)
    vce, ic, limit = np.broadcast_arrays(vce, _f(i_peak_a), limit)
    return soa_margin(vce[..., np.newaxis], ic[..., np.newaxis], limit[..., np.newaxis])


def vceo_margin_v(
    vceo_v: npt.ArrayLike, span_v: npt.ArrayLike, margin: npt.ArrayLike = VCEO_MARGIN
) -> FloatOrArray:
    """Breakdown margin: ``Vceo - 1.2 * span`` (model s.5; 20 %, common practice).

    Parameters
    ----------
    vceo_v : collector-emitter breakdown voltage [V]
    span_v : whole supply span at the maximum DC input (2 Vs split, Vsupply single) [V]
    margin : required ratio Vceo / span [1]

    Returns
    -------
    Signed margin [V].
    """
    return _f(vceo_v) - _f(margin) * _f(span_v)


def ic_max_margin_a(ic_max_a: npt.ArrayLike, i_peak_a: npt.ArrayLike) -> FloatOrArray:
    """Collector-current margin: ``Ic_max - Ip`` (model s.5).

    Parameters
    ----------
    ic_max_a : continuous collector-current rating [A]
    i_peak_a : peak output current [A]

    Returns
    -------
    Signed margin [A].
    """
    return _f(ic_max_a) - _f(i_peak_a)
