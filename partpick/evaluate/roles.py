"""Candidates for the roles outside the output stage: driver, heatsink, diode, passives.

Each function returns a table of candidates with ``feasible`` and
``rejected_by`` (first failing constraint with its numbers), so that the
funnel and ``partpick why`` read the same numbers the optimiser uses. Checks
that depend on the chosen stage configuration are couplings in the optimiser;
here they are applied against the most lenient feasible configuration, which
only removes candidates no configuration could use.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from partpick.evaluate.context import Pool, Targets
from partpick.model import eseries, opamp, passives
from partpick.model.defaults import (
    DECOUPLING_CERAMIC_F,
    DECOUPLING_ELECTROLYTIC_F,
    INPUT_RESISTANCE_OHM,
    MIDRAIL_C_MIN_F,
    RESISTOR_POWER_MARGIN,
    RG_MAX_OHM,
    RG_MIN_OHM,
    ZOBEL_C_F,
    ZOBEL_R_OHM,
)
from partpick.spec import Spec


def _reject(frame: pd.DataFrame, checks: list[tuple[str, np.ndarray, np.ndarray]]) -> pd.DataFrame:
    """Mark the first failing check of each row: (name, passed mask, sentence per row)."""
    frame = frame.copy()
    ok = np.ones(len(frame), dtype=bool)
    why = np.full(len(frame), "", dtype=object)
    for name, passed, sentence in checks:
        fail = ok & ~np.asarray(passed, bool)
        why[fail] = [f"{name}: {s}" for s in np.asarray(sentence, dtype=object)[fail]]
        ok &= ~fail
    frame["feasible"] = ok
    frame["rejected_by"] = why
    return frame


def opamp_candidates(spec: Spec, pool: Pool, targets: Targets, best: dict[str, float]) -> pd.DataFrame:
    """Op-amps against the spec and the most lenient stage configuration ``best``."""
    op = pool.opamps.reset_index(drop=True)
    f = spec.output.f_high_hz
    gbw_req = float(opamp.gbw_required_mhz(targets.gain, f))
    offset = opamp.output_offset_v(op["vos_max_mv"].to_numpy(float), targets.gain)
    hr = op["swing_headroom_v"].to_numpy(float)
    checks = [
        ("driver reach (s.3)", hr - best["vd_max"] <= best["drive_room_v"],
         [f"swings within {h:g} V of its rail; the best stage leaves {best['drive_room_v'] + best['vd_max']:.2f} V" for h in hr]),
        ("output current (s.3)", op["iout_max_a"] >= best["iout_need_a"],
         [f"delivers {1e3 * i:.0f} mA, needs at least {1e3 * best['iout_need_a']:.0f} mA" for i in op["iout_max_a"]]),
        ("supply span (s.8)", (op["supply_max_v"] >= best["span_max_v"]) & (op["supply_min_v"] <= best["span_min_v"]),
         [f"runs on {a:g} to {b:g} V; the supply spans {best['span_min_v']:.1f} to {best['span_max_v']:.1f} V" for a, b in zip(op["supply_min_v"], op["supply_max_v"])]),
        ("slew rate (s.8)", op["slew_v_us"] >= best["slew_need_v_us"],
         [f"{s:g} V/us, full power at {f / 1e3:g} kHz needs {best['slew_need_v_us']:.2f} V/us" for s in op["slew_v_us"]]),
        ("gain-bandwidth (s.8)", op["gbw_mhz"] >= gbw_req,
         [f"{g:g} MHz, gain {targets.gain:.1f} at {f / 1e3:g} kHz needs {gbw_req:.2f} MHz" for g in op["gbw_mhz"]]),
        ("input common mode (s.8)", op["vcm_headroom_v"] <= best["vcm_room_v"],
         [f"inputs need {v:g} V from the rails; {best['vcm_room_v']:.2f} V is left" for v in op["vcm_headroom_v"]]),
    ]
    if spec.supply.arrangement == "split":
        checks.append(
            ("output offset (s.8)", opamp.offset_margin_v(offset) >= 0,
             [f"{1e3 * o:.0f} mV at the loudspeaker (limit 50 mV)" for o in offset])
        )
    out = _reject(op, checks)
    out["packages_per_board"] = opamp.packages_needed(targets.channels, op["per_package"].to_numpy())
    out["offset_v"] = offset
    return out


def heatsink_candidates(spec: Spec, pool: Pool, targets: Targets, packages: set[str], best_rth: dict[float, float]) -> pd.DataFrame:
    """Heatsinks that hold the devices and are not worse than every stage could tolerate."""
    hs = pool.heatsinks.reset_index(drop=True)
    n_dev = 2 * (targets.channels if spec.thermal.shared_heatsink else 1)
    mounts = [{p.strip() for p in s.split(";") if p.strip()} for s in hs["packages"]]
    classes = [float(c) if not (isinstance(c, float) and math.isnan(c)) else math.nan for c in hs["rth_cs_k_w"]]
    best = [best_rth.get(class_key(c), -np.inf) for c in classes]
    checks = [
        ("device count (s.6)", hs["max_devices"] >= n_dev,
         [f"holds {m} devices, the stage puts {n_dev} on one sink" for m in hs["max_devices"]]),
        ("package (s.6)", [bool(m & packages) for m in mounts],
         [f"mounts {', '.join(sorted(m))}; feasible stages use {', '.join(sorted(packages)) or 'none'}" for m in mounts]),
        ("thermal resistance (s.6)", hs["rth_sa_k_w"].to_numpy(float) <= np.asarray(best, float),
         [f"{r:g} K/W, the best stage needs at most {b:.2f} K/W" for r, b in zip(hs["rth_sa_k_w"], best)]),
    ]
    out = _reject(hs, checks)
    out["mounts"] = mounts
    out["rth_class"] = classes
    out["per_board"] = 1 if spec.thermal.shared_heatsink else targets.channels
    return out


def class_key(c: float) -> float:
    """A mounting class's key in per-class tables: its Rth_cs [K/W], -1.0 for the class without one (NaN, which is no key)."""
    return -1.0 if math.isnan(c) else c


def diode_candidates(pool: Pool, best_standing_a: float) -> pd.DataFrame:
    """Bias diodes (kind ``diode``): rated for twice the standing current (model s.13)."""
    d = pool.diodes.reset_index(drop=True)
    checks = [
        ("kind", d["kind"] == "diode", ["an LED is not used in the bias string"] * len(d)),
        ("current rating (s.13)", d["if_max_a"] >= 2 * best_standing_a,
         [f"{1e3 * i:g} mA, needs {2e3 * best_standing_a:.0f} mA" for i in d["if_max_a"]]),
    ]
    return _reject(d, checks)


# --------------------------------------------------------------------------- passive roles


@dataclass
class PassiveRole:
    """One passive role: its options (family, values) with the lines each uses."""

    group: str
    role: str
    options: pd.DataFrame  # family, value(s), lines: list of (value, per_channel_or_board), feasible, rejected_by
    per: str = "channel"  # quantities per "channel" or per "board"


def passive_roles(spec: Spec, pool: Pool, targets: Targets) -> list[PassiveRole]:
    """Every passive role of the topology (model s.9, s.13) with the family options that fit."""
    pa = pool.passives.reset_index(drop=True)
    res = pa[pa["kind"] == "resistor"]
    single = spec.supply.arrangement == "single"
    v_cap = spec.supply.v_max  # the whole unregulated input (conservative)
    rail_cap = spec.supply.v_max / (2.0 if single else 1.0)
    roles: list[PassiveRole] = []

    # Gain pair: Rf (feedback) and Rg (gain), one family.
    rows = []
    for f in res.itertuples(index=False):
        lo, hi = max(RG_MIN_OHM, f.value_min), min(RG_MAX_OHM, f.value_max)
        if lo > hi:
            rf = rg = g = err = math.nan
        else:
            rf, rg, g, err = passives.gain_pair(targets.gain, f.series, lo, hi, f.value_min, f.value_max)
        ok = bool(np.isfinite(rf) and np.isfinite(rg))
        rows.append(dict(family=f.family, values=(float(rf), float(rg)), roles=("feedback_resistor", "gain_resistor"),
                         counts=(1, 1), feasible=ok, rejected_by="" if ok else "gain pair (s.9): no pair in 1k..10k",
                         achieved_gain=float(g), gain_error=float(err)))
    roles.append(PassiveRole("gain_pair", "feedback_resistor", pd.DataFrame(rows)))

    # Input resistor nearest 22k; input capacitor for the corner with the smallest such resistor.
    rows = []
    for f in res.itertuples(index=False):
        covers = f.value_min <= INPUT_RESISTANCE_OHM <= f.value_max
        v = float(eseries.nearest_value(INPUT_RESISTANCE_OHM, f.series, f.value_min, f.value_max)) if covers else math.nan
        ok = bool(np.isfinite(v))
        rows.append(_one(f.family, v, "input_resistor", 1, ok, "value range (s.9): the family does not reach 22k"))
    in_res = pd.DataFrame(rows)
    roles.append(PassiveRole("input_resistor", "input_resistor", in_res))
    r_in = float(in_res.loc[in_res["feasible"], "values"].map(lambda t: t[0]).min()) if in_res["feasible"].any() else INPUT_RESISTANCE_OHM
    c_in = float(passives.input_cap_min_f(spec.output.f_low_hz, r_in))
    roles.append(_cap_role("input_capacitor", pa, ("cap_film", "cap_electrolytic"), c_in, "up", passives.cap_voltage_required_v(rail_cap), None))

    # Zobel network.
    p_z = float(passives.zobel_resistor_power_w(targets.v_peak_v, spec.output.f_high_hz))
    rows = []
    for f in res.itertuples(index=False):
        v = float(eseries.nearest_value(ZOBEL_R_OHM, f.series, f.value_min, f.value_max))
        exact = bool(np.isfinite(v) and abs(v / ZOBEL_R_OHM - 1) < 1e-6)
        power_ok = f.power_w >= RESISTOR_POWER_MARGIN * p_z
        why = "value (s.9): no 10 ohm" if not exact else f"power (s.9): {f.power_w:g} W rated, needs {RESISTOR_POWER_MARGIN * p_z:.2f} W"
        rows.append(_one(f.family, v, "zobel_resistor", 1, exact and power_ok, why))
    roles.append(PassiveRole("zobel_resistor", "zobel_resistor", pd.DataFrame(rows)))
    roles.append(_cap_role("zobel_capacitor", pa, ("cap_film", "cap_ceramic"), ZOBEL_C_F, "exact", passives.cap_voltage_required_v(rail_cap), None))

    # Decoupling per channel and rail.
    n_rails = 1 if single else 2
    for name, kinds, value in (("decoupling_ceramic", ("cap_ceramic",), DECOUPLING_CERAMIC_F), ("decoupling_electrolytic", ("cap_electrolytic",), DECOUPLING_ELECTROLYTIC_F)):
        r = _cap_role(name, pa, kinds, value, "exact", passives.cap_voltage_required_v(rail_cap if not single else v_cap), None, count=n_rails)
        r.role = "decoupling_capacitor"
        roles.append(r)

    if single:
        c_out = float(passives.output_cap_min_f(spec.output.f_low_hz, targets.z_min_ohm))
        roles.append(_cap_role("output_capacitor", pa, ("cap_electrolytic",), c_out, "up", passives.cap_voltage_required_v(v_cap), float(passives.cap_ripple_required_a(targets.i_peak_a))))
        rows = []
        for f in res.itertuples(index=False):
            if f.series not in ("E3", "E6", "E12", "E24"):
                rows.append(_one(f.family, math.nan, "midrail_resistor", 2, False, "series (s.13): the divider uses E24 values"))
                continue
            v = float(passives.midrail_resistor_ohm(f.series)) if f.value_min <= 47e3 <= f.value_max else math.nan
            ok = bool(np.isfinite(v))
            pw = float(passives.midrail_resistor_power_w(spec.supply.v_max, v)) if ok else 0.0
            ok = ok and f.power_w >= RESISTOR_POWER_MARGIN * pw
            rows.append(_one(f.family, v, "midrail_resistor", 2, ok, "value or power (s.13)"))
        roles.append(PassiveRole("midrail_resistor", "midrail_resistor", pd.DataFrame(rows)))
        roles.append(_cap_role("midrail_capacitor", pa, ("cap_electrolytic",), MIDRAIL_C_MIN_F, "up", passives.cap_voltage_required_v(v_cap), None))
    return roles


def _one(family: str, value: float, role: str, count: int, ok: bool, why: str) -> dict:
    return dict(family=family, values=(value,), roles=(role,), counts=(count,), feasible=bool(ok), rejected_by="" if ok else why)


def _cap_role(group: str, pa: pd.DataFrame, kinds: tuple[str, ...], c_min_f: float, mode: str, v_req: float, ripple_req: float | None, count: int = 1) -> PassiveRole:
    rows = []
    for f in pa[pa["kind"].isin(kinds)].itertuples(index=False):
        if mode == "exact":
            v = float(eseries.nearest_value(c_min_f, f.series, f.value_min, f.value_max))
            value_ok = bool(np.isfinite(v) and abs(v / c_min_f - 1) < 1e-6)
        else:
            v = float(eseries.next_up(c_min_f, f.series, f.value_min, f.value_max))
            value_ok = bool(np.isfinite(v))
        volt_ok = f.voltage_v >= v_req
        rip = f.ripple_a if not (isinstance(f.ripple_a, float) and math.isnan(f.ripple_a)) else None
        rip_ok = ripple_req is None or (rip is not None and rip >= ripple_req)
        if not value_ok:
            why = f"value (s.9): no {eseries.format_value(c_min_f)}F{' or more' if mode == 'up' else ''} in {f.series} {eseries.format_value(f.value_min)}..{eseries.format_value(f.value_max)}"
        elif not volt_ok:
            why = f"voltage (s.9): rated {f.voltage_v:g} V, needs {v_req:.1f} V"
        else:
            why = f"ripple current (s.9): rated {rip or 0:g} A, needs {ripple_req or 0:.2f} A"
        rows.append(_one(f.family, v, group if group != "decoupling_ceramic" and group != "decoupling_electrolytic" else "decoupling_capacitor", count, value_ok and volt_ok and rip_ok, why))
    return PassiveRole(group, group, pd.DataFrame(rows, columns=["family", "values", "roles", "counts", "feasible", "rejected_by"]))


def comp_cap_options(pool: Pool, opamps: pd.DataFrame, v_req: float) -> pd.DataFrame:
    """(family, value) capacitor options for every compensation value the op-amps need."""
    pa = pool.passives
    caps = pa[pa["kind"].isin(["cap_ceramic", "cap_film"]) & (pa["voltage_v"] >= v_req)]
    rows = []
    for pf in sorted({float(c) for c in opamps["comp_pf"].fillna(0.0) if c > 0}):
        value = pf * 1e-12
        for f in caps.itertuples(index=False):
            v = float(eseries.nearest_value(value, f.series, f.value_min, f.value_max))
            if np.isfinite(v) and abs(v / value - 1) < 1e-6:
                rows.append(dict(family=f.family, value_f=v, comp_pf=pf))
    return pd.DataFrame(rows, columns=["family", "value_f", "comp_pf"])
