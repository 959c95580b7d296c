"""Dissipation of one output device driven by a sine into a reactive load (model s.4).

All functions take floats or numpy arrays (broadcast together) and return
``np.float64`` or ``np.ndarray``.

References
----------
.. [1] A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, class B output
   stage: power dissipation and its maximum at ``Vp = 2 Vs / pi``.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

FloatOrArray = np.float64 | np.ndarray


def _f(x: npt.ArrayLike) -> np.ndarray:
    return np.asarray(x, dtype=float)


def device_dissipation_w(
    rail_v: npt.ArrayLike,
    v_peak_v: npt.ArrayLike,
    z_ohm: npt.ArrayLike,
    phase_rad: npt.ArrayLike,
) -> FloatOrArray:
    """Average dissipation of one class B device over a full cycle.

    ``P = Vs * Vp / (pi * |Z|) - Vp^2 * cos(phi) / (4 * |Z|)``

    Derivation: with ``v = Vp sin t`` and ``i = Ip sin(t - phi)``, the NPN
    conducts while ``i > 0`` (half a cycle) and dissipates ``(Vs - v) * i``;
    the integral over that half-cycle divided by ``2 pi`` gives the formula.
    Quiescent current not included.

    Parameters
    ----------
    rail_v : rail voltage Vs [V]
    v_peak_v : peak output voltage [V], 0 <= Vp <= Vs
    z_ohm : load impedance magnitude |Z| [ohm], > 0
    phase_rad : load phase phi, current lagging voltage [rad], |phi| < pi/2

    Returns
    -------
    Dissipation of one device [W].

    References
    ----------
    .. [1] Sedra & Smith, *Microelectronic Circuits*, class B output stage
       (the resistive case, ``phi = 0``).
    """
    vs, vp, z = _f(rail_v), _f(v_peak_v), _f(z_ohm)
    return vs * vp / (np.pi * z) - vp**2 * np.cos(_f(phase_rad)) / (4.0 * z)


def worst_case_vpeak_v(rail_v: npt.ArrayLike, phase_rad: npt.ArrayLike) -> FloatOrArray:
    """Output level at which one device dissipates most.

    ``Vp* = min(2 * Vs / (pi * cos(phi)), Vs)`` (model s.13: clamped to the
    rail, not to the clip level; slightly pessimistic, never optimistic).
    The clamp is active for ``|phi| > arccos(2/pi)``, about 50.5 degrees.

    Parameters
    ----------
    rail_v : rail voltage Vs [V]
    phase_rad : load phase phi [rad]

    Returns
    -------
    Maximising peak output voltage [V].
    """
    vs = _f(rail_v)
    with np.errstate(divide="ignore"):
        vp = 2.0 * vs / (np.pi * np.abs(np.cos(_f(phase_rad))))
    return np.minimum(vp, vs)


def worst_case_device_dissipation_w(
    rail_v: npt.ArrayLike,
    z_ohm: npt.ArrayLike,
    phase_rad: npt.ArrayLike,
    iq_a: npt.ArrayLike = 0.0,
) -> FloatOrArray:
    """Largest dissipation of one device over all output levels, plus its idle share.

    ``P_max = P(Vp*) + Vs * Iq`` with ``P`` from :func:`device_dissipation_w`
    and ``Vp*`` from :func:`worst_case_vpeak_v`. For ``phi = 0`` this is
    ``Vs^2 / (pi^2 * R)``. Both signs of phi give the same value (cos is even).

    Parameters
    ----------
    rail_v : rail voltage Vs, at the maximum DC input for the check [V]
    z_ohm : load impedance magnitude |Z_min| [ohm], > 0
    phase_rad : load phase phi [rad]
    iq_a : quiescent current [A]

    Returns
    -------
    Worst-case dissipation of one device [W].

    References
    ----------
    .. [1] Sedra & Smith, *Microelectronic Circuits*, class B output stage.

    Examples
    --------
    >>> round(float(2 * worst_case_device_dissipation_w(23.0, 8.0, 0.0)), 1)
    13.4
    """
    vs = _f(rail_v)
    vp = worst_case_vpeak_v(vs, phase_rad)
    return device_dissipation_w(vs, vp, z_ohm, phase_rad) + vs * _f(iq_a)
