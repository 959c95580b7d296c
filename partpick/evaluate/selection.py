"""The full check of one concrete selection: every design figure and every margin.

This recomputes the selected design from the model functions with scalar
inputs, apart from the vectorised candidate tables, so a chosen design is
checked by a second route. Margins are signed (positive = satisfied) in the
constraint's own unit; ``margin_pct`` gives them as a fraction of the limit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from partpick.evaluate.context import Pool, Targets, quiescent_a
from partpick.evaluate.stage import ccs_pair_current_bounds_a
from partpick.model import bias, dissipation, opamp, regulator, soa, swing, thermal
from partpick.model.defaults import (
    BASE_DRIVE_MARGIN,
    DVBE_DT_V_K,
    GAIN_ERROR_WARN,
    LOOP_GAIN_MAX,
    RESISTOR_POWER_MARGIN,
    VT_V,
)
from partpick.spec import Spec


@dataclass
class Margin:
    name: str
    value: float  # signed, in `unit`
    unit: str
    limit: float  # the limit it is measured against (for the fraction)

    @property
    def fraction(self) -> float:
        return self.value / abs(self.limit) if self.limit else float("inf")


@dataclass
class SelectionCheck:
    design: dict
    margins: dict[str, list[Margin]] = field(default_factory=dict)  # role -> margins
    warnings: list[str] = field(default_factory=list)
    plot_data: dict = field(default_factory=dict)

    def failing(self) -> list[tuple[str, Margin]]:
        return [(r, m) for r, ms in self.margins.items() for m in ms if m.value < -1e-9]

    def tightest(self, role: str) -> Margin | None:
        ms = self.margins.get(role, [])
        return min(ms, key=lambda m: m.fraction) if ms else None


def check_selection(
    spec: Spec,
    pool: Pool,
    targets: Targets,
    *,
    npn: dict,
    pnp: dict,
    rail: dict,
    re_ohm: float,
    re_rating_w: float,
    op: dict,
    heatsink: dict,
    diode: dict,
    rf_ohm: float,
    rg_ohm: float,
    feed: str,
    feed_values: tuple[float, float | None],
    feed_rating_w: float,
    ccs: dict | None = None,
) -> SelectionCheck:
    """Every figure and margin of a selection (all arguments are catalogue rows as dicts)."""
    vp, ip, z, phi = targets.v_peak_v, targets.i_peak_a, targets.z_min_ohm, targets.phase_rad
    ch = targets.channels
    amb = spec.thermal.ambient_c
    vs_min, vs_max = rail["rail_min_v"], rail["rail_max_v"]
    span_min, span_max = rail["span_min_v"], rail["span_max_v"]
    iq = float(quiescent_a(spec, np.array([re_ohm]))[0])
    vd = diode["vf_v"]
    m: dict[str, list[Margin]] = {}
    warnings: list[str] = []

    # Section 3: headroom and drive, both devices.
    dev = {"output_npn": npn, "output_pnp": pnp}
    vbe = max(float(swing.vbe_at_v(d["vbe_on_v"], d["vbe_on_at_a"], ip)) for d in dev.values())
    hfe = min(float(swing.hfe_at(d["hfe_min"], d["hfe_at_a"], ip)) for d in dev.values())
    base_pk = float(swing.base_voltage_peak_v(vp, ip, re_ohm, vbe))
    drive = float(swing.drive_level_v(vp, ip, re_ohm, vbe, vd))
    ib = float(swing.base_current_peak_a(ip, hfe))
    for role, d in dev.items():
        vsat = float(swing.vce_sat_at_v(d["vce_sat_v"], d["vce_sat_at_a"], ip))
        m[role] = [Margin("transistor headroom", float(swing.transistor_headroom_margin_v(vs_min, vp, ip, re_ohm, vsat)), "V", vs_min)]
        if ip > 2 * d["hfe_at_a"]:
            warnings.append(f"{d['mpn']}: peak current {ip:.2f} A is well above its hFE test current {d['hfe_at_a']:g} A; hFE taken as falling with 1/Ic")

    # Section 3 (a'): the current source's current, needed before the sink's heat.
    if feed == "current_source":
        assert ccs is not None
        r_e, r_ref = feed_values
        vref = ccs["vref_v"]
        i_lo, standing = (float(x) for x in ccs_pair_current_bounds_a(vref, r_e, *((t["vbe_on_v"], t["vbe_on_at_a"]) for t in ccs["transistors"])))
        p_t = float(swing.ccs_transistor_dissipation_w(vs_max, standing))
    on_sink = feed == "current_source" and ccs["mount"] == "heatsink"

    # Section 4 and 6: dissipation and temperatures with the chosen heatsink.
    per_sink = ch if spec.thermal.shared_heatsink else 1
    n_dev = 2 * per_sink
    p_dev = float(dissipation.worst_case_device_dissipation_w(vs_max, z, phi, iq))
    p_sink = n_dev * p_dev + (per_sink * float(swing.ccs_pair_sink_heat_w(vs_max, standing)) if on_sink else 0.0)
    rth_sa = heatsink["rth_sa_k_w"]
    rth_cs_override = heatsink.get("rth_cs_k_w")
    t_sink = float(thermal.sink_temp_c(amb, rth_sa, p_sink))
    tj_reached, soa_worst, loop_worst, rth_req = -math.inf, math.inf, 0.0, math.inf
    for role, d in dev.items():
        rth_cs = _rth_cs(rth_cs_override, d["package"])
        t_case = float(thermal.case_temp_c(t_sink, p_dev, rth_cs))
        tj = float(thermal.junction_temp_c(t_case, p_dev, d["rth_jc_k_w"]))
        tj_lim = d["tj_max_c"] - spec.thermal.tj_derate_c
        tj_reached = max(tj_reached, tj)
        # Section 5: SOA at this case temperature.
        curve = device_curve(d)
        derate = float(soa.derating_factor(d["tj_max_c"], t_case))
        vce, ic = soa.load_line(np.array([vs_max]), vp, ip, phi)
        limit_25 = soa.soa_current_limit_a(vce, *curve)
        limit = limit_25 * derate
        margin = float(soa.soa_margin(vce, ic, limit)[0])
        util = float(np.max(np.where(ic > 0, ic / np.maximum(limit_25, 1e-12), 0.0)))
        if spec.output.short_circuit:
            margin = min(margin, float(soa.short_circuit_margin(vs_max, ip, *curve, derate)[0]))
            util = max(util, ip / max(float(device_soa_limit_a(d, [vs_max])[0]), 1e-12))
        soa_worst = min(soa_worst, margin)
        if role == "output_npn":
            per = np.where(ic[0] > 0, 1 - ic[0] / np.maximum(limit[0], 1e-12), np.inf)
            worst_i = int(np.argmin(per))
            plot = dict(vce=vce[0], ic=ic[0], worst=(float(vce[0, worst_i]), float(ic[0, worst_i])), derating=derate, t_case=t_case)
        theta = float(bias.loop_theta_k_w(d["rth_jc_k_w"], rth_cs, rth_sa, n_dev))
        loop = float(bias.thermal_loop_gain(theta, vs_max, re_ohm, iq))
        loop_worst = max(loop_worst, loop)
        # The sink this device tolerates: junction, SOA at Tc and loop gain (model s.13).
        rth_req = min(rth_req, float(thermal.required_rth_sa_k_w(tj_lim, amb, p_dev, d["rth_jc_k_w"], rth_cs, p_sink)))
        tc_soa = d["tj_max_c"] - util * (d["tj_max_c"] - 25.0)
        rth_req = min(rth_req, (tc_soa - amb - p_dev * rth_cs) / p_sink)
        if not spec.stage.bias_tracking:
            theta_max = LOOP_GAIN_MAX * (re_ohm + VT_V / iq) / (vs_max * DVBE_DT_V_K)
            rth_req = min(rth_req, (theta_max - d["rth_jc_k_w"] - rth_cs) / n_dev)
        m[role] += [
            Margin("SOA at Tc", margin, "", 1.0),
            Margin("Vceo breakdown", float(soa.vceo_margin_v(d["vceo_v"], span_max)), "V", 1.2 * span_max),
            Margin("Ic max", float(soa.ic_max_margin_a(d["ic_max_a"], ip)), "A", ip),
            Margin("junction temperature", tj_lim - tj, "K", tj_lim - amb),
        ]
        if not spec.stage.bias_tracking:
            m[role].append(Margin("thermal loop gain", LOOP_GAIN_MAX - loop, "", LOOP_GAIN_MAX))

    # Section 5 without a DC SOA curve: the Ic/Pd/Vceo boundary lies above the
    # real one where second breakdown sets in, so the margin may be optimistic.
    no_curve = [d["mpn"] for d in dev.values() if not len(d["soa_v"])]
    if feed == "current_source":
        no_curve += [t["mpn"] for t in ccs["transistors"] if not len(t["soa_v"])]
    if no_curve:
        warnings.append(
            f"{', '.join(no_curve)}: no DC SOA curve (soa_dc) in the catalogue, so their SOA margins use the Ic, Pd and "
            f"Vceo limits alone, which overstate the safe area where second breakdown sets in; check them against the "
            f"datasheet's DC SOA curve before building"
        )

    # Section 7: emitter resistor.
    p_re = float(bias.re_power_w(ip, re_ohm))
    m["emitter_resistor"] = [Margin("power rating", re_rating_w - RESISTOR_POWER_MARGIN * p_re, "W", RESISTOR_POWER_MARGIN * p_re)]

    # Section 3: the bias feed.
    if feed == "resistor":
        r1 = feed_values[0]
        standing = float(swing.bias_standing_current_a(vs_max, vd, r1))
        p_r1 = float(swing.bias_resistor_power_w(vs_max, vd, base_pk, r1))
        feed_i_min = (vs_min - base_pk) / r1
        m["bias_resistor"] = [
            Margin("base drive at the peak", feed_i_min - BASE_DRIVE_MARGIN * ib, "A", BASE_DRIVE_MARGIN * ib),
            Margin("power rating", feed_rating_w - RESISTOR_POWER_MARGIN * p_r1, "W", RESISTOR_POWER_MARGIN * p_r1),
        ]
        p_feed_w = p_r1
    else:
        m["bias_source_transistor"] = [
            Margin("current at the peak", i_lo - BASE_DRIVE_MARGIN * ib, "A", BASE_DRIVE_MARGIN * ib),
            Margin("compliance", float(swing.ccs_compliance_margin_v(vs_min, base_pk)), "V", 1.0),
        ]
        for t in ccs["transistors"]:
            tj_lim = t["tj_max_c"] - spec.thermal.tj_derate_c
            if on_sink:
                rth_cs_t = _rth_cs(rth_cs_override, t["package"])
                t_case_t = float(thermal.case_temp_c(t_sink, p_t, rth_cs_t))
                tj_t = float(thermal.junction_temp_c(t_case_t, p_t, t["rth_jc_k_w"]))
                rth_req = min(rth_req, float(thermal.required_rth_sa_k_w(tj_lim, amb, p_t, t["rth_jc_k_w"], rth_cs_t, p_sink)))
            else:
                tj_t = float(swing.ccs_junction_temp_c(amb, p_t, ccs["rth_ja_k_w"]))
                t_case_t = tj_t  # in free air the case is taken at the junction (conservative)
            i_soa = float(device_soa_limit_a(t, [2.0 * vs_max])[0]) * float(soa.derating_factor(t["tj_max_c"], t_case_t))
            m["bias_source_transistor"] += [
                Margin(f"{t['mpn']} junction temperature", tj_lim - tj_t, "K", tj_lim - amb),
                Margin(f"{t['mpn']} SOA at {2 * vs_max:.1f} V", 1.0 - standing / max(i_soa, 1e-12), "", 1.0),
                Margin(f"{t['mpn']} Vceo", float(soa.vceo_margin_v(t["vceo_v"], span_max)), "V", 1.2 * span_max),
            ]
        p_e = standing**2 * r_e
        p_ref = (vs_max - vref) ** 2 / r_ref
        m["bias_source_resistor"] = [Margin("power rating", feed_rating_w - RESISTOR_POWER_MARGIN * max(p_e, p_ref), "W", RESISTOR_POWER_MARGIN * max(p_e, p_ref))]
        m["bias_source_reference"] = [Margin("current rating", ccs["ref_if_max_a"] - (vs_max - vref) / r_ref, "A", ccs["ref_if_max_a"])]
        p_feed_w = None
    n_on_sink = n_dev + (2 * per_sink if on_sink else 0)
    m["heatsink"] = [
        Margin("Rth_sa limit", rth_req - rth_sa, "K/W", rth_req),
        Margin("device count", float(heatsink["max_devices"] - n_on_sink), "", float(n_on_sink)),
    ]
    m["bias_diode"] = [Margin("current rating", diode["if_max_a"] - 2 * standing, "A", 2 * standing)]

    # Section 8: the driver op-amp, with the chosen gain pair.
    gain = 1.0 + rf_ohm / rg_ohm
    i_need = float(opamp.output_current_required_a(ib, vp, rf_ohm, rg_ohm))
    sr_need = float(opamp.slew_rate_required_v_us(spec.output.f_high_hz, drive))
    gbw_need = float(opamp.gbw_required_mhz(targets.gain, spec.output.f_high_hz))
    offset = float(opamp.output_offset_v(op["vos_max_mv"], gain))
    m["driver_opamp"] = [
        Margin("driver reach", float(swing.driver_headroom_margin_v(vs_min, op["swing_headroom_v"], drive)), "V", drive),
        Margin("output current", op["iout_max_a"] - i_need, "A", i_need),
        Margin("supply span max", float(opamp.supply_max_margin_v(span_max, op["supply_max_v"])), "V", op["supply_max_v"]),
        Margin("supply span min", float(opamp.supply_min_margin_v(span_min, op["supply_min_v"])), "V", op["supply_min_v"]),
        Margin("slew rate", op["slew_v_us"] - sr_need, "V/us", sr_need),
        Margin("gain-bandwidth", op["gbw_mhz"] - gbw_need, "MHz", gbw_need),
        Margin("input common mode", float(opamp.common_mode_margin_v(vs_min, targets.input_peak_v, op["vcm_headroom_v"])), "V", vs_min),
    ]
    if spec.supply.arrangement == "split":
        m["driver_opamp"].append(Margin("output offset", float(opamp.offset_margin_v(offset)), "V", 0.05))
    gain_err = gain / targets.gain - 1.0
    if abs(gain_err) > GAIN_ERROR_WARN:
        warnings.append(f"gain {gain:.2f} differs from the wanted {targets.gain:.2f} by {100 * gain_err:+.1f} %")

    # Section 10: the regulator.
    p_reg = None
    if rail.get("regulated"):
        i_avg = float(regulator.regulator_current_avg_a(ch, ip, ch * (iq + standing)))
        p_reg = float(regulator.regulator_dissipation_w(spec.supply.v_max, rail["vout_v"], i_avg))
        tj_reg = float(regulator.regulator_junction_temp_c(amb, p_reg, rail["reg_rth_ja_k_w"]))
        m["regulator"] = [
            Margin("dropout at v_min", float(regulator.dropout_margin_v(spec.supply.v_min, rail["vout_v"], rail["reg_dropout_v"])), "V", rail["reg_dropout_v"]),
            Margin("input rating", float(regulator.vin_max_margin_v(rail["reg_vin_max_v"], spec.supply.v_max)), "V", rail["reg_vin_max_v"]),
            Margin("peak current", float(regulator.regulator_current_margin_a(rail["reg_iout_max_a"], ch * ip)), "A", ch * ip),
            Margin("junction temperature", rail["reg_tj_limit_c"] - tj_reg, "K", rail["reg_tj_limit_c"] - amb),
        ]

    eff = float(np.pi / 4 * vp / vs_min)
    design = dict(
        arrangement=spec.supply.arrangement,
        rail_min_v=vs_min, rail_max_v=vs_max,
        regulated=bool(rail.get("regulated")), regulator_vout_v=(rail["vout_v"] if rail.get("regulated") else None),
        v_peak_v=vp, i_peak_a=ip, gain=gain,
        re_ohm=re_ohm, iq_a=iq,
        p_device_max_w=p_dev, tj_max_reached_c=tj_reached,
        rth_sa_required_k_w=rth_req, rth_sa_chosen_k_w=rth_sa, soa_margin=soa_worst,
        thermal_loop_gain=loop_worst, efficiency=min(eff, 1.0),
        bias_feed=feed, bias_current_a=standing, bias_resistor_power_w=p_feed_w,
        bias_source_mount=(ccs["mount"] if feed == "current_source" else None),
        base_current_peak_a=ib, drive_level_v=drive, t_sink_c=t_sink,
        p_regulator_w=p_reg,
        supply_power_w=float(2 * vs_min * ip / np.pi) if spec.supply.arrangement == "split" else float(2 * vs_min * ip / np.pi),
    )
    plot["rail_v"] = vs_max
    plot["tj_limit_c"] = min(d["tj_max_c"] for d in dev.values()) - spec.thermal.tj_derate_c
    plot["ambient_c"] = amb
    return SelectionCheck(design, m, warnings, plot)


def device_curve(dev: dict) -> tuple[np.ndarray, ...]:
    """One catalogue row's SOA data as :func:`soa.soa_current_limit_a` takes it.

    Returns ``(bp_v, bp_a, ic_max_a, pd_max_w, vceo_v)`` for a single device
    (breakpoints NaN-padded, shape ``[1, n_bp]``; ratings shape ``[1]``).
    """
    bp_v, bp_a = soa.pad_curves([(np.array(dev["soa_v"]), np.array(dev["soa_a"])) if len(dev["soa_v"]) else None])
    return bp_v, bp_a, np.array([dev["ic_max_a"]]), np.array([dev["pd_max_w"]]), np.array([dev["vceo_v"]])


def device_soa_limit_a(dev: dict, vce_v: npt.ArrayLike) -> np.ndarray:
    """DC SOA current limit of one catalogue row at 25 degC at each of ``vce_v`` [A]."""
    vce = np.atleast_2d(np.asarray(vce_v, dtype=float))
    return np.asarray(soa.soa_current_limit_a(vce, *device_curve(dev)))[0]


def _rth_cs(override, package: str) -> float:
    """The sink's own case-to-sink figure, else the package's insulated default (model s.13)."""
    return float(override) if _given(override) else float(thermal.rth_cs_default_k_w(package))


def _given(x) -> bool:
    return x is not None and not (isinstance(x, float) and math.isnan(x))

