"""The column-by-column cell reader against the row models read whole.

:class:`partpick.catalog.loader._CellReader` reads a record whose every cell
is valid without the row model; every other record goes through the model.
The independent route here is the model itself (pydantic validating the
whole record): for any header and any cells, the rows kept and the problems
named must be the same with the reader as without it.
"""

from __future__ import annotations

import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import DEMO_CATALOG
from partpick.catalog import load_catalog, loader
from partpick.catalog.rows import FILES

#: Cells that exercise every validator: plain numbers, signs, exponents,
#: blanks, padding, SI prefixes and letter codes (refused in unit columns,
#: taken in value columns), enum words in any case, whole and fractional
#: counts, zero, negatives, non-finite text and garbage.
CELLS = [
    "", " ", "0", "1", "2", "4", "3.3", " 12 ", "-1", "-0.5", "1e3", "2.5E-1", "1.", ".5", "+7",
    "4k7", "0R22", "100n", "2u2", "4.7k", "1M", "22kohm", "inf", "nan", "abc", "1,5",
    "npn", "PNP", " Npn ", "fixed", "Adjustable", "resistor", "cap_film", "E24", "e96", "E7",
    "diode", "LED", "TO-3P", "X1", "10:8; 40:2.5; 80:0.5",
]


def _read(model, header, records, with_reader: bool):
    rows, problems = [], []
    cells_of = loader._CellReader(header, model) if with_reader else None
    for line, cells in enumerate(records, start=2):
        problems.extend(loader._row("f.csv", line, header, cells, model, rows, cells_of))
    return rows, problems


@st.composite
def _file(draw):
    name = draw(st.sampled_from(sorted(FILES)))
    model = FILES[name]
    fields = list(model.model_fields.items())
    header = [f for f, info in fields if info.is_required() or draw(st.booleans())]
    if draw(st.booleans()):
        header.append("note")  # a column the model does not know
    header = draw(st.permutations(header))
    cell = st.sampled_from(CELLS)
    records = draw(st.lists(st.lists(cell, min_size=len(header), max_size=len(header)), min_size=1, max_size=6))
    return model, list(header), records


@settings(max_examples=400, deadline=None)
@given(_file())
def test_reader_keeps_the_rows_and_problems_the_model_gives(case):
    model, header, records = case
    assert _read(model, header, records, True) == _read(model, header, records, False)


def _valid_cells(model, header):
    """One record of cells every field accepts, found by asking the model one field at a time."""
    good = []
    for name in header:
        for cell in CELLS:
            try:
                if name in model.model_fields:
                    loader._field_adapter(model, name).validate_python(cell)
                good.append(cell)
                break
            except ValueError:
                continue
    return good


@pytest.mark.parametrize("name", sorted(FILES))
def test_absent_optional_column_takes_the_model_default(name):
    model = FILES[name]
    header = [f for f, info in model.model_fields.items() if info.is_required()]
    cells = _valid_cells(model, header)
    rows, problems = _read(model, header, [cells], True)
    assert problems == []
    expected = model.model_validate(dict(zip(header, cells))).model_dump()
    assert rows == [(2, *expected.values())]
    # A default that is not None is kept as the model gives it (diodes: kind = diode).
    if name == "diodes.csv":
        assert expected["kind"] == "diode"


def test_a_bad_cell_seen_twice_is_named_twice():
    model = FILES["offers.csv"]
    header = ["mpn", "supplier", "min_qty", "unit_price", "stock"]
    records = [["A1", "S", "10", "0.5", "7"], ["A2", "S", "2.5", "0.5", "7"], ["A3", "S", "2.5", "0.5", "7"]]
    rows, problems = _read(model, header, records, True)
    assert [r[0] for r in rows] == [2]
    assert [(p.line, p.column) for p in problems] == [(3, "min_qty"), (4, "min_qty")]
    assert "not a whole number" in problems[0].reason


def test_demo_catalogue_is_the_same_read_whole(monkeypatch):
    fast = load_catalog(DEMO_CATALOG)
    monkeypatch.setattr(loader._CellReader, "values", lambda self, cells: None)
    whole = load_catalog(DEMO_CATALOG)
    for category in ("transistors", "opamps", "regulators", "heatsinks", "passives", "diodes", "suppliers", "offers"):
        pd.testing.assert_frame_equal(getattr(fast, category), getattr(whole, category), check_exact=True)
    assert fast.warnings == whole.warnings


def test_a_model_with_a_rule_over_the_record_is_read_whole():
    from pydantic import model_validator

    class Strict(FILES["suppliers.csv"]):
        @model_validator(mode="after")
        def _fee_below_ten(self):
            if self.order_fee >= 10:
                raise ValueError("fee too high")
            return self

    header = ["supplier", "currency", "order_fee"]
    rows, problems = _read(Strict, header, [["S", "EUR", "12"], ["T", "EUR", "3"]], True)
    assert [r[0] for r in rows] == [3]
    assert [(p.line, "fee too high" in p.reason) for p in problems] == [(2, True)]
