"""The whole ``partpick design`` command on hostile specs and catalogues: exit 0, 3 or 4, never a traceback.

Every run goes through the command line as a user's would, writing the JSON
report and the order CSV. Exit 3 lists problems that each name a file the
run read (and a line that holds a record or the key named); exit 0 writes a
report that passes the schema and an order CSV with no formula cell; exit 4
writes an infeasible report and no order; exit 3 writes nothing.
"""

from __future__ import annotations

import contextlib
import csv
import io
import json
import re
import shutil
from pathlib import Path

from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from conftest import DEMO_CATALOG, EXAMPLES, FORMULA_START, is_number
from partpick.cli import main
from partpick.report.schema import Report

from .hostile import CELL, TOML_VALUE, mutate_cell, toml_value
from .test_fuzz_spec import KEYS

MODULE = next(e for e in EXAMPLES if e.name == "module_60w_4ohm_reactive.toml")
FILES = ("transistors.csv", "opamps.csv", "heatsinks.csv", "passives.csv", "offers.csv", "suppliers.csv",
         "diodes.csv", "regulators.csv")
#: Values a spec key may get: hostile ones, and plausible ones that keep the run going to the solver.
SPEC_VALUE = st.one_of(TOML_VALUE, st.floats(0.5, 400.0), st.integers(1, 8),
                       st.sampled_from(["auto", "resistor", "current_source", "any", "lines", "never", False, True]))
PROBLEM = re.compile(r"^(?P<file>.+?)(?::(?P<line>\d+))?: (?P<rest>.+)$")


def set_key(text: str, section: str, key: str, value: object) -> str:
    """The spec text with ``key = value`` in ``[section]`` (replaced when written, else added)."""
    lines = text.splitlines()
    start = lines.index(f"[{section}]") if f"[{section}]" in lines else None
    if start is None:
        return text + f"\n[{section}]\n{key} = {toml_value(value)}\n"
    end = next((i for i in range(start + 1, len(lines)) if lines[i].startswith("[")), len(lines))
    hits = [i for i in range(start + 1, end) if re.match(rf"^{key}\s*=", lines[i])]
    if hits:
        lines[hits[0]] = f"{key} = {toml_value(value)}"
    else:
        lines.insert(start + 1, f"{key} = {toml_value(value)}")
    return "\n".join(lines) + "\n"


def check_problems(err: str, spec: Path, catalog: Path) -> None:
    """Every problem line names the spec, a catalogue file or the command line, and a real line there."""
    lines = err.splitlines()
    assert lines and lines[-1].endswith("in the input; nothing was chosen."), err
    for text in lines[:-1]:
        m = PROBLEM.match(text)
        assert m, text
        path = Path(m["file"])
        assert m["file"] == "command line" or path == spec or path.parent == catalog, text
        if m["line"] and path.parent == catalog:
            physical = path.read_text(encoding="utf-8", errors="replace").splitlines()
            assert physical[int(m["line"]) - 1].strip() and not physical[int(m["line"]) - 1].startswith("#"), text


def check_outputs(code: int, out: Path) -> None:
    report, order = out / "report.json", out / "order.csv"
    if code == 3:
        assert not report.exists() and not order.exists()
        return
    rep = json.loads(report.read_text(encoding="utf-8"))
    Report.model_validate(rep)
    if code == 4:
        assert rep["status"] == "infeasible" and not order.exists()
        return
    with open(order, newline="", encoding="utf-8") as f:
        cells = [c for row in csv.reader(f) for c in row]
    assert not [c for c in cells if not is_number(c) and c.startswith(FORMULA_START)]


@settings(max_examples=20, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(
    spec_edits=st.lists(st.tuples(st.sampled_from(sorted(KEYS)), st.data()), max_size=2),
    cell=st.one_of(st.none(), st.none(), st.tuples(st.sampled_from(FILES), st.integers(0, 500), st.integers(0, 30), CELL)),
    exclude=st.one_of(st.just([]), st.lists(st.sampled_from(["VTD5200N", "QPH615", "FTX-B400-0.5", "[/]", "=X"]), max_size=2)),
)
def test_design_ends_with_exit_0_3_or_4_and_honest_outputs(tmp_path_factory, monkeypatch, spec_edits, cell, exclude):
    tmp = tmp_path_factory.mktemp("run")
    catalog, spec, out = tmp / "cat", tmp / "amp.toml", tmp / "out"
    shutil.copytree(DEMO_CATALOG, catalog)
    text = MODULE.read_text(encoding="utf-8")
    for section, data in spec_edits:
        text = set_key(text, section, data.draw(st.sampled_from(KEYS[section])), data.draw(SPEC_VALUE))
    spec.write_text(text, encoding="utf-8")
    if cell is not None:
        mutate_cell(catalog, *cell)
    argv = ["--no-color", "--quiet", "design", str(spec), "--catalog", str(catalog),
            "--json", str(out / "report.json"), "--bom", str(out / "order.csv")]
    if exclude:
        argv += ["--exclude", *exclude]
    monkeypatch.setenv("COLUMNS", "250")
    monkeypatch.delenv("PARTPICK_DEBUG", raising=False)
    stdout, stderr = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
        code = main(argv)
    err = stderr.getvalue()
    event(f"exit {code}")
    assert code in (0, 3, 4), err
    assert "Traceback" not in err and "internal error" not in err
    if code == 3:
        check_problems(err, spec, catalog)
    check_outputs(code, out)
