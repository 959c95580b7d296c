"""Pictures of a design (``--plots DIR``): SOA with load lines, thermal budget, candidate funnel.

Each picture is written as PNG (800 px wide) and SVG, all files of a run
together and atomically (:func:`partpick.report.files.write_all`). The data
behind each picture comes from pure functions (:func:`soa_plot_data`,
:func:`thermal_plot_data`, :func:`funnel_rows`) so tests can compare what is
drawn with the model; matplotlib is imported only when a picture is drawn, so
``partpick --help`` stays fast.

Files written by :func:`write_plots`:

- feasible design: ``soa_<mpn>.png/.svg`` for the NPN and the PNP output
  device, ``thermal.png/.svg``;
- infeasible design: ``funnel.png/.svg``.
"""

from __future__ import annotations

import io
import math
import re
import textwrap
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from partpick.evaluate.selection import device_soa_limit_a
from partpick.model import soa, thermal
from partpick.optimize.design import DesignResult
from partpick.report.files import write_all

OUTPUT_ROLES = ("output_npn", "output_pnp")
#: Picture size: 8 in x 100 dpi = 800 px wide.
WIDTH_IN, DPI = 8.0, 100
#: Samples of the SOA boundary drawn between the left edge and Vceo.
CURVE_SAMPLES = 400

_RC = {
    "font.size": 10, "axes.titlesize": 11, "axes.labelsize": 10, "legend.fontsize": 8.5,
    "xtick.labelsize": 9, "ytick.labelsize": 9,
    # Reproducible SVG: fixed ids and no date stamp.
    "svg.hashsalt": "partpick", "svg.fonttype": "path",
}


# ----------------------------------------------------------------------------- data


@dataclass(frozen=True)
class DeviceThermal:
    """The thermal chain of one output device (model s.6) at worst-case dissipation."""

    role: str
    mpn: str
    p_w: float  # worst-case dissipation per device [W]
    ambient_c: float
    t_sink_c: float
    t_case_c: float
    t_j_c: float
    tj_limit_c: float  # tj_max - tj_derate_c
    rth_cs_k_w: float
    rth_jc_k_w: float


@dataclass(frozen=True)
class Locus:
    """The conducting samples of one load line, in time order."""

    label: str
    phase_rad: float
    vce_v: np.ndarray
    ic_a: np.ndarray


@dataclass(frozen=True)
class SoaPlot:
    """Everything drawn in one SOA picture (magnitudes: the PNP mirrors the NPN)."""

    role: str
    mpn: str
    vce_grid_v: np.ndarray
    limit_25c_a: np.ndarray
    limit_case_a: np.ndarray
    derating: float
    t_case_c: float
    vceo_v: float
    ic_max_a: float
    rail_v: float
    has_curve: bool  # the catalogue gave soa_dc breakpoints
    loci: tuple[Locus, ...]
    worst_vce_v: float
    worst_ic_a: float
    worst_margin: float
    short_circuit: tuple[float, float, float] | None  # (Vce [V], Ic [A], margin) when checked


def _chosen_rows(result: DesignResult) -> dict[str, dict]:
    """Catalogue rows of the chosen output devices and heatsink (as the full check reads them)."""
    asm, sol = result.assembly, result.solution
    if asm is None or sol is None or result.check is None:
        raise ValueError("the design is not feasible: no chosen devices")
    k = asm.tables["stage"].iloc[sol.choice["stage"]]
    pair = result.stage.pairs.iloc[int(k["pair_i"])]
    tr = result.pool.transistors
    return {
        "output_npn": tr.iloc[int(pair["npn_i"])].to_dict(),
        "output_pnp": tr.iloc[int(pair["pnp_i"])].to_dict(),
        "heatsink": asm.tables["heatsink"].iloc[sol.choice["heatsink"]].to_dict(),
    }


def _given(x) -> bool:
    return x is not None and not (isinstance(x, float) and math.isnan(x))


def device_thermal(result: DesignResult, role: str) -> DeviceThermal:
    """The thermal chain of the chosen ``role`` device (model s.6).

    ``T_case = T_sink + P_dev Rth_cs``, ``T_j = T_case + P_dev Rth_jc``, with
    ``T_sink`` and ``P_dev`` from the design block and ``Rth_cs`` from the
    heatsink's mounting kit, else the package default (model s.13).

    Parameters
    ----------
    result : a feasible design
    role : ``output_npn`` or ``output_pnp``

    Returns
    -------
    DeviceThermal : temperatures [degC], dissipation [W], resistances [K/W]
    """
    rows = _chosen_rows(result)
    dev, sink = rows[role], rows["heatsink"]
    d = result.check.design
    kit = sink.get("rth_cs_k_w")
    rth_cs = float(kit) if _given(kit) else float(thermal.rth_cs_default_k_w(dev["package"]))
    p_w, t_sink = float(d["p_device_max_w"]), float(d["t_sink_c"])
    t_case = float(thermal.case_temp_c(t_sink, p_w, rth_cs))
    return DeviceThermal(
        role=role, mpn=str(dev["mpn"]), p_w=p_w, ambient_c=float(result.spec.thermal.ambient_c),
        t_sink_c=t_sink, t_case_c=t_case, t_j_c=float(thermal.junction_temp_c(t_case, p_w, dev["rth_jc_k_w"])),
        tj_limit_c=float(dev["tj_max_c"]) - result.spec.thermal.tj_derate_c,
        rth_cs_k_w=rth_cs, rth_jc_k_w=float(dev["rth_jc_k_w"]),
    )


def thermal_plot_data(result: DesignResult) -> list[DeviceThermal]:
    """The thermal chain of both output devices (NPN first)."""
    return [device_thermal(result, role) for role in OUTPUT_ROLES]


def _conducting_locus(label: str, rail_v: float, v_peak_v: float, i_peak_a: float, phase_rad: float) -> Locus:
    """One load line (:func:`partpick.model.soa.load_line`), its conducting samples in time order.

    The samples are rotated to start at a non-conducting one, so the one
    conducting half-cycle is a single run even when it wraps past t = 0.
    """
    vce, ic = soa.load_line(rail_v, v_peak_v, i_peak_a, phase_rad)
    start = int(np.argmax(ic <= 0.0))
    vce, ic = np.roll(vce, -start), np.roll(ic, -start)
    on = ic > 0.0
    return Locus(label, float(phase_rad), vce[on], ic[on])


def worst_sample(vce_v: np.ndarray, ic_a: np.ndarray, limit_a: np.ndarray) -> tuple[float, float, float]:
    """The load-line sample with the least SOA margin (model s.5).

    ``margin_k = 1 - Ic_k / I_soa(Vce_k)`` over conducting samples; the first
    minimum is taken, as in the full check.

    Parameters
    ----------
    vce_v, ic_a : load-line samples [V], [A]
    limit_a : derated SOA limit at each sample [A]

    Returns
    -------
    (Vce [V], Ic [A], margin [1]) of the worst sample
    """
    per = np.where(ic_a > 0, 1 - ic_a / np.maximum(limit_a, 1e-12), np.inf)
    i = int(np.argmin(per))
    return float(vce_v[i]), float(ic_a[i]), float(per[i])


def soa_plot_data(result: DesignResult, role: str) -> SoaPlot:
    """The data of one SOA picture: boundary at 25 degC and at Tc, load lines, worst point.

    The load lines are :func:`partpick.model.soa.load_line` at the highest rail
    with the design's Vp and Ip, for phase 0 (resistive) and +/-phi. The
    boundary is :func:`soa.soa_current_limit_a` times
    :func:`soa.derating_factor` at the device's case temperature. For the NPN
    the worst point and the derating are the full check's own
    (``result.check.plot_data``); the PNP's, which the check does not keep,
    are computed the same way on the mirrored load line (|Vce| = Vs - |v|,
    |Ic| = |i| on the negative half-cycle: the same sample set).

    Parameters
    ----------
    result : a feasible design
    role : ``output_npn`` or ``output_pnp``

    Returns
    -------
    SoaPlot
    """
    dev = _chosen_rows(result)[role]
    pdata = result.check.plot_data
    tg = result.targets
    rail = float(pdata["rail_v"])
    therm = device_thermal(result, role)
    if role == "output_npn":
        t_case, derate = float(pdata["t_case"]), float(pdata["derating"])
    else:
        t_case = therm.t_case_c
        derate = float(soa.derating_factor(dev["tj_max_c"], t_case))
    phi = float(tg.phase_rad)
    phi_deg = math.degrees(phi)
    loci = [_conducting_locus("resistive load (phase 0)", rail, tg.v_peak_v, tg.i_peak_a, 0.0)]
    if phi > 0:
        loci += [
            _conducting_locus(f"reactive load, +{phi_deg:.0f} deg", rail, tg.v_peak_v, tg.i_peak_a, phi),
            _conducting_locus(f"reactive load, -{phi_deg:.0f} deg", rail, tg.v_peak_v, tg.i_peak_a, -phi),
        ]
    # The model's own samples (phase +phi, time order from t = 0).
    vce_m, ic_m = soa.load_line(rail, tg.v_peak_v, tg.i_peak_a, phi)
    limit_m = device_soa_limit_a(dev, vce_m) * derate
    w_v, w_a, w_margin = worst_sample(vce_m, ic_m, limit_m)
    if role == "output_npn":
        w_v, w_a = (float(x) for x in pdata["worst"])
        w_margin = float(1.0 - w_a / max(float(device_soa_limit_a(dev, np.array([w_v]))[0]) * derate, 1e-12))
    vceo = float(dev["vceo_v"])
    lo = max(0.1, min(1.0, 0.8 * float(np.min(vce_m))))
    grid = np.geomspace(lo, vceo, CURVE_SAMPLES)
    limit25 = device_soa_limit_a(dev, grid)
    sc = None
    if result.spec.output.short_circuit:
        lim_sc = float(device_soa_limit_a(dev, np.array([rail]))[0]) * derate
        sc = (rail, float(tg.i_peak_a), 1.0 - float(tg.i_peak_a) / max(lim_sc, 1e-12))
    return SoaPlot(
        role=role, mpn=str(dev["mpn"]), vce_grid_v=grid, limit_25c_a=limit25, limit_case_a=limit25 * derate,
        derating=derate, t_case_c=t_case, vceo_v=vceo, ic_max_a=float(dev["ic_max_a"]), rail_v=rail,
        has_curve=bool(len(dev["soa_v"])), loci=tuple(loci),
        worst_vce_v=w_v, worst_ic_a=w_a, worst_margin=w_margin, short_circuit=sc,
    )


def funnel_rows(funnel: dict[str, dict[str, int]]) -> list[tuple[str, int, list[tuple[str, int]], int]]:
    """The report's funnel as rows ``(role, candidates, [(constraint, removed), ...], feasible)``.

    >>> funnel_rows({"output_stage": {"candidates": 9, "SOA (s.5)": 4, "kind": 0, "feasible": 5}})
    [('output_stage', 9, [('SOA (s.5)', 4)], 5)]
    """
    rows = []
    for role, counts in funnel.items():
        removed = [(k, int(v)) for k, v in counts.items() if k not in ("candidates", "feasible") and v]
        rows.append((role, int(counts.get("candidates", 0)), removed, int(counts.get("feasible", 0))))
    return rows


# ----------------------------------------------------------------------------- drawing


def _figure(height_in: float):
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    return Figure(figsize=(WIDTH_IN, height_in), dpi=DPI, layout="constrained")


def _encode(fig, stem: str) -> dict[str, bytes]:
    """A figure as PNG and SVG bytes, by file name."""
    out = {}
    for fmt, meta in (("png", {"Software": None}), ("svg", {"Date": None})):
        buf = io.BytesIO()
        fig.savefig(buf, format=fmt, dpi=DPI, metadata=meta)
        out[f"{stem}.{fmt}"] = buf.getvalue()
    return out


def _pct(x: float) -> str:
    return f"{100 * x:+.1f} %"


def _plain_log_ticks(axis) -> None:
    """Log-axis ticks at 1, 2 and 5 per decade, written as plain numbers (0.2, 5, 100)."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullLocator

    axis.set_major_locator(LogLocator(base=10, subs=(1.0, 2.0, 5.0)))
    axis.set_minor_locator(NullLocator())
    axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))


def draw_soa(data: SoaPlot, spec_name: str = ""):
    """The SOA picture of one device (log-log): boundaries, load lines, worst point."""
    from matplotlib.transforms import blended_transform_factory

    fig = _figure(6.4)
    ax = fig.subplots()
    npn = data.role == "output_npn"
    v_lab, i_lab = ("Vce", "Ic") if npn else ("|Vce|", "|Ic|")
    kind = "DC SOA" if data.has_curve else "DC SOA (Ic max, Pd, Vceo only)"
    all_i = np.concatenate([lo.ic_a for lo in data.loci])
    y_top = 2.2 * max(data.ic_max_a, float(np.max(all_i)))
    end_case = float(data.limit_case_a[-1])
    y_bot = max(1e-3, min(float(np.max(all_i)) / 30, 0.5 * end_case if end_case > 0 else np.inf))
    # The limit is 0 beyond Vceo: each boundary drops to the bottom edge there.
    v_edge = np.append(data.vce_grid_v, data.vceo_v)
    ax.plot(v_edge, np.append(data.limit_25c_a, y_bot), color="0.35", lw=1.6, label=f"{kind} at Tc = 25 °C")
    ax.plot(v_edge, np.append(data.limit_case_a, y_bot), color="tab:red", lw=2.0,
            label=f"derated at Tc = {data.t_case_c:.0f} °C (× {data.derating:.2f})")
    ax.fill_between(data.vce_grid_v, data.limit_case_a, y_bot, color="tab:green", alpha=0.08, lw=0,
                    label="inside the derated SOA")
    ax.axvline(data.rail_v, color="0.6", ls="--", lw=0.9)
    ax.text(data.rail_v, 0.98, f"Vs max {data.rail_v:.1f} V ", transform=ax.get_xaxis_transform(),
            va="top", ha="right", fontsize=8.5, color="0.35")
    ax.text(data.vceo_v, 0.98, f" Vceo\n {data.vceo_v:g} V", transform=ax.get_xaxis_transform(),
            va="top", ha="left", fontsize=8.5, color="0.35")
    styles = (("tab:blue", "-", 2.4), ("tab:orange", "-", 2.2), ("tab:purple", (0, (4, 3)), 1.5))
    for k, (locus, (color, ls, lw)) in enumerate(zip(data.loci, styles)):
        extra = " (same locus, mirrored in time)" if k == 2 else ""
        ax.plot(locus.vce_v, locus.ic_a, color=color, ls=ls, lw=lw, label=f"load line: {locus.label}{extra}")
    ax.plot([data.worst_vce_v], [data.worst_ic_a], "X", color="black", ms=10, zorder=5,
            label=f"worst point: SOA margin {_pct(data.worst_margin)}")
    x_lo, x_hi = float(data.vce_grid_v[0]), 1.35 * data.vceo_v
    # The label sits low, between the load lines and Vceo, where the picture is empty.
    v_label = math.sqrt(max(float(np.max(lo.vce_v)) for lo in data.loci) * data.vceo_v)
    ax.annotate(
        f"worst: {data.worst_vce_v:.1f} V, {data.worst_ic_a:.2f} A\nSOA margin {_pct(data.worst_margin)}",
        (data.worst_vce_v, data.worst_ic_a), xytext=(v_label, 0.2),
        textcoords=blended_transform_factory(ax.transData, ax.transAxes),
        ha="center", va="center", multialignment="left",
        fontsize=9, bbox=dict(boxstyle="round,pad=0.3", fc="white", ec="0.5", alpha=0.9),
        arrowprops=dict(arrowstyle="->", color="0.2"),
    )
    if data.short_circuit is not None:
        v, i, m = data.short_circuit
        ax.plot([v], [i], "s", color="tab:red", mfc="none", ms=9, mew=1.8,
                label=f"output short at full drive: margin {_pct(m)}")
    ax.set_xscale("log")
    ax.set_yscale("log")
    _plain_log_ticks(ax.xaxis)
    _plain_log_ticks(ax.yaxis)
    ax.set_xlim(x_lo, x_hi)
    ax.set_ylim(y_bot, y_top)
    ax.set_xlabel(f"collector-emitter voltage {v_lab} [V]")
    ax.set_ylabel(f"collector current {i_lab} [A]")
    title = f"{data.mpn} ({data.role.replace('_', ' ')}): DC safe operating area and load lines"
    ax.set_title(title if not spec_name else f"{title}\n{spec_name}")
    ax.grid(True, which="both", color="0.9", lw=0.6)
    fig.legend(loc="outside lower center", ncols=2, framealpha=0.92)
    return fig


def draw_thermal(bars: list[DeviceThermal], rth_sa_k_w: float, n_on_sink: int, spec_name: str = ""):
    """The thermal budget: ambient + sink rise + case rise + junction rise against the limit."""
    fig = _figure(5.6)
    ax = fig.subplots()
    x = np.arange(len(bars))
    half = 0.21
    parts = (
        ("ambient", [b.ambient_c for b in bars], "0.78", "T_amb"),
        ("sink rise (Rth_sa × P on the sink)", [b.t_sink_c - b.ambient_c for b in bars], "tab:blue", "T_sink"),
        ("case rise (Rth_cs × P)", [b.t_case_c - b.t_sink_c for b in bars], "tab:orange", "T_case"),
        ("junction rise (Rth_jc × P)", [b.t_j_c - b.t_case_c for b in bars], "tab:red", "T_j"),
    )
    bottom = np.zeros(len(bars))
    top_c = max(max(b.tj_limit_c for b in bars), max(b.t_j_c for b in bars))
    gap = 0.045 * top_c  # least spacing of the temperature labels beside a bar
    label_y = np.full(len(bars), -np.inf)
    for label, heights, color, level in parts:
        h = np.asarray(heights, dtype=float)
        ax.bar(x, h, 2 * half, bottom=bottom, color=color, label=label, edgecolor="white", lw=0.8)
        label_y = np.maximum(bottom + h, label_y + gap)
        for xi, b0, hi, yl in zip(x, bottom, h, label_y):
            if abs(hi) >= 0.035 * top_c:
                ax.text(xi, b0 + hi / 2, f"{hi:.0f} °C" if level == "T_amb" else f"+{hi:.1f} K",
                        ha="center", va="center", fontsize=9)
            ax.text(xi + half + 0.03, yl, f"{level} {b0 + hi:.0f} °C", ha="left", va="center",
                    fontsize=8.5, color="0.2")
        bottom = bottom + h
    for k, lim in enumerate(sorted({b.tj_limit_c for b in bars})):
        ax.axhline(lim, color="black", ls="--", lw=1.4,
                   label="junction limit (Tj max − derating)" if k == 0 else None)
        ax.text(-0.55, lim, f"limit {lim:.0f} °C", ha="left", va="bottom", fontsize=9)
    ticks = [f"{b.mpn} ({b.role.replace('_', ' ')})\nP = {b.p_w:.1f} W; Tj {b.tj_limit_c - b.t_j_c:.1f} K below limit\n"
             f"Rth_cs {b.rth_cs_k_w:g} K/W, Rth_jc {b.rth_jc_k_w:g} K/W" for b in bars]
    ax.set_xticks(x, ticks)
    ax.set_ylim(min(0.0, min(b.ambient_c for b in bars)), top_c * 1.1)
    ax.set_xlim(-0.6, len(bars) - 0.4)
    ax.set_ylabel("temperature [°C]")
    title = f"Thermal budget at worst-case dissipation (heatsink {rth_sa_k_w:g} K/W, {n_on_sink} devices on it)"
    ax.set_title(title if not spec_name else f"{title}\n{spec_name}")
    ax.grid(True, axis="y", color="0.9", lw=0.6)
    ax.set_axisbelow(True)
    fig.legend(loc="outside lower center", ncols=3, framealpha=0.92)
    return fig


def _wrap(text: str, width: int) -> str:
    return "\n".join(textwrap.wrap(text, width)) or text


def _stage_bars(rows) -> list[tuple[str, int, str]]:
    """The output stage's bars: (label, count, colour) for candidates, each removal, feasible."""
    for role, cand, removed, feas in rows:
        if role == "output_stage":
            return ([("candidates", cand, "0.6")] + [(k, v, "tab:red") for k, v in removed]
                    + [("feasible", feas, "tab:green" if feas else "tab:red")])
    return []


def _draw_stage_funnel(ax, bars: list[tuple[str, int, str]], alone: bool) -> None:
    n = len(bars)
    y = np.arange(n)[::-1]
    vals = np.array([v for _l, v, _c in bars], dtype=float)
    ax.barh(y, np.where(vals > 0, vals, np.nan), color=[c for _l, _v, c in bars], height=0.6)
    ax.set_xscale("log")
    vmax = float(vals.max()) if np.any(vals > 0) else 1.0
    ax.set_xlim(0.7, max(vmax, 1.0) * 6)
    ax.set_ylim(-0.6, n - 0.4)
    for yi, v in zip(y, vals):
        ax.text(max(v, 0.7) * 1.12, yi, f"{int(v)}", va="center", fontsize=9)
    ax.set_yticks(y, [_wrap(lab, 34) for lab, _v, _c in bars], fontsize=8.5)
    ax.set_xlabel("output-stage configurations (rail x pair x Re x bias feed), log scale")
    note = "\n(no configuration passes, so the other roles were not evaluated)" if alone else ""
    ax.set_title(f"Output stage: candidates, removed by the first failing constraint, feasible{note}", fontsize=9.5)
    ax.grid(True, axis="x", which="both", color="0.92", lw=0.6)
    ax.set_axisbelow(True)


def _draw_role_funnel(ax, others) -> None:
    from matplotlib.ticker import MaxNLocator

    n = len(others)
    y = np.arange(n)[::-1]
    cand = np.array([r[1] for r in others], dtype=float)
    feas = np.array([r[3] for r in others], dtype=float)
    ax.barh(y, cand, color="0.8", height=0.7)
    ax.barh(y, feas, color="tab:green", height=0.4)
    span = max(1.0, float(cand.max()))
    ax.set_xlim(0, span * 2.3)
    ax.set_ylim(-0.6, n - 0.4)
    for yi, (_role, c, removed, f) in zip(y, others):
        note = "; ".join(f"{k} {v}" for k, v in removed) or "none removed"
        ax.text(span * 1.06, yi, _wrap(f"{f} of {c} left; removed by {note}", 58), va="center", fontsize=8,
                color="tab:red" if f == 0 else "0.25")
    ax.set_yticks(y, [r[0].replace("_", " ") for r in others], fontsize=9)
    for lab, r in zip(ax.get_yticklabels(), others):
        if r[3] == 0:
            lab.set_color("tab:red")
            lab.set_fontweight("bold")
    ticks = MaxNLocator(5, integer=True).tick_values(0, span)
    ax.set_xticks(ticks[ticks <= span])
    ax.spines[["top", "right"]].set_visible(False)
    ax.spines["bottom"].set_bounds(0, span)
    ax.set_xlabel("catalogue candidates of the role")
    ax.set_title("Other roles: candidates (grey) and feasible (green); red: none left", fontsize=9.5)


def draw_funnel(funnel: dict[str, dict[str, int]], spec_name: str = ""):
    """The candidate funnel: output stage (log scale) and the other roles (how many are left)."""
    rows = funnel_rows(funnel)
    bars = _stage_bars(rows)
    others = [r for r in rows if r[0] != "output_stage"]
    n1, n2 = len(bars), len(others)
    fig = _figure(1.5 + 0.45 * n1 + (0.9 + 0.42 * n2 if n2 else 0.0))
    axes = fig.subplots(2, 1, height_ratios=[n1 + 1.2, n2 + 1.2]) if n2 else [fig.subplots()]
    _draw_stage_funnel(axes[0], bars, alone=not n2)
    if n2:
        _draw_role_funnel(axes[1], others)
    title = "Candidate funnel: no feasible design"
    fig.suptitle(title if not spec_name else f"{title}\n{spec_name}", fontsize=11)
    return fig


# ----------------------------------------------------------------------------- files


def _safe_stem(mpn: str) -> str:
    """A part number made safe as a file name: characters outside [A-Za-z0-9._-] become '_'."""
    return re.sub(r"[^A-Za-z0-9._-]", "_", mpn).lstrip(".") or "part"


def render_plots(result: DesignResult, report: dict | None = None) -> dict[str, bytes]:
    """The pictures of ``result`` as file name -> bytes, PNG then SVG per picture.

    Parameters
    ----------
    result : a design run (feasible or not)
    report : the run's report dict (from :func:`partpick.report.build.build_report`);
        built when not given; used for the funnel of an infeasible run
    """
    import matplotlib

    name = result.spec.name
    files: dict[str, bytes] = {}
    with matplotlib.rc_context(_RC):
        if not result.feasible:
            if report is None:
                from partpick.report.build import build_report

                report = build_report(result)
            return _encode(draw_funnel(report["funnel"], name), "funnel")
        stems: set[str] = set()
        for role in OUTPUT_ROLES:
            data = soa_plot_data(result, role)
            stem = f"soa_{_safe_stem(data.mpn)}"
            stem = stem if stem not in stems else f"{stem}_{role}"
            stems.add(stem)
            files.update(_encode(draw_soa(data, name), stem))
        d = result.check.design
        n_on_sink = 2 * (result.targets.channels if result.spec.thermal.shared_heatsink else 1)
        fig = draw_thermal(thermal_plot_data(result), float(d["rth_sa_chosen_k_w"]), n_on_sink, name)
        files.update(_encode(fig, "thermal"))
    return files


def write_plots(result: DesignResult, folder: str | Path, report: dict | None = None) -> list[Path]:
    """Write the pictures of :func:`render_plots` into ``folder`` (created if missing).

    Returns
    -------
    The files written, PNG then SVG per picture.
    """
    files = {Path(folder) / name: data for name, data in render_plots(result, report).items()}
    write_all(files)
    return list(files)


__all__ = [
    "DeviceThermal", "Locus", "SoaPlot", "device_thermal", "thermal_plot_data", "soa_plot_data",
    "worst_sample", "funnel_rows", "draw_soa", "draw_thermal", "draw_funnel", "render_plots", "write_plots",
]
