"""Terminal rendering of a report dict with rich, readable at 80 columns."""

from __future__ import annotations

from rich import box
from rich.panel import Panel
from rich.table import Table
from rich.text import Text

from partpick.report.console import Terminal, labelled


def _tight_style(fraction: float | None) -> str:
    if fraction is None:
        return ""
    if fraction < 0:
        return "bold red"
    if fraction < 0.05:
        return "red"
    if fraction < 0.15:
        return "yellow"
    return "green"


def _f(x, fmt: str = "{:.2f}", none: str = "-") -> str:
    return none if x is None else fmt.format(x)


def render_design(term: Terminal, rep: dict, given: bool = False) -> None:
    """The design panel, parts and order; ``given``: some parts were fixed by the user (``evaluate``)."""
    d = rep["design"]
    cur = rep["totals"]["currency"]
    rails = (
        f"+/-{d['rail_min_v']:.1f} to {d['rail_max_v']:.1f} V" if d["arrangement"] == "split"
        else f"{2 * d['rail_min_v']:.1f} to {2 * d['rail_max_v']:.1f} V single"
    )
    if d["regulated"]:
        rails = f"{d['regulator_vout_v']:.2f} V regulated, single"
    grid = Table.grid(padding=(0, 2))
    grid.add_column(style="bold")
    grid.add_column()
    grid.add_column(style="bold")
    grid.add_column()
    rows = [
        ("supply", rails, "peak out", f"{d['v_peak_v']:.2f} V / {d['i_peak_a']:.2f} A"),
        ("gain", f"{d['gain']:.2f}", "Re / Iq", f"{d['re_ohm']:g} ohm / {1e3 * d['iq_a']:.0f} mA"),
        ("P device", f"{d['p_device_max_w']:.1f} W worst case", "Tj reached", f"{d['tj_max_reached_c']:.0f} degC"),
        ("heatsink", f"{d['rth_sa_chosen_k_w']:g} K/W (<= {_f(d['rth_sa_required_k_w'])})", "sink temp", f"{d['t_sink_c']:.0f} degC"),
        ("SOA margin", f"{100 * d['soa_margin']:.0f} %", "loop gain", f"{d['thermal_loop_gain']:.2f} (<= 0.5)"),
        ("bias feed", _feed_text(d), "efficiency", f"{100 * d['efficiency']:.0f} % at full power"),
    ]
    for r in rows:
        grid.add_row(*r)
    title = Text(rep["spec"]["name"])
    if not rep.get("optimal"):
        sub = Text("not proven optimal", style="yellow")
    else:
        sub = Text("cheapest with the given parts" if given else "optimal")
    term.print(Panel(grid, title=title, subtitle=sub, expand=False))
    alt = d.get("bias_feed_alternative")
    if alt:
        term.print(f"bias feed: {d['bias_feed'].replace('_', ' ')} chosen; {alt['feed'].replace('_', ' ')}: {alt['reason']}")

    bom = Table(title="Parts", box=box.SIMPLE_HEAD, title_justify="left", pad_edge=False)
    bom.add_column("role", overflow="fold", min_width=16, max_width=22)
    bom.add_column("part", overflow="fold")
    bom.add_column("/ch", justify="right")
    bom.add_column("qty", justify="right")
    bom.add_column("tightest margin", overflow="fold")
    for p in rep["parts"]:
        part = p["mpn"] + (f" {p['value']}" if p["value"] else "")
        per = _f(p["qty_per_channel"], "{:g}", "board")
        b = p["binding"]
        if b:
            unit = f" {b['unit']}" if b["unit"] else ""
            val = f"{b['margin'] + 0.0:+.3g}{unit}" if b["unit"] else f"{100 * b['margin'] + 0.0:+.0f} %"
            val = val.replace("-0 ", "+0 ").replace("-0%", "+0%")
            tight = Text(f"{b['constraint']} {val}", style=_tight_style(b["fraction"]))
        else:
            tight = Text("")
        bom.add_row(p["role"].replace("_", " "), part, per, str(p["qty"]), tight)
    term.print(bom)

    order = Table(title="Order", box=box.SIMPLE_HEAD, title_justify="left", pad_edge=False)
    order.add_column("part", overflow="fold")
    order.add_column("qty", justify="right")
    order.add_column("break", justify="right")
    order.add_column("unit", justify="right")
    order.add_column("total", justify="right")
    t = rep["totals"]
    suppliers = sorted({o["supplier"] for o in rep["order"]})
    for s_i, sup in enumerate(suppliers):
        mine = [o for o in rep["order"] if o["supplier"] == sup]
        fee = t["fees_by_supplier"].get(sup, 0.0)
        subtotal = sum(o["extended_price"] for o in mine) + fee
        order.add_row(Text(sup, style="bold"), "", "", "", Text(f"{subtotal:.2f}", style="bold"), end_section=False)
        for o in mine:
            part = "  " + o["mpn"] + (f" {o['value']}" if o["value"] else "")
            qty = f"{o['qty']}" + (f" ({o['needed']})" if o["qty"] != o["needed"] else "")
            order.add_row(part, qty, str(o["price_break"]), f"{o['unit_price']:.4g}", f"{o['extended_price']:.2f}")
        if fee:
            order.add_row("  order fee", "", "", "", f"{fee:.2f}")
        order.add_row("", "", "", "", "", end_section=s_i == len(suppliers) - 1)
    order.add_row(Text("total", style="bold"), "", "", "", Text(f"{t['total']:.2f} {cur}", style="bold"))
    term.print(order)
    term.print(f"{t['boards']} board(s): {t['per_board']:.2f} {cur} per board; parts {t['parts']:.2f} + fees {t['fees']:.2f}")
    _warnings_and_cautions(term, rep)


def render_infeasible(term: Terminal, rep: dict) -> None:
    term.always(Text("No feasible design for this spec and catalogue.", style="bold red"))
    for c in rep.get("causes", []):
        term.always(f"- {c}")
    t = Table(title="Candidate funnel (first failing constraint)", box=box.SIMPLE_HEAD, title_justify="left")
    t.add_column("role")
    t.add_column("candidates", justify="right")
    t.add_column("removed by", overflow="fold")
    t.add_column("left", justify="right")
    for role, counts in rep.get("funnel", {}).items():
        removed = ", ".join(f"{k} {v}" for k, v in counts.items() if k not in ("candidates", "feasible") and v)
        t.add_row(role.replace("_", " "), str(counts.get("candidates", "")), removed, str(counts.get("feasible", "")))
    term.always(t)
    sug = rep.get("suggestions") or {}
    if "highest_feasible_power_w" in sug:
        p = sug["highest_feasible_power_w"]
        term.always(f"suggestion: highest power this catalogue and supply can deliver: {p:.3g} W per channel" if p else "suggestion: no power level designs with this supply and catalogue")
    if "lowest_feasible_rail_v" in sug:
        r = sug["lowest_feasible_rail_v"]
        term.always(f"suggestion: lowest supply that designs the asked power: v_min {r['v_min']:g} V, v_max {r['v_max']:g} V" if r else "suggestion: no supply up to 40 V higher designs the asked power")
    if "with_pre_regulator" in sug:
        term.always(f"suggestion: with regulate = \"auto\" the design is {'feasible' if sug['with_pre_regulator'] else 'still infeasible'}")
    _warnings_and_cautions(term, rep)


def _warnings_and_cautions(term: Terminal, rep: dict) -> None:
    for w in rep.get("warnings", []):
        term.print(labelled("warning:", "yellow", w))
    term.print(Panel("\n".join(f"- {c}" for c in rep["cautions"]), title="Safety", border_style="red", expand=False))


def render_alternatives(term: Terminal, reps: list[dict]) -> None:
    """The N best distinct designs (different output pair or driver), each with its total."""
    t = Table(title="Alternatives (each differs in output pair or driver)", box=box.SIMPLE_HEAD, title_justify="left")
    t.add_column("#", justify="right")
    t.add_column("output pair")
    t.add_column("driver")
    t.add_column("heatsink")
    t.add_column("feed")
    t.add_column("total", justify="right")
    for i, rep in enumerate(reps, start=1):
        by_role = {p["role"]: p["mpn"] for p in rep["parts"]}
        t.add_row(
            str(i), f"{by_role.get('output_npn')}/{by_role.get('output_pnp')}", by_role.get("driver_opamp", ""),
            by_role.get("heatsink", ""), rep["design"]["bias_feed"].replace("_", " "),
            f"{rep['totals']['total']:.2f} {rep['totals']['currency']}",
        )
    term.always(t)


def render_changes(term: Terminal, rep: dict) -> None:
    """What changed against the previous design, why, and what it costs."""
    cur = rep["totals"]["currency"]
    t = Table(title="Changes against the previous design", box=box.SIMPLE_HEAD, title_justify="left", pad_edge=False)
    t.add_column("role", overflow="fold", max_width=16)
    t.add_column("previous", overflow="fold")
    t.add_column("new", overflow="fold")
    t.add_column("why", overflow="fold")
    t.add_column("cost", justify="right")
    for c in rep.get("changes", []):
        t.add_row(c["role"].replace("_", " "), c["previous"], c["new"], c["reason"], f"{c['cost_change']:+.2f}")
    if not rep.get("changes"):
        t.add_row("(none)", "", "", "every role keeps its part", "")
    term.always(t)
    diff = rep["totals"]["total"] - rep["previous_total"]
    term.always(f"total {rep['totals']['total']:.2f} {cur} against {rep['previous_total']:.2f} {cur} before ({diff:+.2f} {cur})")
    for role, note in rep.get("no_drop_in", {}).items():
        term.always(labelled(f"{role.replace('_', ' ')}:", "yellow", note))


def render_risk(term: Terminal, rep: dict) -> None:
    """Single-source lines and the best design without each."""
    cur = rep["totals"]["currency"]
    t = Table(title="Stock risk", box=box.SIMPLE_HEAD, title_justify="left", pad_edge=False)
    t.add_column("part", overflow="fold")
    t.add_column("role", overflow="fold", max_width=14)
    t.add_column("stocked by", justify="right")
    t.add_column("without it", overflow="fold")
    for r in rep["stock_risk"]:
        n = len(r["suppliers_with_stock"])
        style = "red" if r["single_source"] else ""
        without = (f"{r['total_without']:.2f} {cur} with {r['replacement']}" if r["total_without"] is not None
                   else r["replacement"] or "no design")
        t.add_row(Text(r["mpn"], style=style), r["role"].replace("_", " "), Text(f"{n} supplier{'s' if n != 1 else ''}", style=style), without)
    term.always(t)


def _feed_text(d: dict) -> str:
    """``current source, 147 mA, on sink``: the feed, its current, where its transistors sit."""
    where = {"heatsink": ", on sink", "free_air": ", free air"}.get(d.get("bias_source_mount") or "", "")
    return f"{d['bias_feed'].replace('_', ' ')}, {1e3 * d['bias_current_a']:.3g} mA{where}"
