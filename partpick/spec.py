"""The amplifier spec (TOML) as a pydantic model, defaults filled in.

Keys and defaults follow the project's formats contract. An unknown key, a
wrong type or a physically meaningless value is an input error naming the
file, the line of the key and the reason.
"""

from __future__ import annotations

import math
import re
import sys
from pathlib import Path
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

from partpick.errors import InputError, Problem

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib


class _Section(BaseModel):
    # strict: TOML values are typed, so "yes" for a bool or "10" for a number is an
    # error, not a silent conversion (arrays are still accepted for the tuple keys).
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, allow_inf_nan=False)


class OutputSpec(_Section):
    power_w: float = Field(gt=0, description="continuous sine power per channel [W]")
    load_ohm: float = Field(gt=0, description="nominal load [ohm]")
    load_min_ohm: float | None = Field(default=None, gt=0, description="lowest |Z| [ohm]")
    load_phase_deg: float = Field(default=0.0, ge=0, lt=90)
    channels: int = Field(default=1, ge=1, le=64)
    f_low_hz: float = Field(default=20.0, gt=0)
    f_high_hz: float = Field(default=20000.0, gt=0)
    input_vrms: float = Field(default=0.5, gt=0)
    pairing: Literal["complement", "any"] = "complement"
    short_circuit: bool = False
    iq_a: float | None = Field(default=None, gt=0, lt=10)

    @model_validator(mode="after")
    def _check(self) -> "OutputSpec":
        if self.load_min_ohm is not None and self.load_min_ohm > self.load_ohm:
            raise ValueError("load_min_ohm: is above load_ohm")
        if self.f_low_hz >= self.f_high_hz:
            raise ValueError("f_high_hz: is not above f_low_hz")
        return self

    @property
    def z_min_ohm(self) -> float:
        return self.load_min_ohm if self.load_min_ohm is not None else self.load_ohm


class StageSpec(_Section):
    bias_feed: Literal["resistor", "current_source", "auto"] = "auto"
    bias_tracking: bool = False
    #: Current of each bias current source [A]; default the smallest that meets 1.5 x Ib_pk.
    bias_source_current_a: float | None = Field(default=None, gt=0, le=2.0)


class SupplySpec(_Section):
    arrangement: Literal["split", "single"] = "split"
    v_min: float = Field(gt=0, le=200)
    v_max: float = Field(gt=0, le=200)
    regulate: Literal["never", "auto", "always"] = "never"

    @model_validator(mode="after")
    def _check(self) -> "SupplySpec":
        if self.v_min > self.v_max:
            raise ValueError("v_max: is below v_min")
        if self.arrangement == "split" and self.regulate != "never":
            raise ValueError(
                "regulate: a pre-regulator serves the single arrangement only for now "
                "(no negative regulators are catalogued); use regulate = \"never\" with split"
            )
        return self


class ThermalSpec(_Section):
    ambient_c: float = Field(default=40.0, ge=-40, lt=125)
    tj_derate_c: float = Field(default=25.0, ge=0, lt=150)
    shared_heatsink: bool = False


class OrderSpec(_Section):
    boards: int = Field(default=1, ge=1, le=1_000_000)
    spares_pct: float = Field(default=0.0, ge=0, le=1000)
    objective: Literal["cost", "lines"] = "cost"
    suppliers: tuple[str, ...] = Field(default=(), strict=False)
    exclude: tuple[str, ...] = Field(default=(), strict=False)

    @property
    def factor(self) -> float:
        """Boards x (1 + spares/100): what a part's per-board count is multiplied by in the order."""
        return self.boards * (1.0 + self.spares_pct / 100.0)


def order_units(per_board: float, factor: float) -> float:
    """Units of a part the order needs for ``per_board`` per board, before rounding up: per board x
    ``factor``, rounded to 6 decimals against float noise (the one rounding of the optimiser and its bounds)."""
    return round(per_board * factor, 6)


class Spec(BaseModel):
    """One amplifier to design: every key of the spec file, defaults filled in."""

    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, allow_inf_nan=False)

    name: str = "unnamed design"
    output: OutputSpec
    stage: StageSpec = StageSpec()
    supply: SupplySpec
    thermal: ThermalSpec = ThermalSpec()
    order: OrderSpec = OrderSpec()

    def quantity(self, per_board: float) -> int:
        """Units to order: ceil(per board x boards x (1 + spares/100)), float noise guarded.

        >>> spec = Spec.model_validate({"output": {"power_w": 1, "load_ohm": 8},
        ...     "supply": {"v_min": 10, "v_max": 12}, "order": {"boards": 25, "spares_pct": 4}})
        >>> spec.quantity(2)
        52
        """
        exact = per_board * self.order.boards * (1.0 + self.order.spares_pct / 100.0)
        return int(math.ceil(round(exact, 6)))


def load_spec(path: str | Path) -> Spec:
    """Read and validate a spec file.

    Raises
    ------
    InputError
        With the file, the line of the offending key and the reason.
    """
    path = Path(path)
    label = str(path)
    if not path.is_file():
        raise InputError([Problem(label, 0, "", "spec file not found")])
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError([Problem(label, 0, "", "not UTF-8 text")]) from None
    return parse_spec(text, label)


def parse_spec(text: str, label: str = "<spec>") -> Spec:
    """Validate spec text (TOML); see :func:`load_spec`."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        line = getattr(exc, "lineno", None) or _line_from_message(str(exc))
        raise InputError([Problem(label, line, "", f"not valid TOML: {exc}")]) from None
    try:
        return Spec.model_validate(data)
    except ValidationError as exc:
        raise InputError(_problems(text, label, exc)) from None


def _problems(text: str, label: str, exc: ValidationError) -> list[Problem]:
    problems = []
    for err in exc.errors():
        loc = [str(p) for p in err["loc"]]
        msg = str(err["msg"]).removeprefix("Value error, ")
        if err["type"] == "extra_forbidden":
            msg = "unknown key (check the spelling against the documented keys)"
        elif err["type"] == "missing":
            msg = "required key is missing"
        key_match = re.match(r"^(\w+): (.*)$", msg)
        if key_match and err["type"] == "value_error":
            loc = [*loc, key_match.group(1)]
            msg = key_match.group(2)
        where = f"[{loc[0]}] {'.'.join(loc[1:])}" if len(loc) > 1 else ".".join(loc)
        keys = [part for part in loc if not part.isdigit()]  # an array item is on its key's line
        problems.append(Problem(label, _key_line(text, keys), where, msg))
    return problems


def _key_line(text: str, loc: list[str]) -> int:
    """The line where ``loc`` (section, key) is written; 0 when it is not written.

    A top-level name may also be written as a table header (``[name]``).
    """
    section = loc[0] if len(loc) > 1 else None
    key = loc[-1] if len(loc) > 1 else loc[0]
    current = None
    section_line = 0
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        header = re.match(r"^\[([^\]]+)\]", stripped)
        if header:
            current = header.group(1).strip()
            if current == section and not section_line:
                section_line = number
            if section is None and current == key:
                return number
            continue
        if current == section and re.match(rf"^{re.escape(key)}\s*=", stripped):
            return number
        if current is None and section is not None and not section_line and re.match(
            rf"^{re.escape(section)}\s*=", stripped
        ):
            section_line = number  # the section written as an inline table
    return section_line


def _line_from_message(message: str) -> int:
    m = re.search(r"line (\d+)", message)
    return int(m.group(1)) if m else 0
