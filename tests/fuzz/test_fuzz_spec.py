"""Hostile spec files: every case is a valid spec or problems naming the file and the key's line, never a crash."""

from __future__ import annotations

import re

from hypothesis import given, settings
from hypothesis import strategies as st

from partpick.errors import InputError
from partpick.spec import Spec, load_spec, parse_spec

from .hostile import TOML_VALUE, toml_value

#: Every section and key of the spec contract, and a few that are not.
KEYS = {
    "output": ["power_w", "load_ohm", "load_min_ohm", "load_phase_deg", "channels", "f_low_hz", "f_high_hz",
               "input_vrms", "pairing", "short_circuit", "iq_a", "powr_w"],
    "stage": ["bias_feed", "bias_tracking", "bias_source_current_a"],
    "supply": ["arrangement", "v_min", "v_max", "regulate"],
    "thermal": ["ambient_c", "tj_derate_c", "shared_heatsink"],
    "order": ["boards", "spares_pct", "objective", "suppliers", "exclude"],
    "extra": ["x"],
}
BASE = {"output": {"power_w": 10.0, "load_ohm": 8.0}, "supply": {"v_min": 20.0, "v_max": 22.0}}

FUZZ = settings(max_examples=150, deadline=None, derandomize=True, database=None)


def write_toml(doc: dict[str, dict[str, object]], name: object) -> str:
    lines = [f"name = {toml_value(name)}"]
    for section, keys in doc.items():
        lines.append(f"[{section}]")
        lines += [f"{k} = {toml_value(v)}" for k, v in keys.items()]
    return "\n".join(lines) + "\n"


@st.composite
def documents(draw) -> dict[str, dict[str, object]]:
    """The minimal valid spec with some keys set to hostile values and some sections dropped."""
    doc = {s: dict(k) for s, k in BASE.items()}
    for _ in range(draw(st.integers(1, 4))):
        section = draw(st.sampled_from(sorted(KEYS)))
        doc.setdefault(section, {})[draw(st.sampled_from(KEYS[section]))] = draw(TOML_VALUE)
    for section in draw(st.lists(st.sampled_from(sorted(doc)), max_size=1)):
        del doc[section]
    return doc


def assert_named(problems, text: str, label: str) -> None:
    """Each problem names the file; one with a line points at its key or section there."""
    lines = text.splitlines()
    for p in problems:
        assert p.file == label
        assert 0 <= p.line <= len(lines), p
        if p.line and p.column:
            key = [k for k in re.split(r"[\] .]+", p.column.strip("[")) if k and not k.isdigit()][-1]
            assert key in lines[p.line - 1], (p, lines[p.line - 1])


@FUZZ
@given(doc=documents(), name=TOML_VALUE)
def test_hostile_values_are_a_spec_or_problems_at_the_key(doc, name):
    text = write_toml(doc, name)
    try:
        spec = parse_spec(text, "amp.toml")
    except InputError as exc:
        assert exc.problems
        assert_named(exc.problems, text, "amp.toml")
        return
    assert isinstance(spec, Spec)
    assert spec.output.power_w > 0 and spec.supply.v_min <= spec.supply.v_max


@settings(max_examples=60, deadline=None, derandomize=True, database=None)
@given(text=st.text(max_size=200))
def test_random_text_is_a_spec_or_problems(text):
    try:
        parse_spec(text, "amp.toml")
    except InputError as exc:
        assert all(p.file == "amp.toml" and 0 <= p.line <= len(text.splitlines()) + 1 for p in exc.problems)


@settings(max_examples=40, deadline=None, derandomize=True, database=None)
@given(raw=st.binary(max_size=200))
def test_random_bytes_are_refused_or_read(tmp_path_factory, raw):
    path = tmp_path_factory.mktemp("spec") / "amp.toml"
    path.write_bytes(raw)
    try:
        load_spec(path)
    except InputError as exc:
        assert all(p.file == str(path) for p in exc.problems)
