"""Hostile catalogue cells: every case is a listed input problem or a valid catalogue, never a crash."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partpick.catalog import load_catalog
from partpick.cli import main
from partpick.errors import InputError

from .hostile import CELL, mutate_cell

ROOT = Path(__file__).resolve().parents[2]
FILES = ("transistors.csv", "opamps.csv", "heatsinks.csv", "passives.csv", "offers.csv", "suppliers.csv", "diodes.csv")
PROBLEM_LINE = re.compile(r"^.+?(:\d+)?: ")


@settings(max_examples=40, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(name=st.sampled_from(FILES), row=st.integers(0, 500), col=st.integers(0, 30), value=CELL)
def test_one_hostile_cell_is_a_listed_problem_or_a_valid_catalogue(tmp_path_factory, name, row, col, value):
    folder = tmp_path_factory.mktemp("cat")
    shutil.rmtree(folder)
    shutil.copytree(ROOT / "catalog", folder)
    mutate_cell(folder, name, row, col, value)
    try:
        cat = load_catalog(folder)
    except InputError as exc:
        assert exc.problems
        for p in exc.problems:
            assert PROBLEM_LINE.match(str(p)), str(p)
            assert p.file.startswith(str(folder))
        return
    assert len(cat.transistors) > 0


@settings(max_examples=15, deadline=None, derandomize=True, database=None)
@given(raw=st.binary(max_size=300))
def test_random_bytes_in_a_file_never_crash_catalog_check(tmp_path_factory, raw):
    folder = tmp_path_factory.mktemp("cat")
    shutil.rmtree(folder)
    shutil.copytree(ROOT / "catalog", folder)
    (folder / "opamps.csv").write_bytes(raw)
    code = main(["catalog-check", str(folder)])
    assert code in (0, 3)
