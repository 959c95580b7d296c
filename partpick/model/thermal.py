"""Thermal chain junction -> case -> sink -> ambient (model s.6, s.13).

Both output devices of a channel (or all devices, when the spec says so) share
one heatsink. All functions take floats or numpy arrays (broadcast together)
and return ``np.float64`` or ``np.ndarray``.

References
----------
.. [1] F. P. Incropera, D. P. DeWitt, *Fundamentals of Heat and Mass Transfer*:
   thermal resistances in series (steady conduction circuit).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from partpick.model.defaults import RTH_CS_INSULATED_K_W, RTH_CS_UNKNOWN_K_W

FloatOrArray = np.float64 | np.ndarray


def _f(x: npt.ArrayLike) -> np.ndarray:
    return np.asarray(x, dtype=float)


def sink_temp_c(
    ambient_c: npt.ArrayLike, rth_sa_k_w: npt.ArrayLike, p_sink_total_w: npt.ArrayLike
) -> FloatOrArray:
    """Heatsink temperature: ``T_sink = T_amb + Rth_sa * P_sink_total``.

    Parameters
    ----------
    ambient_c : ambient temperature [degC]
    rth_sa_k_w : sink-to-ambient thermal resistance [K/W]
    p_sink_total_w : power of all devices on the sink [W]

    Returns
    -------
    Sink temperature [degC].
    """
    return _f(ambient_c) + _f(rth_sa_k_w) * _f(p_sink_total_w)


def case_temp_c(
    sink_c: npt.ArrayLike, p_device_w: npt.ArrayLike, rth_cs_k_w: npt.ArrayLike
) -> FloatOrArray:
    """Device case temperature: ``T_case = T_sink + P_dev * Rth_cs``.

    Parameters
    ----------
    sink_c : sink temperature [degC]
    p_device_w : dissipation of this device [W]
    rth_cs_k_w : case-to-sink thermal resistance [K/W]

    Returns
    -------
    Case temperature [degC].
    """
    return _f(sink_c) + _f(p_device_w) * _f(rth_cs_k_w)


def junction_temp_c(
    case_c: npt.ArrayLike, p_device_w: npt.ArrayLike, rth_jc_k_w: npt.ArrayLike
) -> FloatOrArray:
    """Junction temperature: ``T_j = T_case + P_dev * Rth_jc``.

    Parameters
    ----------
    case_c : case temperature [degC]
    p_device_w : dissipation of this device [W]
    rth_jc_k_w : junction-to-case thermal resistance [K/W]

    Returns
    -------
    Junction temperature [degC].
    """
    return _f(case_c) + _f(p_device_w) * _f(rth_jc_k_w)


def required_rth_sa_k_w(
    tj_limit_c: npt.ArrayLike,
    ambient_c: npt.ArrayLike,
    p_device_w: npt.ArrayLike,
    rth_jc_k_w: npt.ArrayLike,
    rth_cs_k_w: npt.ArrayLike,
    p_sink_total_w: npt.ArrayLike,
) -> FloatOrArray:
    """Largest sink-to-ambient resistance that keeps the junction at its limit.

    ``Rth_sa_req = (T_j,limit - T_amb - P_dev * (Rth_jc + Rth_cs)) / P_sink_total``
    (model s.6). A heatsink is thermally feasible when its rating is at or
    below this value; a negative value means no heatsink suffices.

    Parameters
    ----------
    tj_limit_c : design junction limit, tj_max minus the derating [degC]
    ambient_c : ambient temperature [degC]
    p_device_w : dissipation of the hottest device [W]
    rth_jc_k_w : junction-to-case thermal resistance [K/W]
    rth_cs_k_w : case-to-sink thermal resistance [K/W]
    p_sink_total_w : power of all devices on the sink [W], >= 0

    Returns
    -------
    Required Rth_sa [K/W]; ``inf`` (or ``-inf``) when nothing heats the sink
    and the junction is within (or beyond) its limit regardless.
    """
    budget_k = _f(tj_limit_c) - _f(ambient_c) - _f(p_device_w) * (_f(rth_jc_k_w) + _f(rth_cs_k_w))
    p_sink = _f(p_sink_total_w)
    with np.errstate(divide="ignore", invalid="ignore"):
        rth = budget_k / p_sink
    unbounded = np.where(budget_k >= 0.0, np.inf, -np.inf)
    return np.where(p_sink > 0.0, rth, unbounded)[()]


def rth_cs_default_k_w(package: str | npt.ArrayLike) -> FloatOrArray:
    """Default case-to-sink resistance of an insulated mounting, by package.

    Values from ``defaults.RTH_CS_INSULATED_K_W`` (model s.13: insulating
    washer with thermal grease, from memory); a package not in the table gets
    ``defaults.RTH_CS_UNKNOWN_K_W``. Names compare without case or surrounding
    whitespace.

    Parameters
    ----------
    package : package name (e.g. ``"TO-220"``) or an array of names

    Returns
    -------
    Rth_cs [K/W], a float for one name, an array for an array of names.

    Examples
    --------
    >>> float(rth_cs_default_k_w("TO-247"))
    0.4
    """
    names = np.char.upper(np.char.strip(np.asarray(package, dtype=str)))
    rth = np.full(names.shape, RTH_CS_UNKNOWN_K_W)
    for name, value in RTH_CS_INSULATED_K_W.items():
        rth = np.where(names == name.upper(), value, rth)
    return rth[()]
