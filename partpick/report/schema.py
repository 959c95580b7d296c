"""The JSON report (schema ``partpick.report/1``) as pydantic models.

:class:`Report` validates what :func:`partpick.report.build.build_report`
produces, for a feasible run (``"status": "ok"``) and an infeasible one
(``"status": "infeasible"``). The documented blocks forbid unknown keys and
every documented key is required, so a renamed or dropped key fails
validation; numbers are strict (a number written as a string is refused).
``Report.model_validate(d).model_dump() == d`` for every valid report ``d``,
keys in the same order.

Blocks whose keys are data rather than names (margins by constraint, the
funnel by role and constraint, fees by supplier, catalogue hashes by file)
are typed mappings.

Examples
--------
>>> Report.model_validate({"schema": "partpick.report/2"})
Traceback (most recent call last):
...
pydantic_core._pydantic_core.ValidationError: 1 validation error for Report
...
"""

from __future__ import annotations

from typing import Annotated, Any, Literal, Union

from pydantic import (
    AfterValidator,
    BaseModel,
    ConfigDict,
    Field,
    RootModel,
    SerializationInfo,
    SerializerFunctionWrapHandler,
    model_serializer,
)

from partpick.optimize.design import ROLE_ORDER

SCHEMA_ID = "partpick.report/1"

#: A BOM role, as listed in the formats contract.
Role = Literal[ROLE_ORDER]  # type: ignore[valid-type]

_SHA256 = Annotated[str, Field(pattern=r"^[0-9a-f]{64}$")]


class _Block(BaseModel):
    """A documented block: every key required, no other key allowed, strict types."""

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True)


class _OptionalKeysBlock(_Block):
    """A block whose optional keys appear in the dump only when they were given."""

    @model_serializer(mode="wrap")
    def _only_given(self, handler: SerializerFunctionWrapHandler, info: SerializationInfo) -> dict[str, Any]:
        data = handler(self)
        optional = {name for name, f in type(self).model_fields.items() if not f.is_required()}
        return {k: v for k, v in data.items() if k not in optional or k in self.model_fields_set}


# ----------------------------------------------------------------------------- spec


class OutputSpec(_Block):
    power_w: float
    load_ohm: float
    load_min_ohm: float
    load_phase_deg: float
    channels: int
    f_low_hz: float
    f_high_hz: float
    input_vrms: float
    pairing: Literal["complement", "any"]
    short_circuit: bool
    iq_a: float | None


class StageSpec(_Block):
    bias_feed: Literal["resistor", "current_source", "auto"]
    bias_tracking: bool
    bias_source_current_a: float | None


class SupplySpec(_Block):
    arrangement: Literal["split", "single"]
    v_min: float
    v_max: float
    regulate: Literal["never", "auto", "always"]


class ThermalSpec(_Block):
    ambient_c: float
    tj_derate_c: float
    shared_heatsink: bool


class OrderSpec(_Block):
    boards: int
    spares_pct: float
    objective: Literal["cost", "lines"]
    suppliers: list[str]
    exclude: list[str]


class SpecBlock(_Block):
    """The spec as understood, defaults filled in."""

    name: str
    output: OutputSpec
    stage: StageSpec
    supply: SupplySpec
    thermal: ThermalSpec
    order: OrderSpec


class ProgramBlock(_Block):
    """The ``partpick`` block: which program, solver and catalogue made the report."""

    version: str
    solver: Literal["cbc", "highs"]
    catalog_sha256: dict[str, _SHA256]


# ----------------------------------------------------------------------------- design


class FeedAlternative(_Block):
    """``design.bias_feed_alternative``: the bias feed not chosen and what it would cost."""

    feed: Literal["resistor", "current_source"]
    feasible: bool
    total: float | None
    extra_cost: float | None
    reason: str


class DesignBlock(_OptionalKeysBlock):
    """The ``design`` block: the documented keys, then the ones the report adds."""

    arrangement: Literal["split", "single"]
    rail_min_v: float
    rail_max_v: float
    regulated: bool
    regulator_vout_v: float | None
    v_peak_v: float
    i_peak_a: float
    gain: float
    re_ohm: float
    iq_a: float
    p_device_max_w: float
    tj_max_reached_c: float
    rth_sa_required_k_w: float | None  # None when no finite limit exists
    rth_sa_chosen_k_w: float
    soa_margin: float
    thermal_loop_gain: float
    efficiency: float
    bias_feed: Literal["resistor", "current_source"]
    bias_current_a: float
    bias_resistor_power_w: float | None  # None with a current source
    bias_source_mount: Literal["free_air", "heatsink"] | None  # None with a resistor feed
    base_current_peak_a: float
    drive_level_v: float
    t_sink_c: float
    p_regulator_w: float | None  # None without a regulator
    supply_power_w: float
    bias_feed_alternative: FeedAlternative | None = None  # only with bias_feed = "auto"


# ----------------------------------------------------------------------------- parts and order


class Binding(_Block):
    """The tightest margin of a part: constraint name, signed margin, its unit and fraction."""

    constraint: str
    margin: float | None
    unit: str
    fraction: float | None


class PartRow(_Block):
    role: Role
    mpn: str
    value: str | None
    package: str | None  # footprint, for a re-design that keeps footprints
    pinout: str | None
    qty_per_channel: float | None  # None for a board-level part
    qty_per_board: float
    qty: int
    refs: list[str]
    margins: dict[str, float | None]
    binding: Binding | None


class OrderRow(_Block):
    supplier: str
    mpn: str
    value: str | None
    qty: int
    needed: int
    price_break: int
    unit_price: float
    extended_price: float
    roles: list[Role]
    refs: list[str]


class Totals(_Block):
    parts: float
    fees: float
    total: float
    currency: str
    fees_by_supplier: dict[str, float]
    boards: int
    per_board: float


def _has_ends(counts: dict[str, int]) -> dict[str, int]:
    missing = [k for k in ("candidates", "feasible") if k not in counts]
    if missing:
        raise ValueError(f"funnel counts lack {', '.join(missing)}")
    if any(v < 0 for v in counts.values()):
        raise ValueError("funnel counts must not be negative")
    return counts


#: One role's funnel: ``candidates``, how many each constraint removed, ``feasible``.
FunnelCounts = Annotated[dict[str, int], AfterValidator(_has_ends)]


def _has_output_stage(funnel: dict[str, dict[str, int]]) -> dict[str, dict[str, int]]:
    if "output_stage" not in funnel:
        raise ValueError("funnel lacks output_stage")
    return funnel


Funnel = Annotated[dict[str, FunnelCounts], AfterValidator(_has_output_stage)]


class RailSuggestion(_Block):
    v_min: float
    v_max: float


class Suggestions(_OptionalKeysBlock):
    """What would make an infeasible spec feasible; each key present once searched."""

    highest_feasible_power_w: float | None = None
    lowest_feasible_rail_v: RailSuggestion | None = None
    with_pre_regulator: bool | None = None


class Change(_Block):
    """One role changed against ``--previous``: what, why, and the cost difference."""

    role: str
    previous: str
    new: str
    reason: str
    cost_change: float


class StockRisk(_Block):
    """One chosen line's supply risk: who stocks it, and the best design without it."""

    mpn: str
    role: str
    suppliers_with_stock: list[str]
    single_source: bool
    total_without: float | None
    replacement: str | None


# ----------------------------------------------------------------------------- reports


class OkReport(_OptionalKeysBlock):
    """A feasible run (exit 0); the revision and stock-risk keys appear only when asked for."""

    schema_: Literal["partpick.report/1"] = Field(alias="schema")
    status: Literal["ok"]
    spec: SpecBlock
    partpick: ProgramBlock
    design: DesignBlock
    optimal: bool
    parts: list[PartRow]
    order: list[OrderRow]
    totals: Totals
    funnel: Funnel
    warnings: list[str]
    cautions: Annotated[list[str], Field(min_length=1)]
    changes: list[Change] | None = None  # with --previous
    no_drop_in: dict[str, str] | None = None  # with --previous
    previous_total: float | None = None  # with --previous
    stock_risk: list[StockRisk] | None = None  # with the stock-risk check

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True, serialize_by_alias=True)


class InfeasibleReport(_Block):
    """An infeasible run (exit 4): why, and what would make it feasible."""

    schema_: Literal["partpick.report/1"] = Field(alias="schema")
    status: Literal["infeasible"]
    spec: SpecBlock
    partpick: ProgramBlock
    funnel: Funnel
    causes: list[str]
    suggestions: Suggestions
    warnings: list[str]
    cautions: Annotated[list[str], Field(min_length=1)]

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True, serialize_by_alias=True)


class Report(RootModel[Annotated[Union[OkReport, InfeasibleReport], Field(discriminator="status")]]):
    """A report of either status; ``Report.model_validate(d).model_dump()`` gives ``d`` back."""


__all__ = [
    "SCHEMA_ID", "Report", "OkReport", "InfeasibleReport", "SpecBlock", "ProgramBlock", "DesignBlock",
    "FeedAlternative", "PartRow", "OrderRow", "Binding", "Totals", "Suggestions", "RailSuggestion", "Change",
    "StockRisk",
]
