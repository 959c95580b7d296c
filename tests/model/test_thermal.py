"""Tests of partpick.model.thermal on a hand-worked example (model s.6, s.13)."""

import numpy as np
import pytest

from partpick.model import thermal as th

# Hand-worked example (series thermal resistances, Incropera & DeWitt, Fundamentals of
# Heat and Mass Transfer: the thermal circuit):
#   two devices of 10 W each on one sink, T_amb = 40 degC, Rth_sa = 2 K/W,
#   Rth_cs = 0.4 K/W (insulated TO-247), Rth_jc = 1.5 K/W.
#   T_sink = 40 + 2 * 20          = 80 degC
#   T_case = 80 + 10 * 0.4        = 84 degC
#   T_j    = 84 + 10 * 1.5        = 99 degC
#   Junction limit 150 - 25 = 125 degC:
#   Rth_sa_req = (125 - 40 - 10 * (1.5 + 0.4)) / 20 = 66 / 20 = 3.3 K/W
AMB_C, RSA, RCS, RJC, P_DEV, P_SINK = 40.0, 2.0, 0.4, 1.5, 10.0, 20.0


def test_hand_worked_chain_float():
    ts = th.sink_temp_c(AMB_C, RSA, P_SINK)
    tc = th.case_temp_c(ts, P_DEV, RCS)
    tj = th.junction_temp_c(tc, P_DEV, RJC)
    assert (ts, tc, tj) == (pytest.approx(80.0), pytest.approx(84.0), pytest.approx(99.0))
    assert th.required_rth_sa_k_w(125.0, AMB_C, P_DEV, RJC, RCS, P_SINK) == pytest.approx(3.3)


def test_required_rth_sa_reaches_the_limit_exactly_array():
    # independent route: put the required sink back into the chain; T_j lands on the limit
    tj_limit = np.array([125.0, 100.0, 125.0])
    p_dev = np.array([10.0, 5.0, 30.0])
    p_sink = 2.0 * p_dev
    rsa = th.required_rth_sa_k_w(tj_limit, AMB_C, p_dev, RJC, RCS, p_sink)
    tj = th.junction_temp_c(th.case_temp_c(th.sink_temp_c(AMB_C, rsa, p_sink), p_dev, RCS),
                            p_dev, RJC)
    np.testing.assert_allclose(tj, tj_limit)
    assert rsa[2] == pytest.approx((125.0 - 40.0 - 57.0) / 60.0)


def test_required_rth_sa_negative_when_no_sink_suffices_and_unbounded_at_zero_power():
    # 40 W through 1.9 K/W is already 76 K above a 40 degC ambient: beyond a 100 degC limit
    assert th.required_rth_sa_k_w(100.0, AMB_C, 40.0, RJC, RCS, 80.0) < 0.0
    r = th.required_rth_sa_k_w(np.array([125.0, 30.0]), AMB_C, 0.0, RJC, RCS, 0.0)
    assert np.isposinf(r[0]) and np.isneginf(r[1])


def test_chain_functions_array():
    np.testing.assert_allclose(th.sink_temp_c(AMB_C, np.array([1.0, 2.0]), 20.0), [60.0, 80.0])
    np.testing.assert_allclose(th.case_temp_c(80.0, np.array([10.0, 20.0]), 0.4), [84.0, 88.0])
    np.testing.assert_allclose(th.junction_temp_c(np.array([84.0, 88.0]), [10.0, 20.0], 1.5),
                               [99.0, 118.0])


def test_rth_cs_default_float_and_array():
    # insulating washer with thermal grease, model s.13 (from memory)
    assert th.rth_cs_default_k_w("TO-220") == pytest.approx(0.8)
    assert isinstance(th.rth_cs_default_k_w("TO-220"), np.floating)
    got = th.rth_cs_default_k_w(np.array(["TO-126", "to-247 ", "TO-3P", "TO-264", "SOT-93",
                                          ""]))
    np.testing.assert_allclose(got, [1.0, 0.4, 0.4, 0.4, 1.0, 1.0])  # unknown -> 1.0
    assert th.rth_cs_default_k_w(["TO-220", "TO-247"]).shape == (2,)
