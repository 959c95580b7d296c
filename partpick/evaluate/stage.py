"""The output stage as configurations k = (rail option, output pair, Re value, bias feed).

Every configuration carries the numbers the other roles must meet (the
coupling attributes of the optimiser), its margins, and, when it fails, the
first failing constraint in the order of model sections 3, 5, 6, 7, 10
(model s.13). Everything is computed on whole arrays; there is no Python loop
over catalogue rows, only over the few rail options, resistor families and
heatsink mounting classes.

Conservative readings chosen where the model leaves a choice (also in the
issue notes):

- The load line ignores the drop across Re (Vce = Vs - v), which slightly
  overstates Vce.
- The bias-resistor power and its standing current use the lowest forward
  drop of the catalogue's bias diodes (most voltage across R1).
- The standing current a configuration reports (for the bias-diode rating and
  the regulator's heat) is the largest that any usable resistor family would
  give it.
- Capacitor voltage ratings are checked against the unregulated ``v_max`` even
  when a pre-regulator lowers the supply.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field, replace
from typing import ClassVar

import numpy as np
import pandas as pd

from partpick.errors import SizeLimitError
from partpick.evaluate.context import Pool, Targets, quiescent_a
from partpick.evaluate.distinct import distinct_rows
from partpick.model import bias, dissipation, eseries, regulator, soa, swing, thermal
from partpick.model.defaults import (
    BASE_DRIVE_MARGIN,
    RTH_CS_INSULATED_K_W,
    CCS_COMPLIANCE_V,
    DIODE_DROP_V,
    DVBE_DT_V_K,
    LOOP_GAIN_MAX,
    RE_MAX_OHM,
    RE_MIN_OHM,
    RESISTOR_POWER_MARGIN,
)
from partpick.spec import Spec, order_units

#: Smallest current a current-source feed is designed for [A] (common practice:
#: a few mA keeps the bias string's diodes conducting).
CCS_MIN_CURRENT_A = 0.005
#: Smallest voltage across the current-source emitter resistor [V] (common
#: practice: below a few hundred mV the current follows Vbe's spread).
CCS_MIN_RE_DROP_V = 0.3
#: Largest Ic rating of a pair considered for the current sources [A]: small-signal
#: and driver transistors, not output devices (common practice).
CCS_MAX_IC_A = 2.0
#: Most stage configurations (core configuration x bias feed) and bias-feed
#: resistor options one run builds. The medium benchmark has 123,392 and
#: 1,192,991 of them and peaks at 621 MiB through evaluation, assembly and the
#: optimiser's bounds, so these keep a run near 2 GiB; past either the run
#: stops with a :class:`~partpick.errors.SizeLimitError` saying what to change, instead of
#: exhausting the machine's memory (current sources multiply the core
#: configurations by every small pair and reference the catalogue holds).
STAGE_ROWS_MAX = 400_000
FEED_OPTIONS_MAX = 4_000_000
#: What a run past those limits suggests first when the spec lets partpick choose the feed.
RESISTOR_FEED_FIX = 'set bias_feed = "resistor" under [stage] in the spec'


@dataclass
class StageTable:
    """Feasible stage configurations and their coupling attributes.

    ``configs``: one row per feasible configuration k. ``rth_sa_max``: array
    [k, c] of the largest heatsink rating each configuration tolerates with
    Rth_cs class c (``rth_cs_classes[c]``). ``feed_options``: the bias-feed
    resistor lines per configuration. ``funnel``: constraint -> candidates it
    removed. ``rejected``: every infeasible candidate with ``rejected_by``.
    """

    configs: pd.DataFrame
    rth_sa_max: np.ndarray
    rth_cs_classes: list[float]
    feed_options: pd.DataFrame
    re_options: pd.DataFrame
    rails: pd.DataFrame
    pairs: pd.DataFrame
    funnel: dict[str, int]
    rejected: pd.DataFrame
    considered: int
    explain: _Explainer | None = None
    #: The cost threshold of a bounded table (:class:`FeedBound`): its current-source
    #: rows are only those whose cost bound is at or below it. None: every row.
    cost_bound: float | None = None
    #: The changed-roles level of a table built for a re-design (:class:`ChangeBound`):
    #: its current-source rows are only those with at most that many changes of their own.
    change_bound: float | None = None
    #: Core configurations whose current-source feeds a :class:`FeedBound` cut short
    #: (0: the table is the whole one).
    cut_cores: int = 0

    def reason(self, row: pd.Series | dict) -> str:
        """The sentence, with its numbers, for one row of ``rejected`` (built on demand)."""
        r = dict(row)
        return describe_rejection(r, self.explain) if self.explain is not None else str(r["rejected_by"])

    def with_reasons(self, rows: pd.DataFrame) -> pd.DataFrame:
        """``rows`` of ``rejected`` with a ``reason`` column."""
        return rows.assign(reason=[self.reason(r) for r in rows.to_dict("records")])


@dataclass
class _Explainer:
    """What the rejection sentences need beyond a rejected row's own numbers."""

    targets: Targets
    mode: str  # the spec's bias_feed
    vd_min: float  # lowest bias-diode drop [V]
    family_power_max_w: float  # best resistor-family rating [W]
    spec_current: float | None  # the spec's bias_source_current_a [A]


@dataclass
class _Sink:
    """What a configuration's heatsink limits depend on beyond its own numbers."""

    pairs: pd.DataFrame
    classes: list[float]  # Rth_cs mounting classes (NaN: the package default)
    n_dev: int  # output devices on one sink
    channels: int  # channels on one sink

    @functools.cached_property
    def devices(self) -> dict[str, tuple[np.ndarray, np.ndarray, np.ndarray]]:
        """Per side (``_n``, ``_p``), each pair's (Tj max, Rth_jc, default Rth_cs of its package)."""
        packages, of_pair = np.unique(self.pairs["package"].to_numpy(str), return_inverse=True)
        rth_cs = np.asarray(thermal.rth_cs_default_k_w(packages), float).reshape(-1)[of_pair.reshape(-1)]
        return {s: (self.pairs["tj_max_c" + s].to_numpy(float), self.pairs["rth_jc_k_w" + s].to_numpy(float), rth_cs)
                for s in ("_n", "_p")}


@dataclass
class _Feeds:
    """Core configurations expanded by bias feed (see :func:`_feeds`).

    A dataclass, not ``DataFrame.attrs``: pandas deep-copies ``attrs`` on
    every operation, and ``options`` runs to a million rows.
    """

    rows: pd.DataFrame  # one row per (core configuration, feed variant)
    options: pd.DataFrame  # feed-resistor lines, ``k`` indexing ``rows``
    rth: np.ndarray  # [row, class] sink limits of rows with sources on the sink (NaN elsewhere)
    unserved: np.ndarray  # core configurations no feed serves
    unserved_r1_max: np.ndarray  # their largest feed resistor [ohm] (NaN under current sources)
    above_bound: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))  # core configurations left without a feed by a FeedBound alone
    cut: int = 0  # core configurations some of whose feeds a FeedBound skipped at a finite bound


@dataclass
class SinkCosts:
    """The least a heatsink that suits a row's limits adds to the order, without pairing rows and heatsinks.

    A heatsink suits a row as :func:`~partpick.optimize.problem.assemble`
    pairs them: it mounts the output pair's package (and the current sources'
    package when they sit on it), holds the row's devices, and its Rth_sa is
    at or below the row's limit for the heatsink's mounting class. Per
    (class, packages, devices) the suitable heatsinks sorted by Rth_sa, with
    the running least cost, give every row's least by one binary search: no
    table of rows x heatsinks (a large catalogue would have hundreds of
    millions of pairs).
    """

    rth: np.ndarray  # Rth_sa per heatsink [K/W]
    class_i: np.ndarray  # its mounting class (index into the stage's rth_cs classes)
    holds: np.ndarray  # [heatsink, package code] it mounts that package
    max_devices: np.ndarray
    cost: np.ndarray  # a lower bound on what it adds to the order (inf: not buyable, or forbidden)
    packages: dict[str, int]  # package -> code
    core_package: np.ndarray  # per core configuration: its output pair's package code (-1: no heatsink mounts it)
    n_dev: int  # output devices on one sink
    channels: int  # channels on one sink (two sources each when they sit on it)
    # The core configurations' rows per package code, and the ladders per
    # (source package, devices, package): fixed by the fields above, and
    # asked for again at every source pair (hundreds on a large catalogue).
    _core_rows: list | None = field(default=None, repr=False, compare=False)
    _ladders: dict = field(default_factory=dict, repr=False, compare=False)

    def least(self, limits: np.ndarray, package: np.ndarray, source_package: int, devices: int) -> np.ndarray:
        """Per row: the least ``cost`` of a heatsink that suits it (inf: none).

        ``limits`` [row, class]; ``package`` per row (a code, -1: unknown);
        ``source_package``: the sources' package code on the sink, -1 for
        none (-2: a package no heatsink mounts).
        """
        out = np.full(len(package), np.inf)
        if source_package == -2 or not len(self.rth):
            return out
        for code, rows in self._rows_by_code(package):
            best = np.full(len(rows), np.inf)
            for c, rth, running in self._ladder(source_package, devices, code):
                # running[0] is inf: a limit below every Rth_sa of the class finds none.
                np.minimum(best, running[np.searchsorted(rth, limits[rows, c], side="right")], out=best)
            out[rows] = best
        return out

    def _rows_by_code(self, package: np.ndarray) -> list[tuple[int, np.ndarray]]:
        """(code, rows) of each package code >= 0 in ``package``, ascending; kept for the core configurations' own."""
        if package is self.core_package and self._core_rows is not None:
            return self._core_rows
        out = [(code, np.flatnonzero(package == code)) for code in np.unique(package[package >= 0]).tolist()]
        if package is self.core_package:
            self._core_rows = out
        return out

    def _ladder(self, source_package: int, devices: int, code: int) -> list[tuple[int, np.ndarray, np.ndarray]]:
        """Per mounting class c: the suitable heatsinks' Rth_sa ascending and the running least cost along it, after an inf.

        Suitable: it holds ``devices``, mounts package ``code`` and the
        sources' package (``source_package`` >= 0), and is of class c.
        """
        key = (source_package, devices, code)
        out = self._ladders.get(key)
        if out is None:
            ok = (self.max_devices >= devices) & self.holds[:, code]
            if source_package >= 0:
                ok &= self.holds[:, source_package]
            out = []
            for c in np.unique(self.class_i[ok]).tolist():
                m = np.flatnonzero(ok & (self.class_i == c))
                m = m[np.argsort(self.rth[m], kind="stable")]
                out.append((c, self.rth[m], np.concatenate(([np.inf], np.minimum.accumulate(self.cost[m])))))
            self._ladders[key] = out
        return out

    def own(self, limits: np.ndarray) -> np.ndarray:
        """Per core configuration: the least with its own ``limits`` [core, class] (no source on the sink)."""
        return self.least(limits, self.core_package, -1, self.n_dev)

    def with_sources(self, limits: np.ndarray, package: str) -> np.ndarray:
        """Per core configuration: the least with current sources of ``package`` on the sink."""
        return self.least(limits, self.core_package, self.packages.get(package, -2), self.n_dev + 2 * self.channels)


@dataclass
class FeeFloors:
    """Order fees that any design holding a core configuration and given current-source parts pays at least.

    With few suppliers (``ok`` given): the least fee of a supplier set that
    can sell the core configuration's lines and some option of every other
    group (``ok[key, set]``, the sets in ascending fee order) and also sells
    each source transistor and the reference. With many, the one-seller
    floor: the larger of the core's own floor and the cheapest fee of a
    seller of each source part. Both only leave out requirements, so they
    bound the fees from below, as :func:`~partpick.optimize.prune.fee_floors` does.
    """

    core: np.ndarray  # per core configuration: its floor with no source parts
    transistor_fee: np.ndarray  # per pool.transistors row: the cheapest fee of a seller (inf: none)
    diode_fee: np.ndarray  # per pool.diodes row
    key: np.ndarray | None = None  # per core configuration: its row of ``ok`` (-1: none)
    ok: np.ndarray | None = None  # [key, set]
    fee: np.ndarray | None = None  # per set, ascending
    sets: np.ndarray | None = None  # per set: its supplier bits
    transistor_mask: np.ndarray | None = None  # per pool.transistors row: its sellers' bits
    diode_mask: np.ndarray | None = None
    _seen: dict = field(default_factory=dict, repr=False, compare=False)  # floor by the source parts' seller bits

    def floor(self, npn_i: int, pnp_i: int, d_i: int) -> np.ndarray:
        """Per core configuration: the fees of a design with these source transistors and reference.

        With few suppliers the figure depends on the parts only through their
        sellers, so it is computed once per (sellers of each part) and
        returned read-only.
        """
        if self.ok is None:
            return np.maximum(self.core, max(self.transistor_fee[npn_i], self.transistor_fee[pnp_i], self.diode_fee[d_i]))
        masks = (int(self.transistor_mask[npn_i]), int(self.transistor_mask[pnp_i]), int(self.diode_mask[d_i]))
        out = self._seen.get(masks)
        if out is None:
            sets = self.sets
            req = ((sets & masks[0]) != 0) & ((sets & masks[1]) != 0) & ((sets & masks[2]) != 0)
            # Only the sets that sell the three parts, still in ascending fee order.
            out = first_fee(self.ok[:, req], self.fee[req], self.key)
            out.setflags(write=False)
            self._seen[masks] = out
        return out


def first_fee(ok: np.ndarray, fee: np.ndarray, key: np.ndarray) -> np.ndarray:
    """Per option: the fee of the first supplier set its ``key``'s row of ``ok`` holds (sets in ascending ``fee`` order).

    inf where the row holds none, or the key is -1.
    """
    first = np.where(ok.any(axis=1), fee[ok.argmax(axis=1)], np.inf) if ok.size else np.full(len(ok), np.inf)
    return np.where(key >= 0, first[np.maximum(key, 0)], np.inf) if len(first) else np.full(len(key), np.inf)


@dataclass
class FeedBound:
    """Which current-source feeds to build: those whose cost bound is at or below ``threshold``.

    A feed row (core configuration c, variant v) gets the bound
    ``core_lb[c] + parts(v)``: ``core_lb`` a lower bound on the cost of any
    design holding core configuration c with its feed's parts left out (from
    the relaxed table, :func:`evaluate_stage` with ``relaxed=True``), and
    ``parts(v)`` the variant's source transistors and reference at their
    least unit price (``transistor_price``, ``diode_price``: per catalogue
    row, ``inf`` when no supplier can sell it) times the units the order
    needs (per board times ``factor``, rounded as the optimiser rounds). The
    feed's resistors count as nothing. Rows above the threshold are not built:
    no design holding one costs less than its bound. Resistor feeds are all
    built.

    With ``sinks`` and ``fees`` (what :func:`~partpick.optimize.design.feed_bound`
    gives), ``core_lb`` is split into the parts without the heatsink
    (``core_parts``), the heatsink (``core_sink``, the least under the
    core's own limits) and the fees, and a row's bound is tighter:
    ``core_parts[c] + heatsink + fees(c, v) + parts(v)``. Its fees must
    also buy the source parts (:class:`FeeFloors`). Its heatsink is the least
    that suits the row: for sources in free air the core's own, for sources
    on the sink the least under ``sink_limits``, the limits with the sources'
    heat at the least current that can feed the core
    (:func:`~partpick.model.swing.ccs_current_required_a`). A real row's
    current is at least that, and more heat on the sink only lowers every
    limit, so no suitable heatsink is left out.
    """

    core_lb: np.ndarray  # per core configuration (the relaxed table's core_i); inf: no design
    threshold: float
    transistor_price: np.ndarray  # least unit price per pool.transistors row
    diode_price: np.ndarray  # least unit price per pool.diodes row
    factor: float  # boards x (1 + spares)
    core_parts: np.ndarray | None = None  # per core configuration: parts without the heatsink, fees left out
    core_sink: np.ndarray | None = None  # per core configuration: its least heatsink
    sinks: SinkCosts | None = None
    fees: FeeFloors | None = None
    #: Per source pair (npn row, pnp row): its least heatsink per core configuration with the
    #: sources on it (float32). Shared by the copies :func:`dataclasses.replace` makes for each threshold.
    sink_memo: dict = field(default_factory=dict, repr=False, compare=False)

    #: The funnel's entry for the core configurations left without a feed.
    label: ClassVar[str] = "feeds not built: cost bound above the search threshold"

    def units(self, per_board: float) -> float:
        return order_units(per_board, self.factor)

    def row_bound(self, s, d_i: int, per: int, channels: int, sink_cost: np.ndarray | None = None) -> np.ndarray:
        """The bound of every core configuration fed by source pair ``s`` and reference ``d_i`` (``per`` in series).

        ``sink_cost``: the sources sit on the heatsink, and this is
        :meth:`sink_cost`'s least heatsink per core; None: in free air.
        """
        parts = (self.units(channels) * (self.transistor_price[s.npn_i] + self.transistor_price[s.pnp_i])
                 + self.units(2 * channels * per) * self.diode_price[d_i])
        if self.sinks is None:
            return self.core_lb + parts
        sink = self.core_sink if sink_cost is None else sink_cost
        return self.core_parts + sink + self.fees.floor(s.npn_i, s.pnp_i, d_i) + parts

    def sink_cost(self, s, limits) -> np.ndarray:
        """Per core configuration: the least heatsink with source pair ``s`` on it.

        ``limits()`` gives the sink limits [core, class] at the sources' least
        heat (see the class); computed once per pair for every threshold.
        """
        key = (int(s.npn_i), int(s.pnp_i))
        kept = self.sink_memo.get(key)
        if kept is None:
            least = self.sinks.with_sources(limits(), s.package).astype(np.float32)
            # float32 rounds; its next value down keeps the bound at or below the float64 one (inf stays inf).
            kept = self.sink_memo[key] = np.where(np.isinf(least), np.float32(np.inf), np.nextafter(least, np.float32(-np.inf)))
        return kept.astype(float)

    @property
    def refined(self) -> bool:
        """Whether rows on the sink get their own heatsink (:meth:`sink_cost`)."""
        return self.sinks is not None


@dataclass
class ChangeBound:
    """Which current-source feeds a re-design builds: those with at most ``threshold`` changed roles of their own.

    A feed row (core configuration c, source pair and reference v) gets the
    bound ``core_lb[c] + changes(v)``: ``core_lb`` the output roles
    (``output_npn``, ``output_pnp``) whose part differs from the previous
    design's, and ``changes(v)`` the same for ``bias_source_transistor`` and
    ``bias_source_reference``. Each counts a role whose set of parts differs
    (or that the previous design did not have), so the bound is at most the
    design's changed roles, every other role counting 0. Rows above the
    threshold are not built: no design holding one changes fewer roles.
    Resistor feeds are all built.
    """

    core_lb: np.ndarray  # per core configuration
    threshold: float
    transistor_mpn: np.ndarray  # per pool.transistors row
    diode_mpn: np.ndarray  # per pool.diodes row
    source_pair: frozenset[str] | None  # the previous design's source transistors; None: it had none
    reference: frozenset[str] | None  # its reference parts; None: it had none

    label: ClassVar[str] = "feeds not built: more changed roles than the search level"

    refined: ClassVar[bool] = False  # no heatsink in the count

    def row_bound(self, s, d_i: int, per: int, channels: int, sink_cost: np.ndarray | None = None) -> np.ndarray:
        pair = frozenset((self.transistor_mpn[s.npn_i], self.transistor_mpn[s.pnp_i]))
        own = float(pair != self.source_pair) + float(frozenset((self.diode_mpn[d_i],)) != self.reference)
        return self.core_lb + own


# --------------------------------------------------------------------------- rails


def rail_options(spec: Spec, pool: Pool, targets: Targets) -> tuple[pd.DataFrame, dict[str, int]]:
    """Unregulated rail and, for ``single`` with a pre-regulator allowed, every regulator set point.

    Columns: rail_min_v, rail_max_v (the per-half Vs), span_min_v, span_max_v
    (the op-amp's total supply), regulated, reg_mpn, reg_family, reg_r1_ohm,
    reg_r2_ohm, vout_v, reg_rth_ja_k_w, reg_tj_limit_c. Returns the options and
    the regulator funnel.
    """
    sup = spec.supply
    half = 0.5 if sup.arrangement == "single" else 1.0
    rows = []
    if sup.regulate != "always":
        rows.append(
            dict(
                rail_min_v=sup.v_min * half, rail_max_v=sup.v_max * half,
                span_min_v=2 * sup.v_min * half, span_max_v=2 * sup.v_max * half,
                regulated=False, reg_mpn=None, reg_family=None, reg_r1_ohm=np.nan,
                reg_r2_ohm=np.nan, vout_v=np.nan, reg_rth_ja_k_w=np.nan, reg_tj_limit_c=np.nan,
            )
        )
    funnel: dict[str, int] = {}
    if sup.arrangement == "single" and sup.regulate != "never":
        rows += _regulated_rails(spec, pool, targets, funnel)
    return pd.DataFrame(rows), funnel


def _regulated_rails(spec: Spec, pool: Pool, targets: Targets, funnel: dict[str, int]) -> list[dict]:
    sup = spec.supply
    regs = pool.regulators
    i_pk = regulator.regulator_current_peak_a(targets.channels, targets.i_peak_a)
    checks = {
        "regulator input rating (vin_max_v)": regulator.vin_max_margin_v(regs["vin_max_v"], sup.v_max) >= 0,
        "regulator peak current (iout_max_a)": regulator.regulator_current_margin_a(regs["iout_max_a"], i_pk) >= 0,
    }
    ok = np.ones(len(regs), dtype=bool)
    for name, passed in checks.items():
        funnel[name] = int((ok & ~np.asarray(passed)).sum())
        ok &= np.asarray(passed)
    set_families = pool.passives[
        (pool.passives["kind"] == "resistor") & pool.passives["series"].isin(["E24", "E48", "E96", "E192"])
    ]
    lowest = 2.0 * targets.v_peak_v  # no rail below the signal peak can pass section 3
    rows = []
    n_dropout = 0
    for reg in regs[ok].itertuples(index=False):
        top = sup.v_min - reg.dropout_v
        common = dict(
            regulated=True, reg_mpn=reg.mpn, reg_rth_ja_k_w=reg.rth_ja_k_w,
            reg_tj_limit_c=reg.tj_max_c - spec.thermal.tj_derate_c,
        )
        if reg.kind == "fixed":
            if reg.vout_v > top:
                n_dropout += 1
                continue
            rows.append(_rail_row(reg.vout_v, reg_family=None, r1=np.nan, r2=np.nan, **common))
            continue
        grid = regulator.set_point_grid_v(max(lowest, reg.vref_v), top)
        if grid.size == 0:
            n_dropout += 1
            continue
        iadj = 0.0 if math.isnan(reg.iadj_a) else reg.iadj_a
        for fam in set_families.itertuples(index=False):
            r1, r2, vout, _ = regulator.set_pair(grid, reg.vref_v, iadj, fam.series)
            r1, r2, vout = np.atleast_1d(r1), np.atleast_1d(r2), np.atleast_1d(vout)
            fits = (vout <= top + 1e-9) & (r2 <= fam.value_max) & (r1 >= fam.value_min) & (r2 >= fam.value_min)
            seen: set[float] = set()
            for a, b, v in zip(r1[fits], r2[fits], vout[fits]):
                key = round(float(v), 6)
                if key in seen:
                    continue
                seen.add(key)
                rows.append(_rail_row(float(v), reg_family=fam.family, r1=float(a), r2=float(b), **common))
    funnel["regulator dropout at v_min"] = n_dropout
    return rows


def _rail_row(vout: float, reg_family, r1: float, r2: float, **common) -> dict:
    return dict(
        rail_min_v=vout / 2.0, rail_max_v=vout / 2.0, span_min_v=vout, span_max_v=vout,
        reg_family=reg_family, reg_r1_ohm=r1, reg_r2_ohm=r2, vout_v=vout, **common,
    )


# --------------------------------------------------------------------------- pairs


def pair_options(pool: Pool, pairing: str) -> pd.DataFrame:
    """NPN/PNP pairs: listed complements (either direction), or any two of one package."""
    tr = pool.transistors
    npn = tr[tr["polarity"] == "npn"]
    pnp = tr[tr["polarity"] == "pnp"]
    if pairing == "any":
        pairs = npn.reset_index().merge(pnp.reset_index(), on="package", suffixes=("_n", "_p"))
    else:
        a = npn.reset_index().merge(
            pnp.reset_index(), left_on="complement", right_on="mpn", suffixes=("_n", "_p")
        )
        b = npn.reset_index().merge(
            pnp.reset_index(), left_on="mpn", right_on="complement", suffixes=("_n", "_p")
        )
        pairs = pd.concat([a, b]).drop_duplicates(subset=["mpn_n", "mpn_p"])
        pairs = pairs[pairs["package_n"] == pairs["package_p"]].rename(columns={"package_n": "package"})
    pairs = pairs.rename(columns={"index_n": "npn_i", "index_p": "pnp_i"})
    pairs = pairs.sort_values(["mpn_n", "mpn_p"]).reset_index(drop=True)
    return pairs


def _pair_worst(pairs: pd.DataFrame, targets: Targets) -> dict[str, np.ndarray]:
    ip = targets.i_peak_a
    both = lambda f: np.minimum(f("_n"), f("_p"))  # noqa: E731
    worst = lambda f: np.maximum(f("_n"), f("_p"))  # noqa: E731
    col = lambda name: (lambda s: pairs[name + s].to_numpy(float))  # noqa: E731
    return dict(
        vce_sat_v=worst(lambda s: swing.vce_sat_at_v(col("vce_sat_v")(s), col("vce_sat_at_a")(s), ip)),
        vbe_v=worst(lambda s: swing.vbe_at_v(col("vbe_on_v")(s), col("vbe_on_at_a")(s), ip)),
        hfe=both(lambda s: swing.hfe_at(col("hfe_min")(s), col("hfe_at_a")(s), ip)),
        vceo_v=both(col("vceo_v")),
        ic_max_a=both(col("ic_max_a")),
        hfe_at_a=both(col("hfe_at_a")),
    )


def _soa_utilisation(pool: Pool, pairs: pd.DataFrame, rails: pd.DataFrame, spec: Spec, targets: Targets) -> np.ndarray:
    """Largest Ic / I_soa,25C over the load line (and the short-circuit point), [pair, rail].

    The SOA margin at case temperature Tc is 1 - u / derating(Tc), so the stage
    passes at every Tc with derating(Tc) >= u (model s.5). Only the devices of
    some pair, the distinct rail voltages and the samples where the device
    conducts are evaluated: the others cannot change the maximum.
    """
    tr = pool.transistors
    devices, device_of = np.unique(np.concatenate([pairs["npn_i"].to_numpy(int), pairs["pnp_i"].to_numpy(int)]), return_inverse=True)
    sub = tr.iloc[devices]
    bp_v, bp_a = soa.pad_curves([(np.array(v), np.array(a)) if len(v) else None for v, a in zip(sub["soa_v"], sub["soa_a"])])
    rail_values, rail_of = np.unique(rails["rail_max_v"].to_numpy(float), return_inverse=True)
    vce, ic = soa.load_line(rail_values, targets.v_peak_v, targets.i_peak_a, targets.phase_rad)  # [R, S]
    conducting = np.flatnonzero((ic > 0).any(axis=0))
    vce, ic = vce[:, conducting], ic[:, conducting]
    if spec.output.short_circuit:
        vce = np.concatenate([vce, rail_values[:, None]], axis=1)
        ic = np.concatenate([ic, np.full((len(rail_values), 1), targets.i_peak_a)], axis=1)
    # Limit for every device at every rail's samples: [D, R, S].
    limit = soa.soa_current_limit_a(
        np.broadcast_to(vce, (len(sub),) + vce.shape),
        bp_v, bp_a, sub["ic_max_a"].to_numpy(float), sub["pd_max_w"].to_numpy(float), sub["vceo_v"].to_numpy(float),
    )
    util = np.max(np.where(ic > 0, ic / np.maximum(limit, 1e-12), 0.0), axis=-1)[:, rail_of]  # [D, R]
    n = len(pairs)
    return np.maximum(util[device_of[:n]], util[device_of[n:]])


# --------------------------------------------------------------------------- Re


def re_options(pool: Pool, targets: Targets) -> pd.DataFrame:
    """(family, Re value) options: low-ohm resistor values in 0.1..1 ohm rated for 2 x P_Re."""
    rows = []
    too_weak = 0
    for fam in pool.passives[pool.passives["kind"] == "resistor"].itertuples(index=False):
        lo, hi = max(RE_MIN_OHM, fam.value_min), min(RE_MAX_OHM, fam.value_max)
        if lo > hi * (1 + 1e-9):
            continue
        values = eseries.series_values(fam.series, lo, hi)
        p = bias.re_power_w(targets.i_peak_a, values)
        for v, pw in zip(values, np.atleast_1d(p)):
            if fam.power_w >= RESISTOR_POWER_MARGIN * pw:
                rows.append(dict(family=fam.family, value_ohm=float(v), power_w=float(pw), rating_w=fam.power_w))
            else:
                too_weak += 1
    out = pd.DataFrame(rows, columns=["family", "value_ohm", "power_w", "rating_w"])
    out.attrs["too_weak"] = too_weak
    return out


# --------------------------------------------------------------------------- the table


#: The funnel's entry for core configurations a :class:`FeedBound` left without a feed.
ABOVE_BOUND = FeedBound.label
#: The funnel's entry for those of them with an infinite bound: no design holds them, fed
#: by anything (the relaxed table, fed by nothing, has none; a whole table would count
#: them under the bias feed, or build feeds no design can use).
NO_DESIGN_ANY_FEED = "no design with it, whatever its feed (cost bound)"

FIRST_FAIL_ORDER = (
    "transistor headroom (s.3)",
    "driver reach (s.3)",
    "bias feed (s.3)",
    "Vceo breakdown (s.5)",
    "Ic max (s.5)",
    "SOA (s.5)",
    "thermal: no heatsink can hold Tj, SOA and loop gain (s.6, s.7)",
    "regulator heat (s.10)",
)


@dataclass
class StageCores:
    """The core configurations (rail x pair x Re) that pass their own checks, before any bias feed.

    What every feed expansion of :func:`evaluate_stage` starts from; ``core``
    is None when there is no rail, pair or Re value at all.
    """

    rails: pd.DataFrame
    pairs: pd.DataFrame
    res: pd.DataFrame
    funnel: dict[str, int]  # removals so far (copied by each evaluation)
    core: pd.DataFrame | None
    rth_max: np.ndarray | None  # [core, class] the core's own heatsink limits
    rejected: pd.DataFrame | None  # core candidates that failed, with rejected_by
    sink: _Sink | None
    vd_min: float
    considered: int


def stage_cores(spec: Spec, pool: Pool, targets: Targets) -> StageCores:
    """The core configurations and their own checks (model s.3, 5, 6, 7), shared by every feed expansion."""
    rails, reg_funnel = rail_options(spec, pool, targets)
    pairs = pair_options(pool, spec.output.pairing)
    res = re_options(pool, targets)
    re_values = np.unique(res["value_ohm"].to_numpy(float)) if len(res) else np.array([])
    n_r, n_p, n_e = len(rails), len(pairs), len(re_values)
    funnel = {f"regulator: {k}": v for k, v in reg_funnel.items()}
    if n_r == 0:
        funnel["no rail option"] = 1
    if n_p == 0:
        funnel["no output pair (complements or packages)"] = 1
    if n_r * n_p * n_e == 0:
        return StageCores(rails, pairs, res, funnel, None, None, None, None, DIODE_DROP_V, n_r * n_p * n_e)

    # Core grid: rail x pair x Re, flattened.
    ri, pi_, ei = (g.ravel() for g in np.meshgrid(np.arange(n_r), np.arange(n_p), np.arange(n_e), indexing="ij"))
    w = _pair_worst(pairs, targets)
    vp, ip = targets.v_peak_v, targets.i_peak_a
    rail_min = rails["rail_min_v"].to_numpy(float)[ri]
    rail_max = rails["rail_max_v"].to_numpy(float)[ri]
    span_max = rails["span_max_v"].to_numpy(float)[ri]
    re = re_values[ei]
    iq = quiescent_a(spec, re)
    vd_min = float(pool.diodes.loc[pool.diodes["kind"] == "diode", "vf_v"].min()) if (pool.diodes["kind"] == "diode").any() else DIODE_DROP_V

    head = swing.transistor_headroom_margin_v(rail_min, vp, ip, re, w["vce_sat_v"][pi_])
    base_pk = swing.base_voltage_peak_v(vp, ip, re, w["vbe_v"][pi_])
    # The op-amp must reach base_pk - Vd within its swing headroom; its best case
    # (no headroom, the largest diode drop) is a filter here, the rest a coupling.
    vd_max = float(pool.diodes.loc[pool.diodes["kind"] == "diode", "vf_v"].max()) if (pool.diodes["kind"] == "diode").any() else DIODE_DROP_V
    reach = rail_min - (base_pk - vd_max)
    ib_pk = swing.base_current_peak_a(ip, w["hfe"][pi_])
    vceo_m = soa.vceo_margin_v(w["vceo_v"][pi_], span_max)
    ic_m = soa.ic_max_margin_a(w["ic_max_a"][pi_], ip)
    util = _soa_utilisation(pool, pairs, rails, spec, targets)[pi_, ri]

    # Thermal: the largest Rth_sa per mounting class (model s.13).
    per_sink = targets.channels if spec.thermal.shared_heatsink else 1
    p_dev = dissipation.worst_case_device_dissipation_w(rail_max, targets.z_min_ohm, targets.phase_rad, iq)
    classes = sorted({float(x) for x in pool.heatsinks["rth_cs_k_w"].dropna()}) + [math.nan]
    sink = _Sink(pairs, classes, 2 * per_sink, per_sink)

    core = pd.DataFrame(
        dict(
            rail_i=ri, pair_i=pi_, re_ohm=re, rail_min_v=rail_min, rail_max_v=rail_max,
            span_min_v=rails["span_min_v"].to_numpy(float)[ri], span_max_v=span_max,
            iq_a=iq, headroom_v=head, base_peak_v=base_pk, reach_v=reach, ib_peak_a=ib_pk,
            vceo_margin_v=vceo_m, ic_margin_a=ic_m, soa_util=util, p_device_w=p_dev,
            vce_sat_v=w["vce_sat_v"][pi_], vbe_v=w["vbe_v"][pi_], hfe=w["hfe"][pi_],
            vceo_v=w["vceo_v"][pi_], ic_max_a=w["ic_max_a"][pi_],
        )
    )
    rth_max = _stage_rth(spec, _stage_columns(core), sink)
    core["rth_sa_best_k_w"] = np.nanmax(rth_max, axis=1)
    thermal_ok = core["rth_sa_best_k_w"].to_numpy() > 0
    core_checks = {
        "transistor headroom (s.3)": head >= 0,
        "driver reach (s.3)": reach >= 0,
        "Vceo breakdown (s.5)": vceo_m >= 0,
        "Ic max (s.5)": ic_m >= 0,
        "SOA (s.5)": util <= 1.0,
        "thermal: no heatsink can hold Tj, SOA and loop gain (s.6, s.7)": thermal_ok,
    }
    core_rejected, core_ok = _first_fail(core, core_checks, funnel)
    core = core[core_ok].reset_index(drop=True)
    rth_max = rth_max[core_ok]
    return StageCores(rails, pairs, res, funnel, core, rth_max, core_rejected, sink, vd_min, n_r * n_p * n_e)


def evaluate_stage(spec: Spec, pool: Pool, targets: Targets, *, relaxed: bool = False,
                   feed_bound: FeedBound | ChangeBound | None = None, cores: StageCores | None = None) -> StageTable:
    """Every stage configuration with its margins; the feasible ones with coupling numbers.

    ``relaxed``: one row per core configuration instead, fed by no parts
    (feed ``"any"``, no standing current, the core's own heatsink limits, a
    bias-feed option with no lines): every constraint of a real row of that
    core holds for it, so a design's cost with it bounds from below the cost
    of any design with that core and any feed (what :class:`FeedBound` needs).
    ``feed_bound``: build only the current-source rows under its threshold
    (a :class:`FeedBound` sets the table's ``cost_bound``, a
    :class:`ChangeBound` its ``change_bound``).
    ``cores``: :func:`stage_cores` of the same spec, pool and targets, when
    the caller has it (a bounded search evaluates feeds several times).
    """
    c = cores if cores is not None else stage_cores(spec, pool, targets)
    if c.core is None:
        return _empty(c.rails, c.pairs, c.res, dict(c.funnel), c.considered)
    rails, pairs, res, core, rth_max, sink, vd_min = c.rails, c.pairs, c.res, c.core, c.rth_max, c.sink, c.vd_min
    funnel = dict(c.funnel)
    core_rejected, classes = c.rejected, sink.classes

    fed = _relaxed_feeds(core, sink) if relaxed else _feeds(spec, pool, targets, core, vd_min, sink, feed_bound)
    feeds = fed.rows
    core_i = feeds["core_i"].to_numpy().astype(int)
    k = core.iloc[core_i].reset_index(drop=True)
    k["core_i"] = core_i
    for name in ("feed", "ccs_n_i", "ccs_p_i", "ref_i", "ref_per_source", "standing_a", "ccs_mount", "ccs_package", "sink_devices"):
        k[name] = feeds[name].to_numpy()
    own = fed.rth
    rth_k = np.where(np.isnan(own), rth_max[core_i], own)
    k["rth_sa_best_k_w"] = np.nanmax(rth_k, axis=1)
    unserved = fed.unserved
    funnel["bias feed (s.3)"] = int(len(unserved))
    if feed_bound is not None:
        # Not rejected by a constraint: their feeds were not built (the bound).
        above = fed.above_bound
        if isinstance(feed_bound, FeedBound):
            hopeless = int(np.count_nonzero(~np.isfinite(np.asarray(feed_bound.core_lb, float)[above])))
            funnel[NO_DESIGN_ANY_FEED] = hopeless
            funnel[feed_bound.label] = int(len(above)) - hopeless
        else:
            funnel[feed_bound.label] = int(len(above))
    feed_rejected = core.iloc[unserved].copy()
    feed_rejected["rejected_by"] = "bias feed (s.3)"
    feed_rejected["r1_max_ohm"] = fed.unserved_r1_max

    # Regulator heat (model s.10), when the rail comes from a regulator.
    reg = rails.iloc[k["rail_i"].to_numpy()]
    regulated = reg["regulated"].to_numpy(bool)
    i_avg = regulator.regulator_current_avg_a(targets.channels, targets.i_peak_a, targets.channels * (k["iq_a"] + k["standing_a"]).to_numpy())
    p_reg = np.where(regulated, regulator.regulator_dissipation_w(spec.supply.v_max, reg["vout_v"].to_numpy(float), i_avg), 0.0)
    tj_reg = regulator.regulator_junction_temp_c(spec.thermal.ambient_c, p_reg, reg["reg_rth_ja_k_w"].to_numpy(float))
    reg_margin = np.where(regulated, reg["reg_tj_limit_c"].to_numpy(float) - tj_reg, np.inf)
    k["p_regulator_w"] = p_reg
    k["regulator_tj_margin_c"] = reg_margin
    ok = reg_margin >= 0
    # The funnel counts core configurations: one is removed here when none of its feeds survives.
    funnel["regulator heat (s.10)"] = int(len(np.setdiff1d(core_i, core_i[ok])))
    k, rth_k = k[ok].reset_index(drop=True), rth_k[ok]
    feed_opts = fed.options
    feed_opts = _remap(feed_opts, np.flatnonzero(ok))
    k["key"] = _keys(k, rails, pairs)

    rejected = pd.concat([core_rejected, feed_rejected], ignore_index=True)
    fams = pool.passives[pool.passives["kind"] == "resistor"]
    explain = _Explainer(targets, spec.stage.bias_feed, vd_min, float(fams["power_w"].max()) if len(fams) else 0.0,
                         spec.stage.bias_source_current_a)
    return StageTable(
        configs=k, rth_sa_max=rth_k, rth_cs_classes=classes, feed_options=feed_opts,
        re_options=res, rails=rails, pairs=pairs, funnel=funnel, rejected=rejected,
        considered=c.considered, explain=explain,
        cost_bound=feed_bound.threshold if isinstance(feed_bound, FeedBound) else None,
        change_bound=feed_bound.threshold if isinstance(feed_bound, ChangeBound) else None,
        cut_cores=fed.cut,
    )


_STAGE_RTH_COLUMNS = ("p_device_w", "soa_util", "rail_max_v", "re_ohm", "iq_a")


def _stage_columns(core: pd.DataFrame) -> dict[str, np.ndarray]:
    """The core configurations' columns :func:`_stage_rth` reads, as arrays (taken once for many calls)."""
    return {"pair_i": core["pair_i"].to_numpy(int), **{c: core[c].to_numpy(float) for c in _STAGE_RTH_COLUMNS}}


def _stage_rth(spec: Spec, cols: dict[str, np.ndarray], sink: _Sink, p_extra_w: np.ndarray | float = 0.0,
               rows: np.ndarray | None = None) -> np.ndarray:
    """Largest Rth_sa of every core configuration (or of ``rows`` of them) per mounting class [row, class].

    ``cols``: the core configurations' :func:`_stage_columns`.
    ``p_extra_w`` is heat on the sink beyond the output devices' (the current
    sources when they are mounted there), one value per row computed.
    """
    pick = (lambda a: a) if rows is None else (lambda a: a[rows])  # noqa: E731
    pi_ = pick(cols["pair_i"])
    col = lambda name: pick(cols[name])  # noqa: E731
    limits = [
        _rth_sa_max(spec, sink.devices, pi_, col("p_device_w"), sink.n_dev, col("soa_util"), col("rail_max_v"),
                    col("re_ohm"), col("iq_a"), c, p_extra_w)
        for c in sink.classes
    ]
    return np.stack(limits, axis=1) if len(pi_) else np.zeros((0, len(sink.classes)))


def _rth_sa_max(spec, devices, pi_, p_dev, n_dev, util, rail_max, re, iq, rth_cs_class, p_extra_w=0.0) -> np.ndarray:
    """Largest Rth_sa keeping Tj, the derated SOA and the loop gain for each device of the pair.

    The loop gain (model s.7) counts the output devices only: heat on the sink
    that does not follow their current does not feed the loop.
    """
    amb = spec.thermal.ambient_c
    out = np.full(len(pi_), np.inf)
    for s in ("_n", "_p"):
        tj_all, rth_jc_all, rth_cs_all = devices[s]  # per pair: _Sink.devices
        tj_max, rth_jc = tj_all[pi_], rth_jc_all[pi_]
        if math.isnan(rth_cs_class):
            rth_cs = rth_cs_all[pi_]
        else:
            rth_cs = np.full(len(pi_), rth_cs_class)
        p_sink = n_dev * p_dev + p_extra_w
        tj_lim = tj_max - spec.thermal.tj_derate_c
        by_tj = thermal.required_rth_sa_k_w(tj_lim, amb, p_dev, rth_jc, rth_cs, p_sink)
        tc_soa = tj_max - util * (tj_max - 25.0)
        by_soa = np.where(util <= 1.0, (tc_soa - amb - p_dev * rth_cs) / p_sink, -np.inf)
        limit = np.minimum(by_tj, by_soa)
        if not spec.stage.bias_tracking:
            re_small = 0.026 / iq
            theta_max = LOOP_GAIN_MAX * (re + re_small) / (rail_max * DVBE_DT_V_K)
            by_loop = (theta_max - rth_jc - rth_cs) / n_dev
            limit = np.minimum(limit, by_loop)
        out = np.minimum(out, limit)
    return out


def _relaxed_feeds(core: pd.DataFrame, sink: _Sink) -> _Feeds:
    """One feed per core configuration that needs no parts and nothing of the other roles (``relaxed``)."""
    n = len(core)
    idx = np.arange(n)
    rows = pd.DataFrame(dict(core_i=idx, feed="any", ccs_n_i=-1, ccs_p_i=-1, ref_i=-1, ref_per_source=0,
                             standing_a=0.0, ccs_mount="", ccs_package="", sink_devices=sink.n_dev))
    options = pd.DataFrame(dict(k=idx, family="", kind="none", v1=np.nan, v2=np.nan, p1_w=np.nan, p2_w=np.nan))
    return _Feeds(rows=rows, options=options, rth=np.full((n, len(sink.classes)), np.nan),
                  unserved=np.zeros(0, np.int64), unserved_r1_max=np.zeros(0))


def _feeds(spec: Spec, pool: Pool, targets: Targets, core: pd.DataFrame, vd_min: float, sink: _Sink,
           bound: FeedBound | ChangeBound | None = None) -> _Feeds:
    """Expand core configurations by bias feed; attach the feed-resistor options.

    ``rows`` has one row per (core config, feed variant) that some resistor
    family can build, with ``standing_a`` and the current-source mounting;
    ``options`` lists the feed-resistor lines (compat with the expanded rows),
    ``rth`` the heatsink limits [row, class] of rows whose current sources sit
    on the heatsink (NaN elsewhere: the core configuration's own limits hold),
    ``unserved`` the core configurations no feed can serve, ``above_bound``
    those left without one because ``bound`` skipped some of their
    current-source feeds (whether those would have served is not known).
    """
    fams = pool.passives[pool.passives["kind"] == "resistor"].reset_index(drop=True)
    mode = spec.stage.bias_feed
    rows = _Pieces(["core_i", "feed", "ccs_n_i", "ccs_p_i", "ref_i", "ref_per_source", "standing_a", "ccs_mount", "ccs_package", "sink_devices"])
    options = _Pieces(["k", "family", "kind", "v1", "v2", "p1_w", "p2_w"])
    rth: list[np.ndarray] = []
    n = len(core)
    n_cls = len(sink.classes)
    rail_min = core["rail_min_v"].to_numpy(float)
    rail_max = core["rail_max_v"].to_numpy(float)
    base_pk = core["base_peak_v"].to_numpy(float)
    ib = core["ib_peak_a"].to_numpy(float)
    offset = 0
    r1_max = swing.bias_resistor_max_ohm(rail_min, base_pk, ib)
    if mode in ("resistor", "auto"):
        best_i = np.zeros(n)
        per_fam = []
        # Families of one E-series and value range give the same R1 and power; only their rating tells them apart.
        by_range: dict[tuple, tuple[np.ndarray, np.ndarray]] = {}
        for f in fams.itertuples(index=False):
            key = (f.series, f.value_min, f.value_max)
            if key not in by_range:
                r1 = np.asarray(eseries.next_down(np.where(np.isfinite(r1_max), r1_max, f.value_max), f.series, f.value_min, f.value_max), float)
                by_range[key] = (r1, swing.bias_resistor_power_w(rail_max, vd_min, base_pk, r1))
            r1, p = by_range[key]
            fits = np.isfinite(r1) & np.isfinite(r1_max) & (f.power_w >= RESISTOR_POWER_MARGIN * p)
            standing = np.where(fits, swing.bias_standing_current_a(rail_max, vd_min, r1), 0.0)
            best_i = np.maximum(best_i, standing)
            per_fam.append((f, r1, p, fits))
        served = best_i > 0
        idx = np.flatnonzero(served)
        pos = -np.ones(n, dtype=int)
        pos[idx] = offset + np.arange(len(idx))
        rows.add(len(idx), core_i=idx, feed="resistor", ccs_n_i=-1, ccs_p_i=-1, ref_i=-1, ref_per_source=0,
                 standing_a=best_i[idx], ccs_mount="", ccs_package="", sink_devices=sink.n_dev)
        rth.append(np.full((len(idx), n_cls), np.nan))
        for f, r1, p, fits in per_fam:
            ks = np.flatnonzero(fits)
            options.add(len(ks), k=pos[ks], family=f.family, kind="bias_resistor", v1=r1[ks], v2=np.nan, p1_w=p[ks], p2_w=np.nan)
        offset += len(idx)
        res_ok = served
    else:
        res_ok = np.zeros(n, dtype=bool)
    ccs_ok = np.zeros(n, dtype=bool)
    skipped = np.zeros(n, dtype=bool)  # some current-source feed left out by the bound
    cut = np.zeros(n, dtype=bool)  # ... at a finite bound: a higher threshold would build it
    if mode in ("current_source", "auto"):
        n_opts = options.length
        for idx, frame, n_new, make_options, limits in _ccs_variants(spec, pool, targets, core, fams, sink, bound, skipped, cut):
            n_opts += n_new
            if offset + len(idx) > STAGE_ROWS_MAX or n_opts > FEED_OPTIONS_MAX:
                raise SizeLimitError(_too_many_feeds(mode, n, pool))
            opts = make_options()
            k = offset + opts.pop("row")
            options.add(len(k), **opts, k=k)
            rows.add(len(idx), **frame, core_i=idx)
            rth.append(np.full((len(idx), n_cls), np.nan) if limits is None else limits)
            offset += len(idx)
            ccs_ok[idx] = True
    served = res_ok | ccs_ok
    above = skipped & ~served
    unserved = np.flatnonzero(~served & ~above)
    return _Feeds(
        rows=rows.frame(),
        options=options.frame(),
        rth=np.concatenate(rth) if rth else np.zeros((0, n_cls)),
        unserved=unserved,
        unserved_r1_max=r1_max[unserved] if mode != "current_source" else np.full(len(unserved), np.nan),
        above_bound=np.flatnonzero(above),
        cut=int(cut.sum()),
    )


class _Pieces:
    """A table's columns gathered piece by piece, made into one frame at the end.

    One frame of every piece's arrays instead of a frame per piece and a
    concatenation: a large catalogue's current-source feeds come in hundreds
    of pieces. A piece's scalar stands for a column of that one value. The
    frame's columns are in the order the first piece names them (``columns``
    when there is none), as a concatenation of the pieces' frames would have
    them.
    """

    def __init__(self, columns: list[str]) -> None:
        self.columns = columns
        self.parts: dict[str, list[np.ndarray]] = {c: [] for c in columns}
        self.length = 0

    def add(self, n: int, **values) -> None:
        if not self.parts[self.columns[0]]:  # the first piece names the order
            assert set(values) == set(self.columns), sorted(values)
            self.columns = list(values)
        for c in self.columns:
            v = values[c]
            if isinstance(v, str):
                # fill() keeps the one str object; np.full would make a copy of it per row.
                column = np.empty(n, dtype=object)
                column.fill(v)
            else:
                column = v if isinstance(v, np.ndarray) else np.full(n, v)
            self.parts[c].append(column)
        self.length += n

    def frame(self) -> pd.DataFrame:
        if not self.parts[self.columns[0]]:
            return pd.DataFrame(columns=self.columns)
        cols = {}
        for c in self.columns:
            # Each column's pieces are let go as it is joined: the whole table is not held twice over.
            cols[c] = np.concatenate(self.parts[c])
            self.parts[c] = []
        # A text column of no rows: text all the same, as a piece's frame makes of its scalar.
        empty_text = {c: "str" for c, a in cols.items() if a.dtype == object and not len(a)}
        frame = pd.DataFrame(cols, copy=False)
        del cols
        return frame.astype(empty_text) if empty_text else frame


def _ccs_variants(spec: Spec, pool: Pool, targets: Targets, core: pd.DataFrame, fams: pd.DataFrame, sink: _Sink,
                  bound: FeedBound | ChangeBound | None = None, skipped: np.ndarray | None = None, cut: np.ndarray | None = None):
    """Current-source feeds (model s.3 (a')): small complementary pair x reference x mounting.

    Yields ``(core rows served, variant columns, resistor option count, resistor
    options, sink limits)``: the columns a dict for :class:`_Pieces`, the options a
    callable giving theirs, ``row`` indexing the rows served.
    A source transistor sits either in free air (its junction from Rth_ja) or,
    when its package has an insulated mounting, on the channel's heatsink:
    then the pair of sources adds :func:`~partpick.model.swing.ccs_pair_sink_heat_w`
    to the sink, every output device's limits are recomputed with that heat,
    and the source's own junction and SOA limit the sink too; the sink must
    also mount its package and hold two more devices per channel.

    Conservative readings (also in the issue notes): each source dissipates
    ``2 * Vs_max * I_ccs`` at its junction (model s.3, the peak when the base
    sits at the far rail), its SOA is checked at ``Vce = 2 * Vs_max`` at the
    case temperature that peak gives; in free air the case is taken at the
    junction temperature; the sink limits of a variant are computed at the
    largest current any usable resistor family gives it; the free-air Rth_ja
    is the larger of the pair's two; the source's current is bracketed
    (:func:`~partpick.model.swing.ccs_current_bounds_a`, Vbe rising with the
    current): the base drive is checked at the lower bound, heat, reference
    loading and the bias-diode rating at the upper one.

    With a ``bound``, a (core configuration, pair, reference) whose
    :class:`FeedBound` or :class:`ChangeBound` bound is above the threshold is not built, and marked
    in ``skipped``, and in ``cut`` too when its bound is finite (an infinite
    one: the relaxed table has no design with that core, or a part has no
    usable offer, so no threshold builds it).
    """
    small, refs = _ccs_candidates(pool)
    rail_min, rail_max, i_need, i_req, compliance, span = _ccs_needs(spec, core)
    core_cols = _stage_columns(core)
    amb = spec.thermal.ambient_c
    low = _LowHeat.of(spec, core, sink, core_cols) if bound is not None and bound.refined else None
    family = fams["family"].to_numpy(object)
    power_w = fams["power_w"].to_numpy(float)
    # Families of one E-series and value range give the same resistor values
    # and currents; only their power rating tells them apart. Everything per
    # feed variant below is computed once per such group, on the rows that
    # can be built at all (``ix``).
    groups = fams.groupby(["series", "value_min", "value_max"], sort=False, dropna=False).indices
    series_keys = list(groups)
    series_members = [np.asarray(m, dtype=np.int64) for m in groups.values()]
    group_of = np.empty(len(fams), dtype=np.int64)
    for g, members in enumerate(series_members):
        group_of[members] = g
    strongest = np.array([power_w[m].max() for m in series_members])
    points = _worst_points(rail_max)
    keys = _FeedKeys.of_rows(i_req, i_need, rail_min, rail_max)
    for s in small.itertuples(index=False):
        dev = _ccs_device(s, spec, rail_max, points)
        vceo_ok = soa.vceo_margin_v(dev["vceo_v"], span) >= 0
        mounts = _source_mounts(s.package)
        vbe_key = dev["vbe"](keys.i_req)
        low_sink = (bound.sink_cost(s, lambda dev=dev: low.limits(spec, sink, dev))
                    if low is not None and "heatsink" in mounts else None)
        for d_i, per, vref, if_max in refs:
            room = (vref - vbe_key >= CCS_MIN_RE_DROP_V)[keys.row_key]
            mount_room = {mount: room for mount in mounts}
            if bound is not None:
                for mount in mounts:
                    lb = bound.row_bound(s, d_i, per, targets.channels, low_sink if mount == "heatsink" else None)
                    left_out = room & (lb > bound.threshold)
                    skipped |= left_out
                    cut |= left_out & np.isfinite(lb)
                    mount_room[mount] = room & ~left_out
                room = np.logical_or.reduce([mount_room[m] for m in mounts])
            if not room.any():
                continue
            ix = np.flatnonzero(room & compliance & vceo_ok)
            if not len(ix) or not series_keys:
                continue
            # The figures below depend on a row only through its key: one
            # column per key present in ix (``at`` maps ix's rows to them).
            present, at = keys.present(ix)
            dev_key = keys.device(dev, present)
            r_min, r_max, need = keys.rail_min[present], keys.rail_max[present], keys.i_need[present]
            # One row per (E-series, value range) group, one column per key.
            r_e_wanted = swing.ccs_emitter_resistor_ohm(vref, vbe_key[present], keys.i_req[present])
            r_e = np.stack([np.asarray(eseries.next_down(r_e_wanted, *key), float) for key in series_keys])
            with np.errstate(divide="ignore", invalid="ignore"):
                i_lo, i_act = dev["current"](vref, r_e)
                i_ref = swing.ccs_reference_current_a(i_act, dev["hfe"](i_act))
                r_ref_wanted = swing.ccs_reference_resistor_ohm(r_min, vref, i_ref)
                r_ref = np.stack([np.asarray(eseries.next_down(r_ref_wanted[g], *key), float) for g, key in enumerate(series_keys)])
                i_ref_max = (r_max - vref) / r_ref
                p_e = i_act**2 * r_e
                p_ref = (r_max - vref) ** 2 / r_ref
            built = (
                np.isfinite(r_e) & np.isfinite(r_ref) & (i_lo >= need)
                & (i_act <= dev["ic_max_a"]) & (i_ref_max <= if_max)
            )
            p_most = np.maximum(p_e, p_ref)
            # A group's families differ only by rating: some family of it fits where its strongest one does.
            fits = built & (RESISTOR_POWER_MARGIN * p_most <= strongest[:, None])
            free_air_ok = _ccs_thermal_ok(dev_key, "free_air", r_max, i_act, amb) if "free_air" in mounts else None
            for mount in mounts:
                # In free air each source's junction and SOA must hold; on the sink they join the sink limits.
                sound = free_air_ok if mount == "free_air" else True
                # The largest current a fitting group gives each key, then each row of ix it may feed.
                most = np.max(np.where(fits & sound, i_act, 0.0), axis=0, initial=0.0)
                best = np.where(mount_room[mount][ix], most[at], 0.0)
                limits = None
                if mount == "heatsink":
                    # Only rows a source can feed need the sink limits; the others stay unserved.
                    cand = np.flatnonzero(best > 0)
                    limits = np.full((len(ix), len(sink.classes)), -np.inf)
                    current = np.zeros(len(core))
                    current[ix] = best
                    limits[cand] = _ccs_sink_limits(spec, core_cols, sink, dev, rail_max, current, ix[cand])
                    best = np.where(np.nanmax(limits, axis=1) > 0, best, 0.0)
                kept = np.flatnonzero(best > 0)
                if not len(kept):
                    continue
                idx = ix[kept]
                pos = -np.ones(len(ix), dtype=int)
                pos[kept] = np.arange(len(kept))
                frame = dict(
                    feed="current_source", ccs_n_i=int(s.npn_i), ccs_p_i=int(s.pnp_i), ref_i=int(d_i), ref_per_source=per,
                    standing_a=best[kept], ccs_mount=mount, ccs_package=s.package if mount == "heatsink" else "",
                    sink_devices=sink.n_dev + (2 * sink.channels if mount == "heatsink" else 0),
                )
                # (family, row of ix) of every resistor option, by family and then row, as the families are listed.
                fed = (built & sound)[:, at] & (best > 0)
                fam_at, row_at = [], []
                for g, members in enumerate(series_members):
                    ok = fed[g][None, :] & (power_w[members][:, None] >= RESISTOR_POWER_MARGIN * p_most[g][at][None, :])
                    m_i, r_i = np.nonzero(ok)
                    fam_at.append(members[m_i])
                    row_at.append(r_i)
                fam_at, row_at = np.concatenate(fam_at), np.concatenate(row_at)
                order = np.argsort(fam_at, kind="stable")
                fam_at, row_at = fam_at[order], row_at[order]
                grp_at, key_at = group_of[fam_at], at[row_at]

                def options(fam_at=fam_at, row_at=row_at, grp_at=grp_at, key_at=key_at, pos=pos, r_e=r_e, r_ref=r_ref, p_e=p_e,
                            p_ref=p_ref) -> dict:
                    return dict(
                        row=pos[row_at], family=family[fam_at], kind="ccs_resistors",
                        v1=r_e[grp_at, key_at], v2=r_ref[grp_at, key_at], p1_w=p_e[grp_at, key_at], p2_w=p_ref[grp_at, key_at],
                    )

                yield idx, frame, len(fam_at), options, (None if limits is None else limits[kept])


@dataclass(frozen=True)
class _FeedKeys:
    """The distinct (required current, least current, rails) of the core configurations, and each configuration's.

    Every figure of a current-source variant other than its masks depends on
    a core configuration through these alone (its resistors, currents,
    powers and free-air checks; model s.3 (a')), so each is computed once
    per key and read back by row. The large benchmark catalogue's 70,776
    configurations have 93 keys: one rail pair, and one current per output
    pair's base drive.
    """

    i_req: np.ndarray  # per key: the current the sources are designed for [A]
    i_need: np.ndarray  # per key: the least current that drives the base [A]
    rail_min: np.ndarray  # per key [V]
    rail_max: np.ndarray  # per key [V]
    row_key: np.ndarray  # per core configuration: its key
    first: np.ndarray  # per key: a configuration that has it

    @classmethod
    def of_rows(cls, i_req: np.ndarray, i_need: np.ndarray, rail_min: np.ndarray, rail_max: np.ndarray) -> _FeedKeys:
        columns = [np.asarray(c, float) for c in (i_req, i_need, rail_min, rail_max)]
        # Each row's rank among the distinct rows in lexicographic order, one column at a
        # time and kept dense (no overflow); far faster than np.unique over rows (axis=0).
        code = np.zeros(len(i_req), dtype=np.int64)
        for c in columns:
            values, of = np.unique(c, return_inverse=True)
            code = np.unique(code * len(values) + of.ravel(), return_inverse=True)[1].ravel()
        _keys, first, row_key = np.unique(code, return_index=True, return_inverse=True)
        return cls(*(c[first] for c in columns), row_key.ravel(), first)

    def present(self, rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """``(keys, at)``: the keys of ``rows`` ascending, and each row's place among them."""
        held = np.zeros(len(self.first), dtype=bool)
        held[self.row_key[rows]] = True
        place = np.cumsum(held) - 1
        return np.flatnonzero(held), place[self.row_key[rows]]

    def device(self, dev: dict, keys: np.ndarray | None = None) -> dict:
        """:func:`_ccs_device`'s figures with its per-row SOA limit taken per key (of ``keys``, all when None); it depends on the rail alone."""
        first = self.first if keys is None else self.first[keys]
        return {**dev, "soa_2vs_a": dev["soa_2vs_a"][first]}


@dataclass
class _LowHeat:
    """What a :class:`FeedBound`'s sink limits need: the sources' heat at the least current that can feed each core.

    A real row's current is at least :func:`~partpick.model.swing.ccs_current_required_a`
    (its checked lower bound meets it), and every limit falls as heat rises.
    """

    cols: dict[str, np.ndarray]  # the cores' _stage_columns
    rail_max: np.ndarray
    i_a: np.ndarray
    outputs: np.ndarray  # [core, class] the output devices' limits with that heat (laid out class by class)
    heat: tuple[np.ndarray, ...]  # the cores' _source_heat at that current

    @classmethod
    def of(cls, spec: Spec, core: pd.DataFrame, sink: _Sink, cols: dict[str, np.ndarray] | None = None) -> _LowHeat:
        cols = cols if cols is not None else _stage_columns(core)
        _rail_min, rail_max, i_a, *_rest = _ccs_needs(spec, core)
        heat = _source_heat(cols, sink, rail_max, i_a)
        outputs = np.ascontiguousarray(_stage_rth(spec, cols, sink, heat[0]).T).T
        return cls(cols, rail_max, i_a, outputs, heat)

    def limits(self, spec: Spec, sink: _Sink, dev: dict) -> np.ndarray:
        """[core, class] with a pair ``dev`` of sources on the sink."""
        return _ccs_sink_limits(spec, self.cols, sink, dev, self.rail_max, self.i_a, None, outputs=self.outputs, heat=self.heat)


def feed_row_bounds(spec: Spec, pool: Pool, targets: Targets, cores: StageCores, bound: FeedBound, configs: pd.DataFrame) -> np.ndarray:
    """The bound ``bound`` gives each row of ``configs`` (a stage table's rows; a resistor feed: its core's bound).

    What :func:`_ccs_variants` compares with the threshold, row by row (for
    checks of the bounds against the MILP).
    """
    core_i = configs["core_i"].to_numpy(int)
    out = bound.core_lb[core_i].astype(float)
    ccs = np.flatnonzero((configs["feed"] == "current_source").to_numpy())
    if not len(ccs):
        return out
    small, _refs = _ccs_candidates(pool)
    low = _LowHeat.of(spec, cores.core, cores.sink) if bound.refined else None
    rail_max = cores.core["rail_max_v"].to_numpy(float)
    points = _worst_points(rail_max)
    sub = configs.iloc[ccs]
    for (n_i, p_i), idx in sub.groupby(["ccs_n_i", "ccs_p_i"]).indices.items():
        s = next(x for x in small.itertuples(index=False) if int(x.npn_i) == n_i and int(x.pnp_i) == p_i)
        rows = ccs[idx]
        on_sink = (configs["ccs_mount"].to_numpy()[rows] == "heatsink")
        dev = _ccs_device(s, spec, rail_max, points)
        cost = bound.sink_cost(s, lambda: low.limits(spec, cores.sink, dev)) if low is not None and on_sink.any() else None
        for (d_i, per, mount), at in configs.iloc[rows].groupby(["ref_i", "ref_per_source", "ccs_mount"]).indices.items():
            b = bound.row_bound(s, int(d_i), int(per), targets.channels, cost if mount == "heatsink" else None)
            out[rows[at]] = b[core_i[rows[at]]]
    return out


def candidate_bounds(spec: Spec, pool: Pool, targets: Targets, cores: StageCores, bound: FeedBound) -> np.ndarray:
    """The bounds of the current-source rows ``bound`` could build, ascending: to choose thresholds by table size.

    A row counts when its pair, reference and mounting pass their own checks
    at the least current that can feed its core (:func:`_candidate_rows`);
    the resistor families' checks are left out. So the count under a
    threshold is at least the number of current-source rows a table at that
    threshold has.
    """
    core, sink = cores.core, cores.sink
    low = _LowHeat.of(spec, core, sink) if core is not None and bound.refined else None
    out: list[np.ndarray] = []
    sink_cost, last = None, None
    for s, dev, d_i, per, mount, ok in _candidate_rows(spec, pool, cores):
        if mount == "heatsink" and low is not None and last is not s:
            sink_cost, last = bound.sink_cost(s, lambda dev=dev: low.limits(spec, sink, dev)), s
        lb = bound.row_bound(s, d_i, per, targets.channels, sink_cost if mount == "heatsink" else None)[ok]
        out.append(lb[np.isfinite(lb)])
    return np.sort(np.concatenate(out)) if out else np.zeros(0)


def candidate_rows(spec: Spec, pool: Pool, cores: StageCores) -> int:
    """How many current-source rows the whole stage table can have at most (:func:`_candidate_rows`, no cost bounds): cheap to count."""
    return int(sum(int(ok.sum()) for *_rest, ok in _candidate_rows(spec, pool, cores)))


def _candidate_rows(spec: Spec, pool: Pool, cores: StageCores):
    """Per current-source pair, reference and mounting: ``(pair row, device, reference row, per source, mounting, core mask)``.

    The mask holds the core configurations the three pass their own checks
    with, at the least current that can feed each core (compliance, Vceo,
    the reference's room, the free-air junction and SOA); a table's rows of
    that pair, reference and mounting lie among them.
    """
    core = cores.core
    if core is None or spec.stage.bias_feed == "resistor":
        return
    small, refs = _ccs_candidates(pool)
    rail_min, rail_max, i_need, i_req, compliance, span = _ccs_needs(spec, core)
    points = _worst_points(rail_max)
    keys = _FeedKeys.of_rows(i_req, i_need, rail_min, rail_max)
    for s in small.itertuples(index=False):
        dev = _ccs_device(s, spec, rail_max, points)
        base = compliance & (soa.vceo_margin_v(dev["vceo_v"], span) >= 0)
        if not base.any():
            continue
        mounts = _source_mounts(s.package)
        vbe_key = dev["vbe"](keys.i_req)
        free_ok = (_ccs_thermal_ok(keys.device(dev), "free_air", keys.rail_max, keys.i_need, spec.thermal.ambient_c)[keys.row_key]
                   if "free_air" in mounts else None)
        for d_i, per, vref, _if_max in refs:
            room = base & (vref - vbe_key >= CCS_MIN_RE_DROP_V)[keys.row_key]
            for mount in mounts:
                yield s, dev, d_i, per, mount, (room & free_ok if mount == "free_air" else room)


def _ccs_needs(spec: Spec, core: pd.DataFrame) -> tuple[np.ndarray, ...]:
    """Per core configuration, what its current sources must meet.

    ``(rail_min, rail_max, i_need, i_req, compliance, span)``: the rails
    [V]; the least current that drives the base at its peak and the current
    the sources are designed for (the spec's, or at least
    :data:`CCS_MIN_CURRENT_A`) [A]; whether the rail leaves the compliance
    (model s.3 (a')); the span the source transistors' Vceo must stand [V].
    """
    rail_min = core["rail_min_v"].to_numpy(float)
    i_need = swing.ccs_current_required_a(core["ib_peak_a"].to_numpy(float))
    fixed = spec.stage.bias_source_current_a
    i_req = np.full(len(core), fixed) if fixed is not None else np.maximum(i_need, CCS_MIN_CURRENT_A)
    compliance = swing.ccs_compliance_margin_v(rail_min, core["base_peak_v"].to_numpy(float)) >= 0
    return rail_min, core["rail_max_v"].to_numpy(float), i_need, i_req, compliance, core["span_max_v"].to_numpy(float)


def _source_mounts(package: str) -> tuple[str, ...]:
    """Where a current-source pair of ``package`` can sit: in free air, and on the heatsink when the package mounts insulated."""
    return ("free_air", "heatsink") if package in RTH_CS_INSULATED_K_W else ("free_air",)


def _ccs_candidates(pool: Pool) -> tuple[pd.DataFrame, list[tuple[int, int, float, float]]]:
    """Current-source pairs (small complementary pairs) and references (diode row, per source, Vref, If max)."""
    small = pair_options(pool, "complement")
    # Small-signal and driver pairs serve as current sources; power pairs do not.
    small = small[np.maximum(small["ic_max_a_n"], small["ic_max_a_p"]) <= CCS_MAX_IC_A].reset_index(drop=True)
    refs = []
    for d in pool.diodes.itertuples(index=True):
        per = 1 if d.kind == "led" else 2
        refs.append((d.Index, per, per * d.vf_v, d.if_max_a))
    return small, refs


def _too_many_feeds(mode: str, n_core: int, pool: Pool) -> str:
    """Why a run stops at :data:`STAGE_ROWS_MAX`, with the numbers and what to change."""
    small, refs = _ccs_candidates(pool)
    fix = f"{RESISTOR_FEED_FIX}, or " if mode == "auto" else ""
    return (
        f"the current-source bias feed gives more than {STAGE_ROWS_MAX:,} stage configurations "
        f"or {FEED_OPTIONS_MAX:,} feed-resistor options: "
        f"{n_core:,} output-stage configurations, each fed by any of {len(small):,} small complementary pairs "
        f"x {len(refs)} references x their mountings; partpick cannot optimise that many in one run. "
        f"To go on, {fix}keep fewer small-signal complementary pairs (Ic max <= {CCS_MAX_IC_A:g} A) in the catalogue"
    )


def _worst_points(rail_max: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``(vce, of_row)``: the distinct ``Vce = 2 Vs_max`` of the rows' ``rail_max`` ascending, and each row's index into them.

    What :func:`_ccs_device` needs of the rails; a caller that asks for many
    source pairs over the same rows computes it once (on a large catalogue
    the rows run to tens of thousands and the pairs to hundreds).
    """
    return np.unique(2.0 * np.asarray(rail_max, float), return_inverse=True)


def _ccs_device(s, spec: Spec, rail_max: np.ndarray, points: tuple[np.ndarray, np.ndarray] | None = None) -> dict:
    """The worse of a current-source pair's two devices, figure by figure.

    ``soa_2vs_a``: its SOA current limit at ``Vce = 2 Vs_max`` for each row's
    ``rail_max`` (its worst point), computed once per distinct rail.
    ``points``: :func:`_worst_points` of ``rail_max``, when the caller has it.
    """
    pick = lambda name, f: f(getattr(s, name + "_n"), getattr(s, name + "_p"))  # noqa: E731
    curves = [(np.array(getattr(s, "soa_v" + x)), np.array(getattr(s, "soa_a" + x))) if len(getattr(s, "soa_v" + x)) else None for x in ("_n", "_p")]
    bp_v, bp_a = soa.pad_curves(curves)
    vce, of_row = _worst_points(rail_max) if points is None else points
    tj_max = pick("tj_max_c", min)
    return dict(
        vbe=lambda i: np.maximum(swing.vbe_at_v(s.vbe_on_v_n, s.vbe_on_at_a_n, i), swing.vbe_at_v(s.vbe_on_v_p, s.vbe_on_at_a_p, i)),
        current=lambda vref, r_e: ccs_pair_current_bounds_a(vref, r_e, (s.vbe_on_v_n, s.vbe_on_at_a_n), (s.vbe_on_v_p, s.vbe_on_at_a_p)),
        hfe=lambda i: np.minimum(swing.hfe_at(s.hfe_min_n, s.hfe_at_a_n, i), swing.hfe_at(s.hfe_min_p, s.hfe_at_a_p, i)),
        vceo_v=pick("vceo_v", min), ic_max_a=pick("ic_max_a", min), tj_max_c=tj_max,
        tj_limit_c=tj_max - spec.thermal.tj_derate_c, rth_jc_k_w=pick("rth_jc_k_w", max),
        rth_ja_k_w=ccs_rth_ja_k_w(s.rth_ja_k_w_n, s.rth_ja_k_w_p, s.package),
        package=s.package,
        soa_2vs_a=np.min(soa.soa_current_limit_a(vce[None, :], bp_v, bp_a, np.array([s.ic_max_a_n, s.ic_max_a_p]),
                                                 np.array([s.pd_max_w_n, s.pd_max_w_p]), np.array([s.vceo_v_n, s.vceo_v_p])),
                         axis=0)[of_row],
    )


def ccs_pair_current_bounds_a(v_ref_v, r_e_ohm, *vbe_data: tuple[float, float]) -> tuple[np.ndarray, np.ndarray]:
    """(least lower bound, largest upper bound) of a source pair's currents (:func:`swing.ccs_current_bounds_a`)."""
    bounds = [swing.ccs_current_bounds_a(v_ref_v, r_e_ohm, v, at) for v, at in vbe_data]
    return np.minimum.reduce([b[0] for b in bounds]), np.maximum.reduce([b[1] for b in bounds])


def _ccs_soa_util(dev: dict, i_a: np.ndarray) -> np.ndarray:
    """Ic / I_soa,25C of a source transistor at ``Vce = 2 Vs_max`` (its worst point), row by row."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(i_a > 0, i_a / np.maximum(dev["soa_2vs_a"], 1e-12), 0.0)


def _ccs_thermal_ok(dev: dict, mount: str, rail_max: np.ndarray, i_a: np.ndarray, amb: float) -> np.ndarray:
    """Free air: junction and SOA of a source transistor; on the sink this is left to the sink limits."""
    if mount == "heatsink":
        return np.ones(len(i_a), dtype=bool)
    p_t = swing.ccs_transistor_dissipation_w(rail_max, i_a)
    tj = swing.ccs_junction_temp_c(amb, p_t, dev["rth_ja_k_w"])
    derate = soa.derating_factor(dev["tj_max_c"], tj)
    return (tj <= dev["tj_limit_c"]) & (_ccs_soa_util(dev, i_a) <= derate)


def _source_heat(core: dict[str, np.ndarray], sink: _Sink, rail_max: np.ndarray, i_a: np.ndarray,
                 rows: np.ndarray | None = None) -> tuple[np.ndarray, ...]:
    """What sources on the sink put there, row by row, whatever the source pair: ``(extra, p_sink, p_t)`` of ``rows`` (all when None).

    ``extra``: the channels' sources' heat on the sink; ``p_sink``: the sink's
    whole heat with the output devices'; ``p_t``: one source transistor's [W].
    """
    if rows is not None:
        rail_max, i_a = rail_max[rows], i_a[rows]
    extra = sink.channels * swing.ccs_pair_sink_heat_w(rail_max, i_a)
    p_device = core["p_device_w"] if rows is None else core["p_device_w"][rows]
    p_sink = sink.n_dev * p_device + extra
    return extra, p_sink, swing.ccs_transistor_dissipation_w(rail_max, i_a)


def _ccs_sink_limits(spec: Spec, core: dict[str, np.ndarray], sink: _Sink, dev: dict, rail_max: np.ndarray, i_a: np.ndarray,
                     rows: np.ndarray | None, outputs: np.ndarray | None = None, heat: tuple[np.ndarray, ...] | None = None) -> np.ndarray:
    """Largest Rth_sa per mounting class with the current sources on the sink [row of ``rows`` (all when None), class].

    ``core``: the core configurations' :func:`_stage_columns`. ``outputs``:
    the output devices' part, when the caller has it for these rows and
    currents (it does not depend on the source pair), and ``heat`` the rows'
    :func:`_source_heat` likewise.

    The output devices' limits with the sources' heat added to the sink, and
    the source transistor's own junction and SOA at its case temperature.
    The result is laid out class by class (a transposed array): a class's
    limits of every row lie together, as :meth:`SinkCosts.least` reads them.
    """
    amb = spec.thermal.ambient_c
    soa_a, i_rows = (dev["soa_2vs_a"], i_a) if rows is None else (dev["soa_2vs_a"][rows], i_a[rows])
    util = _ccs_soa_util({"soa_2vs_a": soa_a}, i_rows)
    extra, p_sink, p_t = heat if heat is not None else _source_heat(core, sink, rail_max, i_a, rows)
    if outputs is None:
        outputs = _stage_rth(spec, core, sink, extra, rows)
    tj_max = dev["tj_max_c"]
    out = np.empty((len(sink.classes), len(p_t)))
    with np.errstate(divide="ignore", invalid="ignore"):
        # The case temperature the SOA allows, less the ambient (no class in it).
        soa_room = tj_max - util * (tj_max - 25.0) - amb
        past_soa = ~(util <= 1.0)
        for c_i, c in enumerate(sink.classes):
            rth_cs = float(thermal.rth_cs_default_k_w(dev["package"])) if math.isnan(c) else c
            by_tj = thermal.required_rth_sa_k_w(dev["tj_limit_c"], amb, p_t, dev["rth_jc_k_w"], rth_cs, p_sink)
            by_soa = (soa_room - p_t * rth_cs) / p_sink
            by_soa[past_soa] = -np.inf
            limit = out[c_i]
            np.minimum(by_tj, by_soa, out=limit)
            np.minimum(outputs[:, c_i], limit, out=limit)
    return out.T


def _feed_note(row: dict, ex: _Explainer) -> str:
    """Why no bias feed serves a configuration, with the numbers (issue of base drive, model s.3)."""
    mode, r1_max, vd_min, spec_current = ex.mode, row.get("r1_max_ohm", np.nan), ex.vd_min, ex.spec_current
    ib = row["ib_peak_a"]
    parts = [f"needs {1e3 * BASE_DRIVE_MARGIN * ib:.0f} mA of base drive at the peak"]
    if mode != "current_source":
        if not np.isfinite(r1_max) or r1_max <= 0:
            parts.append("resistor feed: no voltage left across R1 at the peak")
        else:
            p = float(swing.bias_resistor_power_w(row["rail_max_v"], vd_min, row["base_peak_v"], r1_max))
            best = ex.family_power_max_w
            parts.append(f"resistor feed would need R1 <= {r1_max:.3g} ohm dissipating {p:.2g} W, "
                         f"to be rated {RESISTOR_POWER_MARGIN * p:.2g} W (largest family rating {best:g} W)")
    if mode != "resistor":
        room = row["rail_min_v"] - row["base_peak_v"]
        i_ccs = spec_current if spec_current is not None else max(BASE_DRIVE_MARGIN * ib, CCS_MIN_CURRENT_A)
        if spec_current is not None and spec_current < BASE_DRIVE_MARGIN * ib:
            parts.append(f"current source: the spec fixes it at {1e3 * spec_current:.0f} mA, below the {1e3 * BASE_DRIVE_MARGIN * ib:.0f} mA needed")
        elif room < CCS_COMPLIANCE_V:
            parts.append(f"current source: only {room:.2f} V of compliance left (needs {CCS_COMPLIANCE_V:g} V)")
        else:
            p = float(swing.ccs_transistor_dissipation_w(row["rail_max_v"], i_ccs))
            parts.append(f"current source: its transistor would dissipate up to {p:.2g} W; no small pair in the catalogue holds that in free air, nor on a heatsink this stage can have")
    return "; ".join(parts)


def feed_failure(stage: StageTable, row: pd.Series | dict, mode: str) -> str:
    """Why bias feed ``mode`` cannot serve a configuration (a row of ``configs``), as a sentence."""
    r = dict(row)
    r["rejected_by"] = "bias feed (s.3)"
    r["r1_max_ohm"] = float(swing.bias_resistor_max_ohm(r["rail_min_v"], r["base_peak_v"], r["ib_peak_a"]))
    return describe_rejection(r, replace(stage.explain, mode=mode))


def describe_rejection(r: dict, ex: _Explainer) -> str:
    """The first failing stage constraint as a sentence with its numbers."""
    vp, ip = ex.targets.v_peak_v, ex.targets.i_peak_a
    by = r["rejected_by"]
    if by.startswith("transistor headroom"):
        need = vp + ip * r["re_ohm"] + r["vce_sat_v"]
        return f"{by}: needs {need:.2f} V per rail (Vp {vp:.2f} + Ip*Re {ip * r['re_ohm']:.2f} + Vce_sat {r['vce_sat_v']:.2f}), the rail gives {r['rail_min_v']:.2f} V"
    if by.startswith("driver reach"):
        return f"{by}: the bases must reach {r['base_peak_v']:.2f} V, the rail gives {r['rail_min_v']:.2f} V"
    if by.startswith("Vceo"):
        return f"{by}: Vceo {r['vceo_v']:g} V, needs {1.2 * r['span_max_v']:.1f} V (1.2 x {r['span_max_v']:.1f} V span)"
    if by.startswith("Ic max"):
        return f"{by}: Ic max {r['ic_max_a']:g} A below the peak {ip:.2f} A"
    if by.startswith("SOA"):
        return f"{by}: the load line needs {100 * r['soa_util']:.0f} % of the 25 degC DC SOA at {r['rail_max_v']:.1f} V, {ip:.2f} A peak, before any derating"
    if by.startswith("thermal"):
        return f"{by}: the largest tolerable Rth_sa is {r['rth_sa_best_k_w']:.2f} K/W at {r['p_device_w']:.1f} W per device"
    if by.startswith("bias feed"):
        return f"{by}: {_feed_note(r, ex)}"
    return by


def ccs_rth_ja_k_w(rth_ja_n: float | None, rth_ja_p: float | None, package: str) -> float:
    """Free-air Rth_ja of a current-source pair: the larger of its two devices' (conservative reading, see
    :func:`_ccs_variants`), each from the catalogue or, when blank, the package's default [K/W]."""
    return max(_rth_ja(rth_ja_n, package), _rth_ja(rth_ja_p, package))


def _rth_ja(value: float, package: str) -> float:
    from partpick.model.defaults import RTH_JA_FREE_AIR_K_W

    if value is not None and not (isinstance(value, float) and math.isnan(value)):
        return float(value)
    return RTH_JA_FREE_AIR_K_W.get(package, 250.0)


def _first_fail(frame: pd.DataFrame, checks: dict[str, np.ndarray], funnel: dict[str, int]) -> tuple[pd.DataFrame, np.ndarray]:
    ok = np.ones(len(frame), dtype=bool)
    first = np.full(len(frame), "", dtype=object)
    for name in FIRST_FAIL_ORDER:
        if name not in checks:
            continue
        fail = ok & ~np.asarray(checks[name], bool)
        first[fail] = name
        funnel[name] = int(fail.sum())
        ok &= ~fail
    rejected = frame[~ok].copy()
    rejected["rejected_by"] = first[~ok]
    return rejected, ok


def _remap(opts: pd.DataFrame, kept: np.ndarray) -> pd.DataFrame:
    """Renumber option compat after dropping configurations; drop options of dropped ones."""
    new = -np.ones(int(opts["k"].max()) + 1 if len(opts) else 0, dtype=int)
    new[kept[kept < len(new)]] = np.arange(len(kept))[kept < len(new)]
    k = new[opts["k"].to_numpy()] if len(opts) else opts["k"].to_numpy()
    keep = k >= 0
    out = opts.reset_index(drop=True) if keep.all() else opts[keep].reset_index(drop=True)
    out["k"] = k[keep]
    return out


def _keys(k: pd.DataFrame, rails: pd.DataFrame, pairs: pd.DataFrame) -> list[str]:
    """Stable sort keys (ties in the optimiser go to the smallest key).

    A key is the core configuration's part (pair, rail, Re) then the feed's;
    each distinct part is formatted once (current sources repeat every core
    configuration for every feed).
    """
    pair_i, rail_i, re_ohm = (k[c].to_numpy() for c in ("pair_i", "rail_i", "re_ohm"))
    feed = [k[c].to_numpy() for c in ("feed", "ccs_n_i", "ccs_p_i", "ref_i", "ccs_mount")]
    core, core_rows = distinct_rows([pair_i, rail_i, re_ohm])
    fed, feed_rows = distinct_rows(feed)
    pn, pp = pairs["mpn_n"].to_numpy(), pairs["mpn_p"].to_numpy()
    rv = rails["rail_min_v"].to_numpy(float)
    head = [f"{pn[p]}/{pp[p]}|{rv[r]:09.4f}|{re:.4f}|" for p, r, re in zip(pair_i[core], rail_i[core], re_ohm[core].tolist())]
    tail = [f"{f}|{c1}|{c2}|{ri}|{m}" for f, c1, c2, ri, m in zip(*(col[fed].tolist() for col in feed))]
    return [head[i] + tail[j] for i, j in zip(core_rows.tolist(), feed_rows.tolist())]


def _empty(rails, pairs, res, funnel, considered) -> StageTable:
    return StageTable(
        configs=pd.DataFrame(), rth_sa_max=np.zeros((0, 1)), rth_cs_classes=[math.nan],
        feed_options=pd.DataFrame(columns=["k", "family", "kind", "v1", "v2", "p1_w", "p2_w"]),
        re_options=res, rails=rails, pairs=pairs, funnel=funnel, rejected=pd.DataFrame(), considered=considered,
    )
