"""The selection-and-buying MILP, generic over choice groups (PuLP; CBC or HiGHS).

A :class:`Problem` has choice groups (exactly one option each), compatibility
links (an option of a dependent group needs a compatible option of its
parent group: ``o <= sum of compatible parent options``), linear couplings
between the chosen options' attributes, and BOM lines. Each option uses some
lines (units per board); the units of a line add up over every option using
it, so passives of one family and value in several roles merge into one line.

Buying, per line l and offer row r (a supplier's price break):
``q[l,r]`` integer units, ``z[l,r]`` binary, ``max(min_qty, moq) z <= q <=
stock z``, ``sum_r cover[l,r] >= need_l`` with ``cover = min(q, need_max z)``
(see :func:`solve_model`), and ``y[s] >= sum of z[l,r] over the supplier's
breaks of the line`` (at most one break per line and supplier, and the
supplier's fixed order fee paid). Buying up to a
higher break falls out by itself, since q may exceed the need. A break that
another break of the same supplier beats on every useful quantity gets no
variables (:func:`~partpick.optimize.buying.useful_breaks`).

Objectives: ``cost`` = parts + fees; ``lines`` = fewest distinct lines, then
cost (solved in two rounds). Ties are broken by a tiny weight on each option's
rank in its group's stable key order, so the answer does not depend on the
solver's search path.
"""

from __future__ import annotations

import math
import os
import shutil
import signal
import subprocess
import tempfile
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field, replace

import numpy as np
import pulp

from partpick.errors import SolverError, SolverTimeout, UsageError
from partpick.optimize.buying import cheapest_of_rows, smallest_qty, usable, useful_breaks
from partpick.optimize.lpmodel import Model
from partpick.procs import child_pids
from partpick.spec import order_units

#: Weight per rank step of the tie-break; the sum over a group stays below 1e-4.
TIE_WEIGHT = 1e-4

#: With a time limit, the share of what is left that the full solve of a
#: threshold problem may take (:func:`_solve_then_drop`); the rest goes to the
#: pass that drops one supplier of its design at a time, each try at most
#: ``DROP_MAX_S`` seconds.
SOLVE_SHARE = 0.75
DROP_MAX_S = 5.0

#: The threshold loop's schedule (:func:`_solve_bounded`): the first threshold
#: lies this share of the bound floor above it (at least one currency unit),
#: and a threshold that holds no design moves ``GROWTH`` times as far from the
#: floor. Small steps pay: a threshold problem without a design is proven so
#: in well under a second, while the options under a threshold, and the time
#: to solve them, grow steeply with it. On three generated medium catalogues
#: (bench seeds 0, 1, 2) ``solve`` took 10.8, 3.9 and 3.0 s with this schedule,
#: and 24.2, 6.4 and 64.6 s with a first step of a tenth of the floor plus the
#: largest fee, growing 4 x.
FIRST_STEP = 0.02
GROWTH = 1.5
#: A threshold problem of at least ``FIRST_DESIGN_MIN_OPTIONS`` options, with
#: no design known yet, first gets one from :func:`_first_design`: the
#: problem restricted to each of the ``FIRST_DESIGN_SETS`` supplier sets with
#: the least set bound, each try capped at ``FIRST_DESIGN_TRY_S`` seconds.
#: A solve with a start design runs several times faster (the medium
#: benchmark's seed 3: a 2,800-option threshold problem 31 s without a start,
#: 7.5 s from the design its best supplier set gave in 1.7 s).
FIRST_DESIGN_MIN_OPTIONS = 1000
FIRST_DESIGN_SETS = 2
FIRST_DESIGN_TRY_S = 5.0
#: A threshold problem of at least ``FIRST_DESIGN_MIN_OPTIONS`` options with
#: a design in hand and no supplier-set bounds (too many suppliers) first
#: tries that design's suppliers plus every supplier without an order fee
#: (:func:`_free_sellers`), capped at ``FREE_SELLERS_TRY_S`` seconds (a
#: quarter of what is left under a time limit). On the large benchmark
#: catalogue (100 suppliers, 13 without a fee) that try found the optimum of
#: 80.13 EUR, one fee-free supplier more than the 82.57 EUR start, in 2 to 6 s; the
#: full solve of the same problem from the 82.57 EUR design took 440 s to
#: find and prove it, from the 80.13 EUR design 48 s. With few suppliers the
#: set bounds and :func:`_first_design` already lead to the cheapest sets
#: (on medium seed 3 the try took 0.37 s and found nothing cheaper). The
#: same cap holds :func:`_fee_free_start`, the whole problem with the
#: fee-free suppliers alone, solved before the loop (on the large
#: benchmark's first table: 80.13 EUR, proven over those suppliers, in 2.0 to 2.2 s).
FREE_SELLERS_TRY_S = 15.0


@dataclass
class Group:
    """A role (or roles) of which exactly one option is chosen."""

    name: str
    keys: list[str]
    usage: list[list[tuple[str, float, str]]]  # per option: (line key, units per board, role)
    parent: str | None = None
    compat: list[np.ndarray] | None = None  # per option: indices of compatible parent options

    def __len__(self) -> int:
        return len(self.keys)


@dataclass
class Coupling:
    """``sum over groups of coef[group][option] * chosen  (<= or >=)  rhs``."""

    name: str
    terms: dict[str, np.ndarray]
    sense: str
    rhs: float = 0.0


@dataclass(frozen=True)
class Offer:
    """One price break of one supplier for one part (frozen: lists of them are remembered by value, see buying.usable)."""

    supplier: str
    min_qty: int
    unit_price: float
    stock: int
    moq: int


@dataclass
class Problem:
    groups: dict[str, Group]
    couplings: list[Coupling]
    line_offers: dict[str, list[Offer]]  # line key -> its offers
    fees: dict[str, float]
    factor: float  # boards x (1 + spares/100)
    objective: str = "cost"
    forced: dict[str, int] = field(default_factory=dict)  # group -> option index fixed to 1
    #: No-good cuts: for each cut, not every group may pick one of its listed options.
    forbidden: list[dict[str, list[int]]] = field(default_factory=list)
    #: Roles each option changes against a previous design (group -> count per option);
    #: minimised before cost, or weighted by ``change_weight`` (currency per change).
    change_cost: dict[str, np.ndarray] = field(default_factory=dict)
    change_weight: float | None = None


@dataclass
class Purchase:
    line: str
    supplier: str
    min_qty: int
    unit_price: float
    qty: int


@dataclass
class Solution:
    status: str  # "optimal", "not proven optimal", "infeasible"
    choice: dict[str, int]
    need: dict[str, int]
    purchases: list[Purchase]
    parts_cost: float
    fees_cost: float
    suppliers_used: list[str]
    solver: str
    #: The cost bounds the search used (per group, a lower bound on the
    #: objective of any design holding each option; inf for options no design
    #: can hold), or None. They stay valid for this problem with constraints
    #: added (couplings, cuts), so a re-solve of such a problem may take them
    #: (:func:`solve`'s ``bounds``) instead of computing them again.
    bounds: dict[str, np.ndarray] | None = field(default=None, repr=False, compare=False)

    @property
    def total(self) -> float:
        return self.parts_cost + self.fees_cost


_clock = time.monotonic  # the loop's deadline clock (a test replaces it)


def _solver(name: str, time_limit: float | None, warm: bool = False, heuristics: bool = False):
    """The PuLP solver object for one run; ``heuristics``: keep CBC's primal heuristics on (the first-design question)."""
    if name == "cbc":
        # CBC 2.10's preprocessing returned a dearer design as optimal on some
        # small problems with shared lines (found by the pruning tests against
        # brute force), and it took most of CBC's time on small models.
        # Its primal heuristics are off for the cost solves. With a start design
        # they only look for a better one, which the search finds anyway: the
        # warm threshold solves of the medium benchmark took 5.1 and 6.0 s
        # instead of 7.8 and 8.4 s (seeds 0, 3). Without one the root's cuts
        # and the branching on the supplier binaries first find the optimum
        # sooner than the feasibility pump finds a design: the first threshold
        # solves of medium seeds 1, 2 and 4 took 0.59, 0.45 and 0.26 s instead
        # of 2.38, 0.72 and 1.02 s (seed 0: 0.58 against 0.60 s). They stay on
        # for _any_design_model, which asks for any design and nothing else.
        return pulp.PULP_CBC_CMD(msg=False, timeLimit=time_limit, warmStart=warm,
                                 options=["randomSeed 1", "randomCbcSeed 1", "preprocess off"] + ([] if heuristics else ["heur off"]))
    if name == "highs":
        try:
            import highspy  # noqa: F401
        except ImportError:
            raise UsageError("the HiGHS solver needs the package highspy (pip install highspy); use --solver cbc") from None
        return pulp.HiGHS(msg=False, timeLimit=time_limit, threads=1, random_seed=1, warmStart=warm)
    raise UsageError(f"unknown solver '{name}' (cbc or highs)")


#: A CBC run still going this long past its own time limit (plus this share of
#: the limit) is stopped by partpick (:class:`_Watchdog`). CBC checks its limit
#: only between nodes: on the large benchmark catalogue a threshold problem of
#: 15,218 options given 53 s ran 233 s, and a SIGINT (CBC's own stop) sent
#: after 30 s was heeded after 251 s.
OVERRUN_GRACE_S = 1.0
OVERRUN_SHARE = 0.05
#: A CBC run that died is repeated for its verdict (:func:`_cbc_says_infeasible`) for
#: at most twice as long as it ran, plus this many seconds.
VERDICT_EXTRA_S = 5.0


class _Watchdog:
    """Stops the solver program of one solve (a child process whose command line names the solve's folder) at a deadline.

    Linux only (it finds the program under ``/proc``); elsewhere it does
    nothing and the solver's own limit is all there is. ``fired`` tells
    whether it stopped one.
    """

    def __init__(self, folder: str, seconds: float) -> None:
        self.folder = folder
        self.fired = False
        self._timer = threading.Timer(seconds, self._stop)
        self._timer.daemon = True

    def start(self) -> _Watchdog:
        self._timer.start()
        return self

    def cancel(self) -> None:
        self._timer.cancel()

    def _stop(self) -> None:
        for pid in _children_naming(self.folder):
            try:
                os.kill(pid, signal.SIGTERM)
                self.fired = True
            except OSError:
                pass


def _children_naming(text: str) -> list[int]:
    """Child processes of this one whose command line contains ``text`` (Linux; none elsewhere)."""
    out = []
    for pid in child_pids():
        try:
            with open(f"/proc/{pid}/cmdline", "rb") as f:
                if text.encode() in f.read():
                    out.append(pid)
        except OSError:
            continue
    return out


def _run(m: pulp.LpProblem, sol, name: str, first: list[pulp.LpVariable] | None = None) -> int:
    """Solve ``m``; a missing, broken or killed solver program is a :class:`SolverError`.

    The solver's model, start and answer files go to a folder of this solve
    alone, removed afterwards whatever happened (PuLP leaves them behind
    when the solver program fails or the run is interrupted).

    ``first``: binaries CBC branches on before any other (its priorities
    file; HiGHS has no such input through PuLP). On the medium benchmark,
    keeping only the few supplier binaries whole already brings the bound
    within 0.1 % of the optimum (as keeping only the many selection
    binaries whole does), so deciding them first closes the search soonest.

    With a time limit, a CBC program still running :data:`OVERRUN_GRACE_S`
    plus :data:`OVERRUN_SHARE` of the limit past it is stopped
    (:class:`_Watchdog`) and the solve raises
    :class:`~partpick.errors.SolverTimeout`, as one that found no design by
    then: its callers fall back on the best design they hold.

    The bundled CBC 2.10.3, with preprocessing off, proves some models
    infeasible while it tightens their bounds ("Problem is infeasible -
    tightenPrimalBounds!") and then dies (segmentation fault) writing its
    answer file. So a CBC run that dies is repeated on the same model file
    and options without an answer file (:func:`_cbc_says_infeasible`); when that run
    ends normally saying the problem is infeasible, the solve is infeasible.
    """
    other = "highs" if name == "cbc" else "cbc"
    if not sol.available():
        where = getattr(sol, "path", None) or name
        raise SolverError(f"the {name} solver program is missing or cannot be run ({where}); use --solver {other}")
    folder = tempfile.mkdtemp(prefix="partpick-solve-")
    sol.tmpDir = folder
    options = sol.options
    limit = getattr(sol, "timeLimit", None) if name == "cbc" else None
    dog = _Watchdog(folder, limit + OVERRUN_GRACE_S + OVERRUN_SHARE * limit).start() if limit else None
    try:
        if first and name == "cbc":
            sol.options = options + [f"priorityIn {_priorities(m, first, folder)}"]
        began = time.monotonic()
        return m.solve(sol)
    except pulp.PulpSolverError:
        if dog is not None and dog.fired:
            raise SolverTimeout(limit) from None
        if name == "cbc" and _cbc_says_infeasible(sol, folder, limit, time.monotonic() - began):
            m.assignStatus(pulp.LpStatusInfeasible, pulp.LpSolutionInfeasible)
            return m.status
        raise SolverError(
            f"the {name} solver stopped abnormally (it crashed or was killed) and gave no design; "
            f"run again or use --solver {other}"
        ) from None
    finally:
        if dog is not None:
            dog.cancel()
        sol.options = options
        shutil.rmtree(folder, ignore_errors=True)


def _cbc_says_infeasible(sol, folder: str, limit: float | None, spent: float) -> bool:
    """Whether the CBC program, run again on the model file in ``folder`` without an answer file, ends saying the problem is infeasible.

    The same program, model and options (priorities included) as the run
    that died after ``spent`` seconds; its output is read from a pipe, which
    a crash would have cut short. The repeat is stopped, with no verdict,
    after twice that plus :data:`VERDICT_EXTRA_S` (a death after a long
    search is not worth a second one: then False), and it keeps the time limit.
    """
    models = [f for f in os.listdir(folder) if f.endswith(".mps")]
    if len(models) != 1:
        return False
    args = [sol.path, os.path.join(folder, models[0])] + " ".join(f"-{o}" for o in sol.options).split()
    if limit:
        args += ["-sec", str(limit), "-timeMode", "elapsed"]
    try:
        out = subprocess.run(args + ["-solve"], capture_output=True, text=True, cwd=folder, timeout=2.0 * spent + VERDICT_EXTRA_S)
    except (OSError, subprocess.SubprocessError):
        return False
    return out.returncode == 0 and any(line.startswith(("Problem is infeasible", "Result - Problem proven infeasible"))
                                       for line in out.stdout.splitlines())


def _priorities(m: pulp.LpProblem, first: list[pulp.LpVariable], folder: str) -> str:
    """CBC's priorities file: ``first`` at priority 1 (every other column keeps CBC's default, 1000).

    Columns are named as PuLP names them in the model file it writes
    (``normalisedNames``: X0000000, X0000001, ... in name order).
    """
    names = m.normalisedNames()[1]
    path = os.path.join(folder, "priorities.csv")
    with open(path, "w", encoding="ascii") as f:
        f.write("name,priority\n")
        f.writelines(f"{names[v.name]},1\n" for v in first if v.name in names)
    return path


def _found(m: pulp.LpProblem, time_limit: float | None) -> bool:
    """True when the last solve gave a design, False when the model is infeasible.

    A solver that stopped without a design and without proving infeasibility
    (time limit, or any other stop) raises :class:`SolverError`: "no feasible
    design" would be a false statement then.
    """
    if m.sol_status in (pulp.LpSolutionOptimal, pulp.LpSolutionIntegerFeasible):
        return True
    if m.status == pulp.LpStatusInfeasible or m.sol_status == pulp.LpSolutionInfeasible:
        return False
    if time_limit is not None:
        raise SolverTimeout(time_limit)
    raise SolverError(f"the solver stopped without a design ({pulp.LpStatus[m.status]}); run again or use the other --solver")


def line_need(problem: Problem, choice: dict[str, int]) -> dict[str, float]:
    """Units of every line a choice needs, before rounding (per board x factor)."""
    need: dict[str, float] = {}
    for g, o in choice.items():
        for line, per_board, _role in problem.groups[g].usage[o]:
            need[line] = need.get(line, 0.0) + per_board
    return {l: q * problem.factor for l, q in need.items()}


def ceil_units(x: float) -> int:
    """Whole units, guarding float noise (2 x 25 x 1.04 is 52, not 53)."""
    return int(math.ceil(round(x, 6)))


def tie_weights(problem: Problem) -> dict[str, np.ndarray]:
    """Tie-break weight of each option: its rank in the group's stable key order, scaled below ``TIE_WEIGHT``."""
    out = {}
    for gname, g in problem.groups.items():
        order = np.argsort(np.array(g.keys, dtype=object), kind="stable")
        rank = np.empty(len(g), dtype=float)
        rank[order] = np.arange(len(g))
        out[gname] = TIE_WEIGHT * rank / max(len(g) - 1, 1)
    return out


def solve(problem: Problem, solver: str = "cbc", time_limit: float | None = None, prune: bool = True,
          bounds: dict[str, np.ndarray] | None = None, start: Solution | None = None) -> Solution:
    """The optimal choice and order; see the module docstring for the formulation.

    With ``prune`` (the default) the exact reductions of
    :mod:`partpick.optimize.prune` shrink the problem first: dominated
    options go, and with a cost objective the problem is solved on the
    options whose cost bound lies below a threshold that widens until the
    optimum is proven (:func:`_solve_bounded`). The answer, tie-break
    included, is the one the whole problem gives; ``prune=False`` solves the
    whole problem (the benchmark's reference route).

    ``bounds`` (per group, one per option of ``problem``) are lower bounds on
    the objective of a design holding each option, to use instead of
    computing them: the :attr:`Solution.bounds` of a solve of this problem
    before constraints were added to it (a coupling, a cut). Any design of
    the problem with more constraints is a design of the one before, so they
    still bound it; bounds computed afresh may be tighter and then thin the
    search sooner, but the answer is the same. The solution returned carries
    the bounds it used in :attr:`Solution.bounds`.

    ``start``, a design of ``problem`` as it is now (a choice in its
    indices, and that choice's order), is a design the cost search may
    start from: its threshold loop begins at the start's cost, where one
    solve proves the optimum, instead of climbing to it (see
    :func:`_widen`). The answer is the same with or without it.

    Whether any design exists at all is :func:`has_design`'s question.
    """
    tie = tie_weights(problem)
    if not prune:
        return solve_model(problem, tie, solver, time_limit)
    from partpick.optimize import prune as reduce

    fixed = _meeting_own_couplings(problem, reduce.forced_only(problem))
    if not all(len(k) for k in fixed.values()):
        return _infeasible(solver)  # some group has no option left to choose
    sub, sub_tie = reduce.restrict(problem, fixed), {g: tie[g][fixed[g]] for g in tie}
    if problem.objective == "cost" and not (problem.change_cost and problem.change_weight is None):
        known = None if bounds is None else {g: np.asarray(bounds[g], float)[fixed[g]] for g in fixed}
        first = _within(start, fixed)
        if first is not None:
            first.status = "not proven optimal"
        sol = _solve_bounded(sub, sub_tie, solver, time_limit, known, first)
        if sol.bounds is not None:
            sol.bounds = {g: _widened(b, fixed[g], len(problem.groups[g])) for g, b in sol.bounds.items()}
    elif problem.objective == "cost":
        sol = _solve_fewest_changes(sub, sub_tie, solver, time_limit)
    else:
        sol = _solve_reduced(sub, reduce.dominated(sub, sub_tie), sub_tie, solver, time_limit)
    return _lift(sol, fixed)


def has_design(problem: Problem, solver: str = "cbc", time_limit: float | None = None) -> bool:
    """Whether the problem has any design at all, whatever it costs; exactly ``solve(problem).status != "infeasible"``.

    Each question goes to :func:`_any_design_model`, which leaves prices and
    fees out. Designs are looked for first among the options whose cost
    bound (:func:`~partpick.optimize.prune.design_bounds`) lies below a
    threshold, on :func:`_solve_bounded`'s schedule: a feasible spec
    usually has a design among its cheap options, and those few solve at
    once. A restriction's design is a design of the whole problem; the
    answer "none" needs the last threshold, which holds every option any
    design can hold. ``time_limit`` bounds the whole search; a search that
    finds neither answer by then raises :class:`SolverTimeout`.
    """
    from partpick.optimize import prune as reduce

    deadline = None if time_limit is None else _clock() + time_limit
    fixed = _meeting_own_couplings(problem, reduce.forced_only(problem))
    if not all(len(k) for k in fixed.values()):
        return False
    sub = reduce.restrict(problem, fixed)
    bound = reduce.design_bounds(replace(sub, objective="cost", change_cost={}, change_weight=None))
    span = _bound_span(bound)
    if span is None:
        return False
    floor, top = span
    threshold = first_threshold(floor)
    no_design = -1  # options in the last set solved (none had a design); see _widen
    while True:
        inside = {g: np.flatnonzero(b <= threshold) for g, b in bound.items()}
        size = sum(len(k) for k in inside.values())
        if all(len(k) for k in inside.values()) and size != no_design:
            left = None if deadline is None else deadline - _clock()
            if left is not None and left <= 0:
                raise SolverTimeout(time_limit)
            try:
                found = _any_design_model(reduce.restrict(sub, inside), solver, left)
            except SolverTimeout:
                raise SolverTimeout(time_limit) from None  # named by the caller's limit, not what was left of it
            if found:
                return True
            no_design = size
        if threshold >= top:
            return False
        threshold = min(top, floor + GROWTH * (threshold - floor))


def _any_design_model(problem: Problem, solver: str, time_limit: float | None) -> bool:
    """Whether the problem has a design, solved without prices or fees.

    Prices and fees do not decide whether a design exists, so the model is
    the choice part alone (:func:`_choice_rows`) plus one row per line: the
    units the chosen options need, at most the line's capacity. That is
    what its suppliers can sell of it, each on one price break: the most
    units of any of its breaks that :func:`solve_model` gives variables
    (:func:`_breaks`; breaks whose stock is below their smallest quantity
    are not among them). It is exact: for
    a fixed choice the lines' purchases do not interact once fees cost
    nothing, a supplier buys on one break of a line, and units bought past
    the need are allowed. A line no supplier offers cannot be used at all
    (as in :func:`solve_model`, where each user needs a seller). With
    nothing to minimise, the solver stops at the first design.
    """
    m = Model("partpick_any", pulp.LpMinimize)
    x, _classes = _choice_rows(m, problem)
    need, most, _users = _line_units(problem, x)
    supplier_tie = _supplier_tie(problem)
    for l_i, line in enumerate(sorted(need)):
        offers = problem.line_offers.get(line, [])
        need_max = ceil_units(sum(most[line].values()))
        per_supplier: dict[str, int] = {}
        for _r_i, off, _low, cap in _breaks(offers, need_max, supplier_tie):
            per_supplier[off.supplier] = max(per_supplier.get(off.supplier, 0), cap)
        if not per_supplier:
            for v, _a in need[line]:
                v.upBound = 0
            continue
        capacity = sum(per_supplier.values())
        for v, a in need[line]:
            if a > capacity + 1e-9:
                v.upBound = 0
        m += pulp.LpAffineExpression(need[line]) <= capacity, f"capacity_{l_i}"
    m.setObjective(pulp.LpAffineExpression())
    _run(m, _solver(solver, time_limit, heuristics=True), solver)
    return _found(m, time_limit)


@contextmanager
def rules_kept(problem: Problem) -> Iterator[Problem]:
    """The problem's couplings, forced options and cuts put back as they are now on leaving, whatever happened.

    A re-solve of a design's own problem (the other feed, an alternative,
    a part forced or left out) adds rules to it for a while; the lists are
    restored in place.
    """
    couplings, forced, forbidden = list(problem.couplings), dict(problem.forced), list(problem.forbidden)
    try:
        yield problem
    finally:
        problem.couplings[:] = couplings
        problem.forced.clear()
        problem.forced.update(forced)
        problem.forbidden[:] = forbidden


def _meeting_own_couplings(problem: Problem, keep: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """``keep`` without the options that break a coupling over their group alone.

    A group chooses exactly one option, so a coupling whose terms are one
    group's holds exactly when the chosen option's own coefficient meets the
    right side (as :func:`check_choice` tests it). Callers use such couplings
    to hold a group to some options ("one of these", "none of these"); as
    rows they leave every other option in the cost bounds and the search,
    while dropping the options is the same problem, smaller.
    """
    out = dict(keep)
    for c in problem.couplings:
        if len(c.terms) != 1:
            continue
        ((g, coef),) = c.terms.items()
        out[g] = out[g][_holds(c, np.asarray(coef, float)[out[g]])]
    return out


def _widened(values: np.ndarray, keep: np.ndarray, n: int) -> np.ndarray:
    """Bounds of the ``keep`` options as bounds of all ``n``: inf for the rest, which no design can hold."""
    out = np.full(n, math.inf)
    out[keep] = values
    return out


def _holds(c: Coupling, lhs):
    """Whether a coupling's left side (a number or an array of them) meets its right side, to 1e-9."""
    return lhs <= c.rhs + 1e-9 if c.sense == "<=" else lhs >= c.rhs - 1e-9


def _lift(sol: Solution, keep: dict[str, np.ndarray]) -> Solution:
    """The solution of a restricted problem with its choice in the whole problem's indices."""
    sol.choice = {g: int(keep[g][o]) for g, o in sol.choice.items()}
    return sol


def _solve_reduced(problem: Problem, keep: dict[str, np.ndarray], tie: dict[str, np.ndarray], solver: str, time_limit: float | None,
                   start: Solution | None = None) -> Solution:
    """Solve the problem restricted to the ``keep`` options; the choice in the whole problem's indices.

    ``start`` (a solution of the whole problem) is passed on as the first
    incumbent when every option it chose is kept.
    """
    from partpick.optimize.prune import restrict

    first = _within(start, keep)
    return _lift(solve_model(restrict(problem, keep), {g: tie[g][keep[g]] for g in tie}, solver, time_limit, start=first), keep)


def _within(start: Solution | None, keep: dict[str, np.ndarray]) -> Solution | None:
    """``start`` (a solution of the whole problem) in the indices of the ``keep`` options; None when it chose one left out."""
    if start is None:
        return None
    pos = {g: int(np.searchsorted(keep[g], o)) for g, o in start.choice.items()}
    if all(p < len(keep[g]) and keep[g][p] == start.choice[g] for g, p in pos.items()):
        return replace(start, choice=pos)
    return None


def _solve_bounded(problem: Problem, tie: dict[str, np.ndarray], solver: str, time_limit: float | None,
                   bound: dict[str, np.ndarray] | None = None, start: Solution | None = None) -> Solution:
    """Solve on the options whose cost bound is below a threshold T, widening T until the optimum is proven.

    Every design holding an option left out costs more than T; once the
    optimum z found below T satisfies z + (largest tie-break term) <= T, no
    left-out option can be in an optimal design. The first threshold lies
    just above the floor of the bounds and a threshold that leaves no
    feasible design is widened geometrically (:data:`FIRST_STEP`,
    :data:`GROWTH`); a feasible optimum above ``T - margin`` sets
    ``T = z + margin`` for one last solve.

    Each design found is a design of the whole problem: the next solve starts
    from it (:func:`solve_model`'s ``start``), and a solve stopped by the time
    limit never returns a dearer design than one already found.

    ``time_limit`` bounds the whole loop, the cost bounds included, not
    each solve: every solve gets what is left of it, and when nothing is
    left the best design found so far comes back as not proven optimal
    (none found: :class:`SolverTimeout`, as for a single solve). With a
    design in hand, a threshold solve is not started with less time left
    than the last one took: the next problem is larger, and the solver's
    work at the root of a large one overruns its limit by far.

    ``bound`` is the cost bounds when the caller has them (see
    :func:`solve`); otherwise they are computed here. The solution returned
    carries them. ``start``: a design of ``problem`` to start from (see
    :func:`_widen`).
    """
    deadline = None if time_limit is None else _clock() + time_limit
    if bound is None:
        from partpick.optimize.prune import design_bounds

        bound = design_bounds(problem)
    tried: set[frozenset[str]] = set()
    left = None if deadline is None else deadline - _clock()
    if left is None or left > 0:
        start = _fee_free_start(problem, solver, start, left, tried)
    sol = _widen(problem, tie, solver, time_limit, deadline, bound, start, tried)
    sol.bounds = bound
    return sol


def _fee_free_start(problem: Problem, solver: str, start: Solution | None, left: float | None,
                    tried: set[frozenset[str]]) -> Solution | None:
    """The cheapest design that buys from the fee-free suppliers alone, when it beats ``start`` (or there is none); else ``start``.

    Taken for problems of at least :data:`FIRST_DESIGN_MIN_OPTIONS` options
    with more suppliers than :func:`~partpick.optimize.prune.supplier_set_bounds`
    enumerates, some of them without an order fee and some with one. With
    the fee-free suppliers alone a problem has no fees left to choose, and
    the hard part of a many-supplier problem is which fees to pay: it is
    solved whole (:func:`solve`, every option, pruned), within
    :data:`FREE_SELLERS_TRY_S` (a quarter of ``left`` under a time limit).
    Its design is a design of ``problem`` (fewer offers, the same zero
    fees), returned not proven optimal; a start design makes the threshold
    loop begin at its cost (:func:`_widen`). When that solve proves its
    optimum, no restriction to those suppliers can beat it, so their set
    is added to ``tried`` (the sets :func:`_free_sellers` does not solve).
    """
    from partpick.optimize.prune import FEE_SUBSETS_MAX_SUPPLIERS

    free = _fee_free(problem)
    options = sum(len(g) for g in problem.groups.values())
    if (not free or len(free) == len(problem.fees) or len(problem.fees) <= FEE_SUBSETS_MAX_SUPPLIERS
            or options < FIRST_DESIGN_MIN_OPTIONS):
        return start
    try:
        found = solve(_sold_by(problem, free), solver, _capped(FREE_SELLERS_TRY_S, left))
    except SolverTimeout:
        return start
    if found.status == "infeasible":
        return start
    if found.status == "optimal":
        tried.add(free)
    found.bounds = None
    if start is not None and objective_value(problem, found) >= objective_value(problem, start) - 1e-9:
        return start
    found.status = "not proven optimal"
    return found


def _solve_fewest_changes(problem: Problem, tie: dict[str, np.ndarray], solver: str, time_limit: float | None) -> Solution:
    """Fewest changed roles first, then cost: solved on the options a design with at most C changes can hold, C rising.

    :func:`~partpick.optimize.prune.change_bounds` bounds from below the
    changes of any design holding each option, so every design with at most
    C changes holds only options whose bound is at most C. Once the problem
    restricted to those options has a design, its best (fewest changes, then
    cost, ties as in the whole problem) is the whole problem's best: a design
    holding any other option has more than C changes, and the restriction's
    best has at most C. C runs over the bounds' own values, from the least
    that every group reaches; a level with no design goes on to the next.
    Dominance (which counts changes as a column) thins each level first.

    ``time_limit`` is one budget for every level's solve; a level's solve
    that runs out of it ends the search as a single solve would.
    """
    from partpick.optimize import prune as reduce

    deadline = None if time_limit is None else _clock() + time_limit
    bound = reduce.change_bounds(problem)
    finite = [b[np.isfinite(b)] for b in bound.values()]
    if not all(len(f) for f in finite):
        return _infeasible(solver)
    floor = max(float(f.min()) for f in finite)
    levels = np.unique(np.concatenate(finite))
    sol = _infeasible(solver)
    for level in levels[levels >= floor - 1e-9]:
        keep = {g: np.flatnonzero(b <= level + 1e-9) for g, b in bound.items()}
        keep = reduce.compose(keep, reduce.dominated(reduce.restrict(problem, keep), {g: tie[g][keep[g]] for g in tie}))
        left = None if deadline is None else deadline - _clock()
        if left is not None and left <= 0:
            raise SolverTimeout(time_limit)
        sol = _solve_reduced(problem, keep, tie, solver, left)
        if sol.status != "infeasible":
            return sol
    return sol


def _widen(problem: Problem, tie: dict[str, np.ndarray], solver: str, time_limit: float | None, deadline: float | None,
           bound: dict[str, np.ndarray], start: Solution | None = None, tried: set[frozenset[str]] | None = None) -> Solution:
    """:func:`_solve_bounded`'s threshold loop over the options' cost bounds ``bound``.

    With a ``start`` design of cost z, the first threshold is z + margin
    (when that is above the usual first one): every design cheaper than the
    start holds only options whose bound is below it, so the solve there,
    from the start, proves the optimum at once.

    A large threshold problem with a design in hand and no supplier-set
    bounds first tries that design's suppliers plus the fee-free ones
    (:func:`_free_sellers`); a cheaper design found there lowers the
    threshold to its own cost plus margin when that is below, as a solved
    threshold's design does.
    """
    from partpick.optimize import prune as reduce

    span = _bound_span(bound)
    if span is None:
        return _infeasible(solver)
    floor, top = span
    threshold = first_threshold(floor)
    best: Solution | None = start
    if start is not None:
        threshold = min(top, max(threshold, objective_value(problem, start) + _tie_margin(problem, start)))
    # Options in the last set that had no design: the sets only grow with the
    # threshold, so a set of that size is the same set, and is not solved again.
    no_design = -1
    last = 0.0  # seconds the last threshold solve took
    tried = set() if tried is None else tried  # supplier sets _free_sellers need not solve (it adds those it solved)
    while True:
        # Children whose every compatible parent lies above the threshold cannot be held either.
        inside = reduce.with_parents(problem, {g: np.flatnonzero(b <= threshold) for g, b in bound.items()})
        sol = None
        if all(len(k) for k in inside.values()):
            # A design of cost <= threshold holds options of `inside` alone, so
            # the supplier-set bounds of that restriction may drop more of them
            # (not at the top threshold, which must hold every option).
            by_set = reduce.supplier_set_bounds(reduce.restrict(problem, inside), threshold) if threshold < top else None
            if by_set is not None:
                inside = {g: inside[g][by_set.by_option[g] <= threshold] for g in inside}
        size = sum(len(k) for k in inside.values())
        if all(len(k) for k in inside.values()) and size != no_design:
            sub = reduce.restrict(problem, inside)
            keep = reduce.compose(inside, reduce.dominated(sub, {g: tie[g][inside[g]] for g in tie}))
            left = None if deadline is None else deadline - _clock()
            if left is not None and left <= 0:
                return _out_of_time(best, time_limit)
            if best is None:
                # No design known yet: whether these options hold any is asked
                # first without prices, fees or purchases (exactly the full
                # solve's "infeasible"), which answers "none" far sooner.
                try:
                    found = _any_design_model(reduce.restrict(problem, keep), solver, left)
                except SolverTimeout:
                    return _out_of_time(best, time_limit)
                if not found:
                    no_design = size
                    if threshold >= top:
                        return _infeasible(solver)
                    threshold = min(top, floor + GROWTH * (threshold - floor))
                    continue
                left = None if deadline is None else deadline - _clock()
                if left is not None and left <= 0:
                    return _out_of_time(best, time_limit)
            large = sum(len(k) for k in keep.values()) >= FIRST_DESIGN_MIN_OPTIONS
            if best is None and by_set is not None and large:
                best = _first_design(problem, keep, tie, solver, by_set, left)
                if best is not None:
                    reach = objective_value(problem, best) + _tie_margin(problem, best)
                    if threshold < reach <= floor + GROWTH * (threshold - floor):
                        # No design below the threshold is known, and the next
                        # one would hold this design anyway: prove it there.
                        threshold = reach
                        continue
                left = None if deadline is None else deadline - _clock()
                if left is not None and left <= 0:
                    return _out_of_time(best, time_limit)
            if best is not None and by_set is None and large:
                better = _free_sellers(problem, keep, tie, solver, best, tried, left)
                if better is not None:
                    best = better
                    reach = objective_value(problem, best) + _tie_margin(problem, best)
                    if reach < threshold:
                        # Every design cheaper than this one lies under a lower threshold.
                        threshold = reach
                        continue
                left = None if deadline is None else deadline - _clock()
                if left is not None and left <= 0:
                    return _out_of_time(best, time_limit)
            if left is not None and best is not None and left < last:
                # The next problem is larger than the last, and the solver's work at its
                # root does not heed a limit (CBC, large benchmark: a 2.5 s limit took 90 s).
                return _out_of_time(best, time_limit)
            began = _clock()
            try:
                if left is None:
                    sol = _solve_reduced(problem, keep, tie, solver, None, start=best)
                else:
                    sol = _solve_then_drop(problem, keep, tie, solver, left, best)
            except SolverTimeout:
                return _out_of_time(best, time_limit)
            last = _clock() - began
            if sol.status == "not proven optimal":
                if best is not None and objective_value(problem, best) < objective_value(problem, sol):
                    best.status = "not proven optimal"
                    return best
                return sol
            if sol.status == "optimal":
                best = sol
                value = objective_value(problem, sol)
                if value + _tie_margin(problem, sol) <= threshold or threshold >= top:
                    return sol
                threshold = value + _tie_margin(problem, sol)
                continue
            no_design = size
        if threshold >= top:
            return sol if sol is not None else _infeasible(solver)
        threshold = min(top, floor + GROWTH * (threshold - floor))


def first_threshold(floor: float) -> float:
    """The first threshold of a search over cost bounds whose least is ``floor``: :data:`FIRST_STEP` of it above (at least 1)."""
    return floor + max(FIRST_STEP * abs(floor), 1.0)


def _bound_span(bound: dict[str, np.ndarray]) -> tuple[float, float] | None:
    """(floor, top) of the options' cost bounds: the first threshold's base and the last threshold; None when a group has no option any design can hold.

    The floor is the largest, over groups, of the group's least bound (every
    design costs at least that); the top is the largest finite bound, where
    every such option is in.
    """
    finite = [b[np.isfinite(b)] for b in bound.values()]
    if not all(len(f) for f in finite):
        return None
    return max(float(f.min()) for f in finite), max(float(f.max()) for f in finite)


def _out_of_time(best: Solution | None, time_limit: float) -> Solution:
    """The best design found, not proven optimal; none found: :class:`SolverTimeout` naming the user's limit."""
    if best is None:
        raise SolverTimeout(time_limit)
    best.status = "not proven optimal"
    return best


def _solve_then_drop(problem: Problem, keep: dict[str, np.ndarray], tie: dict[str, np.ndarray], solver: str,
                     left: float, best: Solution | None) -> Solution:
    """One threshold solve under a time limit: the full solve, then the supplier-drop pass.

    A time-limited solve of a large problem can hold on to a design that pays
    one order fee too many: the relaxation spreads the fees thinly, and the
    search may not reach the cheaper supplier sets before the limit. So the
    full solve gets :data:`SOLVE_SHARE` of the time left; a proven answer (or
    infeasibility) ends there, and a design it did not prove goes through
    :func:`_drop_suppliers` for the rest. The answer is never dearer than
    the full solve's design; it is exact whenever that solve proves it.
    """
    t0 = _clock()
    sol = _solve_reduced(problem, keep, tie, solver, SOLVE_SHARE * left, start=best)
    if sol.status != "not proven optimal":
        return sol
    rest = left - (_clock() - t0)
    return _drop_suppliers(problem, keep, tie, solver, sol, rest) if rest > 0 else sol


def _first_design(problem: Problem, keep: dict[str, np.ndarray], tie: dict[str, np.ndarray], solver: str,
                  sets, left: float | None) -> Solution | None:
    """A design to start a large threshold solve from, or None.

    The threshold problem restricted to each of the :data:`FIRST_DESIGN_SETS`
    supplier sets with the least set bound (``sets``, a
    :class:`~partpick.optimize.prune.SetBounds`), each solved alone within
    :data:`FIRST_DESIGN_TRY_S` (a quarter of what is left under a time
    limit): few suppliers solve fast. The cheapest design found is a design
    of the whole problem, not proven optimal.
    """
    from partpick.optimize.prune import restrict

    sub = restrict(problem, keep)
    sub_tie = {g: tie[g][keep[g]] for g in tie}
    cap = _capped(FIRST_DESIGN_TRY_S, left)
    best = None
    for i in np.argsort(sets.floor, kind="stable")[:FIRST_DESIGN_SETS].tolist():
        if not math.isfinite(sets.floor[i]):
            break
        found = _with_suppliers(sub, sub_tie, solver, sets.sets[i], cap)
        if found is not None:
            found = _lift(found, keep)
            if best is None or objective_value(problem, found) < objective_value(problem, best):
                best = found
    if best is not None:
        best.status = "not proven optimal"
    return best


def _free_sellers(problem: Problem, keep: dict[str, np.ndarray], tie: dict[str, np.ndarray], solver: str, best: Solution,
                  tried: set[frozenset[str]], left: float | None) -> Solution | None:
    """A design cheaper than ``best`` from its suppliers plus every supplier without an order fee; None when that finds none.

    Adding a supplier that charges no fee can only make a design cheaper, so
    the problem restricted to the ``keep`` options and to those suppliers'
    offers (:func:`_with_suppliers`, started from ``best`` when it holds
    only ``keep`` options) holds ``best`` and often a cheaper design: with
    many suppliers, the full solve's search rarely reaches the sets the
    restriction solves in seconds. Skipped when every fee-free supplier is
    among ``best``'s, or when ``tried`` holds the set (a set solved is added
    to it). The try
    is capped at :data:`FREE_SELLERS_TRY_S` (a quarter of ``left`` under a
    time limit). The design returned is one of the whole problem, not
    proven optimal.
    """
    from partpick.optimize.prune import restrict

    free = _fee_free(problem)
    allowed = frozenset(best.suppliers_used) | free
    if free <= set(best.suppliers_used) or allowed in tried:
        return None
    tried.add(allowed)
    found = _with_suppliers(restrict(problem, keep), {g: tie[g][keep[g]] for g in tie}, solver, allowed,
                            _capped(FREE_SELLERS_TRY_S, left), start=_within(best, keep))
    if found is None:
        return None
    found = _lift(found, keep)
    if objective_value(problem, found) >= objective_value(problem, best) - 1e-9:
        return None
    found.status = "not proven optimal"
    return found


def _with_suppliers(problem: Problem, tie: dict[str, np.ndarray], solver: str, allowed, time_limit: float,
                    start: Solution | None = None) -> Solution | None:
    """The problem solved with the offers and fees of the ``allowed`` suppliers alone; None when that finds no design.

    Options with a line that none of them can sell are left out first (no
    design could hold one), and a group left without options ends the try
    at once: the solver's first linear programme, which its time limit does
    not interrupt, took 76 s to find such a try infeasible on the large
    benchmark catalogue. ``start``: a design of ``problem`` that buys from
    ``allowed`` suppliers alone, to start from (:func:`solve_model`'s),
    used when it holds none of the options left out.
    """
    from partpick.optimize.prune import restrict

    narrow = _sold_by(problem, allowed)
    sells = {line: bool(usable(offs)) for line, offs in narrow.line_offers.items()}
    keep = {g: np.array([o for o, use in enumerate(grp.usage) if all(sells.get(line, False) for line, _q, _r in use)], dtype=np.int64)
            for g, grp in problem.groups.items()}
    if not all(len(k) for k in keep.values()) or any(f not in set(keep[g].tolist()) for g, f in problem.forced.items()):
        return None
    try:
        found = solve_model(restrict(narrow, keep), {g: tie[g][keep[g]] for g in tie}, solver, time_limit,
                            start=_within(start, keep))
    except SolverTimeout:
        return None
    return None if found.status == "infeasible" else _lift(found, keep)


def _sold_by(problem: Problem, allowed) -> Problem:
    """The problem with the offers and fees of the ``allowed`` suppliers alone."""
    return replace(problem, line_offers={line: [o for o in offers if o.supplier in allowed] for line, offers in problem.line_offers.items()},
                   fees={s: f for s, f in problem.fees.items() if s in allowed})


def _fee_free(problem: Problem) -> frozenset[str]:
    """The suppliers that charge no order fee."""
    return frozenset(s for s, fee in problem.fees.items() if fee <= 0.0)


def _capped(most: float, left: float | None) -> float:
    """A try's time: ``most`` seconds, and a quarter of ``left`` at most under a time limit."""
    return most if left is None else min(most, 0.25 * left)


def _drop_suppliers(problem: Problem, keep: dict[str, np.ndarray], tie: dict[str, np.ndarray], solver: str,
                    sol: Solution, budget: float) -> Solution:
    """Try the design without each of its suppliers in turn; the cheapest design found.

    Each try solves the problem with the offers of the other suppliers the
    design uses only (a small set of suppliers solves fast: the hard part of
    the whole problem is which fees to pay), capped at :data:`DROP_MAX_S`;
    an improvement restarts the pass from the new design, until no drop
    helps or ``budget`` seconds are spent. Every design found is a design
    of the whole problem.
    """
    from partpick.optimize.prune import restrict

    end = _clock() + budget
    sub = restrict(problem, keep)
    sub_tie = {g: tie[g][keep[g]] for g in tie}
    best = sol
    improved = True
    while improved:
        improved = False
        for gone in sorted(best.suppliers_used):
            left = end - _clock()
            if left <= 0:
                return best
            found = _with_suppliers(sub, sub_tie, solver, set(best.suppliers_used) - {gone}, min(DROP_MAX_S, left))
            if found is None:
                continue
            found = _lift(found, keep)
            if objective_value(problem, found) < objective_value(problem, best) - 1e-9:
                best = found
                best.status = "not proven optimal"
                improved = True
                break
    return best


def objective_value(problem: Problem, sol: Solution) -> float:
    """The cost objective of a solution: parts, fees and weighted changes (no tie-break terms)."""
    changes = sum(float(problem.change_cost[g][sol.choice[g]]) for g in problem.change_cost)
    return sol.total + (problem.change_weight or 0.0) * changes


def _tie_margin(problem: Problem, sol: Solution) -> float:
    """More than the tie-break terms of the solution's objective can add (ranks and supplier order)."""
    bought = sum(p.qty for p in sol.purchases)
    return len(problem.groups) * TIE_WEIGHT + 1e-7 * (len(problem.fees) + 1) * bought + 1e-6


def _infeasible(solver: str) -> Solution:
    return Solution("infeasible", {}, {}, [], 0.0, 0.0, [], solver)


def set_classes(rows: np.ndarray, members: np.ndarray, n_rows: int) -> np.ndarray:
    """A class per row such that rows share a class exactly when they hold the same set of members.

    ``(rows[j], members[j])`` are the pairs (repeats allowed). The sets are
    numbered 62 members at a time, each slice as the bits of an integer, so
    the classes are exact (no hashing) and no Python runs per row.
    """
    code = np.zeros(n_rows, dtype=np.int64)
    if not len(rows):
        return code
    order = np.argsort(members, kind="stable")
    r, m = rows[order], members[order]
    cuts = np.searchsorted(m, np.arange(0, int(m[-1]) + 63, 62))
    for c in range(len(cuts) - 1):
        lo, hi = cuts[c], cuts[c + 1]
        if lo == hi:
            continue
        bits = np.zeros(n_rows, dtype=np.int64)
        np.bitwise_or.at(bits, r[lo:hi], np.int64(1) << (m[lo:hi] - 62 * c))
        part = np.unique(bits, return_inverse=True)[1].reshape(-1)
        code = np.unique(code * (int(part.max()) + 1) + part, return_inverse=True)[1].reshape(-1)
    return code


def compat_classes(compat: list[np.ndarray], n_parent: int) -> tuple[np.ndarray, list[np.ndarray]]:
    """Parent options grouped by the set of child options that suit them.

    Returns ``(cls, members)``: ``cls[p]`` is the class of parent option ``p``
    (a class holds the parents that suit exactly the same children; classes
    are numbered in the order of their first parent) and ``members[k]`` the
    children that suit class ``k``, ascending. Parents that suit no child
    share one class with no members.
    """
    lengths = np.array([len(c) for c in compat], dtype=np.int64)
    parents = np.concatenate([np.asarray(c, dtype=np.int64) for c in compat]) if lengths.sum() else np.zeros(0, np.int64)
    kids = np.repeat(np.arange(len(compat), dtype=np.int64), lengths)
    code = set_classes(parents, kids, n_parent)
    first = np.unique(code, return_index=True)[1]  # the first parent of each class, by code
    rank = np.empty(len(first), dtype=np.int64)
    rank[np.argsort(first, kind="stable")] = np.arange(len(first))
    order = np.lexsort((kids, parents))
    parents, kids = parents[order], kids[order]
    starts = np.searchsorted(parents, np.arange(n_parent + 1))
    return rank[code], [kids[starts[p]:starts[p + 1]] for p in np.sort(first).tolist()]


def _link(m: pulp.LpProblem, name: str, big: list[pulp.LpVariable], small: list[pulp.LpVariable],
          cls: np.ndarray, allowed: list[np.ndarray]) -> list[tuple[pulp.LpVariable, list[int]]]:
    """``the chosen options of two groups go together``, with the larger group's options in classes.

    ``cls[i]`` is the class of option ``i`` of the larger group and
    ``allowed[k]`` the options of the smaller group that class ``k`` goes with.
    Each class gets ``w_k = sum of its options' binaries``; then
    ``small_j <= sum of w_k over the classes that allow j`` and
    ``w_k <= sum of the small options class k allows``. With one option
    chosen per group these hold exactly when the pair goes together; the
    classes keep the rows short when many options allow the same partners
    (the stage's configurations against heatsinks, resistor values or
    op-amps). Returns the class variables, each with its members.
    """
    members: list[list[int]] = [[] for _ in allowed]
    for i, k in enumerate(cls.tolist()):
        members[k].append(i)
    made = []
    w: list[pulp.LpVariable | None] = []
    partners: list[list[int]] = [[] for _ in small]
    for k, (row, ps) in enumerate(zip(allowed, members)):
        if not ps:
            w.append(None)
            continue
        if len(ps) == 1:
            v = big[ps[0]]
        else:
            v = pulp.LpVariable(f"w_{name}_{k}", lowBound=0)
            m += pulp.LpAffineExpression([(big[i], 1.0) for i in ps] + [(v, -1.0)]) == 0, f"class_{name}_{k}"
            made.append((v, ps))
        w.append(v)
        m += pulp.LpAffineExpression([(small[j], 1.0) for j in row.tolist()] + [(v, -1.0)]) >= 0, f"has_{name}_{k}"
        for j in row.tolist():
            partners[j].append(k)
    for j, ks in enumerate(partners):
        m += pulp.LpAffineExpression([(w[k], 1.0) for k in ks] + [(small[j], -1.0)]) >= 0, f"fits_{name}_{j}"
    return made


def _choice_rows(m: pulp.LpProblem, problem: Problem) -> tuple[dict[str, list[pulp.LpVariable]], list]:
    """The choice part of the model: one binary per option, one option per group, links, couplings and cuts.

    Returns the binaries per group and the class variables of the links,
    each with its group and members (for a start design).
    """
    classes: list[tuple[pulp.LpVariable, str, list[int]]] = []
    x: dict[str, list[pulp.LpVariable]] = {}
    for gname, g in problem.groups.items():
        vars_ = [pulp.LpVariable(f"x_{gname}_{i}", cat="Binary") for i in range(len(g))]
        x[gname] = vars_
        m += pulp.LpAffineExpression([(v, 1.0) for v in vars_]) == 1, f"one_{gname}"
        if gname in problem.forced:
            m += vars_[problem.forced[gname]] == 1, f"forced_{gname}"
    for gname, g in problem.groups.items():
        if g.parent is None:
            continue
        cls, sets = compat_classes(g.compat or [], len(x[g.parent]))
        classes += [(v, g.parent, ps) for v, ps in _link(m, gname, x[g.parent], x[gname], cls, sets)]
    # Rows the couplings imply between two groups, option by option (valid for
    # every design; they keep the relaxation from pairing options that cannot
    # go together).
    from partpick.optimize.prune import coupled_pairs

    for g, h, cls, allowed in coupled_pairs(problem):
        classes += [(v, g, ps) for v, ps in _link(m, f"{g}_{h}", x[g], x[h], cls, allowed)]
    for c_i, c in enumerate(problem.couplings):
        terms = []
        for gname, coef in c.terms.items():
            terms += [(v, float(a)) for v, a in zip(x[gname], coef) if a != 0.0]
        expr = pulp.LpAffineExpression(terms)
        m += (expr <= c.rhs) if c.sense == "<=" else (expr >= c.rhs), f"couple_{c_i}"
    for n_i, cut in enumerate(problem.forbidden):
        m += pulp.lpSum(x[g][o] for g, opts in cut.items() for o in opts) <= len(cut) - 1, f"nogood_{n_i}"
    return x, classes


def _supplier_tie(problem: Problem) -> dict[str, float]:
    """A sub-cent preference per unit for the earlier supplier (by name), so that equal prices split the same way with every solver."""
    return {s: 1e-7 * (i + 1) for i, s in enumerate(sorted(problem.fees))}


def _breaks(offers: list[Offer], need_max: int, supplier_tie: dict[str, float]) -> Iterator[tuple[int, Offer, int, int]]:
    """``(row, offer, smallest quantity, most units)`` of each price break the model gives variables.

    Breaks that some other break of the same supplier beats on every purchase
    (above all, high breaks far past the need) get none
    (:func:`~partpick.optimize.buying.useful_breaks`). A purchase buys at
    most the stock, and no more than the line's largest need except to
    reach the break's smallest quantity.
    """
    for r_i, (off, useful) in enumerate(zip(offers, useful_breaks(offers, need_max, supplier_tie))):
        if useful:
            low = smallest_qty(off)
            yield r_i, off, low, min(off.stock, max(need_max, low))


def _line_units(problem: Problem, x: dict[str, list[pulp.LpVariable]]
                ) -> tuple[dict[str, list[tuple[pulp.LpVariable, float]]], dict[str, dict[str, float]], dict[str, dict[str, dict]]]:
    """Each line's need as terms of the choice, each group's largest use of each line, and its users by group.

    ``need[line]`` holds one ``(binary, units)`` term per option using the
    line, its units summed over the option's roles: an option may use one
    line in two roles (a gain pair of equal values), and PuLP keeps only the
    last coefficient of a variable listed twice in an expression. Units are
    rounded so that float noise cannot demand one unit more (2 x 25 x 1.04
    is 52); the need row then has an exact right side. ``most[line][group]``
    is the largest option total of the group, so ``sum(most[line].values())``
    bounds the line's need in any design. ``users[line][group]`` maps the
    names of the group's binaries that use the line to the binaries.
    """
    per_option: dict[str, dict[str, tuple[pulp.LpVariable, float]]] = {}
    most: dict[str, dict[str, float]] = {}
    users: dict[str, dict[str, dict[str, pulp.LpVariable]]] = {}
    for gname, g in problem.groups.items():
        for i, usage in enumerate(g.usage):
            v = x[gname][i]
            for line, per_board, _role in usage:
                units = order_units(per_board, problem.factor)
                terms = per_option.setdefault(line, {})
                total = terms[v.name][1] + units if v.name in terms else units
                terms[v.name] = (v, total)
                per_group = most.setdefault(line, {})
                per_group[gname] = max(per_group.get(gname, 0.0), total)
                users.setdefault(line, {}).setdefault(gname, {})[v.name] = v
    return {line: list(terms.values()) for line, terms in per_option.items()}, most, users


def solve_model(problem: Problem, tie: dict[str, np.ndarray], solver: str = "cbc", time_limit: float | None = None,
                start: Solution | None = None) -> Solution:
    """Build the MILP of the whole problem, with the given tie-break weights, and solve it.

    ``start``, a feasible solution of this problem (choice in its indices), is
    handed to the solver as its first incumbent, so the search prunes against
    it from the first node.

    ``time_limit`` counts from this call: the solver gets what the model's
    build left of it (a large model takes seconds to build), and none left
    is a :class:`~partpick.errors.SolverTimeout` naming the whole limit.
    """
    began = time.monotonic()
    m = Model("partpick", pulp.LpMinimize)
    x, classes = _choice_rows(m, problem)
    tie_terms = [(v, float(w)) for gname, vars_ in x.items() for v, w in zip(vars_, tie[gname]) if w]

    # Line needs as expressions of the choice.
    need_expr, most, users_by_group = _line_units(problem, x)
    users = {line: [v for v, _a in terms] for line, terms in need_expr.items()}
    suppliers = sorted(problem.fees)
    y = {s: pulp.LpVariable(f"y_{k}", cat="Binary") for k, s in enumerate(suppliers)}
    cost_terms = [(y[s], problem.fees[s]) for s in suppliers]
    supplier_tie = _supplier_tie(problem)
    buy: list[tuple[str, Offer, pulp.LpVariable]] = []
    extra: list[tuple[pulp.LpVariable, int]] = []  # (z, need_max) of each buy
    for l_i, line in enumerate(sorted(need_expr)):
        offers = problem.line_offers.get(line, [])
        # No plan buys more than the largest need, except to reach a break or MOQ.
        need_max = ceil_units(sum(most[line].values()))
        qs = []
        covers = []
        first_buy = len(buy)
        by_supplier: dict[str, list[pulp.LpVariable]] = {}
        for r_i, off, low, cap in _breaks(offers, need_max, supplier_tie):
            z = pulp.LpVariable(f"z_{l_i}_{r_i}", cat="Binary")
            q = pulp.LpVariable(f"q_{l_i}_{r_i}", lowBound=0, upBound=cap, cat="Integer")
            m += pulp.LpAffineExpression([(q, 1.0), (z, -float(low))]) >= 0
            m += pulp.LpAffineExpression([(q, 1.0), (z, -float(cap))]) <= 0
            # Cover: the units of this purchase that count toward the need,
            # min(q, need_max * z) (at most the line's largest need when the
            # break is used). It ties the share of the need a supplier serves
            # to its z and y, so the relaxation cannot serve a whole need from
            # a break it opens by a fraction (the strong facility-location
            # form). The bounds above settle which of the two is smaller, for
            # fractional z too, so the cover needs no variable of its own:
            # below need_max the purchase is capped at need_max * z
            # (cap <= need_max), from it on it buys at least low * z >=
            # need_max * z.
            covers.append((q, 1.0) if low < need_max else (z, float(need_max)))
            by_supplier.setdefault(off.supplier, []).append(z)
            # Price plus the sub-cent preference for the earlier supplier.
            cost_terms.append((q, off.unit_price + supplier_tie[off.supplier]))
            qs.append((q, 1.0))
            buy.append((line, off, q))
            extra.append((z, need_max))
        # A line's offers are used only when some chosen option needs the line
        # (at most one break per supplier); this also tightens the relaxation.
        users_expr = [(v, -1.0) for v in users[line]]
        for s, zs in by_supplier.items():
            # At most one break per supplier, and only from a supplier ordered
            # from: one row per (line, supplier), tighter than z <= y per break
            # and sum z <= 1 apart, which it implies.
            m += pulp.LpAffineExpression([(z, 1.0) for z in zs] + [(y[s], -1.0)]) <= 0
            m += pulp.LpAffineExpression([(z, 1.0) for z in zs] + users_expr) <= 0
        # Each group's chosen user of the line needs an order with a supplier
        # that offers it: valid for every integer plan, and it makes the
        # relaxation pay (a share of) the order fees.
        sellers = [(y[s], 1.0) for s in by_supplier]
        for group_users in users_by_group[line].values():
            m += pulp.LpAffineExpression(sellers + [(v, -1.0) for v in group_users.values()]) >= 0
        m += pulp.LpAffineExpression(covers + [(v, -a) for v, a in need_expr[line]]) >= 0, f"need_{l_i}"
        if len(most[line]) == 1:
            # A line of one group is needed by one chosen option at a time: its
            # purchase costs at least that option's cheapest purchase. Valid
            # for every integer plan; it keeps the relaxation from buying
            # fractions of a high break at its low price.
            spend = [(q, off.unit_price) for _l, off, q in buy[first_buy:]]
            rows = usable(offers)
            least = [(v, -c) for v, c in ((v, cheapest_of_rows(rows, ceil_units(a))) for v, a in need_expr[line]) if math.isfinite(c)]
            m += pulp.LpAffineExpression(spend + least) >= 0, f"spend_{l_i}"
    cost = pulp.LpAffineExpression(cost_terms)
    tie_expr = pulp.LpAffineExpression(tie_terms)

    if start is not None:
        _set_start(start, x, y, buy, extra, classes)
    # Lexicographic goals before cost: fewest changed roles, then fewest lines.
    goals = []
    final = cost + tie_expr
    if problem.change_cost:
        changes = pulp.LpAffineExpression(
            [(v, float(c)) for g, cc in problem.change_cost.items() for v, c in zip(x[g], cc) if c]
        )
        if problem.change_weight is None:
            goals.append(("changes", changes))
        else:
            final = final + problem.change_weight * changes
    if problem.objective == "lines":
        u = {line: pulp.LpVariable(f"u_{k}", cat="Binary") for k, line in enumerate(sorted(users))}
        # A line is used when any group's chosen option uses it. One row per
        # (line, group) over the group's users, rather than one per user: a
        # group chooses one option, so the two forms have the same integer
        # designs, and the sum keeps the relaxation from counting a fraction
        # of a line per user (every line of a chosen option counts whole).
        for line, by_group in users_by_group.items():
            for group_users in by_group.values():
                m += pulp.LpAffineExpression([(u[line], 1.0)] + [(v, -1.0) for v in group_users.values()]) >= 0
        goals.append(("lines", pulp.lpSum(u.values())))
    fees_first = list(y.values())
    left = None if time_limit is None else time_limit - (time.monotonic() - began)
    if left is not None and left <= 0:
        raise SolverTimeout(time_limit)
    sol = _solver(solver, left, warm=start is not None)

    def run() -> None:
        try:
            _run(m, sol, solver, first=fees_first)
        except SolverTimeout:
            raise SolverTimeout(time_limit) from None

    proven = True
    for name, goal in goals:
        m.setObjective(goal + 1e-6 * cost + tie_expr * 1e-3)
        run()
        if not _found(m, time_limit):
            return _infeasible(solver)
        proven = proven and m.sol_status == pulp.LpSolutionOptimal
        m += goal <= round(pulp.value(goal)), f"{name}_fixed"
    m.setObjective(final)
    run()
    if not _found(m, time_limit):
        return _infeasible(solver)
    proven = proven and m.sol_status == pulp.LpSolutionOptimal
    choice = {g: int(np.argmax([v.value() or 0.0 for v in vs])) for g, vs in x.items()}
    purchases = [
        Purchase(line, off.supplier, off.min_qty, off.unit_price, int(round(q.value())))
        for line, off, q in buy
        if q.value() and round(q.value()) > 0
    ]
    used = sorted({p.supplier for p in purchases})
    parts = sum(p.qty * p.unit_price for p in purchases)
    fees = sum(problem.fees[s] for s in used)
    need = {l: ceil_units(q) for l, q in line_need(problem, choice).items()}
    state = "optimal" if proven else "not proven optimal"
    return Solution(state, choice, need, sorted(purchases, key=lambda p: (p.line, p.supplier)), round(parts, 6), round(fees, 6), used, solver)


def _set_start(start: Solution, x, y, buy, extra, classes) -> None:
    """Initial values of every variable from a feasible solution (the solver's first incumbent)."""
    for g, vars_ in x.items():
        for i, v in enumerate(vars_):
            v.setInitialValue(1 if i == start.choice[g] else 0)
    for v, g, members in classes:
        v.setInitialValue(1 if start.choice[g] in members else 0)
    used = set(start.suppliers_used)
    for s, v in y.items():
        v.setInitialValue(1 if s in used else 0)
    bought = start_purchases(start.purchases, [(line, off, need_max) for (line, off, _q), (_z, need_max) in zip(buy, extra)])
    for (line, off, q), (z, _need_max) in zip(buy, extra):
        qty = bought.get((line, off.supplier, off.min_qty), 0)
        q.setInitialValue(qty)
        z.setInitialValue(1 if qty else 0)


def start_purchases(purchases: list[Purchase], breaks: list[tuple[str, Offer, int]]) -> dict[tuple[str, str, int], int]:
    """A start design's purchases on the breaks the model holds: ``(line, supplier, smallest quantity) -> units``.

    ``breaks``: (line, offer, the line's largest need) of every break with
    variables. A purchase on a break the model left out
    (:func:`~partpick.optimize.buying.useful_breaks`) moves to the break of
    the same line and supplier that buys its useful units (at most the
    largest need) for the least; :func:`useful_breaks` keeps such a break
    costing no more, so the start stays a design, no dearer.
    """
    held: dict[tuple[str, str], list[tuple[Offer, int]]] = {}
    for line, off, need_max in breaks:
        held.setdefault((line, off.supplier), []).append((off, need_max))
    out: dict[tuple[str, str, int], int] = {}
    for p in purchases:
        options = held.get((p.line, p.supplier), [])
        if any(off.min_qty == p.min_qty for off, _n in options):
            out[(p.line, p.supplier, p.min_qty)] = p.qty
            continue
        fits = []
        for off, need_max in options:
            units = max(min(p.qty, need_max), smallest_qty(off))
            if units <= off.stock:
                fits.append((units * off.unit_price, off.min_qty, units))
        if fits:
            _cost, low, units = min(fits)
            out[(p.line, p.supplier, low)] = units
    return out


def check_choice(problem: Problem, choice: dict[str, int]) -> list[str]:
    """Constraints a choice breaks (compat and couplings); empty when feasible."""
    broken = []
    for gname, g in problem.groups.items():
        if g.parent is not None and choice[g.parent] not in set(g.compat[choice[gname]].tolist()):
            broken.append(f"compat {gname}")
    for c in problem.couplings:
        if not _holds(c, sum(float(coef[choice[g]]) for g, coef in c.terms.items())):
            broken.append(c.name)
    return broken
