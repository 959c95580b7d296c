"""Explanations: why a part is not chosen, what would make a spec feasible, alternatives.

Nearest feasible points are computed, not guessed: the spec quantity is
bisected (power) or scanned (rail) with full design runs, so every number
suggested has been designed and solved.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from partpick.catalog import Catalog
from partpick.errors import SizeLimitError, SolverTimeout
from partpick.optimize.design import ROLE_ORDER, STAGE_ROLES, DesignResult, force_part, option_sources, prepare, proven_whole, run
from partpick.evaluate.stage import FIRST_FAIL_ORDER
from partpick.spec import Spec


#: Factor by which the search for the highest feasible power steps down,
#: designing in full, once the cheap narrowing's answer has no design.
POWER_STEP_DOWN = 0.9


def _with(spec: Spec, section: str, **values) -> Spec:
    sub = getattr(spec, section).model_copy(update=values)
    return spec.model_copy(update={section: sub})


def _designs(spec: Spec, catalog: Catalog, exclude: tuple[str, ...], time_limit: float | None = None) -> bool:
    """Whether ``spec`` has any design: the first design the search finds settles it (not proven the cheapest).

    The same answer as ``run(...).feasible``, without proving a design the
    cheapest, which the searches for what would make a spec feasible never need.
    A search that finds nothing within ``time_limit`` raises
    :class:`~partpick.errors.SolverTimeout` (neither answer is known). Past
    the stage size limit, the tables of a bounded search are asked
    (:func:`~partpick.optimize.design.has_design_bounded`).
    """
    from partpick.optimize.design import has_design_bounded
    from partpick.optimize.milp import has_design

    try:
        result = prepare(spec, catalog, exclude=exclude)
    except SizeLimitError as exc:
        return has_design_bounded(spec, catalog, exclude, time_limit, too_large=exc)
    return result.status == "prepared" and has_design(result.assembly.problem, time_limit=time_limit)


def max_feasible_power_w(
    spec: Spec, catalog: Catalog, exclude: tuple[str, ...] = (), rel_tol: float = 0.01, known_infeasible: bool = False,
    time_limit: float | None = None,
) -> float | None:
    """Highest power per channel (within ``rel_tol``) this catalogue and supply can deliver.

    Bisects between a power that designs and one that does not; None when
    even 1 % of the asked power cannot be built.
    """
    hi = spec.output.power_w
    lo = hi / 100.0

    def assembles(p: float) -> bool:
        # Necessary for feasibility and cheap: every role has a candidate (no solve).
        # Too many configurations to optimise counts as assembling: it only
        # narrows the search, whose answer a full design confirms.
        try:
            return prepare(_with(spec, "output", power_w=p), catalog, exclude=exclude).status == "prepared"
        except SizeLimitError:
            return True

    def ok(p: float) -> bool:
        return _designs(_with(spec, "output", power_w=p), catalog, exclude, time_limit)

    if not known_infeasible and ok(hi):
        return hi
    if not assembles(lo):
        return None
    # Narrow with the cheap necessary condition (every role has a candidate), then
    # confirm with a full design; fall back to full bisection below that point.
    q_lo, q_hi = lo, hi
    while q_hi - q_lo > rel_tol * q_lo:
        mid = 0.5 * (q_lo + q_hi)
        q_lo, q_hi = (mid, q_hi) if assembles(mid) else (q_lo, mid)
    if ok(q_lo):
        return round(q_lo, 3)
    # Full designs from there down, a step at a time, until one designs (a
    # power near the asked one is the likely answer, and far below it the
    # current-source variants multiply); then bisect between the two.
    hi = p = q_lo
    while True:
        p = max(lo, p * POWER_STEP_DOWN)
        if ok(p):
            break
        if p == lo:
            return None
        hi = p
    lo = p
    while hi - lo > rel_tol * lo:
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if ok(mid) else (lo, mid)
    return round(lo, 3)


def lowest_feasible_rail(spec: Spec, catalog: Catalog, exclude: tuple[str, ...] = (), step_v: float = 0.5, span_v: float = 40.0,
                         time_limit: float | None = None) -> tuple[float, float] | None:
    """The lowest (v_min, v_max), keeping the spec's spread, on a ``step_v`` grid that designs.

    Scans upward from the spec's v_min (a lower rail is tried first, up to
    ``span_v`` above); None if nothing in that range designs.
    """
    spread = spec.supply.v_max - spec.supply.v_min

    def ok(v: float) -> bool:
        return _designs(_with(spec, "supply", v_min=float(v), v_max=float(v + spread)), catalog, exclude, time_limit)

    start = spec.supply.v_min
    coarse = 4 * step_v
    prev = start
    for v in np.arange(start, start + span_v + 1e-9, coarse):
        if ok(v):
            # Refine between the last failing coarse point and this one.
            for w in np.arange(prev + step_v, v, step_v):
                if ok(w):
                    v = w
                    break
            return (round(float(v), 3), round(float(v + spread), 3))
        prev = v
    return None


def suggestions(spec: Spec, catalog: Catalog, exclude: tuple[str, ...] = (), notes: list[str] | None = None,
                time_limit: float | None = None) -> dict:
    """What would make an infeasible spec feasible, each trial searched for a design (:func:`_designs`).

    A search whose trial design passes partpick's size limit
    (:class:`~partpick.errors.SizeLimitError`: too many current-source
    variants at some other power or supply) is left out of the answer, which
    only holds what was searched to the end, and the reason goes to
    ``notes``; the spec's own answer (infeasible) stands. Each trial's
    search gets ``time_limit`` (the command's ``--time-limit``); a search with
    a trial that finds nothing by then is left out and named the same way.
    """
    out: dict = {}
    notes = [] if notes is None else notes

    def searched(key: str, what: str, search) -> None:
        try:
            out[key] = search()
        except SizeLimitError as exc:
            notes.append(f"{what} was not searched: a trial design stopped at the size limit: {exc}")
        except SolverTimeout:
            notes.append(f"{what} was not searched to the end: a trial design's search found nothing within the time limit of {time_limit:g} s")

    searched("highest_feasible_power_w", "the highest feasible power",
             lambda: max_feasible_power_w(spec, catalog, exclude, known_infeasible=True, time_limit=time_limit))

    def rail() -> dict | None:
        found = lowest_feasible_rail(spec, catalog, exclude, time_limit=time_limit)
        return None if found is None else {"v_min": found[0], "v_max": found[1]}

    searched("lowest_feasible_rail_v", "the lowest feasible supply", rail)
    if spec.supply.arrangement == "single" and spec.supply.regulate == "never":
        trial = _with(spec, "supply", regulate="auto")
        searched("with_pre_regulator", "the design with a pre-regulator", lambda: _designs(trial, catalog, exclude, time_limit))
    return out


@dataclass
class WhyAnswer:
    mpn: str
    role: str | None
    chosen: bool
    reason: str
    forced_total: float | None = None
    optimum_total: float | None = None


def _roles_of(catalog: Catalog, mpn: str) -> list[str]:
    tr = catalog.transistors
    roles = []
    if mpn in set(tr["mpn"]):
        pol = tr.set_index("mpn").loc[mpn, "polarity"]
        roles += ["output_npn" if pol == "npn" else "output_pnp", "bias_source_transistor"]
    if mpn in set(catalog.opamps["mpn"]):
        roles.append("driver_opamp")
    if mpn in set(catalog.heatsinks["mpn"]):
        roles.append("heatsink")
    if mpn in set(catalog.diodes["mpn"]):
        roles += ["bias_diode", "bias_source_reference"]
    if mpn in set(catalog.regulators["mpn"]):
        roles.append("regulator")
    if mpn in set(catalog.passives["family"]):
        roles.append("passive")
    return roles


def why(spec: Spec, catalog: Catalog, mpn: str, exclude: tuple[str, ...] = (), solver: str = "cbc") -> WhyAnswer:
    """Why ``mpn`` is not in the optimal design, or what forcing it would cost."""
    roles = _roles_of(catalog, mpn)
    if not roles:
        from partpick.errors import InputError, Problem

        raise InputError([Problem("command line", 0, "MPN", f"'{mpn}' is not a part or family of the catalogue")])
    best = run(spec, catalog, exclude=exclude, solver=solver, whole=True)
    if mpn in best.pool.left_out:
        return WhyAnswer(mpn, roles[0], False, f"left out before any check: {best.pool.left_out[mpn]}")
    if best.feasible and best.assembly is not None:
        used = {src for g, o in best.solution.choice.items() for src, _q, _r in option_sources(best, g, o)}
        if mpn in used:
            return WhyAnswer(mpn, roles[0], True, "it is in the optimal design", best.solution.total, best.solution.total)
    reason = _first_rejection(best, mpn, roles)
    role = _usable_role(best, mpn)
    forced = None
    if role is None and best.feasible and best.stage.cost_bound is not None:
        # A bounded table leaves out stage configurations the part may be in: design with it forced.
        stopped = False
        for r in (r for r in ROLE_ORDER if r in roles and r in STAGE_ROLES):
            try:
                forced = _forced_bounded(best, r, mpn, solver, exclude)
            except (SizeLimitError, SolverTimeout):
                stopped = True
                continue
            if forced is not None:
                role = r
                break
        if role is None and stopped:
            return _not_known(best, mpn, roles[0])
    if role is None:
        if reason is not None:
            return WhyAnswer(mpn, roles[0], False, reason)
        role = roles[0]
    if forced is None:
        try:
            forced = _forced_total(best, role, mpn, solver, exclude)
        except (SizeLimitError, SolverTimeout):
            return _not_known(best, mpn, role)
    opt = best.solution.total if best.feasible else None
    if forced is None:
        msg = reason or "it passes its own checks, but no design with it meets the couplings with the other roles (driver, heatsink, diode) from the parts on offer"
        return WhyAnswer(mpn, role, False, msg, None, opt)
    return WhyAnswer(mpn, role, False, "feasible but not the cheapest", forced, opt)


def _forced_total(best: DesignResult, role: str, mpn: str, solver: str, exclude: tuple[str, ...] = ()) -> float | None:
    """The total of the best design that uses ``mpn`` in ``role``; None when there is none.

    The design's own problem is solved again with the part forced (as
    :func:`~partpick.optimize.design.run` with ``forced`` would build it
    afresh, from the same spec and catalogue), taking the first search's cost
    bounds: forcing only adds a rule. Without a design there is none with the
    part either. On a bounded table (:func:`~partpick.optimize.design.run_bounded`)
    a forced design dearer than the table's cost bound, or none in the
    table, proves nothing: the spec is then designed with the part forced
    (bounded again; its size-limit error or time-out is raised).
    """
    if not best.feasible:
        return None
    from partpick.optimize.milp import rules_kept, solve

    sol = None
    with rules_kept(best.assembly.problem) as problem:
        if force_part(best.assembly, role, mpn):
            sol = solve(problem, solver=solver, bounds=best.solution.bounds)
    if sol is not None and proven_whole(best, sol):
        return None if sol.status == "infeasible" else sol.total
    if best.stage.cost_bound is None:
        return None  # a whole table without the part in that role
    return _forced_bounded(best, role, mpn, solver, exclude)


def _forced_bounded(best: DesignResult, role: str, mpn: str, solver: str, exclude: tuple[str, ...]) -> float | None:
    """The total of ``best``'s spec designed with ``mpn`` forced in ``role``, bounded (:func:`~partpick.optimize.design.run_bounded`); None: no design.

    Raises the size-limit error or :class:`~partpick.errors.SolverTimeout` when that run stops at a limit.
    """
    from partpick.optimize.design import run_bounded

    again = run_bounded(best.spec, best.pool.catalog, exclude=exclude, solver=solver, forced={role: mpn})
    return again.solution.total if again.feasible else None


def _not_known(best: DesignResult, mpn: str, role: str) -> WhyAnswer:
    """:func:`why`'s answer when the design forced to use the part stops at the size limit (or the time limit)."""
    from partpick.evaluate import stage

    return WhyAnswer(mpn, role, False, "the design's table (under its cost bound) does not settle it, and a design forced to use it "
                     f"would need more than {stage.STAGE_ROWS_MAX:,} stage configurations to prove; not known",
                     None, best.solution.total)


def _usable_role(result: DesignResult, mpn: str) -> str | None:
    """The first role (in BOM order) in which some option of the assembled problem uses ``mpn``."""
    asm = result.assembly
    if asm is None or asm.problem is None:
        return None
    roles = {r for g in asm.problem.groups for o in range(len(asm.problem.groups[g])) for src, _q, r in option_sources(result, g, o) if src == mpn}
    return min(roles, key=ROLE_ORDER.index) if roles else None


def _first_rejection(result: DesignResult, mpn: str, roles: list[str]) -> str | None:
    """The rejection of the candidate that came furthest, as a sentence with numbers."""
    if roles[0] in ("output_npn", "output_pnp"):
        pairs = result.stage.pairs
        mine = set(np.flatnonzero((pairs["mpn_n"] == mpn) | (pairs["mpn_p"] == mpn)))
        if not mine:
            return "no complementary partner in the catalogue (pairing = \"complement\"; set pairing = \"any\" to pair by package)"
        rej = result.stage.rejected
        rej = rej[rej["pair_i"].isin(mine)]
        if rej.empty:
            return None
        order = {name: i for i, name in enumerate(FIRST_FAIL_ORDER)}
        furthest = rej.assign(depth=rej["rejected_by"].map(order)).sort_values(["depth", "headroom_v"], ascending=[False, False])
        return result.stage.reason(furthest.iloc[0])
    if result.assembly is None:
        return None
    for role in roles:
        frame = result.assembly.candidates.get(role)
        if frame is not None and "mpn" in frame and mpn in set(frame["mpn"]):
            row = frame[frame["mpn"] == mpn].iloc[0]
            if not row["feasible"]:
                return str(row["rejected_by"])
    return None


def alternatives(spec: Spec, catalog: Catalog, n: int, exclude: tuple[str, ...] = (), solver: str = "cbc",
                 time_limit: float | None = None, first: DesignResult | None = None) -> list[DesignResult]:
    """The n best distinct designs: each differs from the earlier ones in output pair or driver.

    ``first``, the design already made for this spec and catalogue, is
    reused instead of designed again. With ``time_limit`` every design gets
    it; the list ends at the first search that finds no design by then.
    When ``first`` comes from a bounded stage table
    (:func:`~partpick.optimize.design.run_bounded`), a design dearer than
    the table's cost bound is marked "not proven optimal", and the list ends
    where the table has no further design.
    """
    from partpick.errors import SolverTimeout

    if first is None:
        first = run(spec, catalog, exclude=exclude, solver=solver, time_limit=time_limit, whole=True)
    out = [first] if first.feasible else []
    if not out:
        return out
    from partpick.optimize.milp import rules_kept, solve
    from partpick.optimize.design import check_chosen

    problem = first.assembly.problem
    k = first.assembly.tables["stage"]
    with rules_kept(problem):
        for _ in range(n - 1):
            last = out[-1].solution.choice
            same_pair = list(np.flatnonzero(k["pair_i"].to_numpy() == k["pair_i"].iloc[last["stage"]]))
            problem.forbidden.append({"stage": same_pair, "driver_opamp": [last["driver_opamp"]]})
            try:
                sol = solve(problem, solver=solver, time_limit=time_limit, bounds=first.solution.bounds)
            except SolverTimeout:
                break
            if sol.status == "infeasible":
                break
            if sol.status == "optimal" and not proven_whole(first, sol):
                sol.status = "not proven optimal"  # dearer than a bounded table's cost bound
            check = check_chosen(first.spec, first.pool, first.targets, first.stage, first.assembly, sol.choice)
            out.append(DesignResult(first.spec, first.pool, first.targets, first.stage, first.assembly, sol, check, "ok" if sol.status == "optimal" else sol.status, list(first.warnings)))
    return out


def compare_feeds(result: DesignResult, catalog: Catalog, exclude: tuple[str, ...] = (), solver: str = "cbc",
                  time_limit: float | None = None) -> dict | None:
    """With ``bias_feed = "auto"``: the other feed's best design, or why it has none.

    The design's own assembled problem is solved again with the stage held to
    configurations of the other feed (the same optimum as a run with the spec
    fixing that feed: every other constraint is the same). When no
    configuration has that feed, the reason is the other feed's failure at the
    chosen configuration, with its numbers.

    Returns ``{"feed", "feasible", "total", "extra_cost", "reason"}`` for the
    feed that was not chosen; None when the spec fixes the feed, or when
    ``time_limit`` (the design's own) ran out before the other feed's search
    found any design, or when a re-design cannot be made again with the
    other feed within the size limit (:func:`_feed_redesigned`):
    neither "feasible" nor "infeasible" would be true then. A design found
    but not proven cheapest says so in ``reason``.
    """
    if result.spec.stage.bias_feed != "auto" or not result.feasible:
        return None
    from partpick.errors import SolverTimeout
    from partpick.evaluate.stage import feed_failure

    chosen = result.check.design["bias_feed"]
    other = "resistor" if chosen == "current_source" else "current_source"
    k = result.assembly.tables["stage"]
    mask = (k["feed"].to_numpy() == other).astype(float)
    # A re-design's table built by changed roles holds the current-source rows with few changes only.
    by_changes = result.stage.change_bound is not None and other == "current_source" and result.stage.cut_cores > 0
    if result.stage.cost_bound is not None and other == "current_source":
        # The design's table holds only the current-source configurations under
        # its cost bound (design.run_bounded): its own best with that feed, when
        # it proves to be the catalogue's; otherwise that feed designed on its
        # own (past the size limit bounded again, its table most of the one that
        # passed the limit; within it as design.run chooses).
        from partpick.optimize.design import BoundedSearch, run, run_bounded

        try:
            alt = _held_to(result, other, mask, solver, time_limit) if mask.any() else None
            if alt is not None and alt.status != "infeasible" and proven_whole(result, alt):
                return _feed_found(result, other, alt, time_limit)
            fits = isinstance(result.search, BoundedSearch) and result.search.fits
            again = run if fits else run_bounded
            alone = again(_with(result.spec, "stage", bias_feed=other), catalog, exclude=exclude, solver=solver, time_limit=time_limit)
        except (SolverTimeout, SizeLimitError):
            return None
        if alone.feasible:
            return _feed_found(result, other, alone.solution, time_limit)
        reason = "no design with it meets every constraint"
    elif mask.any() or by_changes:
        alt = None
        if mask.any():
            try:
                alt = _held_to(result, other, mask, solver, time_limit)
            except SolverTimeout:
                return None
        if by_changes and not (alt is not None and alt.status != "infeasible" and proven_whole(result, alt)):
            return _feed_redesigned(result, other, alt, solver, time_limit)
        if alt.status != "infeasible":
            return _feed_found(result, other, alt, time_limit)
        reason = "no design with it meets the couplings with the other roles"
    else:
        reason = feed_failure(result.stage, k.iloc[result.solution.choice["stage"]], other)
    return _feed_missing(other, reason)


def _held_to(result: DesignResult, other: str, mask: np.ndarray, solver: str, time_limit: float | None):
    """``result``'s own problem solved again with the stage held to the ``other`` feed's configurations (``mask``)."""
    from partpick.optimize.milp import Coupling, rules_kept, solve

    with rules_kept(result.assembly.problem) as problem:
        problem.couplings.append(Coupling(f"bias feed {other}", {"stage": mask}, ">=", 1.0))
        return solve(problem, solver=solver, time_limit=time_limit, bounds=result.solution.bounds)


def _feed_redesigned(result: DesignResult, other: str, alt, solver: str, time_limit: float | None) -> dict | None:
    """:func:`compare_feeds` on a re-design whose table (built by changed roles) may hold the ``other`` feed's closest design only in part.

    The re-design is made again with the spec fixing that feed
    (:func:`~partpick.optimize.revise.redesign_by_changes`), from the level of
    ``alt``'s changes (``alt``: the table's own best with that feed, or
    None), or one above the table's; None when that stops at a limit.
    """
    from partpick.optimize.design import changed_roles
    from partpick.optimize.revise import redesign_by_changes

    search = result.search
    found = alt is not None and alt.status != "infeasible"
    level = changed_roles(result.assembly.problem, alt) if found else result.stage.change_bound + 1
    try:
        again = redesign_by_changes(_with(result.spec, "stage", bias_feed=other), search.catalog, search.previous, search.exclude,
                                    solver, time_limit, level).result
    except (SolverTimeout, SizeLimitError):
        return None
    if again.feasible:
        return _feed_found(result, other, again.solution, time_limit)
    return _feed_missing(other, "no design with it meets every constraint")


def _feed_missing(other: str, reason: str) -> dict:
    """:func:`compare_feeds`' answer when the other feed has no design, and why."""
    return {"feed": other, "feasible": False, "total": None, "extra_cost": None, "reason": reason}


def _feed_found(result: DesignResult, other: str, alt, time_limit: float | None) -> dict:
    """:func:`compare_feeds`' answer when the other feed has a design ``alt`` (a Solution)."""
    extra = alt.total - result.solution.total
    if alt.status == "optimal":
        best = "best"
    elif time_limit is not None:
        best = f"cheapest (found within {time_limit:g} s, not proven optimal)"
    else:
        best = "cheapest found (not proven optimal)"
    # Cheaper happens in a re-design (fewest changes come first) or when the spec fixes the feed.
    than = f"{extra:+.2f} {result.pool.currency} more" if extra >= 0 else f"{-extra:.2f} {result.pool.currency} less"
    return {"feed": other, "feasible": True, "total": round(alt.total, 2), "extra_cost": round(extra, 2),
            "reason": f"the {best} {other.replace('_', ' ')} design costs {than}"}
