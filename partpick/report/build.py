"""The report as data (schema ``partpick.report/1``): what the terminal, JSON and CSV show.

Everything printed or written comes from :func:`build_report`, so the three
outputs cannot disagree.
"""

from __future__ import annotations

import math

from partpick import __version__
from partpick.model.eseries import format_value
from partpick.optimize.design import DesignResult, bom_lines, infeasible_cause, role_parts
from partpick.report.cautions import CAUTIONS

SCHEMA = "partpick.report/1"

#: Reference-designator prefix per role (IEEE 315 / IEC 81346 letter codes, common practice).
PREFIX = {
    "output_npn": "Q", "output_pnp": "Q", "bias_source_transistor": "Q",
    "driver_opamp": "U", "regulator": "U",
    "bias_diode": "D", "bias_source_reference": "D",
    "heatsink": "HS",
}


def value_text(value: float | None, role: str) -> str | None:
    """A passive's value as printed: ``22.1k`` (ohm) or ``4700u`` (farad)."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    if "capacitor" in role and value >= 1e-3:
        return f"{value * 1e6:g}u"
    return str(format_value(value))


def _prefix(role: str) -> str:
    if role in PREFIX:
        return PREFIX[role]
    return "C" if "capacitor" in role else "R"


def designators(parts: list[dict], channels: int) -> dict[tuple[str, str], list[str]]:
    """Reference designators: per channel c the numbers c01, c02, ... per letter; board-level 1, 2, ...

    For example Q101 and Q102 are the output pair of channel 1, Q201 and Q202
    of channel 2, and U1 is a package shared by the channels.
    """
    counters: dict[tuple[str, int], int] = {}
    out: dict[tuple[str, str], list[str]] = {}
    for p in parts:
        pre = _prefix(p["role"])
        refs: list[str] = []
        if p["per_channel"] is None:
            for _ in range(int(round(p["per_board"]))):
                n = counters[(pre, 0)] = counters.get((pre, 0), 0) + 1
                refs.append(f"{pre}{n}")
        else:
            for c in range(1, channels + 1):
                for _ in range(int(round(p["per_channel"]))):
                    n = counters[(pre, c)] = counters.get((pre, c), 0) + 1
                    refs.append(f"{pre}{c}{n:02d}")
        out[(p["role"], p["line"])] = refs
    return out


def _r(x, digits: int = 4):
    if x is None:
        return None
    if isinstance(x, bool):
        return x
    if isinstance(x, (int,)):
        return x
    x = float(x)
    if math.isinf(x) or math.isnan(x):
        return None
    return round(x, digits)


def spec_dict(result: DesignResult) -> dict:
    s = result.spec.model_dump(mode="json")
    s["output"]["load_min_ohm"] = result.spec.output.z_min_ohm
    return s


def build_report(result: DesignResult, catalog_hashes: dict[str, str] | None = None, solver: str = "cbc", feed_comparison: dict | None = None) -> dict:
    """The full report dict, keys in a stable order."""
    rep: dict = {"schema": SCHEMA, "status": "ok" if result.feasible else "infeasible"}
    rep["spec"] = spec_dict(result)
    rep["partpick"] = {"version": __version__, "solver": solver, "catalog_sha256": dict(sorted((catalog_hashes or {}).items()))}
    if not result.feasible:
        rep["funnel"] = funnel(result)
        rep["causes"] = infeasible_cause(result)
        rep["suggestions"] = {}
        rep["warnings"] = list(result.warnings)
        rep["cautions"] = list(CAUTIONS)
        return rep
    assert result.check is not None and result.solution is not None
    d = result.check.design
    rep["design"] = {k: (_r(v) if not isinstance(v, str) else v) for k, v in d.items()}
    if feed_comparison is not None:
        rep["design"]["bias_feed_alternative"] = feed_comparison
    rep["optimal"] = result.status == "ok"
    parts = role_parts(result)
    refs = designators(parts, result.targets.channels)
    from partpick.optimize.revise import _footprints

    fps = _footprints(result.pool.catalog)
    rep["parts"] = []
    for p in parts:
        margins = {m.name: _r(m.value) for m in result.check.margins.get(p["role"], [])}
        tight = result.check.tightest(p["role"])
        rep["parts"].append({
            "role": p["role"],
            "mpn": p["mpn"],
            "value": value_text(p["value"], p["role"]),
            "package": fps.get(p["mpn"], (None, None))[0],
            "pinout": fps.get(p["mpn"], (None, None))[1],
            "qty_per_channel": _r(p["per_channel"]),
            "qty_per_board": _r(p["per_board"]),
            "qty": p["qty"],
            "refs": refs[(p["role"], p["line"])],
            "margins": margins,
            "binding": None if tight is None else {"constraint": tight.name, "margin": _r(tight.value), "unit": tight.unit, "fraction": _r(tight.fraction)},
        })
    sol = result.solution
    line_refs: dict[str, list[str]] = {}
    line_roles: dict[str, list[str]] = {}
    for p in parts:
        line_refs.setdefault(p["line"], []).extend(refs[(p["role"], p["line"])])
        line_roles.setdefault(p["line"], []).append(p["role"])
    lines = {b["line"]: b for b in bom_lines(result)}
    rep["order"] = []
    for pur in sol.purchases:
        b = lines[pur.line]
        rep["order"].append({
            "supplier": pur.supplier,
            "mpn": b["mpn"],
            "value": value_text(b["value"], line_roles[pur.line][0]),
            "qty": pur.qty,
            "needed": b["qty"],
            "price_break": pur.min_qty,
            "unit_price": _r(pur.unit_price, 6),
            "extended_price": _r(pur.qty * pur.unit_price, 6),
            "roles": line_roles[pur.line],
            "refs": line_refs[pur.line],
        })
    rep["order"].sort(key=lambda o: (o["supplier"], o["mpn"], o["value"] or ""))
    fees = {s: result.assembly.problem.fees[s] for s in sol.suppliers_used}
    rep["totals"] = {
        "parts": _r(sol.parts_cost, 2), "fees": _r(sol.fees_cost, 2), "total": _r(sol.total, 2),
        "currency": result.pool.currency, "fees_by_supplier": fees, "boards": result.spec.order.boards,
        "per_board": _r(sol.total / result.spec.order.boards, 2),
    }
    rep["funnel"] = funnel(result)
    rep["warnings"] = list(result.warnings)
    rep["cautions"] = list(CAUTIONS)
    return rep


def funnel(result: DesignResult) -> dict:
    # Rail x pair x Re configurations; the bias-feed variants of one count once.
    k = result.stage.configs
    alive = int(k["core_i"].nunique()) if len(k) else 0
    out = {"output_stage": {"candidates": result.stage.considered, **{k: v for k, v in result.stage.funnel.items() if v}, "feasible": alive}}
    if result.assembly is not None:
        for role, counts in result.assembly.funnel.items():
            if role != "output stage":
                out[role] = counts
    return out
