"""Exact reductions of a :class:`~partpick.optimize.milp.Problem` before the MILP.

Two reductions, each dropping only options that no optimal design uses, so
the MILP on what is left has the same optimum and the same tie-break as on
the whole problem:

- **Dominance** (:func:`dominated`): option ``a`` of a group is dropped when
  another option ``b`` of the same group comes earlier in the tie-break order
  and is at least as good in every respect: every coupling coefficient, the
  changes against a previous design, the parent options it suits (a superset),
  the child options that suit it (a superset), the no-good cuts it is in (a
  subset), and the order cost. For the cost, ``b`` must use the same roles
  with the same units; each of its lines is either ``a``'s line or, when both
  lines are private to the group (no other group uses them), a line that is
  no dearer at any supplier (:func:`line_no_dearer`). Swapping ``a`` for ``b``
  in any design then keeps it feasible, costs no more and lowers the
  tie-break term, so an optimal design never holds ``a``.
- **Cost bounds** (:func:`design_bounds`): every option gets a lower bound on
  the cost of any design that holds it: the parts (:func:`lower_bounds`: its
  own lines at their cheapest, the cheapest compatible children and parent,
  the cheapest option of every other group; couplings ignored) plus the
  order fees (:func:`fee_floors`: the cheapest set of suppliers that can
  sell its lines and some option of every other group); on the options
  below a threshold, the tighter :func:`supplier_set_bounds` (the least
  over supplier sets of the set's fees plus the parts bought from it alone)
  drops more. ``milp.solve`` solves the
  problem restricted to the options below a threshold and widens the
  threshold until the optimum found lies below it by more than the largest
  tie-break term: then no left-out option can be part of an optimal design.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from partpick.optimize.buying import EXACT_NEED_MAX, cheapest_of_rows, least_unit_price, rows_no_dearer, usable
from partpick.optimize.milp import Coupling, Group, Problem, set_classes
from partpick.spec import order_units

#: Largest number of options compared pairwise in one block of a group.
BLOCK_PAIRS = 4_000_000
#: Most suppliers whose every subset :func:`fee_floors` enumerates (2**n sets).
FEE_SUBSETS_MAX_SUPPLIERS = 12
#: Cells (options and compat pairs x supplier sets) of one block of :func:`supplier_set_bounds`.
SET_BLOCK_CELLS = 8_000_000
#: Most cells in all of :func:`supplier_set_bounds`; above it, it returns None. The work
#: grows with the cells (about 1.2 s per 10**8 on the 2-core development machine), so
#: this caps it near 12 s.
SET_BOUNDS_MAX_CELLS = 1_000_000_000
#: Largest table (distinct coupling rows of one group x options of the other) :func:`coupled_pairs` builds.
MAX_PAIR_CELLS = 50_000_000


# --------------------------------------------------------------------------- restriction


def restrict(problem: Problem, keep: dict[str, np.ndarray]) -> Problem:
    """The problem with only the ``keep`` options (original indices, ascending) of each group.

    Compat lists, couplings, forced options, no-good cuts and change costs are
    renumbered; a cut that lost every option of one of its groups can no
    longer be violated and is dropped.
    """
    new_index = {}
    for g, grp in problem.groups.items():
        idx = np.full(len(grp), -1, dtype=np.int64)
        idx[keep[g]] = np.arange(len(keep[g]))
        new_index[g] = idx
    groups = {}
    for g, grp in problem.groups.items():
        k = keep[g]
        compat = None
        if grp.parent is not None:
            remap = new_index[grp.parent]
            compat = [_renumber(grp.compat[i], remap) for i in k]
        groups[g] = Group(g, [grp.keys[i] for i in k], [grp.usage[i] for i in k], grp.parent, compat)
    couplings = [Coupling(c.name, {g: np.asarray(coef)[keep[g]] for g, coef in c.terms.items()}, c.sense, c.rhs)
                 for c in problem.couplings]
    forbidden = []
    for cut in problem.forbidden:
        renumbered = {g: _renumber(np.asarray(opts, dtype=np.int64), new_index[g]).tolist() for g, opts in cut.items()}
        if all(renumbered.values()):
            forbidden.append(renumbered)
    used = {line for grp in groups.values() for usage in grp.usage for line, _q, _r in usage}
    return Problem(
        groups=groups,
        couplings=couplings,
        line_offers={line: offers for line, offers in problem.line_offers.items() if line in used},
        fees=problem.fees,
        factor=problem.factor,
        objective=problem.objective,
        forced={g: int(new_index[g][o]) for g, o in problem.forced.items()},
        forbidden=forbidden,
        change_cost={g: np.asarray(c)[keep[g]] for g, c in problem.change_cost.items()},
        change_weight=problem.change_weight,
    )


def with_parents(problem: Problem, keep: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """``keep`` without the child options none of whose compatible parent options it keeps.

    No design of the restriction to ``keep`` can hold such an option (a child
    goes with a compatible parent), so dropping them changes none of its
    designs; parents are thinned first, so that a grandchild follows.
    """
    out = dict(keep)
    for g in sorted(problem.groups, key=lambda name: _depth(problem, name)):
        grp = problem.groups[g]
        if grp.parent is None or not len(out[g]):
            continue
        held = np.zeros(len(problem.groups[grp.parent]), dtype=bool)
        held[out[grp.parent]] = True
        out[g] = np.array([i for i in out[g].tolist() if held[grp.compat[i]].any()], dtype=np.int64)
    return out


def _renumber(indices: np.ndarray, remap: np.ndarray) -> np.ndarray:
    out = remap[np.asarray(indices, dtype=np.int64)]
    return out[out >= 0]


def compose(outer: dict[str, np.ndarray], inner: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Original indices of a restriction of a restriction."""
    return {g: outer[g][inner[g]] for g in outer}


def forced_only(problem: Problem) -> dict[str, np.ndarray]:
    """Every option, except in a group with a forced option: that one alone."""
    return {g: np.array([problem.forced[g]]) if g in problem.forced else np.arange(len(grp))
            for g, grp in problem.groups.items()}


def _units(problem: Problem, per_board: float) -> float:
    return order_units(per_board, problem.factor)


def _needs(problem: Problem, g: str) -> tuple[np.ndarray, np.ndarray, list[str], np.ndarray]:
    """Every option's line needs of group ``g`` as arrays: (option, line id, line keys, units).

    One row per option and line, ordered by option; ``line keys[line id]``
    is the row's line. Its units are the option's uses of that line added
    up, each use rounded as the MILP rounds it (``per_board x factor``,
    6 decimals).
    """
    usage = problem.groups[g].usage
    lengths = np.fromiter((len(u) for u in usage), dtype=np.int64, count=len(usage))
    opt = np.repeat(np.arange(len(usage), dtype=np.int64), lengths)
    code: dict[str, int] = {}
    ids = np.fromiter((code.setdefault(line, len(code)) for u in usage for line, _q, _r in u), dtype=np.int64, count=len(opt))
    per_board = np.fromiter((q for u in usage for _l, q, _r in u), dtype=float, count=len(opt))
    values, back = np.unique(per_board, return_inverse=True)
    units = np.array([_units(problem, float(v)) for v in values])[back] if len(values) else per_board
    key = opt * max(len(code), 1) + ids
    order = np.argsort(key, kind="stable")
    key = key[order]
    starts = np.flatnonzero(np.r_[True, key[1:] != key[:-1]]) if len(key) else np.zeros(0, np.int64)
    summed = np.add.reduceat(units[order], starts) if len(starts) else units
    return opt[order][starts], ids[order][starts], list(code), summed


def _weighted_changes(problem: Problem, g: str) -> np.ndarray:
    """Each option's weighted changes against a previous design (zeros without ``change_weight``)."""
    if problem.change_weight is not None and g in problem.change_cost:
        return problem.change_weight * np.asarray(problem.change_cost[g], float)
    return np.zeros(len(problem.groups[g]))


def _set_fees(problem: Problem, suppliers: list[str]) -> np.ndarray:
    """The order fees of every supplier set (bit i of the set's index: ``suppliers[i]``)."""
    sets = np.arange(1 << len(suppliers), dtype=np.int64)
    fee = np.zeros(len(sets))
    for i, s in enumerate(suppliers):
        fee[(sets >> i) & 1 == 1] += float(problem.fees[s])
    return fee


# --------------------------------------------------------------------------- cost bounds


def _all_needs(problem: Problem) -> dict[str, tuple[np.ndarray, np.ndarray, list[str], np.ndarray]]:
    """:func:`_needs` of every group."""
    return {g: _needs(problem, g) for g in problem.groups}


def option_costs(problem: Problem, needs: dict | None = None) -> dict[str, np.ndarray]:
    """A lower bound on what each option adds to the order (fees left out).

    A line only this group uses costs at least its cheapest purchase of the
    option's units; a line several groups share at least the units times its
    cheapest unit price (the need of a shared line is the sum of its users').
    With ``change_weight``, the weighted changes are added. ``needs``:
    :func:`_all_needs` of ``problem`` when the caller has it.
    """
    needs = needs if needs is not None else _all_needs(problem)
    users = _line_users(needs)
    memo: dict[tuple[str, int], float] = {}
    pmin: dict[str, float] = {}  # shared lines' least unit prices, as they are met
    out = {}
    for g, grp in problem.groups.items():
        opt, ids, names, units = needs[g]
        distinct, back = _distinct_needs(ids, units)
        price = np.empty(len(distinct))
        for j, (i, q) in enumerate(distinct):
            line = names[i]
            if len(users[line]) == 1:
                key = (line, math.ceil(q))
                if key not in memo:
                    memo[key] = cheapest_of_rows(usable(problem.line_offers.get(line, [])), key[1])
                price[j] = memo[key]
            else:
                if line not in pmin:
                    pmin[line] = least_unit_price(problem.line_offers.get(line, []))
                price[j] = q * pmin[line]
        out[g] = _sum_rows(opt, back, price[:, None], len(grp))[:, 0] + _weighted_changes(problem, g)
    return out


def _distinct_needs(ids: np.ndarray, units: np.ndarray) -> tuple[list[tuple[int, float]], np.ndarray]:
    """The distinct (line id, units) of :func:`_needs` rows, and each row's index among them (to price each once)."""
    amounts, amount_of = np.unique(units, return_inverse=True)
    pairs, back = np.unique(ids * len(amounts) + amount_of.reshape(-1), return_inverse=True)
    distinct = [(pair // len(amounts), float(amounts[pair % len(amounts)])) for pair in pairs.tolist()]
    return distinct, back.reshape(-1).astype(np.int64)


def _line_users(needs: dict[str, tuple[np.ndarray, np.ndarray, list[str], np.ndarray]]) -> dict[str, set[str]]:
    """The groups that use each line, from :func:`_needs` of every group."""
    users: dict[str, set[str]] = {}
    for g, (_opt, ids, names, _units) in needs.items():
        for i in np.unique(ids).tolist():
            users.setdefault(names[i], set()).add(g)
    return users


def _children(problem: Problem) -> dict[str, list[str]]:
    kids: dict[str, list[str]] = {g: [] for g in problem.groups}
    for g, grp in problem.groups.items():
        if grp.parent is not None:
            kids[grp.parent].append(g)
    return kids


def _depth(problem: Problem, g: str) -> int:
    d = 0
    while problem.groups[g].parent is not None:
        g = problem.groups[g].parent
        d += 1
    return d


def _root(problem: Problem, g: str) -> str:
    while problem.groups[g].parent is not None:
        g = problem.groups[g].parent
    return g


def compat_pairs(grp: Group) -> tuple[np.ndarray, np.ndarray]:
    """(parent option, child option) of every compatible pair of a child group, as two arrays."""
    lengths = np.array([len(c) for c in grp.compat], dtype=np.int64)
    parents = np.concatenate([np.asarray(c, dtype=np.int64) for c in grp.compat]) if lengths.sum() else np.zeros(0, np.int64)
    return parents, np.repeat(np.arange(len(grp)), lengths)


@dataclass
class _Links:
    """A child group's compatible pairs, sorted once for the bounds' repeated minima.

    Parents that suit the same set of child options share a class (with
    ``classes``; otherwise each parent is its own class), and the minima run
    over one representative pair per (class, child): the many stage
    configurations of a large catalogue share a few heatsink and bias-feed
    sets. The least over a child's parents is the least over its classes of
    the least within each class, since a child suits every parent of a class
    or none.
    """

    parent_class: np.ndarray  # class of each parent option
    n_classes: int
    members: tuple[np.ndarray, np.ndarray, np.ndarray]  # parents sorted by class; run starts; class of each run
    down: tuple[np.ndarray, np.ndarray, np.ndarray]  # children of the (class, child) pairs sorted by class; starts; class
    up: tuple[np.ndarray, np.ndarray, np.ndarray]  # classes of the pairs sorted by child; starts; child
    n_kids: int

    @classmethod
    def of(cls, problem: Problem, g: str, classes: bool = False) -> _Links:
        grp = problem.groups[g]
        parents, kids = compat_pairs(grp)
        n_parent = len(problem.groups[grp.parent])
        if classes:
            parent_class = set_classes(parents, kids, n_parent)
            n_classes = int(parent_class.max()) + 1 if n_parent else 0
            first = np.full(n_classes, -1, dtype=np.int64)
            first[parent_class[::-1]] = np.arange(n_parent - 1, -1, -1)  # the first parent of each class
            rep = first[parent_class[parents]] == parents
            cls_of, kid_of = parent_class[parents[rep]], kids[rep]
        else:
            parent_class, n_classes = np.arange(n_parent, dtype=np.int64), n_parent
            cls_of, kid_of = parents, kids
        return cls(parent_class, n_classes, _runs(np.arange(n_parent, dtype=np.int64), parent_class),
                   _runs(kid_of, cls_of), _runs(cls_of, kid_of), len(grp))

    def min_over_children(self, value: np.ndarray) -> np.ndarray:
        """For each parent option, the least ``value`` among the child options that suit it (inf if none)."""
        return _run_min(value, self.down, self.n_classes)[self.parent_class]

    def min_over_parents(self, value: np.ndarray) -> np.ndarray:
        """For each child option, the least ``value`` among the parent options it suits (inf if none)."""
        return _run_min(_run_min(value, self.members, self.n_classes), self.up, self.n_kids)


def _runs(items: np.ndarray, by: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``items`` sorted by ``by``, the start of each run of equal ``by``, and that value."""
    order = np.argsort(by, kind="stable")
    key = by[order]
    starts = np.flatnonzero(np.r_[True, key[1:] != key[:-1]]) if len(key) else np.zeros(0, np.int64)
    return items[order], starts, key[starts]


def _run_min(value: np.ndarray, runs: tuple[np.ndarray, np.ndarray, np.ndarray], n: int) -> np.ndarray:
    """``out[at]`` = the least ``value[items]`` over each run of :func:`_runs`; inf where no run."""
    items, starts, at = runs
    out = np.full((n,) + value.shape[1:], np.inf)
    if len(items):
        out[at] = np.minimum.reduceat(value[items], starts, axis=0)
    return out


def lower_bounds(problem: Problem, needs: dict | None = None) -> dict[str, np.ndarray]:
    """For each option, a lower bound on the cost of any feasible design that holds it.

    ``full(o)`` is the option's own cost plus, for each child group, the least
    ``full`` among the child options that suit it (bottom-up over the compat
    tree). A root option's bound is its ``full`` plus the least ``full`` of
    every other root group; a child of a root adds the least, over the parent
    options it suits, of the parent's ``full`` without this child group's
    share. Deeper groups leave their ancestors out (costs are not negative).
    ``inf`` marks options that cannot be part of any design (no compatible
    child in some child group, or a line that cannot be bought).
    """
    return _tree_bounds(problem, option_costs(problem, needs))


def change_bounds(problem: Problem) -> dict[str, np.ndarray]:
    """For each option, a lower bound on the changed roles of any design that holds it.

    The options' change counts (``problem.change_cost``, none in a group
    without them) added up over the compat tree as :func:`lower_bounds` adds
    costs; couplings, cuts and stock are left out, so it can only be lower.
    ``inf`` marks options no design can hold (no compatible child).
    """
    own = {g: np.asarray(problem.change_cost[g], float) if g in problem.change_cost else np.zeros(len(grp))
           for g, grp in problem.groups.items()}
    return _tree_bounds(problem, own)


def _tree_bounds(problem: Problem, own: dict[str, np.ndarray], links: dict[str, _Links] | None = None) -> dict[str, np.ndarray]:
    """:func:`lower_bounds` from given own costs: one per option, or a row per option (one column per scenario)."""
    links = links if links is not None else {g: _Links.of(problem, g) for g, grp in problem.groups.items() if grp.parent is not None}
    kids = _children(problem)
    full: dict[str, np.ndarray] = {}
    share: dict[str, np.ndarray] = {}  # child group -> its contribution to each parent option
    for g in sorted(problem.groups, key=lambda name: -_depth(problem, name)):
        total = own[g].copy()
        for h in kids[g]:
            share[h] = links[h].min_over_children(full[h])
            total = total + share[h]
        full[g] = total
    roots = [g for g, grp in problem.groups.items() if grp.parent is None]
    best = {r: full[r].min(axis=0) if len(full[r]) else np.full(full[r].shape[1:], np.inf) for r in roots}
    out = {}
    for g, grp in problem.groups.items():
        root = _root(problem, g)
        others = sum((v for r, v in best.items() if r != root), np.zeros(full[g].shape[1:]))
        bound = full[g] + others
        if grp.parent is not None and grp.parent == root:
            with np.errstate(invalid="ignore"):
                rest = np.where(np.isfinite(full[root]), full[root] - share[g], np.inf)
            bound = bound + links[g].min_over_parents(rest)
        out[g] = bound
    return out


# --------------------------------------------------------------------------- fee floors


def fee_floors(problem: Problem, needs: dict | None = None) -> dict[str, np.ndarray]:
    """For each option, a lower bound on the order fees of any design that holds it.

    A design pays the fee of every supplier it buys from, and each line it
    needs is bought from a supplier with a usable offer for it. So the fees
    of a design holding option ``o`` are at least the least total fee of a
    supplier set that sells every line of ``o`` and, for every other group,
    every line of at least one of its options (compatibility and couplings
    left out, which can only lower the bound). With up to
    :data:`FEE_SUBSETS_MAX_SUPPLIERS` suppliers every set is enumerated (a
    bit mask per set); with more, the bound falls back to the largest, over
    the lines the design must buy, of the cheapest fee of a seller of that
    line. ``inf`` marks options whose lines no supplier set can sell.
    ``needs``: :func:`_all_needs` of ``problem`` when the caller has it.
    """
    needs = needs if needs is not None else _all_needs(problem)
    tables = _fee_tables(problem, needs)
    if tables is None:
        return _fee_floors_one_seller(problem)
    _suppliers, sets, fee, can, key_of = tables
    some = {g: c.any(axis=0) for g, c in can.items()}
    out = {}
    for g in problem.groups:
        ok = can[g] & _others(some, g, len(sets))
        per_key = np.where(ok, fee, np.inf).min(axis=1) if can[g].size else np.full(len(can[g]), np.inf)
        out[g] = per_key[key_of[g]] if len(per_key) else np.zeros(0)
    return out


def fee_sets(problem: Problem, g: str, needs: dict | None = None, max_cells: int = 50_000_000):
    """:func:`fee_floors`' supplier sets for the options of group ``g``, to add requirements to later.

    Returns ``(suppliers, sets, fee, ok, key)``: the supplier sets (bit masks
    over ``suppliers``) in ascending fee order, their fees, ``ok[key, set]``
    (the set sells every line of an option with that key and some option of
    every other group) and each option's key. The least fee of an option is
    that of its key's first set in ``ok``: its :func:`fee_floors`. None when
    :func:`fee_floors` would fall back to one seller (too many suppliers),
    or when ``ok`` would hold more than ``max_cells`` cells.
    """
    needs = needs if needs is not None else _all_needs(problem)
    tables = _fee_tables(problem, needs)
    if tables is None or tables[3][g].size > max_cells:
        return None
    suppliers, sets, fee, can, key_of = tables
    order = np.argsort(fee, kind="stable")
    others = _others({h: c.any(axis=0) for h, c in can.items() if h != g}, g, len(sets))
    return suppliers, sets[order], fee[order], (can[g] & others)[:, order], key_of[g]


def _fee_tables(problem: Problem, needs: dict):
    """What :func:`fee_floors` and :func:`fee_sets` start from; None past :data:`FEE_SUBSETS_MAX_SUPPLIERS` suppliers.

    ``(suppliers, sets, fee, can, key_of)``: every supplier set (bit i:
    ``suppliers[i]``) and its fees, and per group the distinct seller-mask
    sets of its options (each option's one in ``key_of[g]``) with
    ``can[g][key, set]``, whether the set can sell all of them.
    """
    suppliers = sorted(problem.fees)
    if len(suppliers) > FEE_SUBSETS_MAX_SUPPLIERS:
        return None
    code = {s: i for i, s in enumerate(suppliers)}
    sets = np.arange(1 << len(suppliers), dtype=np.int64)
    sellers = {line: _mask(offers, code) for line, offers in problem.line_offers.items()}
    can: dict[str, np.ndarray] = {}
    key_of: dict[str, np.ndarray] = {}
    for g, grp in problem.groups.items():
        masks, bits, key_of[g] = _seller_bits(len(grp), *needs[g][:3], sellers)
        can[g] = _can_sell(masks, bits, sets)
    return suppliers, sets, _set_fees(problem, suppliers), can, key_of


def _others(some: dict[str, np.ndarray], g: str, n_sets: int) -> np.ndarray:
    """Per supplier set: whether it can sell some option of every group but ``g`` (``some[h]``: of group ``h``)."""
    out = np.ones(n_sets, dtype=bool)
    for h, ok in some.items():
        if h != g:
            out &= ok
    return out


def seller_masks(offers_of: list[list], suppliers: list[str]) -> np.ndarray:
    """Per list of offers: the bit mask (over ``suppliers``) of the suppliers with a usable offer."""
    code = {s: i for i, s in enumerate(suppliers)}
    return np.array([_mask(offers, code) for offers in offers_of], dtype=np.int64)


def cheapest_fee(problem: Problem, offers_of: list[list]) -> np.ndarray:
    """Per list of offers: the least order fee of a supplier with a usable one (inf: none)."""
    return np.array([min((float(problem.fees[s]) for s, *_rest in usable(offers) if s in problem.fees), default=math.inf)
                     for offers in offers_of], dtype=float)


def _seller_bits(n_options: int, opt: np.ndarray, ids: np.ndarray, names: list[str],
                 sellers: dict[str, int]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The seller masks a group's lines have, the distinct sets of them its options hold, and each option's set.

    From :func:`_needs` rows: ``(masks, bits, key_of)`` with ``bits[key, j]``
    true when set ``key`` holds ``masks[j]``; an option with no line holds the
    empty set. The sets are told apart exactly (:func:`milp.set_classes`), with
    no Python per option.
    """
    line_mask = np.array([sellers.get(name, 0) for name in names], dtype=np.int64)
    masks, mask_i = np.unique(line_mask[ids], return_inverse=True) if len(ids) else (np.zeros(0, np.int64), np.zeros(0, np.int64))
    mask_i = mask_i.reshape(-1)
    key_of = set_classes(opt, mask_i, n_options)
    bits = np.zeros((int(key_of.max()) + 1 if n_options else 0, len(masks)), dtype=bool)
    bits[key_of[opt], mask_i] = True
    return masks, bits, key_of


def _can_sell(masks: np.ndarray, bits: np.ndarray, sets: np.ndarray) -> np.ndarray:
    """``[key, set]``: whether the supplier set (a bit mask) sells some supplier of every mask the key holds.

    A key fails a set when one of its masks has no supplier in the set; the
    failures are counted by a product of 0/1 matrices (exact in float32 for
    the few thousand masks a group can have), rows in blocks.
    """
    lacks = ((sets[None, :] & masks[:, None]) == 0).astype(np.float32)  # [mask, set]
    out = np.empty((len(bits), len(sets)), dtype=bool)
    block = max(1, (1 << 22) // max(1, len(sets)))
    for lo in range(0, len(bits), block):
        out[lo:lo + block] = (bits[lo:lo + block].astype(np.float32) @ lacks) < 0.5
    return out


def _mask(offers, code: dict[str, int]) -> int:
    """Bit mask of the suppliers with a usable offer."""
    m = 0
    for s, *_rest in usable(offers):
        if s in code:
            m |= 1 << code[s]
    return m


def _fee_floors_one_seller(problem: Problem) -> dict[str, np.ndarray]:
    """The fallback of :func:`fee_floors`: each needed line has an open seller, so its cheapest fee is paid."""
    cheapest = dict(zip(problem.line_offers, cheapest_fee(problem, list(problem.line_offers.values())).tolist()))
    own = {g: np.array([max((cheapest.get(line, math.inf) for line, _q, _r in usage), default=0.0) for usage in grp.usage])
           for g, grp in problem.groups.items()}
    least = {g: float(v.min()) if len(v) else math.inf for g, v in own.items()}
    return {g: np.maximum(v, max((least[h] for h in own if h != g), default=0.0)) for g, v in own.items()}


@dataclass
class SetBounds:
    """What :func:`supplier_set_bounds` finds.

    ``by_option``: per group, each option's bound. ``sets``: the supplier
    sets evaluated; ``floor[i]``: a lower bound on every design that buys
    from ``sets[i]`` alone, its fees included (the largest, over groups, of
    the least bound of an option through that set).
    """

    by_option: dict[str, np.ndarray]
    sets: list[frozenset[str]]
    floor: np.ndarray


def supplier_set_bounds(problem: Problem, threshold: float | None = None) -> SetBounds | None:
    """For each option, the least over supplier sets Y of Y's fees plus the parts bound buying from Y alone.

    A design buys from some set Y and pays its fees; its parts cost at least
    :func:`lower_bounds` computed with the offers of Y alone. So the least,
    over every Y, of the two bounds every design holding the option. Tighter
    than :func:`design_bounds`, which takes the two minima apart, and dearer
    to compute: every set is enumerated, in blocks of sets so that memory
    stays bounded (None above :data:`FEE_SUBSETS_MAX_SUPPLIERS` suppliers or
    :data:`SET_BOUNDS_MAX_CELLS` cells).

    A line's need is priced for a set Y as in :func:`option_costs`, with the
    offers of Y alone: a line of one group at the cheapest purchase of its
    units from the sellers in Y (:func:`cheapest_purchase`, splits and stock
    included), a line several groups share at its units times the lowest
    unit price in Y. The price depends only on which of the line's sellers
    Y holds, so it is computed once per subset of its sellers.

    With ``threshold``, only the sets whose fees plus the least parts bound
    of any option (:func:`lower_bounds`, every offer) stay within it are
    evaluated: through any other set every option's bound exceeds the
    threshold. A figure at or below the threshold is then the same as
    without it; one above it only says that the option's bound exceeds the
    threshold (which is all the threshold loop asks).
    """
    suppliers = sorted(problem.fees)
    n = len(suppliers)
    if n > FEE_SUBSETS_MAX_SUPPLIERS:
        return None
    n_sets = 1 << n
    children = [g for g, grp in problem.groups.items() if grp.parent is not None]
    cells = sum(len(grp) for grp in problem.groups.values()) + sum(len(c) for g in children for c in problem.groups[g].compat)
    fee = _set_fees(problem, suppliers)
    sets = np.arange(n_sets)
    needs = _all_needs(problem)
    links = {g: _Links.of(problem, g, classes=True) for g in children}
    users = _line_users(needs)
    keys: dict[tuple, int] = {}
    figures: list[np.ndarray] = []  # per key: its price for every supplier set
    pick: dict[str, tuple[np.ndarray, np.ndarray]] = {}  # per group: (option, key) of each of its needs
    ordered = tuple(suppliers)
    for g, (opt, ids, names, units) in needs.items():
        distinct, back = _distinct_needs(ids, units)
        key_of = np.empty(len(distinct), dtype=np.int64)
        for j, (i, q) in enumerate(distinct):
            line = names[i]
            key = (line, math.ceil(q)) if len(users[line]) == 1 else (line, q, "shared")
            if key not in keys:
                keys[key] = len(figures)
                figures.append(_over_sets_of(usable(problem.line_offers.get(line, [])), ordered, len(key) == 3, key[1]))
            key_of[j] = keys[key]
        pick[g] = (opt, key_of[back])
    table = np.array(figures).reshape(len(figures), n_sets)  # [key, Y]
    extra = {g: _weighted_changes(problem, g) for g in problem.groups}
    if threshold is not None:
        # The parts bound through the set of every supplier is the least over
        # all sets (each holds fewer offers): lower_bounds on the same links,
        # with the offers of the suppliers that have a fee.
        every = {g: _sum_rows(*pick[g], table[:, -1:], len(grp))[:, 0] + extra[g] for g, grp in problem.groups.items()}
        parts_floor = min((float(b.min()) for b in _tree_bounds(problem, every, links).values() if len(b)), default=math.inf)
        sets = np.flatnonzero(fee + parts_floor <= threshold)
    if cells * len(sets) > SET_BOUNDS_MAX_CELLS:
        return None
    cost = table[:, sets]
    fee = fee[sets]
    width = max(1, SET_BLOCK_CELLS // max(1, cells))
    out = {g: np.full(len(grp), np.inf) for g, grp in problem.groups.items()}
    floor = np.full(len(sets), -np.inf)
    for lo in range(0, len(sets), width):
        block = slice(lo, min(len(sets), lo + width))
        prices = cost[:, block]
        own = {g: _sum_rows(*pick[g], prices, len(grp)) + extra[g][:, None] for g, grp in problem.groups.items()}
        for g, bound in _tree_bounds(problem, own, links).items():
            if len(bound):
                through = bound + fee[block]
                out[g] = np.minimum(out[g], through.min(axis=1))
                floor[block] = np.maximum(floor[block], through.min(axis=0))
    return SetBounds(out, [frozenset(s for i, s in enumerate(suppliers) if (y >> i) & 1) for y in sets.tolist()], floor)


def _sum_rows(opt: np.ndarray, key: np.ndarray, cost: np.ndarray, n: int) -> np.ndarray:
    """Row o = the sum of ``cost[key[j]]`` over ``opt[j] == o`` (``opt`` ascending); zero for options with no line."""
    out = np.zeros((n, cost.shape[1]))
    if len(opt):
        starts = np.flatnonzero(np.r_[True, opt[1:] != opt[:-1]])
        out[opt[starts]] = np.add.reduceat(cost[key], starts, axis=0)
    return out


@functools.lru_cache(maxsize=1 << 12)
def _over_sets_of(rows: tuple, suppliers: tuple[str, ...], shared: bool, units: float) -> np.ndarray:
    """The price of one need for every supplier set (bit i: ``suppliers[i]``), from the line's usable offer rows.

    See :func:`supplier_set_bounds`; remembered across the threshold rounds (read-only).

    At most 4,096 tables of 2^suppliers prices: 32 MiB with 10 suppliers,
    128 MiB with :data:`FEE_SUBSETS_MAX_SUPPLIERS`; the medium benchmark
    uses 646 of them.
    """
    sellers = sorted({s for s, *_rest in rows if s in suppliers})
    mine = [r for r in rows if r[0] in suppliers]
    if shared or (0 < units <= EXACT_NEED_MAX and all(st >= units for *_r, st in mine)):
        # Each subset's price is its cheapest seller's own: units x least price
        # (shared), or one purchase on one break when every break holds the
        # need (cheapest_of_rows then prices each seller by that shortcut).
        # Built seller by seller: the subsets with seller j are those without
        # it, each min'd with j's price.
        table = np.full(1, np.inf)
        for s in sellers:
            theirs = tuple(r for r in mine if r[0] == s)
            own = units * min(p for _t, _low, p, _st in theirs) if shared else cheapest_of_rows(theirs, units)
            table = np.concatenate([table, np.minimum(table, own)])
    else:
        table = np.full(1 << len(sellers), np.inf)
        for sub in range(1, len(table)):  # a line of one group some break of which cannot hold the need
            held = {s for j, s in enumerate(sellers) if (sub >> j) & 1}
            table[sub] = cheapest_of_rows(tuple(r for r in rows if r[0] in held), units)
    sets = np.arange(1 << len(suppliers))
    index = np.zeros(len(sets), dtype=np.int64)
    for j, s in enumerate(sellers):
        index |= ((sets >> suppliers.index(s)) & 1) << j
    out = table[index]
    out.setflags(write=False)
    return out


def design_bounds(problem: Problem) -> dict[str, np.ndarray]:
    """For each option, a lower bound on the whole objective of a design holding it.

    :func:`lower_bounds` (parts and weighted changes) plus :func:`fee_floors`
    (order fees): the two bound different terms of the objective, so their
    sum bounds it.
    """
    needs = _all_needs(problem)
    parts = lower_bounds(problem, needs)
    fees = fee_floors(problem, needs)
    return {g: parts[g] + fees[g] for g in parts}


# --------------------------------------------------------------------------- dominance


def dominated(problem: Problem, rank: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Options no dominated option of their group is kept for; see the module docstring.

    ``rank`` is each option's place in the tie-break order. Pairs are compared
    within blocks of options that use the same roles with the same units and
    the same shared lines, and either the same private lines or, when the
    block is small enough, any private lines; every pair compared is checked
    in full, so the blocks only limit how much is found, never its exactness.
    Returns the kept options (indices, ascending) of each group.
    """
    users = _line_users(_all_needs(problem))
    kids = _children(problem)
    keep = {}
    for g, grp in problem.groups.items():
        view = _GroupView(problem, g, kids[g], users)
        drop = np.zeros(len(grp), dtype=bool)
        for a, b in view.candidate_pairs(rank[g]):
            hit = view.dominates(b, a)
            drop[a[hit]] = True
        keep[g] = np.flatnonzero(~drop)
    return keep


class _GroupView:
    """One group's options as arrays for pairwise dominance tests."""

    def __init__(self, problem: Problem, g: str, children: list[str], users: dict[str, set[str]]):
        grp = problem.groups[g]
        n = len(grp)
        self.problem, self.g, self.n = problem, g, n
        cols = [np.asarray(c.terms[g], float) * (1.0 if c.sense == ">=" else -1.0) for c in problem.couplings if g in c.terms]
        if g in problem.change_cost:
            cols.append(-np.asarray(problem.change_cost[g], float))
        self.better = np.stack(cols, axis=1) if cols else np.zeros((n, 0))
        self.cuts = np.array([[o in set(cut.get(g, ())) for cut in problem.forbidden] for o in range(n)], dtype=bool).reshape(n, -1)
        self.parent_sets = _packed_parent_sets(problem, g) if grp.parent is not None else None
        self.child_sets = [_packed_child_sets(problem, h) for h in children]
        self._usage(users)
        self.offers_memo: dict[tuple[int, int, int], bool] = {}
        self.rows_by_code: list[tuple | None] = [None] * len(self.line_names)

    def _usage(self, users: dict[str, set[str]]) -> None:
        """Per option: a block id (roles, units, shared lines) and its private lines in role order."""
        p, g = self.problem, self.g
        block_of: dict[tuple, int] = {}
        self.block = np.empty(self.n, dtype=np.int64)
        private_rows: list[tuple[str, ...]] = []
        needs: list[tuple[int, ...]] = []
        for o, usage in enumerate(p.groups[g].usage):
            items: dict[str, list] = {}
            for line, per_board, role in usage:
                item = items.setdefault(line, [0.0, role])
                item[0] += _units(p, per_board)
            ordered = sorted(items.items(), key=lambda kv: (kv[1][1], kv[0]))
            shared = tuple((line, q, r) if users[line] != {g} else ("", q, r) for line, (q, r) in ordered)
            block_of.setdefault(shared, len(block_of))
            self.block[o] = block_of[shared]
            private_rows.append(tuple(line for line, _ in ordered if users[line] == {g}))
            needs.append(tuple(math.ceil(q) for line, (q, _r) in ordered if users[line] == {g}))
        names = sorted({line for row in private_rows for line in row})
        code = {line: i for i, line in enumerate(names)}
        width = max((len(r) for r in private_rows), default=0)
        self.private = np.full((self.n, width), -1, dtype=np.int64)
        self.need = np.zeros((self.n, width), dtype=np.int64)
        for o, (row, need) in enumerate(zip(private_rows, needs)):
            self.private[o, : len(row)] = [code[line] for line in row]
            self.need[o, : len(need)] = need
        self.line_names = names
        self.line_key = np.unique(self.private, axis=0, return_inverse=True)[1].ravel() if width else np.zeros(self.n, dtype=np.int64)

    def candidate_pairs(self, rank: np.ndarray) -> Iterable[tuple[np.ndarray, np.ndarray]]:
        """(a, b) index arrays with b earlier in the tie-break order, in blocks of bounded size."""
        for block in _split(self.block):
            members = block if len(block) ** 2 <= BLOCK_PAIRS else None
            groups = [block] if members is not None else _split(self.line_key[block], block)
            for m in groups:
                for chunk in _chunks(m, BLOCK_PAIRS // max(len(m), 1)):
                    a = np.repeat(chunk, len(m))
                    b = np.tile(m, len(chunk))
                    later = rank[b] < rank[a]
                    yield a[later], b[later]

    def dominates(self, b: np.ndarray, a: np.ndarray) -> np.ndarray:
        """Whether option ``b[i]`` dominates option ``a[i]`` (same block, any rank)."""
        ok = np.all(self.better[b] >= self.better[a] - 1e-12, axis=1)
        if self.cuts.shape[1]:
            ok &= ~np.any(self.cuts[b] & ~self.cuts[a], axis=1)
        ok &= self._lines_ok(b, a, ok)
        if self.parent_sets is not None:
            ok[ok] = _subset(self.parent_sets, a[ok], b[ok])
        for sets in self.child_sets:
            ok[ok] = _subset(sets, a[ok], b[ok])
        return ok

    def _lines_ok(self, b: np.ndarray, a: np.ndarray, ok: np.ndarray) -> np.ndarray:
        """``ok`` where every private line of ``b`` is ``a``'s own or no dearer than it."""
        out = ok.copy()
        if not self.private.shape[1]:
            return out
        lb, la = self.private[b], self.private[a]
        rows, cols = np.nonzero((lb != la) & out[:, None])
        if not len(rows):
            return out
        better, worse, need = lb[rows, cols], la[rows, cols], self.need[a[rows], cols]
        # One int64 key per (better line, worse line, need) triple: a 1-D unique is
        # far cheaper than a row-wise one on large groups.
        n_lines, span = len(self.line_names) + 1, int(need.max()) + 1
        key = ((better + 1) * n_lines + (worse + 1)) * span + need
        _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        triples = zip(better[first].tolist(), worse[first].tolist(), need[first].tolist())
        fine = np.array([self._no_dearer(*t) for t in triples], dtype=bool)
        out[rows[~fine[inverse.ravel()]]] = False
        return out

    def _no_dearer(self, better: int, worse: int, need: int) -> bool:
        """:func:`line_no_dearer` of two private lines (by code), memoised."""
        key = (better, worse, need)
        found = self.offers_memo.get(key)
        if found is None:
            found = self.offers_memo[key] = rows_no_dearer(self._rows(better), self._rows(worse), need)
        return found

    def _rows(self, code: int) -> tuple:
        """:func:`usable` rows of a private line's offers (by code), once per line and view.

        A view asks for them once per (better, worse, need) triple it tests,
        tens of thousands of times for a few hundred lines; ``usable``'s own
        memo would copy and compare the offer list at each ask (on the
        medium benchmark's seed 3, a 3,000-option dominance pass: 85,000
        asks, a quarter of its time).
        """
        rows = self.rows_by_code[code]
        if rows is None:
            rows = self.rows_by_code[code] = usable(self.problem.line_offers.get(self.line_names[code], []))
        return rows


def _split(labels: np.ndarray, items: np.ndarray | None = None) -> list[np.ndarray]:
    """``items`` (default 0..n-1) grouped by equal ``labels``."""
    items = np.arange(len(labels)) if items is None else items
    order = np.argsort(labels, kind="stable")
    cuts = np.flatnonzero(np.diff(labels[order])) + 1
    return [items[part] for part in np.split(order, cuts)] if len(labels) else []


def _chunks(items: np.ndarray, size: int) -> list[np.ndarray]:
    size = max(size, 1)
    return [items[i : i + size] for i in range(0, len(items), size)]


def _packed_parent_sets(problem: Problem, g: str) -> np.ndarray:
    """Row per option of ``g``: the parent options it suits, as packed bits."""
    grp = problem.groups[g]
    parents, kids = compat_pairs(grp)
    bits = np.zeros((len(grp), len(problem.groups[grp.parent])), dtype=bool)
    bits[kids, parents] = True
    return np.packbits(bits, axis=1)


def _packed_child_sets(problem: Problem, child: str) -> np.ndarray:
    """Row per option of the parent group: the options of ``child`` that suit it, as packed bits."""
    grp = problem.groups[child]
    parents, kids = compat_pairs(grp)
    bits = np.zeros((len(problem.groups[grp.parent]), len(grp)), dtype=bool)
    bits[parents, kids] = True
    return np.packbits(bits, axis=1)


def _subset(sets: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Whether set ``a[i]`` is a subset of set ``b[i]`` (rows of packed bits)."""
    out = np.empty(len(a), dtype=bool)
    for part in _chunks(np.arange(len(a)), max(1, 50_000_000 // max(sets.shape[1], 1))):
        out[part] = ~np.any(sets[a[part]] & ~sets[b[part]], axis=1)
    return out


# --------------------------------------------------------------------------- pairs the couplings allow


def coupled_pairs(problem: Problem) -> list[tuple[str, str, np.ndarray, list[np.ndarray]]]:
    """Which options of two coupled groups can stand together, class by class.

    For two groups ``g`` (the larger) and ``h`` that share a coupling, option
    ``i`` of ``g`` and ``j`` of ``h`` can be in one design only if every
    coupling holding both is met with every other group at its most lenient
    coefficient (its largest one, in the ``>=`` sense). Every feasible design
    meets this, so rows built from it are valid; they tie the two groups'
    choices together option by option, where the coupling rows alone let a
    relaxation pair a stage with an op-amp that cannot drive it.

    Returns ``(g, h, cls, allowed)`` for every pair where some combination is
    ruled out: ``cls[i]`` is the class of option ``i`` of ``g`` (options that
    allow the same options of ``h``) and ``allowed[k]`` the options of ``h``
    that class ``k`` allows. The tolerance is the one of
    :func:`~partpick.optimize.milp.check_choice`.
    """
    norm = []
    for c in problem.couplings:
        sign = 1.0 if c.sense == ">=" else -1.0
        norm.append(({g: sign * np.asarray(v, float) for g, v in c.terms.items()}, sign * c.rhs))
    names = sorted({g for terms, _r in norm for g in terms}, key=lambda g: (-len(problem.groups[g]), g))
    out = []
    for a, g in enumerate(names):
        for h in names[a + 1:]:
            both = [(terms, rhs) for terms, rhs in norm if g in terms and h in terms]
            if not both or not len(problem.groups[g]) or not len(problem.groups[h]):
                continue
            need = np.array([rhs - sum(float(v.max()) for k, v in terms.items() if k not in (g, h) and len(v)) for terms, rhs in both])
            rows_g, inv_g = np.unique(np.stack([t[g] for t, _r in both], axis=1), axis=0, return_inverse=True)
            rows_h, inv_h = np.unique(np.stack([t[h] for t, _r in both], axis=1), axis=0, return_inverse=True)
            if len(rows_g) * len(problem.groups[h]) > MAX_PAIR_CELLS:
                continue  # too many to tabulate; the coupling rows alone still hold
            ok = np.ones((len(rows_g), len(rows_h)), dtype=bool)
            for c in range(len(both)):
                ok &= rows_g[:, c][:, None] + rows_h[:, c][None, :] >= need[c] - 1e-9
            if ok.all():
                continue
            per_option = ok[:, inv_h.ravel()]  # distinct rows of g x options of h
            packed, row_cls = np.unique(np.packbits(per_option, axis=1), axis=0, return_inverse=True)
            allowed = [np.flatnonzero(r[: len(problem.groups[h])]) for r in np.unpackbits(packed, axis=1).astype(bool)]
            out.append((g, h, row_cls.ravel()[inv_g.ravel()], allowed))
    return out
