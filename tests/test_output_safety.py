"""Outputs: whole or absent after failures and interrupts, never over an input; solver faults as clear messages."""

from __future__ import annotations

import csv
import io
import json
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

import pulp
import pytest

from conftest import DEMO_CATALOG, EXAMPLES, FORMULA_START, ROOT, is_number
from partpick.cli import main
from partpick.report import files
from partpick.report.bom_csv import bom_csv_text
from solver_fakes import CRASHES, KILLED, STOPPED_WITH_DESIGN, STOPPED_WITHOUT_DESIGN, fake_cbc, slow

MODULE = next(e for e in EXAMPLES if e.name == "module_60w_4ohm_reactive.toml")


@pytest.fixture(autouse=True)
def _plain(monkeypatch):
    monkeypatch.setenv("COLUMNS", "250")
    monkeypatch.delenv("PARTPICK_DEBUG", raising=False)


def design(capsys, out: Path, *extra: str, spec: Path = MODULE, catalog: Path = DEMO_CATALOG) -> tuple[int, str, str]:
    """``partpick design`` writing report.json and order.csv into ``out``; (exit code, stdout, stderr)."""
    out.mkdir(parents=True, exist_ok=True)
    code = main(["--no-color", "design", str(spec), "--catalog", str(catalog),
                 "--json", str(out / "report.json"), "--bom", str(out / "order.csv"), *extra])
    o, e = capsys.readouterr()
    return code, o, e


def leftovers(folder: Path) -> list[str]:
    """Temporary files partpick would leave in ``folder``."""
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".tmp"))


# ----------------------------------------------------------------------------- atomic writes


@pytest.fixture
def old_outputs(tmp_path) -> dict[Path, bytes]:
    """Two output files from an earlier run."""
    old = {tmp_path / "report.json": b'{"old": true}\n', tmp_path / "order.csv": b"old,order\n"}
    for path, data in old.items():
        path.write_bytes(data)
    return old


def test_outputs_get_the_mode_a_plain_open_gives(tmp_path):
    """A temporary file is private (0600); the finished output must not be (umask applies)."""
    old = os.umask(0o022)
    try:
        files.write_all({tmp_path / "report.json": b"{}", tmp_path / "pics" / "soa.png": b"x"})
        plain = tmp_path / "plain.txt"
        plain.write_bytes(b"")
    finally:
        os.umask(old)
    want = plain.stat().st_mode & 0o777
    assert want == 0o644
    assert (tmp_path / "report.json").stat().st_mode & 0o777 == want
    assert (tmp_path / "pics" / "soa.png").stat().st_mode & 0o777 == want


def test_a_failing_rename_keeps_every_old_file_and_leaves_no_temporary_file(old_outputs, tmp_path, monkeypatch):
    def full_disk(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(files.os, "replace", full_disk)
    with pytest.raises(OSError):
        files.write_all({p: b"new" for p in old_outputs})
    assert {p: p.read_bytes() for p in old_outputs} == old_outputs
    assert leftovers(tmp_path) == []


def test_a_failing_write_of_the_second_file_touches_neither(old_outputs, tmp_path, monkeypatch):
    real, calls = os.fsync, []

    def fsync_fails_the_second_time(fd):
        calls.append(fd)
        if len(calls) == 2:
            raise OSError(5, "Input/output error")
        real(fd)

    monkeypatch.setattr(files.os, "fsync", fsync_fails_the_second_time)
    with pytest.raises(OSError):
        files.write_all({p: b"new" for p in old_outputs})
    assert {p: p.read_bytes() for p in old_outputs} == old_outputs
    assert leftovers(tmp_path) == []


def test_ctrl_c_while_staging_touches_no_output(old_outputs, tmp_path, monkeypatch):
    real, staged = files._stage, []

    def interrupted_on_the_second(path, data):
        if staged:
            raise KeyboardInterrupt
        staged.append(real(path, data))
        return staged[-1]

    monkeypatch.setattr(files, "_stage", interrupted_on_the_second)
    with pytest.raises(KeyboardInterrupt):
        files.write_all({p: b"new" for p in old_outputs})
    assert {p: p.read_bytes() for p in old_outputs} == old_outputs
    assert leftovers(tmp_path) == []


def test_ctrl_c_during_the_renames_is_held_until_every_file_is_written(old_outputs, tmp_path, monkeypatch):
    """An interrupt between two renames would leave a new report beside an old order."""
    real = os.replace

    def rename_then_ctrl_c(src, dst):
        real(src, dst)
        signal.pthread_kill(threading.main_thread().ident, signal.SIGINT)

    monkeypatch.setattr(files.os, "replace", rename_then_ctrl_c)
    with pytest.raises(KeyboardInterrupt):
        files.write_all({p: b"new" for p in old_outputs})
    assert {p.read_bytes() for p in old_outputs} == {b"new"}
    assert leftovers(tmp_path) == []


def test_interrupted_design_run_exits_130_with_a_message_and_writes_nothing(capsys, tmp_path, monkeypatch):
    def ctrl_c(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(files, "_stage", ctrl_c)
    code, _, err = design(capsys, tmp_path / "out")
    assert code == 130
    assert "interrupted" in err and "Traceback" not in err
    assert list((tmp_path / "out").iterdir()) == []


def _design_in_a_process(tmp_path: Path) -> tuple[subprocess.Popen, int, Path, Path]:
    """`partpick design` in a process of its own session with a solver that only waits; returns the
    process, the solver's process id once it runs, the output folder and the scratch folder (TMPDIR)."""
    marker, out, scratch = tmp_path / "solver.pid", tmp_path / "out", tmp_path / "tmp"
    out.mkdir()
    scratch.mkdir()
    cbc = fake_cbc(tmp_path, slow(marker))
    code = (f"import sys, pulp; pulp.PULP_CBC_CMD.pulp_cbc_path = {str(cbc)!r}; "
            "from partpick.cli import main; sys.exit(main(sys.argv[1:]))")
    args = ["--no-color", "design", str(MODULE), "--catalog", str(DEMO_CATALOG),
            "--json", str(out / "report.json"), "--bom", str(out / "order.csv")]
    env = {k: v for k, v in os.environ.items() if k != "PARTPICK_DEBUG"} | {"TMPDIR": str(scratch)}
    proc = subprocess.Popen([sys.executable, "-c", code, *args], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True, start_new_session=True, env=env, cwd=ROOT)
    try:
        deadline = time.monotonic() + 60
        while not marker.exists() or not marker.read_text().strip():
            assert proc.poll() is None and time.monotonic() < deadline, proc.communicate()
            time.sleep(0.05)
    except BaseException:
        _kill_session(proc)
        raise
    return proc, int(marker.read_text()), out, scratch


def _assert_stopped_cleanly(proc: subprocess.Popen, stdout: str, stderr: str, code: int, word: str,
                            out: Path, scratch: Path) -> None:
    """Exit ``code`` with ``word`` in one message, no traceback, no output file, no solver scratch folder."""
    assert proc.returncode == code, stderr
    assert word in stderr
    assert "Traceback" not in stderr + stdout
    assert list(out.iterdir()) == []
    assert list(scratch.glob("partpick-solve-*")) == []


def _kill_session(proc: subprocess.Popen) -> None:
    try:
        os.killpg(proc.pid, signal.SIGKILL)  # the fake solver, should it outlive the run
    except ProcessLookupError:
        pass


def test_ctrl_c_while_the_solver_runs_leaves_no_output_and_no_traceback(tmp_path):
    """A real process and a real SIGINT to its process group, as a terminal's Ctrl-C sends."""
    proc, _solver, out, scratch = _design_in_a_process(tmp_path)
    try:
        os.killpg(proc.pid, signal.SIGINT)
        stdout, stderr = proc.communicate(timeout=60)
    finally:
        _kill_session(proc)
    _assert_stopped_cleanly(proc, stdout, stderr, 130, "interrupted", out, scratch)


def test_sigterm_while_the_solver_runs_stops_the_solver_and_leaves_nothing_behind(tmp_path):
    """A real SIGTERM to partpick alone (as `kill PID` or a job runner sends): the solver program
    is stopped with it, its work folder removed, no output written, exit 143 without a traceback."""
    proc, solver, out, scratch = _design_in_a_process(tmp_path)
    try:
        assert any(scratch.glob("partpick-solve-*"))  # the solve's folder exists while it runs
        os.kill(proc.pid, signal.SIGTERM)
        stdout, stderr = proc.communicate(timeout=60)
        gone = time.monotonic() + 10
        while _alive(solver) and time.monotonic() < gone:
            time.sleep(0.05)
        solver_alive = _alive(solver)
    finally:
        _kill_session(proc)
    _assert_stopped_cleanly(proc, stdout, stderr, 143, "terminated", out, scratch)
    assert not solver_alive


def _alive(pid: int) -> bool:
    """Whether process ``pid`` still runs (a zombie waiting to be reaped counts as gone)."""
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except (OSError, IndexError):
        return False
    return state != "Z"


# ----------------------------------------------------------------------------- solver faults


@pytest.mark.parametrize("body, words", [
    (CRASHES, "stopped abnormally"),
    (KILLED, "stopped abnormally"),
])
def test_broken_or_killed_solver_names_the_alternative_and_writes_nothing(capsys, tmp_path, monkeypatch, body, words):
    monkeypatch.setattr(pulp.PULP_CBC_CMD, "pulp_cbc_path", str(fake_cbc(tmp_path, body)))
    code, _, err = design(capsys, tmp_path / "out")
    assert code == 1
    assert words in err and "--solver highs" in err
    assert "Traceback" not in err and "internal error" not in err
    assert list((tmp_path / "out").iterdir()) == []


@pytest.mark.parametrize("body", [CRASHES, KILLED, None])
def test_no_solver_files_are_left_behind(capsys, tmp_path, monkeypatch, body):
    # PuLP writes the model, start and answer files to the temporary folder and leaves
    # them there when the solver program fails; every solve's files must go.
    scratch = tmp_path / "scratch"
    scratch.mkdir()
    for var in ("TMPDIR", "TMP", "TEMP"):
        monkeypatch.setenv(var, str(scratch))
    monkeypatch.setattr(tempfile, "tempdir", str(scratch))
    if body is not None:
        monkeypatch.setattr(pulp.PULP_CBC_CMD, "pulp_cbc_path", str(fake_cbc(tmp_path, body)))
    code, _, err = design(capsys, tmp_path / "out")
    assert code == (0 if body is None else 1), err
    assert list(scratch.iterdir()) == []


def test_missing_solver_program_names_the_alternative(capsys, tmp_path, monkeypatch):
    monkeypatch.setattr(pulp.PULP_CBC_CMD, "pulp_cbc_path", str(tmp_path / "no-such-cbc"))
    code, _, err = design(capsys, tmp_path / "out")
    assert code == 1
    assert "missing or cannot be run" in err and "--solver highs" in err
    assert str(tmp_path / "no-such-cbc") in err


def test_time_limit_with_a_design_reports_it_as_not_proven_optimal(capsys, tmp_path, monkeypatch):
    code, _, _ = design(capsys, tmp_path / "proven")
    proven = json.loads((tmp_path / "proven" / "report.json").read_text(encoding="utf-8"))
    assert code == 0 and proven["optimal"] is True
    monkeypatch.setattr(pulp.PULP_CBC_CMD, "pulp_cbc_path", str(fake_cbc(tmp_path, STOPPED_WITH_DESIGN)))
    code, out, err = design(capsys, tmp_path / "out", "--time-limit", "30")
    assert code == 0, err
    rep = json.loads((tmp_path / "out" / "report.json").read_text(encoding="utf-8"))
    assert rep["optimal"] is False
    assert "not proven optimal" in out
    assert rep["totals"] == proven["totals"]  # the design found is reported, not dropped


def test_time_limit_without_a_design_is_a_clear_error_not_infeasibility(capsys, tmp_path, monkeypatch):
    monkeypatch.setattr(pulp.PULP_CBC_CMD, "pulp_cbc_path", str(fake_cbc(tmp_path, STOPPED_WITHOUT_DESIGN)))
    code, out, err = design(capsys, tmp_path / "out", "--time-limit", "2.5")
    assert code == 1
    assert "no design within the time limit of 2.5 s" in err
    assert "No feasible design" not in out + err
    assert list((tmp_path / "out").iterdir()) == []


@pytest.mark.parametrize("value", ["0", "-1", "nan", "inf", "soon"])
def test_time_limit_must_be_a_positive_number(capsys, value):
    with pytest.raises(SystemExit) as info:
        main(["design", str(MODULE), "--time-limit", value])
    assert info.value.code == 2
    assert "--time-limit" in capsys.readouterr().err


# ----------------------------------------------------------------------------- refusals


def test_report_over_the_previous_report_is_refused(capsys, tmp_path):
    code, _, _ = design(capsys, tmp_path / "first")
    previous = tmp_path / "first" / "report.json"
    before = previous.read_bytes()
    code = main(["--no-color", "design", str(MODULE), "--catalog", str(DEMO_CATALOG),
                 "--previous", str(previous), "--json", str(previous)])
    assert code == 2
    assert "refusing to write" in capsys.readouterr().err
    assert previous.read_bytes() == before


def test_report_and_order_into_one_file_is_refused(capsys, tmp_path):
    target = tmp_path / "both.txt"
    code = main(["--no-color", "design", str(MODULE), "--catalog", str(DEMO_CATALOG),
                 "--json", str(target), "--bom", str(target)])
    assert code == 2
    assert "same file" in capsys.readouterr().err
    assert not target.exists()


def test_pictures_into_the_catalogue_folder_are_refused(capsys, catalog_copy):
    before = {p.name: p.read_bytes() for p in catalog_copy.path.iterdir()}
    code = main(["--no-color", "design", str(MODULE), "--catalog", str(catalog_copy.path),
                 "--plots", str(catalog_copy.path / "pictures")])
    assert code == 2
    assert "refusing to write" in capsys.readouterr().err
    assert {p.name: p.read_bytes() for p in catalog_copy.path.iterdir()} == before


def test_output_through_a_link_to_an_input_is_refused(capsys, catalog_copy, tmp_path):
    link = tmp_path / "innocent.csv"
    link.symlink_to(catalog_copy.file("offers.csv"))
    before = catalog_copy.file("offers.csv").read_bytes()
    code = main(["--no-color", "design", str(MODULE), "--catalog", str(catalog_copy.path), "--bom", str(link)])
    assert code == 2
    assert "refusing to write" in capsys.readouterr().err
    assert catalog_copy.file("offers.csv").read_bytes() == before


# ----------------------------------------------------------------------------- CSV injection


def _rewrite(path: Path, edit) -> None:
    """Apply ``edit(header, cells)`` to every data row of a catalogue file."""
    lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
    header, out = None, []
    for line in lines:
        if line.startswith("#") or not line.strip():
            out.append(line)
            continue
        cells = next(csv.reader([line]))
        if header is None:
            header = cells
        else:
            edit(header, cells)
            buf = io.StringIO()
            csv.writer(buf, lineterminator="\n").writerow(cells)
            line = buf.getvalue()
        out.append(line)
    path.write_text("".join(out), encoding="utf-8")


def _prefixed(prefix: str, columns: tuple[str, ...]):
    def edit(header: list[str], cells: list[str]) -> None:
        for col in columns:
            if col in header:
                cells[header.index(col)] = prefix + cells[header.index(col)]
    return edit


@pytest.fixture(scope="module")
def hostile_names(tmp_path_factory) -> Path:
    """The demo catalogue with every part, family, maker and supplier name starting with a formula character.

    Each file gets its own character, so every one of = + - @ reaches the order CSV.
    """
    folder = tmp_path_factory.mktemp("hostile") / "cat"
    shutil.copytree(DEMO_CATALOG, folder)
    supplier_prefix = "@"
    name_prefix = {"transistors.csv": "=", "opamps.csv": "+", "heatsinks.csv": "-", "diodes.csv": "@",
                   "regulators.csv": "=", "passives.csv": "-"}
    renames: dict[str, str] = {}
    for name, prefix in name_prefix.items():
        key = "family" if name == "passives.csv" else "mpn"

        def edit(header, cells, prefix=prefix, key=key):
            old = cells[header.index(key)]
            renames[old] = prefix + old
            cells[header.index(key)] = renames[old]
            for col in ("maker", "complement"):
                if col in header and cells[header.index(col)]:
                    cells[header.index(col)] = prefix + cells[header.index(col)]
        _rewrite(folder / name, edit)
    _rewrite(folder / "suppliers.csv", _prefixed(supplier_prefix, ("supplier",)))

    def offers(header, cells):
        cells[header.index("mpn")] = renames[cells[header.index("mpn")]]
        cells[header.index("supplier")] = supplier_prefix + cells[header.index("supplier")]
    _rewrite(folder / "offers.csv", offers)
    return folder


def test_every_text_cell_of_the_order_csv_is_neutralised(capsys, hostile_names, tmp_path):
    """OWASP's CSV injection guidance: no text cell may start with = + - @ tab or CR."""
    code, _, err = design(capsys, tmp_path / "out", catalog=hostile_names)
    assert code == 0, err
    rep = json.loads((tmp_path / "out" / "report.json").read_text(encoding="utf-8"))
    with open(tmp_path / "out" / "order.csv", newline="", encoding="utf-8") as f:
        cells = [c for row in csv.reader(f) for c in row]
    starts = {o["mpn"][0] for o in rep["order"]} | {o["supplier"][0] for o in rep["order"]}
    assert set("=+-@") <= starts  # the test reaches every character it checks
    text_cells = [c for c in cells if not is_number(c)]
    assert not [c for c in text_cells if c.startswith(FORMULA_START)]
    for o in rep["order"]:
        assert "'" + o["mpn"] in cells and "'" + o["supplier"] in cells


def test_tab_and_carriage_return_cells_are_neutralised_too():
    """Tab and CR cannot come through the catalogue (its cells are trimmed); the writer quotes them all the same."""
    rep = {"order": [{"supplier": "\tSup", "mpn": "\rX", "value": "=1", "qty": 1, "needed": 1, "price_break": 1,
                      "unit_price": 1.0, "extended_price": 1.0, "roles": ["+r"], "refs": ["@R1"]}],
           "totals": {"currency": "-EUR", "fees_by_supplier": {"\tSup": 2.0}, "total": 3.0}}
    cells = [c for row in csv.reader(io.StringIO(bom_csv_text(rep), newline="")) for c in row]
    for hostile in ("\tSup", "\rX", "=1", "+r", "@R1", "-EUR"):
        assert "'" + hostile in cells and hostile not in cells


# ----------------------------------------------------------------------------- one time limit for every search


def both_feeds_spec(tmp_path: Path) -> Path:
    """The bench example at 15 W: on the demo catalogue both bias feeds have designs."""
    bench = next(e for e in EXAMPLES if e.name == "bench_2x25w_split.toml")
    text = bench.read_text(encoding="utf-8")
    assert "power_w = 25.0" in text
    path = tmp_path / "both_feeds.toml"
    path.write_text(text.replace("power_w = 25.0", "power_w = 15.0"), encoding="utf-8")
    return path


def test_time_limit_reaches_every_search_of_the_command(capsys, tmp_path, monkeypatch):
    # The design, the other bias feed's design, each stock-risk re-solve and each
    # alternative: every search the command makes gets the user's --time-limit.
    from partpick.optimize import milp

    real = milp.solve
    limits, reused = [], []

    def spy(problem, solver="cbc", time_limit=None, prune=True, bounds=None, start=None):
        limits.append(time_limit)
        reused.append(bounds is not None)
        return real(problem, solver=solver, time_limit=time_limit, prune=prune, bounds=bounds, start=start)

    monkeypatch.setattr(milp, "solve", spy)
    monkeypatch.setattr("partpick.optimize.design.solve", spy)
    code, out, err = design(capsys, tmp_path / "out", "--time-limit", "45", "--risk", "--alternatives", "3",
                            spec=both_feeds_spec(tmp_path))
    assert code == 0, err
    rep = json.loads((tmp_path / "out" / "report.json").read_text(encoding="utf-8"))
    assert rep["design"]["bias_feed_alternative"]["feasible"] is True  # its design was searched
    # 1 design + 1 feed comparison + one re-solve per stock-risk row + 2 more alternatives
    # (the first alternative is the design itself, not searched again).
    assert len(limits) == 1 + 1 + len(rep["stock_risk"]) + 2
    assert set(limits) == {45.0}
    # Every re-solve adds a rule to the design's own problem and takes its cost bounds.
    assert reused == [False] + [True] * (len(limits) - 1)


def test_time_limit_without_a_design_for_the_other_feed_leaves_the_comparison_out(tmp_path, monkeypatch):
    # A search that finds no design by the limit proves neither "feasible" nor
    # "infeasible": the comparison is left out, never reported as either.
    from partpick.catalog import load_catalog
    from partpick.errors import SolverError, SolverTimeout
    from partpick.optimize import design as design_mod, milp
    from partpick.optimize.explain import compare_feeds
    from partpick.spec import load_spec

    catalog = load_catalog(DEMO_CATALOG)
    result = design_mod.run(load_spec(both_feeds_spec(tmp_path)), catalog)
    found = compare_feeds(result, catalog, time_limit=45.0)
    assert found["feasible"] is True and "best" in found["reason"]  # with time, a proven comparison

    def no_design(problem, solver="cbc", time_limit=None, prune=True, bounds=None, start=None):
        raise SolverTimeout(time_limit)

    monkeypatch.setattr(milp, "solve", no_design)
    assert compare_feeds(result, catalog, time_limit=45.0) is None

    def crashed(problem, solver="cbc", time_limit=None, prune=True, bounds=None, start=None):
        raise SolverError("the solver stopped without a design")

    monkeypatch.setattr(milp, "solve", crashed)
    for limit in (None, 45.0):  # a real fault propagates, with a limit or without
        with pytest.raises(SolverError):
            compare_feeds(result, catalog, time_limit=limit)


def test_stock_risk_says_when_no_design_was_found_in_time(monkeypatch):
    from partpick.catalog import load_catalog
    from partpick.errors import SolverTimeout
    from partpick.optimize import design as design_mod, milp
    from partpick.optimize.revise import stock_risk
    from partpick.spec import load_spec

    result = design_mod.run(load_spec(MODULE), load_catalog(DEMO_CATALOG))

    def no_design(problem, solver="cbc", time_limit=None, prune=True, bounds=None, start=None):
        raise SolverTimeout(time_limit)

    monkeypatch.setattr(milp, "solve", no_design)
    risks = stock_risk(result, time_limit=7.0)
    assert risks and all(r.total_without is None and r.replacement == "no design found within 7 s" for r in risks)
