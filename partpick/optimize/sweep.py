"""Sweep one spec quantity (power, rail or ambient) and design at every point."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from partpick.catalog import Catalog
from partpick.errors import SizeLimitError, UsageError
from partpick.optimize.design import run
from partpick.optimize.explain import _with
from partpick.spec import Spec

QUANTITIES = {"power": ("power per channel", "W"), "rail": ("v_min", "V"), "ambient": ("ambient", "degC")}


def parse_range(text: str, option: str) -> np.ndarray:
    """``FROM:TO:STEP`` (inclusive, STEP > 0) as an array of points."""
    try:
        a, b, step = (float(x) for x in text.split(":"))
    except ValueError:
        raise UsageError(f"{option} {text}: write FROM:TO:STEP, e.g. 10:60:5") from None
    if step <= 0 or b < a:
        raise UsageError(f"{option} {text}: needs FROM <= TO and STEP > 0")
    n = int(np.floor((b - a) / step + 1e-9)) + 1
    if n > 500:
        raise UsageError(f"{option} {text}: {n} points; at most 500")
    return np.round(a + step * np.arange(n), 9)


def spec_at(spec: Spec, quantity: str, value: float) -> Spec:
    """The spec with the swept quantity set to ``value`` (a rail keeps the spec's v_max - v_min)."""
    if quantity == "power":
        return _with(spec, "output", power_w=float(value))
    if quantity == "rail":
        spread = spec.supply.v_max - spec.supply.v_min
        return _with(spec, "supply", v_min=float(value), v_max=float(value + spread))
    if quantity == "ambient":
        return _with(spec, "thermal", ambient_c=float(value))
    raise UsageError(f"unknown sweep quantity {quantity}")


@dataclass
class SweepPoint:
    value: float
    feasible: bool
    total: float | None
    output_pair: str | None
    driver: str | None
    heatsink: str | None
    tightest: str | None
    tightest_fraction: float | None
    #: Why the point was not designed (its run met the size limit), else None.
    skipped: str | None = None
    #: Why the point's design is not proven the cheapest (see design.run_bounded), else None.
    unproven: str | None = None


def sweep(spec: Spec, catalog: Catalog, quantity: str, values: np.ndarray, solver: str = "cbc") -> list[SweepPoint]:
    """The optimal design at each point (each point is a full, independent design run).

    A point whose run meets partpick's size limit (:class:`SizeLimitError`:
    at a lower power, say, far more current-source variants pass) is kept
    with the reason in ``skipped``, neither feasible nor infeasible, and the
    sweep goes on; when every point meets it, the first such error is raised
    (nothing was designed).
    """
    points = []
    limited = None
    for v in values:
        try:
            r = run(spec_at(spec, quantity, float(v)), catalog, solver=solver)
        except SizeLimitError as exc:
            limited = limited or exc
            points.append(SweepPoint(float(v), False, None, None, None, None, None, None, str(exc)))
            continue
        if not r.feasible:
            points.append(SweepPoint(float(v), False, None, None, None, None, None, None))
            continue
        k = r.assembly.tables["stage"].iloc[r.solution.choice["stage"]]
        pair = r.stage.pairs.iloc[int(k["pair_i"])]
        role, margin = min(((role, m) for role, ms in r.check.margins.items() for m in ms), key=lambda rm: rm[1].fraction)
        points.append(SweepPoint(
            float(v), True, round(r.solution.total, 2), f"{pair['mpn_n']}/{pair['mpn_p']}",
            r.assembly.tables["driver_opamp"].iloc[r.solution.choice["driver_opamp"]]["mpn"],
            r.assembly.tables["heatsink"].iloc[r.solution.choice["heatsink"]]["mpn"],
            f"{role} {margin.name}", round(margin.fraction, 4),
            unproven=None if r.status == "ok" else (r.warnings[-1] if r.warnings else "not proven optimal"),
        ))
    if limited is not None and all(p.skipped for p in points):
        raise limited
    return points


def plot_sweep(points: list[SweepPoint], quantity: str, path: str, currency: str) -> None:
    """Cost against the swept quantity; part changes and infeasible points marked."""
    import io

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from partpick.report.files import atomic_write_bytes

    label, unit = QUANTITIES[quantity]
    fig, ax = plt.subplots(figsize=(8, 4.5), dpi=100)
    ok = [p for p in points if p.feasible]
    ax.plot([p.value for p in ok], [p.total for p in ok], "o-", color="tab:blue", label="optimal total")
    open_ = [p for p in ok if p.unproven]
    if open_:
        ax.plot([p.value for p in open_], [p.total for p in open_], "o", markerfacecolor="white", color="tab:blue",
                label="found, not proven optimal")
    bad = [p for p in points if not p.feasible and p.skipped is None]
    if bad:
        y0 = min([p.total for p in ok], default=0.0)
        ax.plot([p.value for p in bad], [y0] * len(bad), "x", color="tab:red", markersize=9, label="infeasible")
    prev = None
    for p in ok:
        key = (p.output_pair, p.driver, p.heatsink)
        if prev is not None and key != prev:
            ax.axvline(p.value, color="grey", linestyle="--", linewidth=0.8)
            ax.annotate(f"{p.output_pair}\n{p.driver}, {p.heatsink}", (p.value, p.total), textcoords="offset points",
                        xytext=(4, 8), fontsize=7)
        prev = key
    ax.set_xlabel(f"{label} [{unit}]")
    ax.set_ylabel(f"total order [{currency}]")
    ax.set_title("Optimal order cost across the sweep (dashed: chosen parts change)")
    ax.grid(True, alpha=0.3)
    ax.legend(loc="best")
    fig.tight_layout()
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    plt.close(fig)
    atomic_write_bytes(path, buf.getvalue())
