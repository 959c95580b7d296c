"""Hostile values shared by the fuzzers: catalogue cells, TOML values, and how to plant them."""

from __future__ import annotations

import csv
import io
import json
import math
from pathlib import Path

from hypothesis import strategies as st

#: Cells met in hand-edited and exported sheets, and worse.
NASTY = st.sampled_from(["", "nan", "inf", "-inf", "-1", "0", "1e308", "1e-320", "=1+2", "4k7", "22p", "0R22",
                         "\ufeff", "a;b;c", "\"", "9" * 400, "NaN", "None", "true", "\t", " 12 ", "[/]", "[bold]x",
                         "@SUM(A1)", "+1", "x" * 5000])
CELL = st.one_of(NASTY, st.text(max_size=30))

#: Any TOML value: numbers of every kind (NaN, infinities, huge, negative), text, booleans, arrays.
TOML_VALUE = st.recursive(
    st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(-10**20, 10**20), st.booleans(),
              st.text(max_size=20), st.sampled_from(["[/]", "=HYPERLINK(1)", "cbc", "highs", "split", "single"])),
    lambda inner: st.lists(inner, max_size=3),
    max_leaves=4,
)


def toml_value(v: object) -> str:
    """A value written as TOML (strings with JSON escapes, which TOML basic strings share)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return "nan" if math.isnan(v) else ("inf" if v > 0 else "-inf") if math.isinf(v) else repr(v)
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, str):
        return json.dumps(v)
    return str(v)


def mutate_cell(folder: Path, name: str, row: int, col: int, value: str) -> int:
    """Put ``value`` into one data cell of a catalogue file; returns the row's physical line."""
    path = folder / name
    lines = path.read_text(encoding="utf-8").splitlines()
    data = [i for i, l in enumerate(lines) if l and not l.startswith("#")]
    target = data[1 + row % (len(data) - 1)]
    cells = next(csv.reader([lines[target]]))
    cells[col % len(cells)] = value
    buf = io.StringIO()
    csv.writer(buf, lineterminator="").writerow(cells)
    lines[target] = buf.getvalue()
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return target + 1
