"""The vectorised stage evaluation against hand calculations and the scalar selection check."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from partpick.catalog import load_catalog
from partpick.evaluate.context import Targets, make_pool
from partpick.evaluate.stage import evaluate_stage
from partpick.model import eseries, swing
from partpick.optimize.design import run
from partpick.spec import load_spec, parse_spec

ROOT = Path(__file__).resolve().parents[2]
CATALOG = ROOT / "catalog"
BENCH = ROOT / "examples" / "bench_2x25w_split.toml"


@pytest.fixture(scope="module")
def catalog():
    return load_catalog(CATALOG)


@pytest.fixture(scope="module")
def bench(catalog):
    spec = load_spec(BENCH)
    pool = make_pool(spec, catalog)
    targets = Targets.from_spec(spec)
    return spec, pool, targets, evaluate_stage(spec, pool, targets)


def test_ordinary_pair_bias_feed_numbers_by_hand(bench):
    """VT4120N/P on the 2 x 25 W bench spec: the numbers of its bias-feed rejection, by hand.

    Hand-worked (model s.2, s.3, s.13), values from the demo catalogue row of
    VT4120N (hfe_min 30 at 3 A, vbe_on 1.3 V at 5 A):
      Vp = sqrt(2 * 25 * 8) = 20 V; Ip = 20 / 6.5 = 3.0769 A
      hFE at Ip = 30 * 3 / 3.0769 = 29.25 (above its test current)
      Ib_pk = 3.0769 / 29.25 = 0.10519 A; 1.5 x Ib_pk = 157.8 mA
      Vbe(Ip) = max(1.3, 1.3 + 0.026 ln(3.0769 / 5)) = 1.3 V
      with Re = 0.1: V_base,pk = 20 + 0.308 + 1.3 = 21.608 V
      R1 <= (24.5 - 21.608) / 0.15778 = 18.33 ohm
      P(R1) = ((26.5 - 0.65)^2 + 21.608^2 / 2) / 18.33 = 49.2 W
      current source: 2 x 26.5 V x 0.15778 A = 8.36 W in its transistor
    """
    spec, pool, targets, st = bench
    assert targets.v_peak_v == pytest.approx(20.0)
    assert targets.i_peak_a == pytest.approx(3.0769, abs=1e-4)
    pairs = st.pairs
    pi = int(np.flatnonzero(pairs["mpn_n"] == "VT4120N")[0])
    rej = st.rejected[(st.rejected["pair_i"] == pi) & np.isclose(st.rejected["re_ohm"], 0.1)]
    assert len(rej) == 1
    row = rej.iloc[0]
    assert row["rejected_by"] == "bias feed (s.3)"
    assert 1.5 * row["ib_peak_a"] == pytest.approx(0.15778, abs=2e-5)
    assert row["base_peak_v"] == pytest.approx(21.608, abs=1e-3)
    reason = row["reason"]
    assert "158 mA" in reason
    assert "R1 <= 18.3 ohm" in reason
    assert "49 W" in reason
    assert "8.4 W" in reason


def test_resistor_feed_against_current_source_on_the_same_stage():
    """One ordinary stage, both feeds, by the model functions (hand values in the comments).

    2 x 25 W into 8 ohm, rails 26/28 V, Re 0.22 ohm, hFE 50 at 3 A, Vbe 1.2 V:
      Vp 20 V, Ip 2.5 A, Ib_pk = 2.5 / 50 = 50 mA
      V_base,pk = 20 + 0.55 + 1.2 = 21.75 V
      resistor feed: R1 <= (26 - 21.75) / 0.075 = 56.67 ohm -> E24 56 ohm,
        standing (28 - 0.65) / 56 = 0.488 A, P = ((28 - 0.65)^2 + 21.75^2 / 2) / 56 = 17.6 W
      current source: I >= 75 mA, compliance 26 - 21.75 = 4.25 V >= 1 V,
        with a red LED (1.8 V) and Vbe 0.65 V: R_E = 1.15 / 0.075 = 15.33 -> E24 15 ohm
        (76.7 mA), transistor up to 2 x 28 x 0.0767 = 4.29 W, R_E burns 0.088 W
    """
    ib = swing.base_current_peak_a(2.5, 50.0)
    vb = swing.base_voltage_peak_v(20.0, 2.5, 0.22, 1.2)
    r1_max = swing.bias_resistor_max_ohm(26.0, vb, ib)
    assert r1_max == pytest.approx(56.67, abs=0.01)
    r1 = eseries.next_down(r1_max, "E24")
    assert r1 == pytest.approx(56.0)
    assert swing.bias_standing_current_a(28.0, 0.65, r1) == pytest.approx(0.488, abs=1e-3)
    p_r1 = swing.bias_resistor_power_w(28.0, 0.65, vb, r1)
    assert p_r1 == pytest.approx(17.58, abs=0.02)
    i_req = swing.ccs_current_required_a(ib)
    assert i_req == pytest.approx(0.075)
    assert swing.ccs_compliance_margin_v(26.0, vb) == pytest.approx(3.25)
    r_e = eseries.next_down(swing.ccs_emitter_resistor_ohm(1.8, 0.65, i_req), "E24")
    assert r_e == pytest.approx(15.0)
    i_act = (1.8 - 0.65) / r_e
    p_t = swing.ccs_transistor_dissipation_w(28.0, i_act)
    assert p_t == pytest.approx(4.293, abs=1e-3)
    # The current source wastes a quarter of the resistor feed's heat at this stage.
    assert p_t < 0.25 * p_r1


def test_every_feasible_configuration_passes_the_scalar_check(catalog, bench):
    """The optimiser's choice, re-checked by the scalar route, has no failing margin;
    and the stage table's worst-case dissipation equals the scalar one."""
    spec, pool, targets, st = bench
    r = run(spec, catalog)
    assert r.feasible
    assert r.check.failing() == []
    k = r.assembly.tables["stage"].iloc[r.solution.choice["stage"]]
    assert r.check.design["p_device_max_w"] == pytest.approx(k["p_device_w"], rel=1e-12)
    # The chosen heatsink's rating is within what the configuration tolerates.
    assert r.check.design["rth_sa_chosen_k_w"] <= np.nanmax(st.rth_sa_max[np.flatnonzero(st.configs["key"] == k["key"])[0]]) + 1e-12


def test_rejections_name_the_first_failing_constraint_with_numbers(bench):
    spec, pool, targets, st = bench
    assert len(st.rejected) > 0
    assert st.rejected["reason"].str.len().min() > 20
    heads = st.rejected[st.rejected["rejected_by"].str.startswith("transistor headroom")]
    for r in heads.itertuples(index=False):
        need = targets.v_peak_v + targets.i_peak_a * r.re_ohm + r.vce_sat_v
        assert need > r.rail_min_v
        assert f"{need:.2f}" in r.reason


def test_higher_rail_removes_headroom_rejections(catalog):
    text = BENCH.read_text().replace("v_min = 24.5", "v_min = 20.0")
    low = parse_spec(text)
    pool = make_pool(low, catalog)
    st_low = evaluate_stage(low, pool, Targets.from_spec(low))
    spec = load_spec(BENCH)
    st = evaluate_stage(spec, make_pool(spec, catalog), Targets.from_spec(spec))
    assert st_low.funnel["transistor headroom (s.3)"] > st.funnel["transistor headroom (s.3)"]
    assert math.isfinite(st_low.funnel["transistor headroom (s.3)"])
