"""One design run: evaluate, assemble, solve, then check the chosen selection in full."""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from partpick.catalog import Catalog
from partpick.evaluate.context import Pool, Targets, make_pool
from partpick.evaluate.roles import class_key
from partpick.evaluate.selection import SelectionCheck, check_selection
from partpick.errors import SizeLimitError
from partpick.evaluate import stage as stage_rules
from partpick.evaluate.stage import FeedBound, StageCores, StageTable, ccs_rth_ja_k_w, evaluate_stage, stage_cores
from partpick.optimize.milp import Solution, solve
from partpick.optimize.problem import Assembly, assemble
from partpick.spec import Spec

#: Order in which roles are listed in the BOM and numbered on the board.
ROLE_ORDER = (
    "output_npn", "output_pnp", "heatsink", "driver_opamp", "comp_capacitor", "bias_diode",
    "bias_resistor", "bias_source_transistor", "bias_source_reference", "bias_source_resistor",
    "emitter_resistor", "feedback_resistor", "gain_resistor", "input_resistor", "input_capacitor",
    "output_capacitor", "midrail_resistor", "midrail_capacitor", "zobel_resistor", "zobel_capacitor",
    "decoupling_capacitor", "regulator", "regulator_set_resistor",
)

#: Roles whose parts come with the output-stage configuration (the ``stage`` group's options).
STAGE_ROLES = ("output_npn", "output_pnp", "bias_source_transistor", "regulator")

#: Most core configurations :func:`run_bounded`'s relaxed table may bound; above it
#: the size-limit error stands. The relaxed table prices the heatsink apart
#: (:class:`~partpick.evaluate.stage.SinkCosts`), so it pairs no configurations
#: with heatsinks.
RELAXED_ROWS_MAX = 400_000
#: Most (core configuration, heatsink) pairs of a catalogue :func:`run_bounded` searches
#: without a time limit. Its bounds no longer pair them (about 5 s on the large
#: benchmark catalogue, 70,776 x 10,000), but a catalogue that large, with its
#: hundred suppliers, gives MILPs that CBC does not prove in minutes: there the
#: first table (2,224 configurations) found a current-source design of 82.57 EUR
#: (the resistor feed's optimum is 132.06) and had not proven it after 120 s.
#: The shipped desk example at 0.5 W has 32,696 x 12.
UNTIMED_CELLS_MAX = 20_000_000

#: What a search past the size limit that found no design in time suggests
#: besides more time, when the spec lets partpick choose the feed: the
#: resistor feed alone has no current-source variants to search by cost bound
#: (the large benchmark catalogue: proven in about 11 s, where the automatic
#: feed's search finds nothing within 20 s).
RESISTOR_HINT = (f"{stage_rules.RESISTOR_FEED_FIX}: the current-source feed has more stage configurations here "
                 "than one run holds, and searching them by cost bound takes the time")

#: Growth of :func:`run_bounded`'s threshold above the least bound after a round without a design.
BOUND_GROWTH = 2.0
#: Current-source rows (counted by :func:`~partpick.evaluate.stage.candidate_bounds`) the
#: first table of :func:`run_bounded` holds at least: a table that small rarely has a
#: design cheaper than the resistor feeds' (all built), which would leave the next
#: threshold at that design's cost.
FIRST_ROWS = 2_000
#: Growth of the rows between two tables of :func:`run_bounded` short of the cost
#: of the design found (or with none).
ROWS_GROWTH = 4
#: Current-source rows (at most, :func:`~partpick.evaluate.stage.candidate_rows`) from
#: which :func:`run` builds the stage table by cost bound (:func:`run_bounded`) even when
#: the whole table would fit: most such rows cost far more than the optimum, and
#: building, bounding and reducing them all took longer than the rounds. On the five
#: generated medium catalogues (123,392 to 196,542 rows) ``run`` took 1.3 to 4.5 s
#: instead of 2.4 to 6.4 s, with the same totals. The demo catalogue's examples count
#: a few hundred.
CHOICE_ROWS = 40_000
#: :data:`FIRST_ROWS` of a search by choice. On the medium catalogues (seeds 0 to 4) a
#: first table of 8,000 rows held and proved the optimum in one round on all five, and
#: ``run`` took 2.3, 1.9, 1.3, 4.1 and 1.2 s; with 2,000 rows, 3.4, 1.9, 1.2, 6.6 and
#: 1.1 s (seeds 0 and 3 needed a second round); with 16,000, 2.6, 1.9, 1.4, 4.1 and 1.3 s.
CHOICE_FIRST_ROWS = 8_000
#: Most of :func:`run_bounded`'s rounds whose table is past the size limit (each
#: halves the step that led there) before it settles for the design it has.
BOUND_SPLITS = 4


@dataclass
class BoundedSearch:
    """What :func:`run_bounded`'s rounds start from: the catalogue, the core configurations and their bounds."""

    catalog: Catalog
    cores: StageCores
    bound: FeedBound  # threshold left at inf
    forbidden: tuple[str, ...] = ()  # mpns no option may use (:func:`design_without`)
    #: The whole table is within the size limit (its rows counted from above): the search was
    #: chosen for speed (:data:`CHOICE_ROWS`), not forced by the limit.
    fits: bool = False
    #: :func:`~partpick.evaluate.stage.candidate_bounds` (sorted), once the rounds have counted them.
    candidates: np.ndarray | None = None

    @property
    def floor(self) -> float:
        """The least core bound: no design costs less."""
        return float(np.min(self.bound.core_lb))


@dataclass
class ChangeSearch:
    """What a re-design by changed roles searched with (:func:`~partpick.optimize.revise.redesign_by_changes`), kept so that later steps can search on."""

    catalog: Catalog
    previous: object  # the revise.Previous report it re-designs
    exclude: tuple[str, ...]


@dataclass
class DesignResult:
    spec: Spec
    pool: Pool
    targets: Targets
    stage: StageTable
    assembly: Assembly | None
    solution: Solution | None
    check: SelectionCheck | None
    status: str
    warnings: list[str] = field(default_factory=list)
    #: A bounded table's search (:func:`run_bounded`, or a re-design's), kept so that later steps can search on;
    #: None on a whole table.
    search: BoundedSearch | ChangeSearch | None = None

    @property
    def feasible(self) -> bool:
        return self.status in ("ok", "not proven optimal")


def prepare(
    spec: Spec,
    catalog: Catalog,
    *,
    exclude: tuple[str, ...] = (),
    objective: str | None = None,
    spec_label: str = "spec",
) -> DesignResult:
    """Evaluate and assemble the MILP without solving it (status "prepared" or "infeasible")."""
    if objective:
        spec = spec.model_copy(update={"order": spec.order.model_copy(update={"objective": objective})})
    pool = make_pool(spec, catalog, tuple(exclude), spec_label)
    targets = Targets.from_spec(spec)
    return _prepared(spec, catalog, pool, targets, stage_cores(spec, pool, targets))


def _prepared(spec: Spec, catalog: Catalog, pool: Pool, targets: Targets, cores: StageCores) -> DesignResult:
    """:func:`prepare` from the pool, targets and core configurations the caller has."""
    stage = evaluate_stage(spec, pool, targets, cores=cores)
    asm = assemble(spec, pool, targets, stage)
    status = "infeasible" if asm is None or asm.problem is None else "prepared"
    return DesignResult(spec, pool, targets, stage, asm, None, None, status, list(catalog.warnings))


def finish(result: DesignResult, *, solver: str = "cbc", time_limit: float | None = None, start: Solution | None = None) -> DesignResult:
    """Solve a prepared design and check the chosen selection in full (``start``: a design to start from, see :func:`milp.solve`)."""
    if result.status != "prepared":
        return result
    asm = result.assembly
    sol = solve(asm.problem, solver=solver, time_limit=time_limit, start=start)
    if sol.status == "infeasible":
        return replace(result, solution=sol, status="infeasible")
    check = check_chosen(result.spec, result.pool, result.targets, result.stage, asm, sol.choice)
    status = "ok" if sol.status == "optimal" else "not proven optimal"
    return replace(result, solution=sol, check=check, status=status, warnings=result.warnings + check.warnings)


def run(
    spec: Spec,
    catalog: Catalog,
    *,
    exclude: tuple[str, ...] = (),
    objective: str | None = None,
    solver: str = "cbc",
    spec_label: str = "spec",
    forced: dict[str, str] | None = None,
    time_limit: float | None = None,
    whole: bool = False,
) -> DesignResult:
    """Design ``spec`` from ``catalog``: the optimal feasible BOM and order, or why none exists.

    ``forced`` maps a role (``output_npn``, ``driver_opamp``, ...) to an mpn the
    design must use. When the current-source feeds give more stage
    configurations than one run holds, the cost objective goes on through
    :func:`run_bounded`; the fewest-lines objective stops with the
    :class:`~partpick.errors.SizeLimitError`. With the cost objective and at
    least :data:`CHOICE_ROWS` current-source rows, :func:`run_bounded` builds
    the table by cost bound even when the whole would fit (the same optimum,
    sooner), unless ``whole`` (what needs every configuration: several
    designs ranked, a forced part) or ``forced`` is given; when that search
    finds no design, the whole table is built to say why (:func:`_why_none`),
    not solved again.
    """
    from partpick.optimize.milp import _clock

    started = _clock()  # a bounded search's time limit counts from here (its bounds are part of the search)
    if objective:
        spec = spec.model_copy(update={"order": spec.order.model_copy(update={"objective": objective})})
    cost = spec.order.objective == "cost"
    # One pool and one set of core configurations for every route below (the objective changes neither).
    pool = make_pool(spec, catalog, tuple(exclude), spec_label)
    targets = Targets.from_spec(spec)
    cores = stage_cores(spec, pool, targets)
    if cost and not whole and not forced:
        chosen = _by_choice(spec, catalog, pool, targets, cores, time_limit)
        if chosen is not None:
            result = _bounded_rounds(*chosen, solver=solver, time_limit=time_limit, started=started)
            if result.status != "infeasible":
                return result
            return _why_none(result, spec, catalog, pool, targets, cores, solver)
    try:
        result = _prepared(spec, catalog, pool, targets, cores)
    except SizeLimitError as exc:
        if not cost:
            raise
        return run_bounded(spec, catalog, exclude=exclude, solver=solver, spec_label=spec_label, forced=forced,
                           time_limit=time_limit, too_large=exc, started=started, given=(pool, targets, cores))
    return _forced_finish(result, forced, solver, time_limit)


def _by_choice(spec: Spec, catalog: Catalog, pool: Pool, targets: Targets, cores: StageCores, time_limit: float | None):
    """(spec, pool, targets, search) of :func:`run`'s bounded route by choice over ``cores``, or None for the whole table.

    Taken with at least :data:`CHOICE_ROWS` current-source rows, and with so
    few that the whole table fits the size limit (counted from above:
    :func:`~partpick.evaluate.stage.candidate_rows` plus a resistor-fed row
    per core configuration; its feed options are not counted), and only
    where the bounded search would run at all (its relaxed table within
    :data:`RELAXED_ROWS_MAX`, its heatsink pairs within
    :data:`UNTIMED_CELLS_MAX` unless under a time limit) and some core
    configuration has a finite bound (otherwise the whole table says why
    there is no design).
    """
    spec = _cost_spec(spec)
    n_cores = 0 if cores.core is None else len(cores.core)
    if not n_cores or n_cores > RELAXED_ROWS_MAX:
        return None
    # At most one resistor-fed row per core configuration: past the limit, the whole table is
    # tried first (as before a search past it), so that the route says why it was taken.
    rows = stage_rules.candidate_rows(spec, pool, cores)
    if rows < CHOICE_ROWS or rows + n_cores > stage_rules.STAGE_ROWS_MAX:
        return None
    if time_limit is None and n_cores * len(pool.heatsinks) > UNTIMED_CELLS_MAX:
        return None
    search = _bounded_search(spec, pool, targets, catalog, cores, None)
    if search is None:
        return None
    search.fits = True
    return spec, pool, targets, search


def _why_none(bounded: DesignResult, spec: Spec, catalog: Catalog, pool: Pool, targets: Targets, cores: StageCores,
              solver: str) -> DesignResult:
    """The whole table of a spec whose search by choice found no design, marked infeasible without solving it again.

    The search returns no design only from a table that holds every row
    (no core configuration cut by its threshold, see :func:`_bounded_rounds`),
    so the whole table has none either; it is built only to say why,
    configuration by configuration (its funnel and near misses). Solving it
    again would add nothing but time (and a second run of ``--time-limit``).
    When the whole table is past the size limit after all (its feed options
    are not counted in :func:`_by_choice`), the search's own result stands.
    """
    from partpick.optimize.milp import _infeasible

    try:
        result = _prepared(spec, catalog, pool, targets, cores)
    except SizeLimitError:
        return bounded
    if result.status == "prepared":
        result = replace(result, solution=_infeasible(solver), status="infeasible")
    return result


def _cost_spec(spec: Spec) -> Spec:
    """``spec`` with the cost objective (the bounded route's)."""
    return spec.model_copy(update={"order": spec.order.model_copy(update={"objective": "cost"})})


def _forced_finish(result: DesignResult, forced: dict[str, str] | None, solver: str, time_limit: float | None,
                   start: Solution | None = None) -> DesignResult:
    if result.status != "prepared":
        return result
    for role, mpn in (forced or {}).items():
        if not force_part(result.assembly, role, mpn):
            result.status = "infeasible"
            return result
    return finish(result, solver=solver, time_limit=time_limit, start=start)


def _carried(best: DesignResult | None, asm: Assembly) -> Solution | None:
    """``best``'s design in the option indices of ``asm`` (a larger bounded table of the same search); None when one is missing.

    A larger threshold's table holds every row of a smaller one's, and so
    every option the rows use; the design, its order included, is then a
    design of the new problem to start from.
    """
    if best is None:
        return None
    old, new = best.assembly.problem.groups, asm.problem.groups
    choice = {}
    for g, i in best.solution.choice.items():
        if g not in new:
            return None
        at = {key: j for j, key in enumerate(new[g].keys)}
        j = at.get(old[g].keys[i])
        if j is None or len(at) != len(new[g].keys):
            return None  # missing, or keys not unique
        choice[g] = j
    return replace(best.solution, choice=choice, bounds=None)


def run_bounded(
    spec: Spec,
    catalog: Catalog,
    *,
    exclude: tuple[str, ...] = (),
    solver: str = "cbc",
    spec_label: str = "spec",
    forced: dict[str, str] | None = None,
    time_limit: float | None = None,
    too_large: SizeLimitError | None = None,
    started: float | None = None,
    given: tuple[Pool, Targets, StageCores] | None = None,
) -> DesignResult:
    """:func:`run` with the cost objective, building only the current-source feeds that can be in the cheapest design.

    For a catalogue whose current-source feeds give more stage configurations
    than one run can hold (:data:`~partpick.evaluate.stage.STAGE_ROWS_MAX`):

    1. the relaxed table (:func:`evaluate_stage` with ``relaxed=True``: each
       core configuration once, fed by nothing) is assembled, and
       :func:`~partpick.optimize.prune.design_bounds` gives each core
       configuration a lower bound on a design holding it, feed parts left
       out (every real feed of that core is at least as constrained, so the
       bound holds for all of them);
    2. a feed row's bound adds its source transistors and reference at their
       least unit price (:class:`~partpick.evaluate.stage.FeedBound`);
    3. the rows under a threshold are built and the design is solved as
       usual; when its optimum z plus the tie-break margin is at or below the
       threshold, it is the optimum of the whole table (every row left out
       has a bound above z). The thresholds go by table size, counted
       without building (:func:`~partpick.evaluate.stage.candidate_bounds`):
       the first holds :data:`FIRST_ROWS` candidate rows; each next one
       :data:`ROWS_GROWTH` times the last one's (and :data:`BOUND_GROWTH`
       times its distance to the least bound at least), but no more than the
       cheapest design's z plus margin, where one more round proves it. The
       design found so far is the next round's start (:func:`_carried`). A
       threshold whose table is past the size limit is halved back towards
       the last table built, up to :data:`BOUND_SPLITS` times; then a design
       found is returned "not proven optimal" (as one past the time limit is).

    ``too_large``: the whole table's size-limit error, raised again when no
    core configuration has a design even fed by nothing, or when the relaxed
    table has more than :data:`RELAXED_ROWS_MAX` core configurations.

    Exact for the cost; between designs of equal cost, the tie-break may pick
    another than the whole table would. The result's ``stage.cost_bound``
    is the last threshold: the design's table holds every configuration of
    any design that costs no more.

    ``time_limit`` counts from ``started`` (the caller's clock reading,
    :func:`~partpick.optimize.milp._clock`; default: now): the relaxed
    table, the bounds and the count of candidate rows are part of the
    search it bounds. ``given``: the pool, targets and core configurations
    of this spec, catalogue and exclusions, when the caller has them.
    """
    from partpick.errors import SolverTimeout
    from partpick.optimize.milp import _clock

    started = _clock() if started is None else started
    spec = _cost_spec(spec)
    pool, targets, search = _bounded_start(spec, catalog, exclude, spec_label, too_large, time_limit, given)
    if search is None:
        # No design even fed by nothing, so none at all; the whole table, which
        # says why configuration by configuration, is too large to build.
        raise too_large or SizeLimitError("no design, and too many stage configurations to say why")
    try:
        return _bounded_rounds(spec, pool, targets, search, solver=solver, forced=forced, time_limit=time_limit,
                               started=started)
    except SolverTimeout as exc:
        if spec.stage.bias_feed != "auto":
            raise
        raise SolverTimeout(exc.time_limit, RESISTOR_HINT) from None


def design_without(result: DesignResult, sources: tuple[str, ...], *, solver: str = "cbc", time_limit: float | None = None,
                   start: Solution | None = None) -> DesignResult:
    """A bounded design's spec designed again without the parts ``sources`` (mpns): its search, continued.

    The rounds of :func:`run_bounded` run again on the same core
    configurations, with every option that uses one of the parts forbidden
    (the same as excluding them: the evaluation's filters only remove what
    no design could use). The relaxed table's bounds are computed again with
    the parts' options left out (they only rise, and are as tight as a run
    with the parts excluded); the whole table is not tried.

    ``start``: a solve of ``result``'s problem without the parts (what
    :func:`~partpick.optimize.revise.stock_risk` has found first). When it
    has a design of cost z, the first table is the one under z plus the
    tie-break margin: it holds every cheaper design, so one round proves the
    optimum unless its table is past the size limit. When it has none, the
    table under ``result``'s cost bound holds no design without the parts,
    and the threshold starts one growth step above it.
    """
    from partpick.optimize.milp import _clock, _tie_margin, objective_value

    if not isinstance(result.search, BoundedSearch):
        raise ValueError("design_without continues a design of run_bounded only")
    started = _clock()
    search = _bounded_search(result.spec, result.pool, result.targets, result.search.catalog, result.search.cores, None,
                             result.search.forbidden + tuple(sources))
    if search is None:
        # No core configuration has a design without the parts even fed by nothing: none at all.
        return replace(result, assembly=None, solution=None, check=None, status="infeasible", warnings=[], search=None)
    # The rounds count candidate rows only to choose thresholds: the parent's count, with
    # the parts' rows still in it, serves (a threshold is valid whatever table it builds).
    search.candidates, search.fits = result.search.candidates, result.search.fits
    problem = result.assembly.problem
    if start is not None and start.status != "infeasible":
        threshold = objective_value(problem, start) + _tie_margin(problem, start)
    else:
        # The parts' bounds only rose, so the table under the cost bound still has no design.
        threshold = search.floor + BOUND_GROWTH * (result.stage.cost_bound - search.floor)
    return _bounded_rounds(result.spec, result.pool, result.targets, search, solver=solver, time_limit=time_limit,
                           threshold=threshold, started=started)


def _bounded_rounds(spec: Spec, pool: Pool, targets: Targets, search: BoundedSearch, *, solver: str,
                    forced: dict[str, str] | None = None, time_limit: float | None = None,
                    threshold: float | None = None, started: float | None = None) -> DesignResult:
    """:func:`run_bounded`'s rounds over ``search``, from ``threshold`` (default: the first above the least bound).

    The search's ``forbidden`` parts are forbidden in every round (:func:`forbid_parts`).
    ``time_limit`` counts from ``started`` (default: now); when it runs out
    before any design is found, the :class:`~partpick.errors.SolverTimeout`
    names it, not what was left of it at the last solve.
    """
    from partpick.errors import SolverTimeout
    from partpick.optimize.milp import _clock, _tie_margin, first_threshold, objective_value

    deadline = None if time_limit is None else (_clock() if started is None else started) + time_limit
    bound, cores, catalog = search.bound, search.cores, search.catalog
    floor = search.floor
    if search.candidates is None:
        search.candidates = stage_rules.candidate_bounds(spec, pool, targets, cores, bound)
    counted = search.candidates

    def at_rows(n: int) -> float:
        """The least threshold under which ``n`` candidate rows lie (the last bound when fewer)."""
        return float(counted[min(n, len(counted)) - 1]) if len(counted) and n > 0 else floor

    def rows_under(at: float) -> int:
        """The candidate rows whose bound is at or below ``at``."""
        return int(np.searchsorted(counted, at, side="right"))

    def next_up(at: float) -> float:
        """The threshold after ``at``: ROWS_GROWTH times its candidate rows, and BOUND_GROWTH times its distance to the floor at least."""
        rows = rows_under(at)
        return max(floor + BOUND_GROWTH * (at - floor), at_rows(ROWS_GROWTH * max(rows, 1)))

    if threshold is None:
        threshold = max(first_threshold(floor), at_rows(CHOICE_FIRST_ROWS if search.fits else FIRST_ROWS))
    else:
        threshold = max(threshold, first_threshold(floor))
    best: DesignResult | None = None  # the cheapest design found, not yet proven
    done, past = -math.inf, math.inf  # the highest threshold built, the lowest past the size limit
    splits = 0
    last = 0.0  # seconds the last round took: its table (stage table and assembly) and its solve
    last_rows = 1  # the candidate rows under that round's threshold
    while True:
        if best is not None and deadline is not None and deadline - _clock() < last * max(1.0, rows_under(threshold) / last_rows):
            # No time would be left to build and solve the next table: a round
            # takes at least as long per candidate row as the last one did.
            return _unproven(best, f"less of the time limit ({time_limit:g} s) was left than the next, larger round to "
                                   f"prove it would take at the last round's pace, so it was not started")
        began = _clock()
        try:
            stage = evaluate_stage(spec, pool, targets, feed_bound=replace(bound, threshold=threshold), cores=cores)
        except SizeLimitError:
            past, splits = threshold, splits + 1
            if splits > BOUND_SPLITS:
                if best is None:
                    raise
                return _unproven(best, f"proving it would need more than {stage_rules.STAGE_ROWS_MAX:,} stage configurations")
            threshold = 0.5 * (max(done, floor) + past)  # between the last table built and the one that was too large
            continue
        done = threshold
        asm = assemble(spec, pool, targets, stage)
        status = "infeasible" if asm is None or asm.problem is None else "prepared"
        if status == "prepared" and search.forbidden:
            forbid_parts(asm, search.forbidden)
        result = DesignResult(spec, pool, targets, stage, asm, None, None, status, list(catalog.warnings), search)
        if status == "prepared":
            left = None if deadline is None else deadline - _clock()
            if left is not None and left <= 0:
                if best is None:
                    raise SolverTimeout(time_limit)
                return _unproven(best, _ran_out(time_limit))
            try:
                result = _forced_finish(result, forced, solver, left, _carried(best, asm))
                last, last_rows = _clock() - began, max(1, rows_under(threshold))
            except SolverTimeout:
                if best is None:
                    raise SolverTimeout(time_limit) from None
                return _unproven(best, _ran_out(time_limit))
            if result.status == "not proven optimal":
                dearer = best is not None and best.solution.total < result.solution.total
                return _unproven(best if dearer else result, _ran_out(time_limit))
            if result.status == "ok":
                reach = objective_value(asm.problem, result.solution) + _tie_margin(asm.problem, result.solution)
                if reach <= threshold:
                    if not search.fits:
                        result.warnings.append(
                            f"{_past_limit()}: partpick built {_bounded_rows(result)}, which hold every design that costs "
                            f"no more, so this design is still the cheapest of the whole catalogue"
                        )
                    return result
                if best is None or result.solution.total < best.solution.total:
                    best, best_reach = result, reach
                # Where one more round proves it (a larger table first, when that one
                # is far larger: it may hold a cheaper design, whose round is smaller),
                # unless that table was too large already.
                step = min(best_reach, next_up(threshold))
                threshold = step if step < past else 0.5 * (done + past)
                continue
        if stage.cut_cores == 0:
            return result  # every feed was built: no design at all
        grown = next_up(threshold)
        threshold = grown if grown < past else 0.5 * (done + past)


def _bounded_start(spec: Spec, catalog: Catalog, exclude: tuple[str, ...], spec_label: str, too_large: SizeLimitError | None,
                   time_limit: float | None, given: tuple[Pool, Targets, StageCores] | None = None):
    """(pool, targets, the :func:`_bounded_search` over its core configurations) of a bounded search.

    Without a time limit, a search past :data:`UNTIMED_CELLS_MAX` raises
    ``too_large``, saying that a time limit lets it go on. ``given``: the
    pool, targets and core configurations, when the caller has them.
    """
    if given is not None:
        pool, targets, cores = given
    else:
        pool = make_pool(spec, catalog, tuple(exclude), spec_label)
        targets = Targets.from_spec(spec)
        cores = stage_cores(spec, pool, targets)
    n_cores = 0 if cores.core is None else len(cores.core)
    if time_limit is None and n_cores * len(pool.heatsinks) > UNTIMED_CELLS_MAX:
        raise SizeLimitError(
            f"{too_large or 'too many stage configurations'}; or give a time limit (--time-limit S): with {n_cores:,} "
            f"output-stage configurations and {len(pool.heatsinks):,} heatsinks the search for the cheapest "
            f"current-source design can run for hours, and under a limit it returns the cheapest design found by then, "
            f"marked not proven optimal"
        )
    return pool, targets, _bounded_search(spec, pool, targets, catalog, cores, too_large)


def _bounded_search(spec: Spec, pool: Pool, targets: Targets, catalog: Catalog, cores: StageCores,
                    too_large: SizeLimitError | None, forbidden: tuple[str, ...] = ()) -> BoundedSearch | None:
    """The :func:`feed_bound` of ``cores`` as a search; None when no core configuration has a finite bound (no design at all).

    Raises ``too_large`` (or a :class:`SizeLimitError` of its own) when the relaxed table is too large to bound.
    """
    bound = feed_bound(spec, pool, targets, cores, forbidden)
    if bound is None:
        raise too_large or SizeLimitError(f"more than {RELAXED_ROWS_MAX:,} core configurations to bound")
    return BoundedSearch(catalog, cores, bound, forbidden) if np.isfinite(bound.core_lb).any() else None


def has_design_bounded(spec: Spec, catalog: Catalog, exclude: tuple[str, ...] = (), time_limit: float | None = None,
                       too_large: SizeLimitError | None = None) -> bool:
    """Whether ``spec`` has any design, when its whole stage table is past the size limit.

    :func:`run_bounded`'s tables, asked for any design
    (:func:`~partpick.optimize.milp.has_design`) instead of the cheapest: a
    design in a table is one of the whole catalogue (True); no core
    configuration with a finite bound, or a table with every feed built and
    no design, means none (False). The threshold grows geometrically
    (:data:`BOUND_GROWTH`); a table past the size limit raises the
    :class:`SizeLimitError` (neither answer is known), as does a relaxed
    table too large to bound.
    """
    from partpick.errors import SolverTimeout
    from partpick.optimize.milp import _clock, first_threshold, has_design

    deadline = None if time_limit is None else _clock() + time_limit  # the bounds are part of the search
    pool, targets, search = _bounded_start(spec, catalog, exclude, "spec", too_large, time_limit)
    if search is None:
        return False
    floor = search.floor
    threshold = first_threshold(floor)
    while True:
        stage = evaluate_stage(spec, pool, targets, feed_bound=replace(search.bound, threshold=threshold), cores=search.cores)
        asm = assemble(spec, pool, targets, stage)
        if asm is not None and asm.problem is not None:
            left = None if deadline is None else deadline - _clock()
            if left is not None and left <= 0:
                raise SolverTimeout(time_limit)
            try:
                if has_design(asm.problem, time_limit=left):
                    return True
            except SolverTimeout:
                raise SolverTimeout(time_limit) from None  # the caller's limit, not what was left of it
        if stage.cut_cores == 0:
            return False
        threshold = floor + BOUND_GROWTH * (threshold - floor)


def proven_whole(result: DesignResult, sol: Solution) -> bool:
    """Whether ``sol``, a solve of ``result``'s problem under added rules, is its optimum over the whole catalogue.

    Always on a whole table. On a bounded one (:func:`run_bounded`) when its
    cost plus the tie-break margin is at or below the table's cost bound:
    every design that costs no more holds only configurations of the table.
    On a re-design's table (built by changed roles,
    :func:`~partpick.optimize.revise.redesign`) when its changed roles are
    at most the table's level: every design with no more changes is in it.
    An infeasible ``sol`` on a bounded table proves nothing.
    """
    from partpick.optimize.milp import _tie_margin, objective_value

    bound, level = result.stage.cost_bound, result.stage.change_bound
    if bound is None and level is None:
        return True
    if sol.status == "infeasible":
        return False
    problem = result.assembly.problem
    if level is not None:
        return changed_roles(problem, sol) <= level
    return objective_value(problem, sol) + _tie_margin(problem, sol) <= bound


def changed_roles(problem, sol: Solution) -> int:
    """A re-design's changed roles (the problem's ``change_cost`` summed over the solution's choice)."""
    return int(round(sum(float(problem.change_cost[g][sol.choice[g]]) for g in problem.change_cost)))


def _past_limit() -> str:
    """The bounded route's warnings' opening (the limit read when they are written: tests lower it)."""
    return f"the current-source bias feed gives more stage configurations than one run holds ({stage_rules.STAGE_ROWS_MAX:,})"


def _unproven(result: DesignResult, why: str) -> DesignResult:
    """A bounded round's design whose proof could not be finished, marked so with ``why``."""
    result.status = "not proven optimal"
    result.solution.status = "not proven optimal"
    fits = isinstance(result.search, BoundedSearch) and result.search.fits
    opening = "partpick builds the current-source stage configurations in order of their cost bound" if fits else _past_limit()
    result.warnings.append(f"{opening}; this design comes from {_bounded_rows(result)}, and {why}")
    return result


def _ran_out(time_limit: float | None) -> str:
    """Why a bounded round's design is not proven: the time limit (named when there is one)."""
    return "the time limit ran out before it was proven" if time_limit is None else f"the time limit ({time_limit:g} s) ran out before it was proven"


def _bounded_rows(result: DesignResult) -> str:
    """What a bounded table holds, for the warnings: its rows and its cost bound."""
    return f"the {len(result.stage.configs):,} whose cost bound is at or below {result.stage.cost_bound:.2f} {result.pool.currency}"


def feed_bound(spec: Spec, pool: Pool, targets: Targets, cores: StageCores, forbidden: tuple[str, ...] = ()) -> FeedBound | None:
    """:func:`run_bounded`'s bounds (threshold left at ``inf``); None when the relaxed table is too large to bound.

    ``core_lb``: per core configuration, a lower bound on any design holding
    it (``inf`` where the relaxed table has no design). It is the sum of
    :func:`~partpick.optimize.prune.lower_bounds` and
    :func:`~partpick.optimize.prune.fee_floors` of the relaxed table
    assembled without its heatsink group (``core_parts``, and the fees), and
    the least heatsink that suits the core (``core_sink``, from
    :class:`~partpick.evaluate.stage.SinkCosts`): the heatsink's own cost is
    what the tree bound would add for it, and its sellers only left out of
    the fees. The rows' bounds then add what their current sources need
    (:class:`~partpick.evaluate.stage.FeedBound`). ``forbidden``: mpns no
    design may use; the relaxed table's options and the heatsinks that use
    one are left out before the bounds, and their prices are ``inf`` (as if
    the parts were not in the catalogue).
    """
    from partpick.optimize.problem import least_prices, offers_by_part
    from partpick.optimize.prune import _all_needs, lower_bounds, restrict

    relaxed = evaluate_stage(spec, pool, targets, relaxed=True, cores=cores)
    if len(relaxed.configs) > RELAXED_ROWS_MAX:
        return None
    rasm = assemble(spec, pool, targets, relaxed, heatsinks=False)
    n = 0 if cores.core is None else len(cores.core)
    core_parts = np.full(n, np.inf)
    tr, di = pool.transistors["mpn"].tolist(), pool.diodes["mpn"].tolist()
    both = offers_by_part(pool, tr + di)
    t_offers, d_offers = both[:len(tr)], both[len(tr):]
    transistor_price, diode_price = least_prices(t_offers), least_prices(d_offers)
    transistor_price[pool.transistors["mpn"].isin(forbidden).to_numpy()] = np.inf
    diode_price[pool.diodes["mpn"].isin(forbidden).to_numpy()] = np.inf
    fees = stage_rules.FeeFloors(np.full(n, np.inf), np.full(len(tr), np.inf), np.full(len(di), np.inf))
    if rasm is not None and rasm.problem is not None:
        problem = rasm.problem
        keep = {g: np.flatnonzero(~bad) for g, bad in _using(rasm, forbidden).items()}
        if all(len(k) for k in keep.values()):
            sub = restrict(problem, keep) if forbidden else problem
            needs = _all_needs(sub)
            at = relaxed.configs["core_i"].to_numpy(int)[keep["stage"]]
            core_parts[at] = lower_bounds(sub, needs)["stage"]
            fees = _fee_floors(sub, needs, at, n, t_offers, d_offers)
    core_fee = fees.core
    sinks = _sink_costs(spec, pool, targets, cores, (rasm.tables.get("heatsink") if rasm is not None else None), forbidden)
    core_sink = sinks.own(cores.rth_max) if n else np.zeros(0)
    return FeedBound(core_parts + core_fee + core_sink, math.inf, transistor_price, diode_price, spec.order.factor,
                     core_parts=core_parts, core_sink=core_sink, sinks=sinks, fees=fees)


def _fee_floors(problem, needs: dict, at: np.ndarray, n: int, t_offers: list, d_offers: list) -> stage_rules.FeeFloors:
    """The :class:`~partpick.evaluate.stage.FeeFloors` of the relaxed ``problem``'s stage options (core configurations ``at`` of ``n``).

    ``t_offers``, ``d_offers``: the offers of each pool transistor and diode.
    The cores' own floors are :func:`~partpick.optimize.prune.fee_floors`',
    taken from the same supplier sets when there are few suppliers.
    """
    from partpick.optimize.prune import cheapest_fee, fee_floors, fee_sets, seller_masks

    core_fee = np.full(n, np.inf)
    found = fee_sets(problem, "stage", needs)
    if found is None:
        core_fee[at] = fee_floors(problem, needs)["stage"]
        return stage_rules.FeeFloors(core_fee, cheapest_fee(problem, t_offers), cheapest_fee(problem, d_offers))
    suppliers, sets, fee, ok, key = found
    core_key = np.full(n, -1, dtype=np.int64)
    core_key[at] = key
    core_fee[at] = stage_rules.first_fee(ok, fee, key)
    return stage_rules.FeeFloors(core_fee, cheapest_fee(problem, t_offers), cheapest_fee(problem, d_offers), key=core_key, ok=ok,
                                 fee=fee, sets=sets, transistor_mask=seller_masks(t_offers, suppliers),
                                 diode_mask=seller_masks(d_offers, suppliers))


def _sink_costs(spec: Spec, pool: Pool, targets: Targets, cores: StageCores, hs, forbidden: tuple[str, ...]) -> stage_rules.SinkCosts:
    """The :class:`~partpick.evaluate.stage.SinkCosts` of the heatsink candidates ``hs`` (assemble's table; None: none)."""
    from partpick.optimize.buying import cheapest_purchase
    from partpick.optimize.problem import offers_by_part
    from partpick.spec import order_units

    sink = cores.sink
    classes = [] if sink is None else sink.classes
    class_of = {class_key(c): i for i, c in enumerate(classes)}
    if hs is None or not len(hs):
        hs = pool.heatsinks.iloc[:0].assign(mounts=[], rth_class=[], per_board=[])
    mounts = list(hs["mounts"])
    names = sorted({p for m in mounts for p in m})
    code = {p: i for i, p in enumerate(names)}
    holds = np.array([[p in m for p in names] for m in mounts], dtype=bool).reshape(len(hs), len(names))
    cost = np.array([cheapest_purchase(o, math.ceil(order_units(float(n), spec.order.factor)))
                     for o, n in zip(offers_by_part(pool, hs["mpn"]), hs["per_board"])], dtype=float)
    cost[hs["mpn"].isin(forbidden).to_numpy()] = np.inf
    class_i = np.array([class_of[class_key(float(c))] for c in hs["rth_class"]], dtype=np.int64)
    if cores.core is not None:
        pkg = cores.pairs["package"].to_numpy()[cores.core["pair_i"].to_numpy(int)]
        core_package = np.array([code.get(p, -1) for p in pkg], dtype=np.int64)
    else:
        core_package = np.zeros(0, np.int64)
    return stage_rules.SinkCosts(hs["rth_sa_k_w"].to_numpy(float), class_i, holds, hs["max_devices"].to_numpy(int), cost, code,
                                 core_package, 0 if sink is None else sink.n_dev, 0 if sink is None else sink.channels)


def forbid_parts(asm: Assembly, sources: tuple[str, ...]) -> None:
    """Forbid every option that uses one of ``sources`` (mpns or families), group by group."""
    from partpick.optimize.milp import Coupling

    for g, bad in _using(asm, sources).items():
        if bad.any():
            asm.problem.couplings.append(Coupling(f"without {', '.join(sources)}", {g: bad.astype(float)}, "<=", 0.0))


def _using(asm: Assembly, sources: tuple[str, ...]) -> dict[str, np.ndarray]:
    """Per group, which options use one of ``sources``."""
    names = set(sources)
    lines = {line for line, (src, _value) in asm.lines.items() if src in names}
    if not lines:
        return {g: np.zeros(len(grp), dtype=bool) for g, grp in asm.problem.groups.items()}
    return {g: np.fromiter((any(line in lines for line, _q, _r in use) for use in grp.usage), bool, len(grp))
            for g, grp in asm.problem.groups.items()}


def force_part(asm: Assembly, role: str, mpn: str) -> bool:
    """Fix a group's choice to the option that uses ``mpn`` in ``role``; False if none can."""
    p = asm.problem
    group = "stage" if role in STAGE_ROLES else role
    g = p.groups.get(group)
    if g is None:
        return False
    options = [i for i, usage in enumerate(g.usage) if any(src == mpn and r == role for src, _q, r in usage)]
    if not options:
        return False
    if len(options) == 1:
        p.forced[group] = options[0]
    else:
        # Several configurations use the part: forbid the others instead.
        from partpick.optimize.milp import Coupling

        coef = np.zeros(len(g))
        coef[options] = 1.0
        p.couplings.append(Coupling(f"forced {role}={mpn}", {group: coef}, ">=", 1.0))
    return True


def check_chosen(spec: Spec, pool: Pool, targets: Targets, stage: StageTable, asm: Assembly, choice: dict[str, int]) -> SelectionCheck:
    """The full selection check (second route) of the optimiser's choice."""
    t = asm.tables
    k = t["stage"].iloc[choice["stage"]]
    pair = stage.pairs.iloc[int(k["pair_i"])]
    tr = pool.transistors
    npn = tr.iloc[int(pair["npn_i"])].to_dict()
    pnp = tr.iloc[int(pair["pnp_i"])].to_dict()
    rail = stage.rails.iloc[int(k["rail_i"])].to_dict()
    if rail.get("regulated"):
        reg = pool.regulators.set_index("mpn").loc[rail["reg_mpn"]]
        rail.update(reg_dropout_v=float(reg["dropout_v"]), reg_vin_max_v=float(reg["vin_max_v"]), reg_iout_max_a=float(reg["iout_max_a"]))
    re_row = t["emitter_resistor"].iloc[choice["emitter_resistor"]]
    feed_row = t["bias_feed"].iloc[choice["bias_feed"]]
    fam = pool.passives.set_index("family")
    rf, rg = t["gain_pair"].iloc[choice["gain_pair"]]["values"]
    ccs = None
    if k["feed"] == "current_source":
        ref = pool.diodes.iloc[int(k["ref_i"])]
        src_n, src_p = tr.iloc[int(k["ccs_n_i"])].to_dict(), tr.iloc[int(k["ccs_p_i"])].to_dict()
        ccs = dict(
            transistors=[src_n, src_p],
            vref_v=float(ref["vf_v"]) * int(k["ref_per_source"]),
            ref_if_max_a=float(ref["if_max_a"]),
            # A complementary pair shares one package.
            rth_ja_k_w=ccs_rth_ja_k_w(src_n["rth_ja_k_w"], src_p["rth_ja_k_w"], src_n["package"]),
            mount=str(k["ccs_mount"]),
        )
    return check_selection(
        spec, pool, targets,
        npn=npn, pnp=pnp, rail=rail, re_ohm=float(k["re_ohm"]),
        re_rating_w=float(fam.loc[re_row["family"], "power_w"]),
        op=t["driver_opamp"].iloc[choice["driver_opamp"]].to_dict(),
        heatsink=t["heatsink"].iloc[choice["heatsink"]].to_dict(),
        diode=t["bias_diode"].iloc[choice["bias_diode"]].to_dict(),
        rf_ohm=float(rf), rg_ohm=float(rg),
        feed=str(k["feed"]),
        feed_values=(float(feed_row["v1"]), None if feed_row["v2"] < 0 else float(feed_row["v2"])),
        feed_rating_w=float(fam.loc[feed_row["family"], "power_w"]),
        ccs=ccs,
    )


def option_sources(result: DesignResult, group: str, option: int):
    """(mpn or family, units per board, role) of every line one option uses."""
    for line, per_board, role in result.assembly.problem.groups[group].usage[option]:
        yield result.assembly.lines[line][0], per_board, role


def usable_sources(result: DesignResult) -> set[str]:
    """Every mpn or family that some option of the assembled problem could use."""
    groups = result.assembly.problem.groups
    return {src for g in groups for o in range(len(groups[g])) for src, _q, _r in option_sources(result, g, o)}


def bom_lines(result: DesignResult) -> list[dict]:
    """One row per BOM line: roles it serves, units per board, units to order."""
    asm, sol = result.assembly, result.solution
    assert asm is not None and sol is not None
    rows: dict[str, dict] = {}
    for g, o in sol.choice.items():
        for line, per_board, role in asm.problem.groups[g].usage[o]:
            src, value = asm.lines[line]
            r = rows.setdefault(line, dict(line=line, mpn=src, value=value, roles=[], per_board=0.0))
            r["per_board"] += per_board
            if role not in r["roles"]:
                r["roles"].append(role)
    for r in rows.values():
        r["qty"] = sol.need[r["line"]]
        r["roles"].sort(key=ROLE_ORDER.index)
    return sorted(rows.values(), key=lambda r: (ROLE_ORDER.index(r["roles"][0]), r["line"]))


def role_parts(result: DesignResult) -> list[dict]:
    """One row per (role, line): the report's ``parts`` list."""
    asm, sol = result.assembly, result.solution
    assert asm is not None and sol is not None
    ch = result.targets.channels
    out: dict[tuple[str, str], dict] = {}
    for g, o in sol.choice.items():
        for line, per_board, role in asm.problem.groups[g].usage[o]:
            src, value = asm.lines[line]
            key = (role, line)
            r = out.setdefault(key, dict(role=role, line=line, mpn=src, value=value, per_board=0.0))
            r["per_board"] += per_board
    rows = sorted(out.values(), key=lambda r: (ROLE_ORDER.index(r["role"]), r["line"]))
    for r in rows:
        board_level = r["role"] in ("regulator", "regulator_set_resistor", "driver_opamp") or (r["role"] == "heatsink" and result.spec.thermal.shared_heatsink)
        r["per_channel"] = None if board_level else r["per_board"] / ch
        r["qty"] = _qty(result, r["per_board"])
    return rows


def _qty(result: DesignResult, per_board: float) -> int:
    return result.spec.quantity(per_board)


def infeasible_cause(result: DesignResult) -> list[str]:
    """Sentences naming the roles with no feasible candidate and the tightest near-misses."""
    out = []
    asm = result.assembly
    if result.stage.configs.empty:
        out.append("no output-stage configuration passes: " + _top(result.stage.funnel))
        if len(result.stage.rejected):
            out += near_misses(result)
    if asm is not None:
        for role, frame in asm.candidates.items():
            if len(frame) and not frame["feasible"].any():
                out.append(f"no {role} passes; first rejection: {frame['rejected_by'].iloc[0]}")
            elif not len(frame):
                out.append(f"no {role} candidate in the catalogue")
    if result.solution is not None and result.solution.status == "infeasible":
        out.append("every role has candidates, but no combination meets the couplings (driver vs stage, heatsink vs stage) with the stock on offer")
    return out


def _top(funnel: dict[str, int]) -> str:
    items = [(k, v) for k, v in funnel.items() if v]
    return ", ".join(f"{k} removed {v}" for k, v in sorted(items, key=lambda kv: -kv[1])) or "no candidates"


def near_misses(result: DesignResult, n: int = 3) -> list[str]:
    """The least-failing stage configurations, with their numbers."""
    rej = result.stage.rejected
    if rej.empty:
        return []
    pairs = result.stage.pairs
    msgs = []
    score = np.minimum.reduce([
        (rej["headroom_v"] / rej["rail_min_v"]).to_numpy(float),
        (1 - rej["soa_util"]).to_numpy(float),
        (rej["vceo_margin_v"] / (rej["span_max_v"] * 1.2)).to_numpy(float),
    ])
    for i in np.argsort(-score, kind="stable")[:n]:
        r = rej.iloc[i]
        p = pairs.iloc[int(r["pair_i"])]
        msgs.append(f"near miss: {p['mpn_n']}/{p['mpn_p']} with Re {r['re_ohm']:g} ohm at {r['rail_min_v']:.1f} V: {result.stage.reason(r)}")
    return msgs


def is_finite(x) -> bool:
    return x is not None and not (isinstance(x, float) and math.isnan(x))
