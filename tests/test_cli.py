"""Command line: exit codes 0/2/3/4, problem listing, design runs, the JSON report, refusals."""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess

import pytest

from conftest import DEMO_CATALOG, EXAMPLES, ROOT, csv_records
from partpick.catalog import load_catalog
from partpick.cli import main
from partpick.errors import InputError

PARTPICK = ROOT / ".venv" / "bin" / "partpick"
PART_FILES = ("transistors.csv", "opamps.csv", "regulators.csv", "heatsinks.csv", "passives.csv", "diodes.csv")

# 500 W would be the obvious impossible ask; 2000 W into 8 ohm on +/-12 V is as
# impossible and stays impossible for every power and rail the search for
# suggestions tries, which keeps the run short. Sine power into a resistor,
# P = Vpk^2 / (2 R) (textbook circuit theory): 2000 W into 8 ohm needs a 179 V
# peak, a 12 V rail gives at most 12^2 / 16 = 9 W even with a lossless stage.
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


@pytest.fixture(autouse=True)
def _wide_terminal(monkeypatch):
    # Wide enough that no message is wrapped; see test_problem_lines_are_not_wrapped for 80.
    monkeypatch.setenv("COLUMNS", "250")
    monkeypatch.delenv("PARTPICK_DEBUG", raising=False)


def run_cli(capsys, *args: str) -> tuple[int, str, str]:
    code = main(["--no-color", *args])
    out, err = capsys.readouterr()
    return code, out, err


def break_catalogue(copy) -> set[tuple[str, int, str]]:
    """Three problems in three files; returns their (file, line, column)."""
    return {
        (copy.label("opamps.csv"), copy.replace("opamps.csv", "0.035,2,22\n", "0.035,2,22p\n"), "comp_pf"),
        (copy.label("diodes.csv"),
         copy.replace("diodes.csv", "VD2215,Vellmark Semiconductor,SOD-27,0.65,", "VD2215,Vellmark Semiconductor,SOD-27,abc,"),
         "vf_v"),
        (copy.label("transistors.csv"),
         copy.replace("transistors.csv", "VT2810N,Vellmark Semiconductor,npn,", "VT2810N,Vellmark Semiconductor,npx,"),
         "polarity"),
    }


# ----------------------------------------------------------------------------- help and usage


def test_help_exits_0(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--help"])
    assert info.value.code == 0
    out = capsys.readouterr().out
    assert out.startswith("usage: partpick")
    for command in ("design", "demo", "catalog-check", "why", "evaluate"):
        assert command in out


def test_design_help_lists_the_contract_options(capsys):
    with pytest.raises(SystemExit) as info:
        main(["design", "--help"])
    assert info.value.code == 0
    out = capsys.readouterr().out
    for option in ("--catalog", "--json", "--bom", "--plots", "--objective", "--exclude", "--previous",
                   "--keep-footprints", "--alternatives", "--solver"):
        assert option in out


def test_no_command_exits_2_with_usage(capsys):
    assert main([]) == 2
    assert "usage: partpick" in capsys.readouterr().out


@pytest.mark.parametrize("argv", [["design"], ["frobnicate"], ["design", "x.toml", "--objective", "cheap"]])
def test_bad_command_line_exits_2(capsys, argv):
    with pytest.raises(SystemExit) as info:
        main(argv)
    assert info.value.code == 2
    assert "error:" in capsys.readouterr().err


# ----------------------------------------------------------------------------- catalog-check


def test_catalog_check_prints_the_summary(capsys):
    code, out, err = run_cli(capsys, "catalog-check", str(DEMO_CATALOG))
    assert code == 0
    n_parts = sum(len(csv_records(DEMO_CATALOG / name)) for name in PART_FILES)
    n_offers = len(csv_records(DEMO_CATALOG / "offers.csv"))
    assert f"catalogue OK: {n_parts} parts and families, {n_offers} offers" in out
    counts = {
        "transistors": "transistors.csv", "op-amps": "opamps.csv", "regulators": "regulators.csv",
        "heatsinks": "heatsinks.csv", "passive families": "passives.csv", "diodes": "diodes.csv",
        "offers": "offers.csv",
    }
    for label, name in counts.items():
        m = re.search(rf"^\W*{label}\W+(\d+)\W", out, flags=re.M)
        assert m, f"no row for {label}"
        assert int(m.group(1)) == len(csv_records(DEMO_CATALOG / name)), label
    for supplier in ("Parlowe Distribution", "Tessaly Electronics", "Brindlecombe Parts"):
        assert supplier in out
    assert "Traceback" not in err


def test_catalog_check_defaults_to_the_local_catalog_folder(capsys, tmp_path, monkeypatch):
    shutil.copytree(DEMO_CATALOG, tmp_path / "catalog")
    with open(tmp_path / "catalog" / "diodes.csv", "a", encoding="utf-8") as f:
        f.write("VD9001,Vellmark Semiconductor,SOD-27,0.6,0.1,diode\n")
    monkeypatch.chdir(tmp_path)
    code, out, _ = run_cli(capsys, "catalog-check")
    n_parts = sum(len(csv_records(DEMO_CATALOG / name)) for name in PART_FILES)
    assert code == 0
    assert f"catalogue OK: {n_parts + 1} parts and families" in out


def test_catalog_check_falls_back_to_the_shipped_demo(capsys, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # no ./catalog here
    code, out, _ = run_cli(capsys, "catalog-check")
    n_parts = sum(len(csv_records(DEMO_CATALOG / name)) for name in PART_FILES)
    assert code == 0
    assert f"catalogue OK: {n_parts} parts and families" in out


def test_broken_catalogue_exits_3_and_lists_every_problem(capsys, catalog_copy):
    expected = break_catalogue(catalog_copy)
    with pytest.raises(InputError) as info:
        load_catalog(catalog_copy.path)
    problems = info.value.problems
    assert {(p.file, p.line, p.column) for p in problems} == expected

    code, out, err = run_cli(capsys, "catalog-check", str(catalog_copy.path))
    assert code == 3
    lines = err.splitlines()
    for p in problems:
        assert f"{p.file}:{p.line}: {p.column}: {p.reason}" in lines
    assert "3 problems in the input; nothing was chosen." in err
    assert "Traceback" not in err
    assert "catalogue OK" not in out


def test_problem_lines_are_not_wrapped(capsys, catalog_copy, monkeypatch):
    monkeypatch.setenv("COLUMNS", "80")
    break_catalogue(catalog_copy)
    with pytest.raises(InputError) as info:
        load_catalog(catalog_copy.path)
    code, _, err = run_cli(capsys, "catalog-check", str(catalog_copy.path))
    assert code == 3
    lines = err.splitlines()
    assert all(str(p) in lines for p in info.value.problems)


def test_real_process_broken_catalogue_has_no_traceback(catalog_copy):
    expected = break_catalogue(catalog_copy)
    env = {**os.environ, "COLUMNS": "250"}
    env.pop("PARTPICK_DEBUG", None)
    proc = subprocess.run([str(PARTPICK), "--no-color", "catalog-check", str(catalog_copy.path)],
                          capture_output=True, text=True, timeout=120, env=env, cwd=ROOT)
    assert proc.returncode == 3
    assert "Traceback" not in proc.stderr and "Traceback" not in proc.stdout
    for file, line, column in expected:
        assert f"{file}:{line}: {column}: " in proc.stderr
    assert "3 problems in the input" in proc.stderr


# ----------------------------------------------------------------------------- design


@pytest.mark.parametrize("example", EXAMPLES, ids=lambda p: p.name)
def test_design_each_example_exits_0_prints_the_total_and_writes_the_report(capsys, tmp_path, example):
    report = tmp_path / "report.json"
    code, out, err = run_cli(capsys, "design", str(example), "--catalog", str(DEMO_CATALOG), "--json", str(report))
    assert code == 0, err
    rep = json.loads(report.read_text(encoding="utf-8"))
    assert rep["schema"] == "partpick.report/1"
    assert rep["status"] == "ok"
    totals = rep["totals"]
    assert totals["currency"] == "EUR"
    assert totals["total"] > 0
    # The printed total is the report's total.
    assert re.search(rf"\btotal\b.*\b{totals['total']:.2f} {totals['currency']}\b", out), out[-2000:]
    # Independent sums: the order lines add up to the parts total, parts + fees to the total.
    assert sum(line["extended_price"] for line in rep["order"]) == pytest.approx(totals["parts"], abs=0.01)
    assert totals["parts"] + totals["fees"] == pytest.approx(totals["total"], abs=0.01)
    # The spec as understood, defaults filled in.
    assert rep["spec"]["name"] == example.read_text(encoding="utf-8").split('name = "')[1].split('"')[0]
    assert rep["spec"]["thermal"]["tj_derate_c"] == 25.0
    assert {"output_npn", "output_pnp", "driver_opamp", "heatsink"} <= {p["role"] for p in rep["parts"]}
    assert "Traceback" not in err


def test_design_unknown_exclude_exits_3(capsys, tmp_path):
    report = tmp_path / "report.json"
    code, out, err = run_cli(capsys, "design", str(EXAMPLES[0]), "--catalog", str(DEMO_CATALOG),
                             "--exclude", "VT1360N", "NOPE-99", "--json", str(report))
    assert code == 3
    assert "command line: --exclude: unknown part or family 'NOPE-99'" in err.splitlines()
    assert "VT1360N" not in err  # a real part is not reported
    assert "1 problem in the input" in err
    assert not report.exists()  # invalid input writes no report


def test_design_spec_typo_exits_3_with_the_line(capsys, tmp_path):
    spec = tmp_path / "amp.toml"
    spec.write_text(INFEASIBLE.replace("power_w", "powr_w"), encoding="utf-8")
    code, _, err = run_cli(capsys, "design", str(spec), "--catalog", str(DEMO_CATALOG))
    assert code == 3
    assert f"{spec}:3: [output] powr_w: unknown key (check the spelling against the documented keys)" in err.splitlines()


def test_design_beyond_the_stage_size_cap_exits_2_with_what_to_change(capsys, tmp_path, monkeypatch):
    """A catalogue whose current sources give too many stage configurations: exit 2, the reason, no report."""
    from partpick.evaluate import stage

    monkeypatch.setattr(stage, "STAGE_ROWS_MAX", 10)
    report = tmp_path / "report.json"
    bench = ROOT / "examples" / "bench_2x25w_split.toml"
    code, out, err = run_cli(capsys, "design", str(bench), "--catalog", str(DEMO_CATALOG), "--json", str(report))
    assert code == 2
    assert "more than 10 stage configurations" in err
    assert 'set bias_feed = "resistor" under [stage] in the spec' in err
    assert "Traceback" not in err + out
    assert not report.exists()
    # The change the message names builds no current sources, so the cap is not
    # reached; on the demo catalogue the tight bench rails then leave no
    # resistor feed either (the example's own comment), which is exit 4.
    spec = tmp_path / "resistor.toml"
    spec.write_text(bench.read_text(encoding="utf-8").replace('bias_feed = "auto"', 'bias_feed = "resistor"'), encoding="utf-8")
    code, out, err = run_cli(capsys, "design", str(spec), "--catalog", str(DEMO_CATALOG), "--quiet")
    assert "stage configurations" not in err
    assert code == 4
    assert "bias feed (s.3) removed" in out + err


def test_design_on_a_broken_catalogue_exits_3_and_writes_no_report(capsys, catalog_copy, tmp_path):
    break_catalogue(catalog_copy)
    report = tmp_path / "report.json"
    code, _, err = run_cli(capsys, "design", str(EXAMPLES[0]), "--catalog", str(catalog_copy.path), "--json", str(report))
    assert code == 3
    assert "3 problems in the input" in err
    assert not report.exists()


def test_infeasible_spec_exits_4_and_reports_why(capsys, tmp_path):
    spec = tmp_path / "impossible.toml"
    spec.write_text(INFEASIBLE, encoding="utf-8")
    report = tmp_path / "report.json"
    code, out, err = run_cli(capsys, "design", str(spec), "--catalog", str(DEMO_CATALOG), "--json", str(report))
    assert code == 4
    assert "No feasible design" in out + err
    assert "Traceback" not in err
    rep = json.loads(report.read_text(encoding="utf-8"))
    assert rep["schema"] == "partpick.report/1"
    assert rep["status"] == "infeasible"
    assert rep["spec"]["output"]["power_w"] == 2000.0
    assert "funnel" in rep and "suggestions" in rep


@pytest.mark.parametrize("target", ["suppliers.csv", "report.json", "sub/report.json"])
@pytest.mark.parametrize("option", ["--json", "--bom"])
def test_output_inside_the_catalogue_is_refused(capsys, catalog_copy, target, option):
    path = catalog_copy.path / target
    before = {p.name: p.read_bytes() for p in catalog_copy.path.iterdir()}
    code, _, err = run_cli(capsys, "design", str(EXAMPLES[0]), "--catalog", str(catalog_copy.path), option, str(path))
    assert code == 2
    assert "refusing to write" in err
    assert {p.name: p.read_bytes() for p in catalog_copy.path.iterdir()} == before
    assert not (catalog_copy.path / "sub").exists()


def test_output_onto_the_spec_file_is_refused(capsys, tmp_path):
    spec = tmp_path / "amp.toml"
    shutil.copy(EXAMPLES[0], spec)
    before = spec.read_bytes()
    code, _, err = run_cli(capsys, "design", str(spec), "--catalog", str(DEMO_CATALOG), "--json", str(spec))
    assert code == 2
    assert "refusing to write" in err
    assert spec.read_bytes() == before


def test_evaluate_checks_the_given_part_and_never_beats_the_free_design(capsys, tmp_path):
    # The module example on the demo catalogue: the free design, then the same spec with
    # its output NPN fixed to another pair that passes. A design with a part fixed is
    # chosen from a subset of the free one's options, so it cannot cost less; the panel
    # must not call it "optimal" as if nothing had been fixed.
    spec = next(e for e in EXAMPLES if e.name == "module_60w_4ohm_reactive.toml")
    assert main(["--no-color", "design", str(spec), "--json", str(tmp_path / "free.json")]) == 0
    capsys.readouterr()
    free = json.loads((tmp_path / "free.json").read_text(encoding="utf-8"))
    chosen = next(p["mpn"] for p in free["parts"] if p["role"] == "output_npn")
    other = "VTD5200N"  # an output pair of the demo catalogue that passes this spec
    assert chosen != other
    code = main(["--no-color", "evaluate", str(spec), "--part", f"output_npn={other}", "--json", str(tmp_path / "given.json")])
    out = capsys.readouterr().out
    assert code == 0
    given = json.loads((tmp_path / "given.json").read_text(encoding="utf-8"))
    assert next(p["mpn"] for p in given["parts"] if p["role"] == "output_npn") == other
    assert given["totals"]["total"] >= free["totals"]["total"] - 1e-9
    assert "cheapest with the given parts" in out and "Evaluated selection: output_npn=" + other in out


def test_evaluate_says_when_the_part_serves_another_role_only(capsys):
    # VT2218N is a small pair of the demo catalogue: the module spec can use it as a
    # current-source transistor, never as an output device. Asked as output_npn, the
    # answer must say that, not only "feasible but not the cheapest" (its verdict as a
    # current source) under "not feasible".
    spec = next(e for e in EXAMPLES if e.name == "module_60w_4ohm_reactive.toml")
    code = main(["--no-color", "evaluate", str(spec), "--part", "output_npn=VT2218N"])
    out = " ".join(capsys.readouterr().out.split())
    assert code == 4
    assert "no output npn option of this spec uses it; as bias source transistor:" in out


# ----------------------------------------------------------------------------- the collector


@pytest.mark.parametrize("own_process", [True, False])
def test_imports_are_frozen_out_of_the_collector_only_in_a_process_of_its_own(monkeypatch, capsys, own_process):
    # partpick's own process (argv from sys.argv) freezes the objects its imports made
    # once the command's modules are loaded; a caller passing argv (this test process)
    # keeps its collector untouched. The freeze is recorded, not done, here.
    import gc

    calls = []
    monkeypatch.setattr(gc, "freeze", lambda: calls.append(True))
    argv = ["partpick", "--no-color", "catalog-check", str(DEMO_CATALOG)]
    monkeypatch.setattr("sys.argv", argv)
    code = main() if own_process else main(argv[1:])
    capsys.readouterr()
    assert code == 0
    assert calls == ([True] if own_process else [])
