"""What buying a line costs: its usable price breaks, the cheapest purchase, and when one line is no dearer.

The buying rules are the MILP's (:mod:`partpick.optimize.milp`): at most one
price break per supplier, each bought between its smallest quantity (the
break or the MOQ, whichever is larger) and the stock; order fees are left
to the caller.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Iterable
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:  # milp imports this module
    from partpick.optimize.milp import Offer

#: Needs above this many units are bounded by the cheapest unit price instead
#: of the exact cheapest purchase (which is computed over every quantity).
EXACT_NEED_MAX = 500


def smallest_qty(off: Offer) -> int:
    """The fewest units one purchase on a price break can be: its quantity or the MOQ, whichever is larger."""
    return max(off.min_qty, off.moq, 1)


#: :func:`usable`'s answers by the identity of the offer list asked about,
#: each with the offers it was computed from (see there); emptied when full.
_USABLE: dict[int, tuple[tuple, tuple]] = {}
_USABLE_MAX = 1 << 16


def usable(offers: Iterable[Offer]) -> tuple[tuple[str, int, float, int], ...]:
    """(supplier, smallest quantity, unit price, stock) of the offers that can be bought at all.

    The bounds ask this of the same lines' offer lists round after round, so
    an answer is remembered by the list's identity together with the offers
    it held; it is reused only while the list holds equal offers (the same
    objects, or offers with the same fields), so a list changed since, or a
    new list at a reused address, is computed afresh.
    """
    held = tuple(offers)
    seen = _USABLE.get(id(offers))
    if seen is not None and seen[0] == held:
        return seen[1]
    out = []
    for off in held:
        low = max(off.min_qty, off.moq, 1)  # smallest_qty, inline
        if low <= off.stock:
            out.append((off.supplier, low, off.unit_price, off.stock))
    rows = tuple(out)
    if len(_USABLE) >= _USABLE_MAX:
        _USABLE.clear()
    _USABLE[id(offers)] = (held, rows)
    return rows


def least_unit_price(offers: Iterable[Offer]) -> float:
    """The lowest unit price of the offers that can be bought at all (:func:`usable`); ``inf`` when none can."""
    return min((p for _s, _low, p, _st in usable(offers)), default=math.inf)


def cheapest_purchase(offers: list[Offer], need: int) -> float:
    """Lowest parts cost of at least ``need`` units of one line, order fees left out.

    At most one price break per supplier, each bought between its smallest
    quantity and its stock (the MILP's buying rules); when every break alone
    holds the need, the one cheapest purchase on a single break (see
    :func:`cheapest_of_rows`), otherwise a dynamic programme over suppliers
    on the units held (capped at ``need``). Above
    :data:`EXACT_NEED_MAX` units it returns the lower bound ``need x`` the
    cheapest unit price instead. ``inf`` when the stock cannot cover the need.
    """
    return cheapest_of_rows(usable(offers), int(need))


@functools.lru_cache(maxsize=1 << 14)
def cheapest_of_rows(rows: tuple[tuple[str, int, float, int], ...], need: int) -> float:
    """:func:`cheapest_purchase` of :func:`usable` offer rows, remembered: the bounds and
    the MILP's rows ask for the same purchase round after round."""
    if need <= 0:
        return 0.0
    if not rows:
        return math.inf
    if need > EXACT_NEED_MAX:
        return need * min(p for _s, _low, p, _st in rows) if sum(st for *_x, st in rows) >= need else math.inf
    if all(st >= need for *_x, st in rows):
        # Every break alone holds the need: one purchase on the break with the
        # least price x max(its smallest quantity, need) is cheapest. Any plan
        # buys q_i >= low_i on breaks with sum q_i >= need; with p_1 its least
        # price among them, it costs at least p_1 x sum q_i >= p_1 x max(low_1, need),
        # which break 1 alone buys (its stock holds both).
        return float(min(p * max(low, need) for _s, low, p, _st in rows))
    best = np.full(need + 1, np.inf)
    best[0] = 0.0
    held = np.arange(need + 1)[:, None]
    by_supplier: dict[str, list[tuple[int, float, int]]] = {}
    for s, low, p, st in rows:
        by_supplier.setdefault(s, []).append((low, p, st))
    for s in sorted(by_supplier):
        new = best.copy()
        for low, p, st in by_supplier[s]:
            q = np.arange(low, min(st, max(low, need)) + 1)[None, :]
            reach = np.minimum(need, held + q)
            np.minimum.at(new, reach.ravel(), (best[:, None] + p * q).ravel())
        best = new
    return float(best[need])


def line_no_dearer(better: list[Offer], worse: list[Offer], need: int) -> bool:
    """Whether every purchase of ``need`` units of line ``worse`` has one of ``better`` that costs no more.

    True when each usable break of ``worse`` (supplier s, smallest quantity
    m, price p, stock k) has a usable break of ``better`` at the same supplier
    with smallest quantity <= m, price <= p and stock >= min(k, need): each
    purchase then maps to the same quantity (or, when one break alone covers
    the need, to max(smallest quantity, need)) at the same suppliers.
    """
    return rows_no_dearer(usable(better), usable(worse), need)


@functools.lru_cache(maxsize=1 << 16)
def rows_no_dearer(better: tuple[tuple[str, int, float, int], ...], worse: tuple[tuple[str, int, float, int], ...], need: int) -> bool:
    """:func:`line_no_dearer` of :func:`usable` offer rows, remembered (dominance asks it of the same lines again and again)."""
    by_supplier: dict[str, list[tuple[int, float, int]]] = {}
    for s, low, p, st in better:
        by_supplier.setdefault(s, []).append((low, p, st))
    for s, low, p, st in worse:
        if not any(lb <= low and pb <= p and sb >= min(st, need) for lb, pb, sb in by_supplier.get(s, ())):
            return False
    return True


def useful_breaks(offers: list[Offer], need_max: int, extra: dict[str, float] | None = None) -> list[bool]:
    """Which of a line's price breaks some optimal purchase can use, when no plan counts more than ``need_max`` units.

    A break (smallest quantity m, MOQ included; unit cost c, its price plus
    ``extra[supplier]``, the MILP's sub-cent supplier preference) is left out
    when another break of the same supplier, with smallest quantity m2 and
    unit cost c2, holds ``u = max(need_max, m2)`` units in stock and
    ``u x c2 < m x c``: a purchase from the first costs at least ``m x c``,
    while the second buys the same useful units (at most ``need_max``, topped
    up to m2) for at most ``u x c2``. The supplier and its order fee stay the
    same, so any plan using a break left out costs strictly more than one
    using the other: no optimum changes. Above all this drops the high breaks
    far past the need. Breaks that cannot be bought at all (smallest quantity
    above the stock) are left out too.
    """
    extra = extra or {}
    rows = [(o.supplier, smallest_qty(o), o.unit_price + extra.get(o.supplier, 0.0), o.stock) for o in offers]
    # Per supplier, the least that any purchase of up to need_max useful units costs at most.
    ceiling: dict[str, list[tuple[float, int]]] = {}
    for j, (s, low, c, st) in enumerate(rows):
        units = max(need_max, low)
        if units <= st:
            ceiling.setdefault(s, []).append((units * c, j))
    keep = []
    for i, (s, low, c, st) in enumerate(rows):
        keep.append(low <= st and not any(j != i and most < low * c for most, j in ceiling.get(s, ())))
    return keep
