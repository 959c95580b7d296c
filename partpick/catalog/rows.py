"""Pydantic models of one catalogue row per file, units in the column names.

Cells arrive as text. Unit-named columns take plain numbers; value columns
(``value_min``, ``value_max``) take SI prefixes and IEC 60062 letter codes as
well (see :mod:`partpick.catalog.units`). A blank optional cell is ``None``.
"""

from __future__ import annotations

from typing import Annotated, Literal, Optional

from pydantic import AfterValidator, BaseModel, BeforeValidator, ConfigDict

from partpick.catalog.units import parse_number, parse_value

SERIES_NAMES = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")


def _blank_to_none(v: object) -> object:
    if isinstance(v, str) and not v.strip():
        return None
    return v


def _number(v: object) -> object:
    v = _blank_to_none(v)
    return parse_number(v) if isinstance(v, str) else v


def _value(v: object) -> object:
    v = _blank_to_none(v)
    return parse_value(v) if isinstance(v, str) else v


def _whole(v: object) -> object:
    v = _number(v)
    if isinstance(v, float):
        if v != int(v):
            raise ValueError(f"{v:g} is not a whole number")
        return int(v)
    return v


def _text(v: object) -> object:
    v = _blank_to_none(v)
    return v.strip() if isinstance(v, str) else v


def _positive(x: float | None) -> float | None:
    if x is not None and not x > 0:
        raise ValueError(f"must be greater than zero, got {x:g}")
    return x


def _non_negative(x: float | None) -> float | None:
    if x is not None and x < 0:
        raise ValueError(f"must not be negative, got {x:g}")
    return x


def _lower(v: object) -> object:
    v = _text(v)
    return v.lower() if isinstance(v, str) else v


def _upper(v: object) -> object:
    v = _text(v)
    return v.upper() if isinstance(v, str) else v


Text = Annotated[str, BeforeValidator(_text)]
OptText = Annotated[Optional[str], BeforeValidator(_text)]
Positive = Annotated[float, BeforeValidator(_number), AfterValidator(_positive)]
OptPositive = Annotated[Optional[float], BeforeValidator(_number), AfterValidator(_positive)]
NonNegative = Annotated[float, BeforeValidator(_number), AfterValidator(_non_negative)]
OptNonNegative = Annotated[
    Optional[float], BeforeValidator(_number), AfterValidator(_non_negative)
]
Temperature = Annotated[float, BeforeValidator(_number)]
PositiveValue = Annotated[float, BeforeValidator(_value), AfterValidator(_positive)]
Count = Annotated[int, BeforeValidator(_whole), AfterValidator(_positive)]
OptCount = Annotated[Optional[int], BeforeValidator(_whole), AfterValidator(_positive)]
Stock = Annotated[int, BeforeValidator(_whole), AfterValidator(_non_negative)]


class Row(BaseModel):
    """Base of every row: unknown columns are kept by the reader, ignored here."""

    model_config = ConfigDict(extra="ignore", frozen=True)


class TransistorRow(Row):
    mpn: Text
    maker: Text
    polarity: Annotated[Literal["npn", "pnp"], BeforeValidator(_lower)]
    complement: OptText = None
    package: Text
    vceo_v: Positive
    ic_max_a: Positive
    pd_max_w: Positive
    tj_max_c: Temperature
    rth_jc_k_w: Positive
    hfe_min: Positive
    hfe_at_a: Positive
    vce_sat_v: Positive
    vce_sat_at_a: Positive
    vbe_on_v: Positive
    vbe_on_at_a: Positive
    ft_mhz: OptPositive = None
    soa_dc: OptText = None
    pinout: OptText = None
    rth_ja_k_w: OptPositive = None


class OpampRow(Row):
    mpn: Text
    maker: Text
    package: Text
    per_package: Annotated[Literal[1, 2, 4], BeforeValidator(_whole)]
    supply_min_v: Positive
    supply_max_v: Positive
    swing_headroom_v: NonNegative
    vcm_headroom_v: NonNegative
    slew_v_us: Positive
    gbw_mhz: Positive
    iout_max_a: Positive
    vos_max_mv: NonNegative
    comp_pf: OptNonNegative = None


class RegulatorRow(Row):
    mpn: Text
    maker: Text
    package: Text
    kind: Annotated[Literal["fixed", "adjustable"], BeforeValidator(_lower)]
    vout_v: OptPositive = None
    vref_v: OptPositive = None
    iadj_a: OptNonNegative = None
    vin_max_v: Positive
    dropout_v: NonNegative
    iout_max_a: Positive
    tj_max_c: Temperature
    rth_jc_k_w: Positive
    rth_ja_k_w: Positive
    pinout: OptText = None


class HeatsinkRow(Row):
    mpn: Text
    maker: Text
    rth_sa_k_w: Positive
    packages: Text
    max_devices: Count
    rth_cs_k_w: OptPositive = None


class PassiveRow(Row):
    family: Text
    kind: Annotated[
        Literal["resistor", "cap_ceramic", "cap_film", "cap_electrolytic"],
        BeforeValidator(_lower),
    ]
    series: Annotated[Literal[SERIES_NAMES], BeforeValidator(_upper)]  # type: ignore[valid-type]
    tolerance_pct: Positive
    value_min: PositiveValue
    value_max: PositiveValue
    power_w: OptPositive = None
    voltage_v: OptPositive = None
    ripple_a: OptPositive = None


class DiodeRow(Row):
    mpn: Text
    maker: Text
    package: Text
    vf_v: Positive
    if_max_a: Positive
    kind: Annotated[Literal["diode", "led"], BeforeValidator(_lower)] = "diode"


class OfferRow(Row):
    mpn: Text
    supplier: Text
    min_qty: Count
    unit_price: NonNegative
    stock: Stock
    moq: OptCount = None


class SupplierRow(Row):
    supplier: Text
    currency: Text
    order_fee: NonNegative


#: File name -> row model, in the order the files are read and reported.
FILES: dict[str, type[Row]] = {
    "transistors.csv": TransistorRow,
    "opamps.csv": OpampRow,
    "regulators.csv": RegulatorRow,
    "heatsinks.csv": HeatsinkRow,
    "passives.csv": PassiveRow,
    "diodes.csv": DiodeRow,
    "suppliers.csv": SupplierRow,
    "offers.csv": OfferRow,
}
