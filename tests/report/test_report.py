"""The report: JSON against its schema, stable bytes, the order CSV, designators, the 80-column terminal.

Every run goes through the command line (``partpick.cli.main``) on the demo
catalogue and the shipped examples, as a user would run it.
"""

from __future__ import annotations

import contextlib
import csv
import hashlib
import io
import json
import re
import shutil
import sys
from pathlib import Path

import pandas as pd
import pytest
from pydantic import ValidationError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

from conftest import DEMO_CATALOG, EXAMPLES, FORMULA_START, ROOT, is_number
from partpick.cli import main
from partpick.report.schema import InfeasibleReport, OkReport, Report

SNAPSHOT = Path(__file__).parent / "snapshots" / "demo_80col.txt"

# Sine power into a resistor, P = Vpk^2 / (2 R) (textbook circuit theory):
# 2000 W into 8 ohm needs a 179 V peak; a 12 V rail gives at most 9 W.
INFEASIBLE = """\
name = "impossible: 2000 W into 8 ohm from +/-12 V"
[output]
power_w = 2000.0
load_ohm = 8.0
[supply]
arrangement = "split"
v_min = 12.0
v_max = 12.0
"""


def design(tmp: Path, spec: Path, catalog: Path = DEMO_CATALOG, *extra: str) -> tuple[int, str, Path, Path]:
    """``partpick design`` with --json and --bom into ``tmp``; returns (exit code, stdout, json, csv)."""
    tmp.mkdir(parents=True, exist_ok=True)
    rep, bom = tmp / "report.json", tmp / "order.csv"
    out = io.StringIO()
    with contextlib.redirect_stdout(out), pytest.MonkeyPatch.context() as mp:
        mp.setenv("COLUMNS", "250")  # no wrapped lines in the captured text
        code = main(["--no-color", "design", str(spec), "--catalog", str(catalog), "--json", str(rep), "--bom", str(bom), *extra])
    return code, out.getvalue(), rep, bom


@pytest.fixture(scope="module")
def runs(tmp_path_factory) -> dict[str, dict]:
    """Each example designed twice (to compare the bytes of the two runs)."""
    out = {}
    for ex in EXAMPLES:
        first = design(tmp_path_factory.mktemp(ex.stem), ex)
        second = design(tmp_path_factory.mktemp(ex.stem + "_again"), ex)
        assert first[0] == 0 and second[0] == 0, first[1][-2000:]
        out[ex.name] = dict(spec=ex, code=first[0], stdout=first[1], json=first[2], csv=first[3], again=second,
                            rep=json.loads(first[2].read_text(encoding="utf-8")))
    return out


@pytest.fixture(scope="module")
def infeasible(tmp_path_factory) -> dict:
    tmp = tmp_path_factory.mktemp("infeasible")
    spec = tmp / "impossible.toml"
    spec.write_text(INFEASIBLE, encoding="utf-8")
    code, stdout, rep, bom = design(tmp, spec)
    return dict(code=code, stdout=stdout, rep=json.loads(rep.read_text(encoding="utf-8")), csv=bom)


def key_paths(x, prefix: str = "") -> list[str]:
    """Every key of a nested JSON value, in document order (list items by index)."""
    if isinstance(x, dict):
        return [p for k, v in x.items() for p in [f"{prefix}/{k}", *key_paths(v, f"{prefix}/{k}")]]
    if isinstance(x, list):
        return [p for i, v in enumerate(x) for p in key_paths(v, f"{prefix}[{i}]")]
    return []


# ----------------------------------------------------------------------------- schema


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_json_report_validates_and_round_trips(runs, name):
    rep = runs[name]["rep"]
    model = Report.model_validate(rep)
    assert isinstance(model.root, OkReport)
    dumped = model.model_dump()
    assert dumped == rep
    # Same keys in the same order, same number types (an int stays an int).
    assert json.dumps(dumped) == json.dumps(rep)
    # The documented top-level order of the contract.
    assert list(rep)[:5] == ["schema", "status", "spec", "partpick", "design"]


def test_infeasible_report_validates_and_round_trips(infeasible):
    assert infeasible["code"] == 4
    rep = infeasible["rep"]
    model = Report.model_validate(rep)
    assert isinstance(model.root, InfeasibleReport)
    assert json.dumps(model.model_dump()) == json.dumps(rep)
    assert rep["status"] == "infeasible" and rep["funnel"]["output_stage"]["feasible"] == 0
    assert rep["causes"] and "highest_feasible_power_w" in rep["suggestions"]
    assert not infeasible["csv"].exists()  # no order to write


def test_report_as_built_validates_for_both_statuses(demo_catalog):
    """The dict of build_report itself (before JSON), feasible and infeasible."""
    import tomllib

    from partpick.optimize.design import run
    from partpick.report.build import build_report
    from partpick.spec import Spec, load_spec

    ok = run(load_spec(EXAMPLES[0]), demo_catalog)
    Report.model_validate(build_report(ok, demo_catalog.file_sha256, "cbc"))
    bad = run(Spec.model_validate(tomllib.loads(INFEASIBLE)), demo_catalog)
    rep = build_report(bad, demo_catalog.file_sha256, "cbc")
    assert rep["suggestions"] == {}  # the command fills them in later
    assert Report.model_validate(rep).model_dump() == rep


def _renamed(d: dict, key: str, new: str) -> dict:
    return {(new if k == key else k): v for k, v in d.items()}


BREAKS = {
    "design key renamed": lambda r: r | {"design": _renamed(r["design"], "soa_margin", "soa_margn")},
    "design key dropped": lambda r: r | {"design": {k: v for k, v in r["design"].items() if k != "t_sink_c"}},
    "totals currency dropped": lambda r: r | {"totals": {k: v for k, v in r["totals"].items() if k != "currency"}},
    "unknown top-level key": lambda r: r | {"extra": 1},
    "part row key renamed": lambda r: r | {"parts": [_renamed(r["parts"][0], "qty_per_board", "qty_board")] + r["parts"][1:]},
    "unknown role": lambda r: r | {"parts": [r["parts"][0] | {"role": "output_nnp"}] + r["parts"][1:]},
    "number as text": lambda r: r | {"totals": r["totals"] | {"total": str(r["totals"]["total"])}},
    "order row without price": lambda r: r | {"order": [{k: v for k, v in r["order"][0].items() if k != "unit_price"}]},
    "wrong schema id": lambda r: r | {"schema": "partpick.report/2"},
    "unknown status": lambda r: r | {"status": "done"},
    "spec key renamed": lambda r: r | {"spec": _renamed(r["spec"], "thermal", "thermals")},
    "funnel without output stage": lambda r: r | {"funnel": {k: v for k, v in r["funnel"].items() if k != "output_stage"}},
    "catalogue hash not hex": lambda r: r | {"partpick": r["partpick"] | {"catalog_sha256": {"offers.csv": "xyz"}}},
}


@pytest.mark.parametrize("case", BREAKS)
def test_schema_catches_a_renamed_missing_or_mistyped_key(runs, case):
    rep = json.loads(json.dumps(runs[EXAMPLES[0].name]["rep"]))
    with pytest.raises(ValidationError):
        Report.model_validate(BREAKS[case](rep))


# ----------------------------------------------------------------------------- stability


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_two_runs_write_identical_bytes_in_a_stable_key_order(runs, name):
    r = runs[name]
    _code, _out, json2, csv2 = r["again"]
    again = json.loads(json2.read_text(encoding="utf-8"))
    assert key_paths(again) == key_paths(r["rep"])
    assert json2.read_bytes() == r["json"].read_bytes()
    assert csv2.read_bytes() == r["csv"].read_bytes()


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_highs_writes_the_same_bytes_as_cbc_but_for_the_solver_name(runs, name, tmp_path):
    """Ties are broken by a stable order, so the two solvers give one answer, byte for byte."""
    r = runs[name]
    code, out, rep_path, bom = design(tmp_path, r["spec"], DEMO_CATALOG, "--solver", "highs")
    assert code == 0, out[-2000:]
    assert bom.read_bytes() == r["csv"].read_bytes()
    highs = rep_path.read_bytes()
    assert highs.count(b'"solver": "highs"') == 1
    assert highs.replace(b'"solver": "highs"', b'"solver": "cbc"') == r["json"].read_bytes()


def test_report_records_version_solver_and_the_hash_of_every_catalogue_file(runs):
    rep = runs[EXAMPLES[0].name]["rep"]
    with open(ROOT / "pyproject.toml", "rb") as f:
        version = tomllib.load(f)["project"]["version"]
    files = sorted(p.name for p in DEMO_CATALOG.glob("*.csv"))
    assert rep["partpick"]["version"] == version
    assert rep["partpick"]["solver"] == "cbc"
    assert rep["partpick"]["catalog_sha256"] == {n: hashlib.sha256((DEMO_CATALOG / n).read_bytes()).hexdigest() for n in files}


# ----------------------------------------------------------------------------- order CSV


def _printed_total(stdout: str, currency: str) -> float:
    m = re.findall(rf"^\s*total\s+(\d+\.\d\d) {currency}\s*$", stdout, flags=re.M)
    assert len(m) == 1, stdout[-1500:]
    return float(m[0])


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_bom_csv_adds_up_to_the_printed_and_json_total(runs, name):
    r = runs[name]
    rep, totals = r["rep"], r["rep"]["totals"]
    df = pd.read_csv(r["csv"], dtype={"supplier": str, "mpn": str, "value": str})
    assert list(df.columns) == ["supplier", "mpn", "value", "qty", "needed", "price_break", "unit_price",
                                "extended_price", "currency", "roles", "refs"]
    is_total = df["supplier"] == "TOTAL"
    is_fee = df["mpn"] == "order fee"
    lines = df[~is_total & ~is_fee]
    assert is_total.sum() == 1 and len(lines) == len(rep["order"])
    # Each line: qty x unit price (6 significant digits in the file) is its extended price.
    assert (lines["qty"] * lines["unit_price"]).to_numpy() == pytest.approx(lines["extended_price"].to_numpy(), abs=0.005)
    assert (lines["qty"] >= lines["needed"]).all()
    summed = lines["extended_price"].sum() + df.loc[is_fee, "extended_price"].sum()
    csv_total = float(df.loc[is_total, "extended_price"].iloc[0])
    printed = _printed_total(r["stdout"], totals["currency"])
    # To the cent: every route gives the same total.
    for total in (csv_total, printed, totals["total"]):
        assert abs(summed - total) < 0.005, (summed, total)
    assert df.loc[is_fee, "extended_price"].sum() == pytest.approx(totals["fees"], abs=0.005)
    assert set(df["currency"]) == {totals["currency"]}


def test_formula_like_part_number_is_neutralised_in_the_csv(runs, tmp_path):
    """A part number that a spreadsheet would run as a formula is written inert.

    OWASP's CSV injection guidance (https://owasp.org/www-community/attacks/CSV_Injection)
    asks for cells starting with =, +, -, @, tab or carriage return to be
    prefixed with a single quote, so the spreadsheet shows them as text.
    """
    rep = runs[EXAMPLES[0].name]["rep"]
    sink = next(p["mpn"] for p in rep["parts"] if p["role"] == "heatsink")
    evil = f"=HYPERLINK(\"x\",\"{sink}\")"
    cat = tmp_path / "cat"
    shutil.copytree(DEMO_CATALOG, cat)
    renamed = 0
    for name in ("heatsinks.csv", "offers.csv"):
        renamed += _rename_cells(cat / name, sink, evil)
    assert renamed >= 2  # the heatsink row and at least one offer
    code, out, rep_path, bom = design(tmp_path / "out", EXAMPLES[0], cat)
    assert code == 0, out[-2000:]
    new = json.loads(rep_path.read_text(encoding="utf-8"))
    assert next(p["mpn"] for p in new["parts"] if p["role"] == "heatsink") == evil  # the same design
    with open(bom, newline="", encoding="utf-8") as f:
        cells = [c for row in csv.reader(f) for c in row]
    assert "'" + evil in cells
    assert evil not in cells
    text_cells = [c for c in cells if not is_number(c)]
    assert not [c for c in text_cells if c.startswith(FORMULA_START)]


def _rename_cells(path: Path, old: str, new: str) -> int:
    """Rename a part number in the mpn column of a catalogue file (comment lines kept)."""
    lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
    count, out = 0, []
    for line in lines:
        if not line.startswith("#") and line.split(",", 1)[0] == old:
            line = next(csv.reader([line]))
            line[0] = new
            buf = io.StringIO()
            csv.writer(buf, lineterminator="\n").writerow(line)
            line = buf.getvalue()
            count += 1
        out.append(line)
    path.write_text("".join(out), encoding="utf-8")
    return count


# ----------------------------------------------------------------------------- designators


@pytest.mark.parametrize("name", [e.name for e in EXAMPLES])
def test_reference_designators_are_unique_and_counted(runs, name):
    rep = runs[name]["rep"]
    channels = rep["spec"]["output"]["channels"]
    refs = [r for p in rep["parts"] for r in p["refs"]]
    assert len(refs) == len(set(refs)), "a designator is used twice on one board"
    for p in rep["parts"]:
        assert len(p["refs"]) == round(p["qty_per_board"]), p
        if p["qty_per_channel"] is not None:
            assert p["qty_per_board"] == pytest.approx(channels * p["qty_per_channel"])
        # Letter codes by kind (IEEE 315 / IEC 81346 class letters, common practice).
        letter = {"heatsink": "HS"}.get(p["role"]) or ("C" if "capacitor" in p["role"] else None)
        for r in p["refs"]:
            assert re.fullmatch(r"(Q|U|D|HS|R|C)\d+", r), r
            if letter:
                assert re.fullmatch(rf"{letter}\d+", r), r
    # The order lists the same designators, each once.
    order_refs = [r for o in rep["order"] for r in o["refs"]]
    assert sorted(order_refs) == sorted(refs)


# ----------------------------------------------------------------------------- terminal


def test_demo_terminal_output_at_80_columns_matches_the_snapshot():
    """The demo as printed at 80 columns without colour.

    The snapshot is written on first creation; delete it to accept a new layout.
    """
    from partpick.commands import run_demo
    from partpick.report.console import make_console

    term = make_console(no_color=True, width=80)
    term.out.file = io.StringIO()
    term.err.file = io.StringIO()
    assert run_demo(term) == 0
    text = term.out.file.getvalue()
    too_long = [line for line in text.splitlines() if len(line) > 80]
    assert not too_long, too_long
    assert "\x1b[" not in text  # no colour codes
    assert re.search(r"^\s*total\s+\d+\.\d\d EUR\s*$", text, flags=re.M)
    if not SNAPSHOT.exists():
        SNAPSHOT.parent.mkdir(parents=True, exist_ok=True)
        SNAPSHOT.write_text(text, encoding="utf-8", newline="")
    assert text == SNAPSHOT.read_text(encoding="utf-8")


@pytest.mark.parametrize("spec_text", [
    None,  # the bench example as shipped
    "f_high_hz = 900000.0",  # a slew-rate heavy variant that once counted more feasible than candidates
    "power_w = 400.0",  # infeasible: no emitter resistor is rated for it, so no stage is formed
])
def test_funnel_counts_add_up(spec_text, demo_catalog):
    """Every funnel row: candidates = sum of what each constraint removed + feasible."""
    from partpick.optimize.design import run
    from partpick.report.build import funnel
    from partpick.spec import parse_spec

    text = next(e for e in EXAMPLES if e.stem.startswith("bench")).read_text()
    if spec_text is not None:
        key = spec_text.split(" = ")[0]
        text = re.sub(rf"^{key} = .*$", spec_text, text, flags=re.M)
    result = run(parse_spec(text), demo_catalog)
    rows = funnel(result)
    if spec_text == "power_w = 400.0":
        assert not result.feasible
        assert rows["emitter_resistor"]["feasible"] == 0 < rows["emitter_resistor"]["power rating (s.7)"]
        assert rows["output_stage"]["candidates"] == 0
    else:
        assert rows["output_stage"]["candidates"] > rows["output_stage"]["feasible"] > 0
    for role, counts in rows.items():
        removed = sum(v for k, v in counts.items() if k not in ("candidates", "feasible"))
        assert counts["candidates"] == removed + counts["feasible"], (role, counts)
