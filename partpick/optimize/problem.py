"""Assemble the MILP from the evaluation tables (optimiser formulation, stage 2).

Every group, compat link and coupling here mirrors a model constraint that
couples two roles; constraints of one role alone were already applied as
filters in the evaluation layer.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from partpick.evaluate.context import Pool, Targets
from partpick.evaluate.distinct import distinct_rows
from partpick.evaluate.roles import (
    class_key,
    comp_cap_options,
    diode_candidates,
    heatsink_candidates,
    opamp_candidates,
    passive_roles,
)
from partpick.evaluate.stage import StageTable
from partpick.model.defaults import BASE_DRIVE_MARGIN
from partpick.model.eseries import format_value
from partpick.optimize.milp import Coupling, Group, Offer, Problem
from partpick.spec import Spec


@dataclass
class Assembly:
    """The MILP and the tables behind each of its groups (for the report)."""

    problem: Problem
    tables: dict[str, pd.DataFrame]
    lines: dict[str, tuple[str, float | None]]  # line key -> (mpn or family, value)
    funnel: dict[str, dict[str, int]]
    candidates: dict[str, pd.DataFrame]  # every candidate with feasible/rejected_by, per role


def line_key(source: str, value: float | None = None) -> str:
    return source if value is None else f"{source}@{format_value(value)}"


def assemble(spec: Spec, pool: Pool, targets: Targets, stage: StageTable, *, heatsinks: bool = True) -> Assembly | None:
    """The MILP for this spec, or None when some group has no feasible option.

    ``heatsinks=False`` leaves the heatsink group out (its candidates stay in
    ``tables["heatsink"]``): a relaxed table whose bounds price the heatsink
    apart (:class:`~partpick.evaluate.stage.SinkCosts`) needs no pairs of
    configurations and heatsinks, which a large catalogue has by the hundred
    million.
    """
    ch = targets.channels
    lines: dict[str, tuple[str, float | None]] = {}
    tables: dict[str, pd.DataFrame] = {}
    groups: dict[str, Group] = {}
    funnel: dict[str, dict[str, int]] = {"output stage": dict(stage.funnel)}
    candidates: dict[str, pd.DataFrame] = {}

    def use(source: str, value: float | None, per_board: float, role: str) -> tuple[str, float, str]:
        key = line_key(source, value)
        lines[key] = (source, value)
        return (key, float(per_board), role)

    too_weak = int(stage.re_options.attrs.get("too_weak", 0))
    funnel["emitter_resistor"] = {"candidates": len(stage.re_options) + too_weak, "power rating (s.7)": too_weak, "feasible": len(stage.re_options)}
    k = stage.configs
    if k.empty:
        return _fail(funnel, candidates, tables, lines)
    tr = pool.transistors
    pairs, rails = stage.pairs, stage.rails
    dio = pool.diodes

    # --- stage group (built from arrays: one Python step per configuration, no frame lookups)
    pair_i = k["pair_i"].to_numpy(int)
    mpn_n, mpn_p = pairs["mpn_n"].to_numpy()[pair_i], pairs["mpn_p"].to_numpy()[pair_i]
    tr_mpn, dio_mpn = tr["mpn"].to_numpy(), dio["mpn"].to_numpy()
    ccs = (k["feed"] == "current_source").to_numpy()
    src_n = np.where(ccs, tr_mpn[np.where(ccs, k["ccs_n_i"].to_numpy(int), 0)], None)
    src_p = np.where(ccs, tr_mpn[np.where(ccs, k["ccs_p_i"].to_numpy(int), 0)], None)
    ref = np.where(ccs, dio_mpn[np.where(ccs, k["ref_i"].to_numpy(int), 0)], None) if len(dio) else np.full(len(k), None)
    ref_units = 2 * ch * k["ref_per_source"].to_numpy(int)
    rail_i = k["rail_i"].to_numpy(int)
    rail_usage = {i: _rail_usage(rails.iloc[i].to_dict(), use) for i in np.unique(rail_i).tolist()}
    # One use (and one tuple) per distinct part of a role; the rows share them.
    # A row's uses, in order: output NPN, output PNP, the current sources'
    # PNP and NPN and their reference (current-source rows), the rail's.
    columns = [_shared(use, mpn_n, ch, "output_npn"), _shared(use, mpn_p, ch, "output_pnp"),
               _shared(use, src_p, ch, "bias_source_transistor"), _shared(use, src_n, ch, "bias_source_transistor"),
               _shared(use, ref, ref_units.astype(float), "bias_source_reference")]
    out_n, out_p, own_p, own_n, refs = (made[of_row].tolist() for made, of_row in columns)
    usage = [[a, b, c, d, e] + rail_usage[r] if s else [a, b] + rail_usage[r]
             for a, b, c, d, e, s, r in zip(out_n, out_p, own_p, own_n, refs, ccs.tolist(), rail_i.tolist())]
    # Lines in the order of their first use, row by row, as one use at a time would register them.
    order = {key: lines[key] for key in _first_use_order(columns, rail_i, rail_usage)}
    lines.clear()
    lines.update(order)
    groups["stage"] = Group("stage", k["key"].tolist(), usage)
    tables["stage"] = k

    # --- emitter resistors: value linked to the stage's Re
    res = stage.re_options
    k_re = k["re_ohm"].to_numpy(float)
    compat = [np.flatnonzero(np.isclose(k_re, v, rtol=1e-9)) for v in res["value_ohm"]]
    keep = [i for i, c in enumerate(compat) if len(c)]
    res = res.iloc[keep].reset_index(drop=True)
    groups["emitter_resistor"] = Group(
        "emitter_resistor", [f"{f}|{v:.6f}" for f, v in zip(res["family"], res["value_ohm"])],
        [[use(f, v, 2 * ch, "emitter_resistor")] for f, v in zip(res["family"], res["value_ohm"])],
        parent="stage", compat=[compat[i] for i in keep],
    )
    tables["emitter_resistor"] = res

    # --- bias feed resistors
    opts = _feed_groups(stage.feed_options)
    usage = []
    for row in opts.itertuples(index=False):
        if row.kind == "bias_resistor":
            usage.append([use(row.family, row.v1, 2 * ch, "bias_resistor")])
        elif row.kind == "none":  # a relaxed table's feed (evaluate_stage(relaxed=True)): no parts
            usage.append([])
        else:
            usage.append([use(row.family, row.v1, 2 * ch, "bias_source_resistor"), use(row.family, row.v2, 2 * ch, "bias_source_resistor")])
    groups["bias_feed"] = Group(
        "bias_feed", [f"{a}|{b}|{c:.6g}|{d:.6g}" for a, b, c, d in zip(opts["kind"], opts["family"], opts["v1"], opts["v2"])],
        usage, parent="stage", compat=list(opts["k"]),
    )
    tables["bias_feed"] = opts

    # --- bias diodes
    standing = k["standing_a"].to_numpy(float)
    dc = diode_candidates(pool, float(standing.min()))
    candidates["bias_diode"] = dc
    d_ok = dc[dc["feasible"]].reset_index(drop=True)
    funnel["bias_diode"] = _counts(dc)
    vd_max = float(d_ok["vf_v"].max()) if len(d_ok) else 0.65

    # --- gain pair and other passive roles (independent of the stage)
    roles = passive_roles(spec, pool, targets)
    for r in roles:
        candidates[r.group] = r.options
        funnel[r.group] = _counts(r.options)
        ok = r.options[r.options["feasible"]].reset_index(drop=True)
        if ok.empty:
            return _fail(funnel, candidates, tables, lines)
        mult = ch if r.per == "channel" else 1
        usage = [[use(f, v, c * mult, role) for v, role, c in zip(vals, rls, cnts)]
                 for f, vals, rls, cnts in zip(ok["family"], ok["values"], ok["roles"], ok["counts"])]
        groups[r.group] = Group(r.group, [f"{f}|{vals}" for f, vals in zip(ok["family"], ok["values"])], usage)
        tables[r.group] = ok
    gp = tables["gain_pair"]
    i_fb = np.array([targets.v_peak_v / (rf + rg) for rf, rg in gp["values"]])

    # --- op-amps against the most lenient configuration
    c_slew = 2 * math.pi * spec.output.f_high_hz / 1e6
    best = dict(
        vd_max=vd_max,
        drive_room_v=float((k["rail_min_v"] - k["base_peak_v"]).max()),
        iout_need_a=float((BASE_DRIVE_MARGIN * k["ib_peak_a"]).min() + i_fb.min()),
        span_max_v=float(k["span_max_v"].min()),
        span_min_v=float(k["span_min_v"].max()),
        slew_need_v_us=float(c_slew * (k["base_peak_v"].min() - vd_max)),
        vcm_room_v=float((k["rail_min_v"] - targets.input_peak_v).max()),
    )
    oc = opamp_candidates(spec, pool, targets, best)
    candidates["driver_opamp"] = oc
    funnel["driver_opamp"] = _counts(oc)
    op = oc[oc["feasible"]].reset_index(drop=True)
    groups["driver_opamp"] = Group("driver_opamp", list(op["mpn"]), [[use(m, None, n, "driver_opamp")] for m, n in zip(op["mpn"], op["packages_per_board"])])
    tables["driver_opamp"] = op

    # --- compensation capacitors, when an op-amp needs one
    comp = op["comp_pf"].fillna(0.0).to_numpy(float)
    if (comp > 0).any():
        cc = comp_cap_options(pool, op, v_req=2 * spec.supply.v_max)
        keys, usage, compat = ["none"], [[]], [np.flatnonzero(comp == 0)]
        for row in cc.itertuples(index=False):
            keys.append(f"{row.family}|{row.value_f:.3e}")
            usage.append([use(row.family, row.value_f, ch, "comp_capacitor")])
            compat.append(np.flatnonzero(np.isclose(comp, row.comp_pf)))
        groups["comp_capacitor"] = Group("comp_capacitor", keys, usage, parent="driver_opamp", compat=compat)
        tables["comp_capacitor"] = pd.concat([pd.DataFrame([dict(family=None, value_f=0.0, comp_pf=0.0)]), cc], ignore_index=True)

    # --- heatsinks
    packages = set(pairs["package"].iloc[np.unique(k["pair_i"])])
    best_rth = {class_key(c): float(np.max(stage.rth_sa_max[:, i])) for i, c in enumerate(stage.rth_cs_classes)}
    hc = heatsink_candidates(spec, pool, targets, packages, best_rth)
    candidates["heatsink"] = hc
    funnel["heatsink"] = _counts(hc)
    hs = hc[hc["feasible"]].reset_index(drop=True)
    if not heatsinks:
        tables["heatsink"] = hs
        hs = hs.iloc[:0]
    # A heatsink fits a configuration when it mounts its package and its rating is
    # at or below what that configuration tolerates with the sink's mounting (s.6, s.13).
    # Current sources mounted on the sink need their package mounted and two
    # more places per channel (model s.3 (a'), s.6).
    k_pkg = pairs["package"].to_numpy()[k["pair_i"].to_numpy()]
    k_src_pkg = k["ccs_package"].to_numpy()
    k_devices = k["sink_devices"].to_numpy(int)
    class_of = {class_key(c): i for i, c in enumerate(stage.rth_cs_classes)}
    # Packages as codes, so each sink's test is a lookup instead of a string search per configuration.
    names = sorted(set(k_pkg) | set(k_src_pkg) - {""})
    code = {p: i for i, p in enumerate(names)}
    k_pkg_c = np.array([code[p] for p in k_pkg], dtype=int)
    k_src_c = np.array([code.get(p, -1) for p in k_src_pkg], dtype=int)
    hs_compat = []
    for r, c, mounts, n_max in zip(hs["rth_sa_k_w"], hs["rth_class"], hs["mounts"], hs["max_devices"]):
        holds = np.array([p in mounts for p in names] + [True], dtype=bool)  # index -1: no source on the sink
        hs_compat.append(np.flatnonzero(
            (stage.rth_sa_max[:, class_of[class_key(c)]] >= r) & holds[k_pkg_c] & holds[k_src_c] & (k_devices <= n_max)
        ))
    if heatsinks:
        keep = [i for i, c in enumerate(hs_compat) if len(c)]
        hs = hs.iloc[keep].reset_index(drop=True)
        groups["heatsink"] = Group(
            "heatsink", list(hs["mpn"]), [[use(m, None, n, "heatsink")] for m, n in zip(hs["mpn"], hs["per_board"])],
            parent="stage", compat=[hs_compat[i] for i in keep],
        )
        tables["heatsink"] = hs

    groups["bias_diode"] = Group("bias_diode", list(d_ok["mpn"]), [[use(m, None, 2 * ch, "bias_diode")] for m in d_ok["mpn"]])
    tables["bias_diode"] = d_ok

    if any(len(g) == 0 for g in groups.values()):
        return _fail(funnel, candidates, tables, lines)

    couplings = _couplings(targets, k, op, d_ok, i_fb, c_slew)
    offers = _offers(pool, lines)
    fees = dict(zip(pool.suppliers["supplier"], pool.suppliers["order_fee"].astype(float)))
    problem = Problem(groups, couplings, offers, fees, spec.order.factor, spec.order.objective)
    return Assembly(problem, tables, lines, funnel, candidates)


def _shared(use, sources: np.ndarray, per_board, role: str) -> tuple[np.ndarray, np.ndarray]:
    """``use(source, None, per_board, role)`` once per distinct (source, per board) of the rows.

    Returns ``(made, of_row)``: the uses (an object array; None for a row
    without a source) and, for each row, the index of its use in ``made``.
    """
    sources = np.asarray(sources, dtype=object)
    per = np.broadcast_to(np.asarray(per_board, dtype=float), (len(sources),))
    first, of_row = distinct_rows([sources, per])
    made = np.empty(len(first), dtype=object)
    for j, r in enumerate(first.tolist()):
        if sources[r] is not None:
            made[j] = use(sources[r], None, float(per[r]), role)
    return made, of_row


def _first_use_order(columns: list[tuple[np.ndarray, np.ndarray]], rail_i: np.ndarray, rail_usage: dict[int, list]) -> list[str]:
    """The stage's line keys in the order a scan of its rows, use by use, meets them first.

    ``columns``: the :func:`_shared` results in the rows' use order; the
    rail's uses follow them in every row (a row without current sources has
    no uses in columns 2 to 4, so their places do not reorder it).
    """
    row, place, keys = [], [], []
    for c, (made, of_row) in enumerate(columns):
        used, first = np.unique(of_row, return_index=True)
        for j, r in zip(used.tolist(), first.tolist()):
            if made[j] is not None:
                row.append(r), place.append(c), keys.append(made[j][0])
    rails, first = np.unique(rail_i, return_index=True)
    for rail, r in zip(rails.tolist(), first.tolist()):
        for j, u in enumerate(rail_usage[rail]):
            row.append(r), place.append(len(columns) + j), keys.append(u[0])
    order = np.lexsort((np.array(place, dtype=np.int64), np.array(row, dtype=np.int64)))
    return list(dict.fromkeys(keys[i] for i in order.tolist()))


def _feed_groups(fo: pd.DataFrame) -> pd.DataFrame:
    """The bias-feed options: one row per distinct (kind, family, v1, v2), sorted, with ``k`` the sorted configurations it serves.

    ``v2`` of a single resistor is -1. ``fo``: the stage's feed-resistor
    lines, one per (configuration ``k``, option).
    """
    keys = [fo["kind"].to_numpy(object), fo["family"].to_numpy(object), fo["v1"].to_numpy(float), fo["v2"].fillna(-1.0).to_numpy(float)]
    first, option = distinct_rows(keys, sort=True)
    k = fo["k"].to_numpy(np.int64)
    pairs, _ = distinct_rows([option, k], sort=True)  # each (option, configuration) once, in that order
    option_of, k_of = option[pairs], k[pairs]
    starts = np.flatnonzero(np.r_[True, option_of[1:] != option_of[:-1]]) if len(pairs) else np.zeros(0, np.int64)
    return pd.DataFrame({
        "kind": keys[0][first], "family": keys[1][first], "v1": keys[2][first], "v2": keys[3][first],
        "k": np.split(k_of, starts[1:]) if len(pairs) else [],
    })


def _rail_usage(rail: dict, use) -> list:
    """BOM lines of a rail option: the regulator and its set resistors, when regulated."""
    if not rail["regulated"]:
        return []
    u = [use(rail["reg_mpn"], None, 1, "regulator")]
    if isinstance(rail["reg_family"], str):
        u += [use(rail["reg_family"], rail["reg_r1_ohm"], 1, "regulator_set_resistor"),
              use(rail["reg_family"], rail["reg_r2_ohm"], 1, "regulator_set_resistor")]
    return u


def _couplings(targets, k, op, d_ok, i_fb, c_slew) -> list[Coupling]:
    rail_min = k["rail_min_v"].to_numpy(float)
    base_pk = k["base_peak_v"].to_numpy(float)
    cs = [
        Coupling("driver reach (s.3)", {"driver_opamp": op["swing_headroom_v"].to_numpy(float), "bias_diode": -d_ok["vf_v"].to_numpy(float), "stage": -(rail_min - base_pk)}, "<="),
        Coupling("output current (s.3)", {"driver_opamp": op["iout_max_a"].to_numpy(float), "stage": -BASE_DRIVE_MARGIN * k["ib_peak_a"].to_numpy(float), "gain_pair": -i_fb}, ">="),
        Coupling("supply span max (s.8)", {"driver_opamp": op["supply_max_v"].to_numpy(float), "stage": -k["span_max_v"].to_numpy(float)}, ">="),
        Coupling("supply span min (s.8)", {"driver_opamp": op["supply_min_v"].to_numpy(float), "stage": -k["span_min_v"].to_numpy(float)}, "<="),
        Coupling("slew rate (s.8)", {"driver_opamp": op["slew_v_us"].to_numpy(float), "bias_diode": c_slew * d_ok["vf_v"].to_numpy(float), "stage": -c_slew * base_pk}, ">="),
        Coupling("input common mode (s.8)", {"driver_opamp": op["vcm_headroom_v"].to_numpy(float), "stage": -(rail_min - targets.input_peak_v)}, "<="),
        Coupling("bias diode current (s.13)", {"bias_diode": d_ok["if_max_a"].to_numpy(float), "stage": -2.0 * k["standing_a"].to_numpy(float)}, ">="),
    ]
    return cs


def _offers(pool: Pool, lines: dict[str, tuple[str, float | None]]) -> dict[str, list[Offer]]:
    """Each line's offers, by supplier and then quantity (only the parts and families the lines use are read).

    A part's offers are read from the pool's table once per pool
    (``pool.offer_memo``); each line gets a list of its own.
    """
    memo = pool.offer_memo
    wanted = {src for src, _v in lines.values()} - memo.keys()
    if wanted:
        off = pool.offers
        off = off[off["mpn"].isin(wanted)].sort_values(["mpn", "supplier", "min_qty"])
        columns = [off[c].tolist() for c in ("mpn", "supplier", "min_qty", "unit_price", "stock", "moq")]
        found: dict[str, list[Offer]] = {src: [] for src in wanted}
        for mpn, supplier, min_qty, price, stock, moq in zip(*columns):
            moq = 1 if moq is None or (isinstance(moq, float) and math.isnan(moq)) else int(moq)
            found[mpn].append(Offer(supplier, int(min_qty), float(price), int(stock), moq))
        memo.update({src: tuple(o) for src, o in found.items()})
    return {key: list(memo[src]) for key, (src, _v) in lines.items()}


def offers_by_part(pool: Pool, mpns) -> list[list[Offer]]:
    """The offers of each of ``mpns``, in order, from :func:`_offers` (one pass for all of them)."""
    names = list(mpns)
    offers = _offers(pool, {m: (m, None) for m in set(names)})
    return [offers[m] for m in names]


def least_prices(offers_of: list[list[Offer]]) -> np.ndarray:
    """The least unit price of each list of offers (``inf``: no usable offer)."""
    from partpick.optimize.buying import least_unit_price

    return np.array([least_unit_price(o) for o in offers_of], dtype=float)


def _counts(frame: pd.DataFrame) -> dict[str, int]:
    out = {"candidates": int(len(frame))}
    if len(frame):
        for reason in frame.loc[~frame["feasible"], "rejected_by"]:
            name = str(reason).split(":")[0]
            out[name] = out.get(name, 0) + 1
    out["feasible"] = int(frame["feasible"].sum()) if len(frame) else 0
    return out


def _fail(funnel, candidates, tables, lines) -> Assembly:
    return Assembly(None, tables, lines, funnel, candidates)  # type: ignore[arg-type]
