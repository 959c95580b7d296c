"""The amplifier spec (TOML): examples, defaults, quantities and errors with line numbers."""

from __future__ import annotations

import math
import sys
from fractions import Fraction

import pytest

from conftest import EXAMPLES
from partpick.errors import InputError, Problem
from partpick.spec import Spec, load_spec, parse_spec

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

MINIMAL = """\
name = "test amp"

[output]
power_w = 10.0
load_ohm = 8.0

[supply]
v_min = 20.0
v_max = 22.0
"""


def problems_of(text: str, label: str = "amp.toml") -> list[Problem]:
    with pytest.raises(InputError) as info:
        parse_spec(text, label)
    return info.value.problems


def only(problems: list[Problem]) -> Problem:
    assert len(problems) == 1, "\n".join(map(str, problems))
    return problems[0]


def line_of(text: str, start: str) -> int:
    hits = [i for i, line in enumerate(text.splitlines(), 1) if line.strip().startswith(start)]
    assert len(hits) == 1, hits
    return hits[0]


# ----------------------------------------------------------------------------- examples and defaults


def test_there_are_examples():
    assert len(EXAMPLES) >= 3


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_every_example_loads_as_written(path):
    spec = load_spec(path)
    raw = tomllib.loads(path.read_text(encoding="utf-8"))
    # Every value written in the file is the value understood (an independent TOML read).
    for section, keys in raw.items():
        if not isinstance(keys, dict):
            assert getattr(spec, section) == keys
            continue
        for key, value in keys.items():
            got = getattr(getattr(spec, section), key)
            assert (list(got) if isinstance(got, tuple) else got) == value, f"[{section}] {key}"


def test_defaults_are_filled_in():
    spec = parse_spec(MINIMAL)
    # formats.md, "Defaults when a key is left out".
    assert spec.output.load_min_ohm is None
    assert spec.output.z_min_ohm == 8.0  # load_min_ohm = load_ohm
    assert spec.output.load_phase_deg == 0.0
    assert spec.output.channels == 1
    assert spec.output.f_low_hz == 20.0 and spec.output.f_high_hz == 20000.0
    assert spec.output.input_vrms == 0.5
    assert spec.output.pairing == "complement"
    assert spec.output.short_circuit is False
    assert spec.output.iq_a is None
    assert spec.stage.bias_feed == "auto" and spec.stage.bias_tracking is False
    assert spec.supply.arrangement == "split" and spec.supply.regulate == "never"
    assert spec.thermal.ambient_c == 40.0  # inside an enclosure; common practice
    assert spec.thermal.tj_derate_c == 25.0 and spec.thermal.shared_heatsink is False
    assert spec.order.boards == 1 and spec.order.spares_pct == 0.0
    assert spec.order.objective == "cost"
    assert spec.order.suppliers == () and spec.order.exclude == ()


def test_load_min_ohm_when_given():
    spec = parse_spec(MINIMAL.replace("load_ohm = 8.0", "load_ohm = 8.0\nload_min_ohm = 6.0"))
    assert spec.output.z_min_ohm == 6.0


def test_name_defaults_when_left_out():
    assert parse_spec(MINIMAL.replace('name = "test amp"\n', "")).name == "unnamed design"


def test_lists_become_tuples():
    spec = parse_spec(MINIMAL + '\n[order]\nsuppliers = ["Tessaly Electronics"]\nexclude = ["VT1360N", "VT1360P"]\n')
    assert spec.order.suppliers == ("Tessaly Electronics",)
    assert spec.order.exclude == ("VT1360N", "VT1360P")


def test_utf8_bom_is_tolerated(tmp_path):
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + MINIMAL.encode("utf-8"))
    assert load_spec(path).output.power_w == 10.0


# ----------------------------------------------------------------------------- quantities


def _spec(boards: int, spares_pct: float) -> Spec:
    return parse_spec(MINIMAL + f"\n[order]\nboards = {boards}\nspares_pct = {spares_pct}\n")


def test_quantity_guard_two_per_board_25_boards_4_pct():
    # formats.md: 2 x 25 x 1.04 is 52, not 53.
    assert _spec(25, 4.0).quantity(2) == 52


def test_quantity_guard_where_binary_floats_overshoot():
    # 2 x 25 x 1.10 is 55 exactly, but 2 * 25 * (1 + 10/100) is 55.00000000000001 in
    # binary floating point, so a bare ceil would order 56.
    assert math.ceil(2 * 25 * (1.0 + 10.0 / 100.0)) == 56
    assert _spec(25, 10.0).quantity(2) == 55


def test_quantity_rounds_up_a_real_fraction():
    # 2 x 10 x 1.05 = 21 exactly; 3 x 10 x 1.05 = 31.5 -> 32; 1 x 1 x 1.001 -> 2.
    assert _spec(10, 5.0).quantity(2) == 21
    assert _spec(10, 5.0).quantity(3) == 32
    assert _spec(1, 0.1).quantity(1) == 2
    assert _spec(4, 0.0).quantity(0) == 0


def test_quantity_against_exact_rational_arithmetic():
    # Independent route: the same formula in exact fractions, over a grid.
    for boards in (1, 2, 3, 7, 10, 25, 50, 100):
        for spares in (0, 1, 2, 3, 4, 5, 7, 10, 15, 20, 50):
            spec = _spec(boards, float(spares))
            for per_board in (1, 2, 3, 4, 6):
                exact = Fraction(per_board * boards) * (1 + Fraction(spares, 100))
                assert spec.quantity(per_board) == math.ceil(exact), (per_board, boards, spares)


# ----------------------------------------------------------------------------- errors with line numbers


def test_unknown_key_names_the_line_of_the_key():
    text = MINIMAL.replace("power_w = 10.0", "powr_w = 10.0")
    problems = problems_of(text)
    by_col = {p.column: p for p in problems}
    typo = by_col["[output] powr_w"]
    assert (typo.file, typo.line) == ("amp.toml", line_of(text, "powr_w"))
    assert typo.line == 4
    assert "unknown key" in typo.reason
    # The real key is then missing: named at its section's header.
    missing = by_col["[output] power_w"]
    assert (missing.line, missing.reason) == (line_of(text, "[output]"), "required key is missing")
    assert str(typo) == "amp.toml:4: [output] powr_w: unknown key (check the spelling against the documented keys)"


def test_unknown_top_level_key_and_unknown_section():
    text = 'colour = "red"\n' + MINIMAL + "\n[extras]\nfan = true\n"
    got = {p.column: p.line for p in problems_of(text)}
    assert got == {"colour": 1, "extras": line_of(text, "[extras]")}


def test_missing_required_key():
    text = MINIMAL.replace("load_ohm = 8.0\n", "")
    p = only(problems_of(text))
    assert (p.line, p.column, p.reason) == (line_of(text, "[output]"), "[output] load_ohm", "required key is missing")


def test_missing_required_section():
    text = MINIMAL.split("[supply]")[0]
    p = only(problems_of(text))
    assert (p.line, p.column, p.reason) == (0, "supply", "required key is missing")
    assert str(p) == "amp.toml: supply: required key is missing"


def test_v_min_above_v_max():
    text = MINIMAL.replace("v_min = 20.0", "v_min = 25.0")
    p = only(problems_of(text))
    assert (p.line, p.column, p.reason) == (line_of(text, "v_max"), "[supply] v_max", "is below v_min")


@pytest.mark.parametrize("power", ["0", "0.0", "-5.0"])
def test_power_must_be_positive(power):
    text = MINIMAL.replace("power_w = 10.0", f"power_w = {power}")
    p = only(problems_of(text))
    assert (p.line, p.column) == (line_of(text, "power_w"), "[output] power_w")
    assert "greater than 0" in p.reason


def test_regulate_with_split_is_refused_with_a_clear_message():
    text = MINIMAL + 'regulate = "auto"\n'
    p = only(problems_of(text))
    assert (p.line, p.column) == (line_of(text, "regulate"), "[supply] regulate")
    assert "single" in p.reason and "never" in p.reason and "split" in p.reason


def test_regulate_with_single_is_accepted():
    spec = parse_spec(MINIMAL + 'arrangement = "single"\nregulate = "always"\n')
    assert spec.supply.regulate == "always"


@pytest.mark.parametrize(
    ("broken", "bad_line"),
    [("v_max = = 22.0", 9), ("v_max = 22.0\n[supply]\nv_min = 1.0", 10), ('name = "unclosed', 1)],
)
def test_invalid_toml_reports_the_line(broken, bad_line):
    old = "v_max = 22.0" if broken.startswith("v_max") else 'name = "test amp"'
    text = MINIMAL.replace(old, broken)
    p = only(problems_of(text))
    assert p.line == bad_line
    assert p.reason.startswith("not valid TOML")


@pytest.mark.parametrize(
    ("old", "new", "column"),
    [
        ("power_w = 10.0", 'power_w = "ten"', "[output] power_w"),
        ("power_w = 10.0", 'power_w = "10"', "[output] power_w"),  # a string, even of digits
        ("load_ohm = 8.0", "load_ohm = 8.0\nchannels = 2.5", "[output] channels"),
        ("load_ohm = 8.0", "load_ohm = 8.0\nchannels = true", "[output] channels"),
        ("load_ohm = 8.0", 'load_ohm = 8.0\nshort_circuit = "yes"', "[output] short_circuit"),
        ("load_ohm = 8.0", 'load_ohm = 8.0\npairing = "nearest"', "[output] pairing"),
        ("v_max = 22.0", 'v_max = 22.0\narrangement = "bridge"', "[supply] arrangement"),
    ],
)
def test_wrong_type_or_value(old, new, column):
    text = MINIMAL.replace(old, new)
    p = only(problems_of(text))
    key = column.split()[-1]
    assert (p.line, p.column) == (line_of(text, f"{key} ="), column)
    assert p.reason.startswith("Input should be")


def test_wrong_objective_in_order():
    text = MINIMAL + '\n[order]\nobjective = "cheapest"\n'
    p = only(problems_of(text))
    assert (p.line, p.column) == (line_of(text, "objective"), "[order] objective")
    assert "'cost'" in p.reason and "'lines'" in p.reason


def test_several_spec_problems_are_reported_together():
    text = MINIMAL.replace("power_w = 10.0", "power_w = -1").replace("load_ohm = 8.0", "load_ohms = 8.0")
    cols = sorted(p.column for p in problems_of(text))
    assert cols == ["[output] load_ohm", "[output] load_ohms", "[output] power_w"]


def test_missing_spec_file(tmp_path):
    with pytest.raises(InputError) as info:
        load_spec(tmp_path / "nope.toml")
    assert only(info.value.problems) == Problem(str(tmp_path / "nope.toml"), 0, "", "spec file not found")


def test_non_utf8_spec_file(tmp_path):
    path = tmp_path / "latin.toml"
    path.write_bytes(MINIMAL.replace("test amp", "Verst\u00e4rker").encode("latin-1"))
    with pytest.raises(InputError) as info:
        load_spec(path)
    assert "not UTF-8" in only(info.value.problems).reason


def test_file_label_is_the_path(tmp_path):
    path = tmp_path / "typo.toml"
    path.write_text(MINIMAL.replace("v_min", "vmin"), encoding="utf-8")
    with pytest.raises(InputError) as info:
        load_spec(path)
    assert {p.file for p in info.value.problems} == {str(path)}


def test_key_in_an_inline_table_is_named_at_the_table_line():
    text = 'name = "x"\noutput = {power_w = 1.0, load_ohm = 8.0, powr = 1}\n[supply]\nv_min = 1.0\nv_max = 2.0\n'
    p = only(problems_of(text))
    assert (p.line, p.column) == (2, "[output] powr")
