"""Tests of partpick.model.dissipation: closed forms against numerical integration."""

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import minimize_scalar

from partpick.model import dissipation as ds

PHASES_DEG = np.arange(-80.0, 81.0, 10.0)
RAILS_V = [12.0, 25.0, 40.0]
LOADS_OHM = [2.0, 4.0, 8.0]


def numerical_dissipation_w(vs: float, vp: float, z: float, phi: float) -> float:
    """Independent route: (Vs - v) * i averaged over the cycle, NPN conducting while i > 0.

    With i = Ip sin(t - phi) the NPN conducts for t in (phi, phi + pi).
    """
    ip = vp / z

    def p_inst(t: float) -> float:
        return (vs - vp * np.sin(t)) * ip * np.sin(t - phi)

    return quad(p_inst, phi, phi + np.pi)[0] / (2.0 * np.pi)


@pytest.mark.parametrize("phase_deg", PHASES_DEG)
def test_closed_form_matches_quad(phase_deg):
    phi = np.radians(phase_deg)
    for vs in RAILS_V:
        for z in LOADS_OHM:
            for vp in (0.3 * vs, float(ds.worst_case_vpeak_v(vs, phi)), vs):
                expected = numerical_dissipation_w(vs, vp, z, phi)
                assert ds.device_dissipation_w(vs, vp, z, phi) == pytest.approx(expected,
                                                                              rel=1e-9)


@pytest.mark.parametrize("phase_deg", [-80.0, -60.0, -30.0, 0.0, 20.0, 45.0, 55.0, 70.0, 80.0])
@pytest.mark.parametrize("vs", [12.0, 40.0])
def test_worst_case_matches_numerical_maximum(phase_deg, vs):
    # independent route: maximise the quad integral over Vp in [0, Vs]; the clamp is
    # active for |phi| > arccos(2 / pi) = 50.5 deg
    phi, z = np.radians(phase_deg), 4.0
    res = minimize_scalar(lambda vp: -numerical_dissipation_w(vs, vp, z, phi),
                          bounds=(0.0, vs), method="bounded", options={"xatol": 1e-9})
    assert ds.worst_case_device_dissipation_w(vs, z, phi) == pytest.approx(-res.fun, rel=1e-7)
    clamped = abs(phase_deg) > np.degrees(np.arccos(2.0 / np.pi))
    assert (ds.worst_case_vpeak_v(vs, phi) == vs) == clamped


def test_sedra_smith_total_max_dissipation():
    # Sedra & Smith, Microelectronic Circuits, class B output stage example (from
    # memory): Vcc = 23 V, R = 8 ohm gives P_D,max = 13.4 W for both devices.
    assert 2.0 * ds.worst_case_device_dissipation_w(23.0, 8.0, 0.0) == pytest.approx(13.4,
                                                                                    abs=0.05)


def test_resistive_maximum_is_vs_squared_over_pi_squared_r():
    # textbook result for phi = 0: Vp* = 2 Vs / pi, P_max = Vs^2 / (pi^2 R) per device
    assert ds.worst_case_vpeak_v(25.0, 0.0) == pytest.approx(50.0 / np.pi)
    assert ds.worst_case_device_dissipation_w(25.0, 8.0, 0.0) == pytest.approx(
        625.0 / (np.pi**2 * 8.0))


def test_both_signs_of_phase_give_the_same_worst_case():
    phi = np.radians(np.array([10.0, 40.0, 60.0, 80.0]))
    np.testing.assert_array_equal(ds.worst_case_device_dissipation_w(30.0, 4.0, phi),
                                  ds.worst_case_device_dissipation_w(30.0, 4.0, -phi))
    # and a reactive load dissipates more than a resistive one of the same |Z|
    assert np.all(ds.worst_case_device_dissipation_w(30.0, 4.0, phi)
                  > ds.worst_case_device_dissipation_w(30.0, 4.0, 0.0))


def test_quiescent_share_float_and_array():
    base = ds.worst_case_device_dissipation_w(20.0, 8.0, 0.0)
    assert ds.worst_case_device_dissipation_w(20.0, 8.0, 0.0, 0.05) == pytest.approx(base + 1.0)
    out = ds.worst_case_device_dissipation_w(np.array([20.0, 20.0]), 8.0, 0.0,
                                             np.array([0.0, 0.1]))
    np.testing.assert_allclose(out, [base, base + 2.0])


def test_device_dissipation_float_and_array():
    assert isinstance(ds.device_dissipation_w(20.0, 10.0, 8.0, 0.0), np.floating)
    # Vp = 0: nothing; Vp = Vs, phi = 0: Vs^2/R (1/pi - 1/4)
    np.testing.assert_allclose(ds.device_dissipation_w(20.0, [0.0, 20.0], 8.0, 0.0),
                               [0.0, 50.0 * (1.0 / np.pi - 0.25)])


def test_worst_case_vpeak_array_broadcast():
    rail = np.array([[10.0], [20.0]])
    phi = np.radians([0.0, 60.0, 90.0])
    vp = ds.worst_case_vpeak_v(rail, phi)
    assert vp.shape == (2, 3)
    np.testing.assert_allclose(vp[:, 0], 2.0 * rail[:, 0] / np.pi)
    np.testing.assert_allclose(vp[:, 1:], np.hstack([rail, rail]))  # clamped, incl. 90 deg
