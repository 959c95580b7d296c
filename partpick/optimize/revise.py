"""Re-designing after a change of stock or prices: keep the board, change as little as possible.

``redesign`` re-solves with the current catalogue while minimising the number
of roles whose parts change against a previous report (then cost; a weight
may trade changes against cost). Fewest changes first builds the stage
table level by level of changed roles (``redesign_by_changes``). With
``keep_footprints`` a replacement must have the previous part's package, and
its pinout where both are catalogued.
``stock_risk`` finds single-source lines and the best design without each.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from partpick.catalog import Catalog
from partpick.errors import InputError, Problem, SizeLimitError
from partpick.optimize.design import (
    BoundedSearch, ChangeSearch, DesignResult, changed_roles, finish, option_sources, prepare, proven_whole, usable_sources,
)
from partpick.optimize.milp import Coupling, rules_kept
from partpick.report.build import SCHEMA, value_text
from partpick.spec import Spec

#: Roles whose parts have a footprint in the catalogue (package, pinout).
FOOTPRINT_ROLES = ("output_npn", "output_pnp", "driver_opamp", "regulator", "bias_diode", "bias_source_transistor", "bias_source_reference")


@dataclass
class Previous:
    """The parts of a previous report: role -> sorted (mpn, value) list, and their costs."""

    path: str
    parts: dict[str, list[tuple[str, str | None]]]
    footprint: dict[str, list[tuple[str | None, str | None]]]
    role_cost: dict[str, float]
    total: float


def load_previous(path: str | Path) -> Previous:
    """Read a previous ``partpick.report/1`` report with status ok."""
    label = str(path)
    try:
        rep = json.loads(Path(path).read_text(encoding="utf-8-sig"))
    except FileNotFoundError:
        raise InputError([Problem(label, 0, "", "previous report not found")]) from None
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        line = getattr(exc, "lineno", 0)
        raise InputError([Problem(label, line, "", f"not a JSON report: {exc}")]) from None
    if not isinstance(rep, dict) or rep.get("schema") != SCHEMA:
        raise InputError([Problem(label, 0, "schema", f"not a {SCHEMA} report")])
    if rep.get("status") != "ok" or not isinstance(rep.get("parts"), list):
        raise InputError([Problem(label, 0, "status", "the previous report holds no design (status is not ok)")])
    parts: dict[str, list] = {}
    foot: dict[str, list] = {}
    try:
        for p in rep["parts"]:
            parts.setdefault(str(p["role"]), []).append((str(p["mpn"]), p.get("value")))
            foot.setdefault(str(p["role"]), []).append((p.get("package"), p.get("pinout")))
        cost: dict[str, float] = {}
        for o in rep.get("order", []):
            roles = o.get("roles") or []
            for r in roles:
                cost[r] = cost.get(r, 0.0) + float(o["extended_price"]) / len(roles)
        total = float(rep["totals"]["total"])
    except (KeyError, TypeError, ValueError) as exc:
        raise InputError([Problem(label, 0, "parts", f"malformed report: {exc}")]) from None
    return Previous(label, {r: sorted(v, key=str) for r, v in parts.items()}, foot, cost, total)


def _option_roles(result: DesignResult, group: str, option: int, named: dict | None = None) -> dict[str, list[tuple[str, str | None]]]:
    """Each role of an option and its parts as (source, value as printed), sorted.

    ``named`` remembers each (line, role)'s pair across calls (many options
    share lines).
    """
    asm = result.assembly
    named = {} if named is None else named
    out: dict[str, list] = {}
    for line, _q, role in asm.problem.groups[group].usage[option]:
        part = named.get((line, role))
        if part is None:
            src, value = asm.lines[line]
            part = named[(line, role)] = (src, value_text(value, role))
        out.setdefault(role, []).append(part)
    return {r: (v if len(v) == 1 else sorted(v, key=str)) for r, v in out.items()}


def _footprints(catalog: Catalog) -> dict[str, tuple[str | None, str | None]]:
    fp: dict[str, tuple] = {}
    for frame in (catalog.transistors, catalog.opamps, catalog.regulators, catalog.diodes):
        pin = frame["pinout"] if "pinout" in frame else [None] * len(frame)
        for m, pkg, pn in zip(frame["mpn"], frame["package"], pin):
            fp[m] = (pkg, pn if isinstance(pn, str) else None)
    return fp


def _drop_in(new: tuple, old: tuple) -> bool:
    """Same package; same pinout where both are known (a different pinout is not a drop-in)."""
    if old[0] is None:
        return True
    if new[0] != old[0]:
        return False
    return old[1] is None or new[1] is None or new[1] == old[1]


@dataclass
class Change:
    role: str
    previous: str
    new: str
    reason: str
    cost_change: float


@dataclass
class Redesign:
    result: DesignResult
    changes: list[Change]
    no_drop_in: dict[str, str] = field(default_factory=dict)  # role -> best non-drop-in note


def redesign(
    spec: Spec,
    catalog: Catalog,
    previous: Previous,
    *,
    exclude: tuple[str, ...] = (),
    keep_footprints: bool = False,
    change_weight: float | None = None,
    solver: str = "cbc",
    time_limit: float | None = None,
    by_changes: bool = True,
) -> Redesign:
    """The design closest to ``previous``: fewest changed roles, then cost (each search within ``time_limit``).

    The default objective (fewest changes first) builds the stage table
    level by level of changed roles (:func:`redesign_by_changes`): most
    re-designs change few roles, and their tables hold a small part of the
    stage configurations. ``by_changes=False`` builds the whole table
    (what :func:`stock_risk` then re-solves without each part, each such
    design needing changes past the levels' tables), and goes on by levels
    only when the whole table is past the size limit. ``keep_footprints``
    and ``change_weight`` build the whole table, and stop with the
    :class:`~partpick.errors.SizeLimitError` when it is too large.
    """
    by_levels = not keep_footprints and change_weight is None
    if by_changes and by_levels:
        return redesign_by_changes(spec, catalog, previous, exclude, solver, time_limit)
    try:
        base = prepare(spec, catalog, exclude=exclude)
    except SizeLimitError:
        if not by_levels:
            raise
        return redesign_by_changes(spec, catalog, previous, exclude, solver, time_limit)
    if base.status != "prepared":
        return Redesign(base, [])
    problem = base.assembly.problem
    fps = _footprints(catalog)
    option_roles, role_group, prev_by_group = _set_change_costs(base, previous)
    problem.change_weight = change_weight

    no_drop: dict[str, str] = {}
    if keep_footprints:
        bad_by_role = _footprint_violations(option_roles, previous, fps, prev_by_group)
        cuts = {r: c for r, c in bad_by_role.items()}
        for r, (g, bad) in cuts.items():
            problem.couplings.append(Coupling(f"keep footprint {r}", {g: bad.astype(float)}, "<=", 0.0))
        trial = finish(base, solver=solver, time_limit=time_limit)
        if not trial.feasible:
            # Relax, one role at a time, the roles that have no drop-in at all.
            problem.couplings = [c for c in problem.couplings if not c.name.startswith("keep footprint")]
            for r, (g, bad) in cuts.items():
                if bad.all():
                    no_drop[r] = "no drop-in replacement in the catalogue"
                    continue
                problem.couplings.append(Coupling(f"keep footprint {r}", {g: bad.astype(float)}, "<=", 0.0))
            trial = finish(base, solver=solver, time_limit=time_limit)
            for r in list(no_drop):
                if trial.feasible:
                    new = ", ".join(m for m, _v in _option_roles(trial, role_group[r], trial.solution.choice[role_group[r]]).get(r, []))
                    no_drop[r] += f"; best non-drop-in: {new} (total {trial.solution.total:.2f} {trial.pool.currency})"
        result = trial
    else:
        result = finish(base, solver=solver, time_limit=time_limit)
    changes = _changes(result, previous, tuple(exclude) + tuple(spec.order.exclude), catalog) if result.feasible else []
    return Redesign(result, changes, no_drop)


def _set_change_costs(result: DesignResult, previous: Previous):
    """Each option's changed roles against ``previous`` (``problem.change_cost``); returns (option roles, role -> group, group -> previous roles)."""
    problem = result.assembly.problem
    group_roles: dict[str, set[str]] = {}
    option_roles: dict[str, list[dict]] = {}
    named: dict = {}
    for g, grp in problem.groups.items():
        option_roles[g] = [_option_roles(result, g, o, named) for o in range(len(grp))]
        group_roles[g] = {r for roles in option_roles[g] for r in roles}
    role_group = {r: g for g, rs in group_roles.items() for r in rs}
    prev_by_group: dict[str, set[str]] = {}
    for r in previous.parts:
        if r in role_group:
            prev_by_group.setdefault(role_group[r], set()).add(r)
    # A role several groups fill (the decoupling capacitors: one ceramic, one
    # electrolytic) is kept by a group whose parts are among the previous ones.
    shared = {r for r in role_group if sum(r in rs for rs in group_roles.values()) > 1}

    def kept(r: str, v: list) -> bool:
        was = previous.parts.get(r)
        if r in shared:
            return was is not None and set(v) <= set(was)
        return was == v

    for g, opts in option_roles.items():
        p_roles = prev_by_group.get(g, set())
        cc = np.array([len(set(o) | p_roles) - sum(1 for r, v in o.items() if kept(r, v)) for o in opts], float)
        problem.change_cost[g] = cc
    return option_roles, role_group, prev_by_group


def redesign_by_changes(spec: Spec, catalog: Catalog, previous: Previous, exclude: tuple[str, ...], solver: str,
                        time_limit: float | None, level: float = 0.0) -> Redesign:
    """:func:`redesign` on tables of the stage rows with few changes of their own, level by level.

    A :class:`~partpick.evaluate.stage.ChangeBound` at level L builds every
    resistor-fed row and the current-source rows whose own changed roles
    (output pair, source pair, reference) are at most L: every design with
    at most L changes holds only such rows. The table's best design (fewest
    changes, then cost) with n <= L changes is then the best of the whole
    catalogue; otherwise the level rises by one (a design with n > L
    changes is kept: by level n at the latest a table holds it, and the
    search ends there). The first level is the least number of output
    roles any core configuration changes. A level whose table
    is past the size limit ends the search: the design found is returned
    "not proven optimal", or, none found, the limit's
    :class:`~partpick.errors.SizeLimitError` is raised. A table with every
    feed built and no design: no design at all. ``level``: the first level
    (a caller that knows no design has fewer changes).

    Exact for the changes and then the cost; between designs equal in both,
    the tie-break may pick another than the whole table would.
    """
    from partpick.errors import SolverTimeout
    from partpick.evaluate import stage as stage_rules
    from partpick.evaluate.context import Targets, make_pool
    from partpick.evaluate.stage import evaluate_stage, stage_cores
    from partpick.optimize.milp import _clock
    from partpick.optimize.problem import assemble

    pool = make_pool(spec, catalog, tuple(exclude))
    targets = Targets.from_spec(spec)
    cores = stage_cores(spec, pool, targets)
    bound = _change_bound(previous, pool, cores)
    if len(bound.core_lb):
        # Every row of a core configuration changes at least its output roles: no design changes fewer.
        level = max(level, float(bound.core_lb.min()))
    deadline = None if time_limit is None else _clock() + time_limit
    best: DesignResult | None = None
    search = ChangeSearch(catalog, previous, tuple(exclude))

    def done(result: DesignResult, unproven: str | None = None) -> Redesign:
        if unproven is not None:
            result.status = result.solution.status = "not proven optimal"
            result.warnings.append(f"this re-design comes from {_level_rows(result)}, and {unproven}")
        return Redesign(result, _changes(result, previous, tuple(exclude) + tuple(spec.order.exclude), catalog))

    while True:
        try:
            stage = evaluate_stage(spec, pool, targets, feed_bound=replace(bound, threshold=level), cores=cores)
        except SizeLimitError:
            if best is None:
                raise
            return done(best, f"proving it would need more than {stage_rules.STAGE_ROWS_MAX:,} stage configurations "
                              f"(the current-source bias feed multiplies them)")
        asm = assemble(spec, pool, targets, stage)
        status = "infeasible" if asm is None or asm.problem is None else "prepared"
        result = DesignResult(spec, pool, targets, stage, asm, None, None, status, list(catalog.warnings), search)
        if status == "prepared":
            _opts, role_group, _prev = _set_change_costs(result, previous)
            # Previous roles no option of this table has are gone from each of its
            # designs: counted on the stage group (one option per design), so that a
            # design's changes are the same in every table.
            problem = asm.problem
            problem.change_cost["stage"] = problem.change_cost["stage"] + sum(1 for r in previous.parts if r not in role_group)
            left = None if deadline is None else deadline - _clock()
            try:
                if left is not None and left <= 0:
                    raise SolverTimeout(time_limit)
                result = finish(result, solver=solver, time_limit=left)
            except SolverTimeout:
                if best is None:
                    raise
                return done(best, f"the time limit ({time_limit:g} s) ran out before it was proven")
            if result.status == "not proven optimal":
                return done(result)
            if result.status == "ok":
                changed = changed_roles(result.assembly.problem, result.solution)
                if changed <= level:
                    return done(result)
                best, level = result, level + 1.0
                continue
        if stage.cut_cores == 0:
            return Redesign(result, [])  # every feed was built: no design at all
        level += 1.0


def _change_bound(previous: Previous, pool, cores):
    """The :class:`~partpick.evaluate.stage.ChangeBound` of ``previous`` over ``cores`` (threshold 0)."""
    from partpick.evaluate.stage import ChangeBound

    def parts(role: str) -> frozenset[str] | None:
        return frozenset(m for m, _v in previous.parts[role]) if role in previous.parts else None

    pair_i = cores.core["pair_i"].to_numpy(int) if cores.core is not None else np.zeros(0, int)
    own = np.zeros(len(pair_i))
    for role, column in (("output_npn", "mpn_n"), ("output_pnp", "mpn_p")):
        mpn = cores.pairs[column].to_numpy(object)[pair_i]
        was = parts(role)
        own += np.fromiter(((was is None or frozenset((m,)) != was) for m in mpn), float, len(mpn))
    return ChangeBound(own, 0.0, pool.transistors["mpn"].to_numpy(object), pool.diodes["mpn"].to_numpy(object),
                       parts("bias_source_transistor"), parts("bias_source_reference"))


def _level_rows(result: DesignResult) -> str:
    """What a re-design's table holds, for the warnings."""
    return f"the {len(result.stage.configs):,} stage configurations with at most {result.stage.change_bound:g} changed roles of their own"


def _footprint_violations(option_roles, previous: Previous, fps, prev_by_group) -> dict[str, tuple[str, np.ndarray]]:
    out: dict[str, tuple[str, np.ndarray]] = {}
    for r in FOOTPRINT_ROLES:
        if r not in previous.parts:
            continue
        old = sorted(previous.footprint.get(r, []), key=str)
        for g, opts in option_roles.items():
            if r not in prev_by_group.get(g, set()):
                continue
            verdict: dict[tuple, bool] = {}  # the options' parts in this role repeat: judge each set once
            bad = []
            for o in opts:
                parts = o.get(r)
                if parts is None:
                    bad.append(True)  # the role disappears: the board changes
                    continue
                key = tuple(m for m, _v in parts)
                if key not in verdict:
                    new = sorted((fps.get(m, (None, None)) for m in key), key=str)
                    verdict[key] = len(new) != len(old) or not all(_drop_in(a, b) for a, b in zip(new, old))
                bad.append(verdict[key])
            out[r] = (g, np.array(bad, dtype=bool))
    return out


def _changes(result: DesignResult, previous: Previous, excluded: tuple[str, ...], catalog: Catalog) -> list[Change]:
    from partpick.report.build import build_report

    rep = build_report(result)
    new_parts: dict[str, list] = {}
    for p in rep["parts"]:
        new_parts.setdefault(p["role"], []).append((p["mpn"], p["value"]))
    new_cost: dict[str, float] = {}
    for o in rep["order"]:
        for r in o["roles"]:
            new_cost[r] = new_cost.get(r, 0.0) + o["extended_price"] / len(o["roles"])
    usable = usable_sources(result)
    out = []
    for role in sorted(set(previous.parts) | set(new_parts), key=_role_key):
        old = previous.parts.get(role, [])
        new = sorted(new_parts.get(role, []), key=str)
        if old == new:
            continue
        reasons = []
        for mpn, _v in old:
            if mpn in excluded:
                reasons.append(f"{mpn} excluded")
            elif mpn in result.pool.left_out:
                reasons.append(f"{mpn} {result.pool.left_out[mpn]}")
            elif mpn not in usable:
                reasons.append(f"{mpn} now infeasible")
        if not reasons:
            reasons.append("follows another change" if old else "new role")
            if old and new and (new_cost.get(role, 0.0) < previous.role_cost.get(role, 0.0)):
                reasons = ["cheaper"]
        out.append(Change(role, _text(old), _text(new), "; ".join(reasons), round(new_cost.get(role, 0.0) - previous.role_cost.get(role, 0.0), 2)))
    return out


def _text(parts: list[tuple[str, str | None]]) -> str:
    return ", ".join(m + (f" {v}" if v else "") for m, v in parts) or "-"


def _role_key(role: str) -> int:
    from partpick.optimize.design import ROLE_ORDER

    return ROLE_ORDER.index(role) if role in ROLE_ORDER else len(ROLE_ORDER)


@dataclass
class Risk:
    mpn: str
    role: str
    suppliers_with_stock: list[str]
    single_source: bool
    total_without: float | None
    replacement: str | None


def stock_risk(result: DesignResult, solver: str = "cbc", time_limit: float | None = None) -> list[Risk]:
    """For each chosen non-passive line: who stocks enough, and the best design without it.

    The evaluation and the assembled problem are reused: each re-solve only
    forbids the options that use the part, which is the same as excluding it
    (the evaluation's filters only remove what no design could use). With
    ``time_limit`` each re-solve gets it; one that finds no design by then
    has no total and says so in ``replacement``, and a design not proven
    cheapest is marked there too.

    A design found without one part that also does without the next one
    (the cheapest such) is where the next re-solve starts
    (:func:`~partpick.optimize.milp.solve`'s ``start``): often the same
    design is the best without several parts.

    On a design found on a bounded stage table (:func:`~partpick.optimize.design.run_bounded`),
    a re-solve is proven only when it costs no more than the table's cost
    bound (:func:`~partpick.optimize.design.proven_whole`); for the others
    the bounded search goes on without the part, from the re-solve's design
    (:func:`~partpick.optimize.design.design_without`), and when that stops
    at a limit the row says "not proven" in ``replacement``.
    """
    from partpick.errors import SolverTimeout
    from partpick.optimize.milp import solve

    asm, sol = result.assembly, result.solution
    problem = asm.problem
    families = set(result.pool.passives["family"])
    risks = []
    seen: set[str] = set()
    holders = _holders(result)
    found: list = []  # designs found so far, each a design of the problem without its part
    for g, o in sol.choice.items():
        for line, _q, role in problem.groups[g].usage[o]:
            src = asm.lines[line][0]
            if src in families or src in seen:
                continue
            seen.add(src)
            need = sol.need[line]
            stocked = sorted({off.supplier for off in problem.line_offers.get(line, []) if off.stock >= need})
            with rules_kept(problem):
                for grp_name, opts in holders[src].items():
                    bad = np.zeros(len(problem.groups[grp_name]))
                    bad[list(opts)] = 1.0
                    problem.couplings.append(Coupling(f"without {src}", {grp_name: bad}, "<=", 0.0))
                without = [d for d in found if not any(d.choice[h] in holders[src].get(h, ()) for h in d.choice)]
                start = min(without, key=lambda d: d.total) if without else None
                try:
                    alt = solve(problem, solver=solver, time_limit=time_limit, bounds=sol.bounds, start=start)
                except SolverTimeout:
                    alt = None
            if alt is not None and alt.status != "infeasible":
                found.append(alt)
            used = asm  # the assembly alt solves
            whole = alt is None or proven_whole(result, alt)
            if not whole:
                # Past the bounded table's bound: its search goes on without the part.
                again = _designed_without(result, src, solver, time_limit, alt)
                if again is not None:
                    (used, alt), whole = again, True
            total = replacement = None
            if alt is None:
                replacement = f"no design found within {time_limit:g} s"
            elif not whole and alt.status == "infeasible":
                replacement = f"no design among {_table_held(result)}; not proven that none exists"
            elif alt.status != "infeasible":
                total = alt.total
                roles = [used.lines[l][0] for l, _q2, r in used.problem.groups[g].usage[alt.choice[g]] if r == role]
                replacement = ", ".join(roles) or None
                if alt.status != "optimal" or not whole:
                    replacement = f"{replacement or 'the same parts'} (not proven optimal)"
            risks.append(Risk(src, role, stocked, len(stocked) <= 1, total, replacement))
    return risks


def _table_held(result: DesignResult) -> str:
    """Which stage configurations a bounded table holds, for a risk row."""
    if result.stage.change_bound is not None:
        return f"the stage configurations with at most {result.stage.change_bound:g} changed roles of their own"
    return f"the stage configurations under the cost bound ({result.stage.cost_bound:.2f} {result.pool.currency})"


def _designed_without(result: DesignResult, src: str, solver: str, time_limit: float | None, start):
    """``result``'s spec designed anew without ``src``: (its assembly, its solution), the solution
    infeasible when no design exists; None when that run stops at a limit.

    ``result`` comes from a bounded table: its search goes on without the
    part, from ``start``, the re-solve of its own table without the part.
    A design of :func:`~partpick.optimize.design.run_bounded` goes on with
    :func:`~partpick.optimize.design.design_without`; a re-design past the
    limit is re-designed with the part excluded, from the level of the
    start's changes (none: one above the table's).
    """
    from partpick.errors import SolverTimeout
    from partpick.optimize.design import design_without
    from partpick.optimize.milp import _infeasible

    search = result.search
    try:
        if isinstance(search, BoundedSearch):
            again = design_without(result, (src,), solver=solver, time_limit=time_limit, start=start)
        elif isinstance(search, ChangeSearch):
            level = (changed_roles(result.assembly.problem, start) if start is not None and start.status != "infeasible"
                     else result.stage.change_bound + 1)
            again = redesign_by_changes(result.spec, search.catalog, search.previous, search.exclude + (src,), solver, time_limit,
                                      level).result
        else:
            return None
    except (SizeLimitError, SolverTimeout):
        return None
    return again.assembly, again.solution if again.solution is not None else _infeasible(solver)


def _holders(result: DesignResult) -> dict[str, dict[str, set[int]]]:
    """For each part (mpn or family), the options of each group that use it: one pass over every option."""
    out: dict[str, dict[str, set[int]]] = {}
    for g, grp in result.assembly.problem.groups.items():
        for o in range(len(grp)):
            for src, _q, _r in option_sources(result, g, o):
                out.setdefault(src, {}).setdefault(g, set()).add(o)
    return out
