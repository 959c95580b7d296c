"""The nastiest inputs met so far, kept as plain regression tests of ``partpick design``.

Each case breaks one thing in a copy of the demo catalogue or in a spec and
runs the real command line: invalid input must end with exit 3 and the exact
``file:line: column: reason`` line, valid input (however odd its bytes) with
the same design as the clean files. Never a traceback.
"""

from __future__ import annotations

import contextlib
import io
from pathlib import Path

import pytest

from conftest import DEMO_CATALOG, EXAMPLES
from partpick.cli import main

MODULE = next(e for e in EXAMPLES if e.name == "module_60w_4ohm_reactive.toml")
OP_ROW = "OMC118,Ossely Microcircuits,DIP-8,1,6,36,1.5,2,0.5,1,0.025,6,0"
TR_ROW = "VT1360N,Vellmark Semiconductor,npn,VT1360P,TO-126,60,3,32,150,3.9,60,1,0.6,1.5,1,1,3,,ECB,100"
OFFER = "VT1360N,Tessaly Electronics,1,0.323,4000,1"


@pytest.fixture(autouse=True)
def _plain(monkeypatch):
    monkeypatch.setenv("COLUMNS", "250")
    monkeypatch.delenv("PARTPICK_DEBUG", raising=False)


def design(catalog: Path, spec: Path = MODULE, quiet: bool = True) -> tuple[int, str, list[str]]:
    """``partpick design`` through the command line: (exit code, stdout, stderr lines)."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(["--no-color", *(["--quiet"] if quiet else []), "design", str(spec), "--catalog", str(catalog)])
    assert "Traceback" not in out.getvalue() + err.getvalue() and "internal error" not in err.getvalue()
    return code, out.getvalue(), err.getvalue().splitlines()


@pytest.fixture(scope="module")
def clean_total() -> str:
    """The printed total of the module example on the clean demo catalogue."""
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("COLUMNS", "250")
        code, out, _ = design(DEMO_CATALOG)
    assert code == 0
    return out.strip()


def refused(catalog: Path, spec: Path = MODULE) -> list[str]:
    """The problem lines of a run that must end with exit 3 (the count line dropped)."""
    code, _, err = design(catalog, spec)
    assert code == 3, err
    assert err[-1].endswith("in the input; nothing was chosen.")
    return err[:-1]


# ----------------------------------------------------------------------------- catalogue: refused


def test_semicolon_separated_file_says_so(catalog_copy):
    catalog_copy.write("suppliers.csv", catalog_copy.text("suppliers.csv").replace(",", ";"))
    line = catalog_copy.line_of("suppliers.csv", "supplier;")
    assert refused(catalog_copy.path) == [
        f"{catalog_copy.label('suppliers.csv')}:{line}: looks semicolon-separated; partpick reads comma-separated "
        "files (save the sheet as CSV with ',' as the separator)"
    ]


@pytest.mark.parametrize("content", ["", "# only a comment\n\n", "\ufeff"])
def test_empty_file(catalog_copy, content):
    catalog_copy.write("diodes.csv", content)
    assert refused(catalog_copy.path) == [f"{catalog_copy.label('diodes.csv')}: file is empty: a header row is required"]


def test_missing_file(catalog_copy):
    catalog_copy.file("heatsinks.csv").unlink()
    assert refused(catalog_copy.path) == [f"{catalog_copy.label('heatsinks.csv')}: file is missing"]


@pytest.mark.parametrize("cell, reason", [
    ("nan", "'nan' is not a number"),
    ("inf", "'inf' is not a number"),
    ("-inf", "'-inf' is not a number"),
    ("1e400", "'1e400' is not a finite number"),
])
def test_nan_and_infinity_are_not_numbers(catalog_copy, cell, reason):
    line = catalog_copy.replace("transistors.csv", TR_ROW, TR_ROW.replace(",TO-126,60,", f",TO-126,{cell},"))
    assert refused(catalog_copy.path) == [f"{catalog_copy.label('transistors.csv')}:{line}: vceo_v: {reason}"]


@pytest.mark.parametrize("old, new, column, reason", [
    (",60,1,0.6,1.5,", ",0,1,0.6,1.5,", "hfe_min", "must be greater than zero, got 0"),
    (",150,3.9,60,", ",150,-0.5,60,", "rth_jc_k_w", "must be greater than zero, got -0.5"),
    (",TO-126,60,3,", ",TO-126,0.5,3,", "vce_sat_v", "is not below vceo_v"),
])
def test_physically_absurd_values(catalog_copy, old, new, column, reason):
    line = catalog_copy.replace("transistors.csv", TR_ROW, TR_ROW.replace(old, new))
    assert refused(catalog_copy.path) == [f"{catalog_copy.label('transistors.csv')}:{line}: {column}: {reason}"]


def test_duplicate_mpn(catalog_copy):
    first = catalog_copy.line_of("opamps.csv", OP_ROW)
    line = catalog_copy.append("opamps.csv", OP_ROW)
    assert refused(catalog_copy.path) == [
        f"{catalog_copy.label('opamps.csv')}:{line}: mpn: 'OMC118' already used in opamps.csv line {first}"
    ]


def test_offers_for_an_unknown_supplier_and_an_unknown_part(catalog_copy):
    sup = catalog_copy.append("offers.csv", OFFER.replace("Tessaly Electronics", "Nobody Ltd"))
    part = catalog_copy.append("offers.csv", OFFER.replace("VT1360N", "VT9999X"))
    label = catalog_copy.label("offers.csv")
    assert refused(catalog_copy.path) == [
        f"{label}:{sup}: supplier: unknown supplier 'Nobody Ltd'",
        f"{label}:{part}: mpn: unknown part or family 'VT9999X'",
    ]


def test_huge_cell(catalog_copy):
    line = catalog_copy.replace("opamps.csv", OP_ROW, OP_ROW.replace("Ossely Microcircuits", "O" * 100_000))
    assert refused(catalog_copy.path) == [f"{catalog_copy.label('opamps.csv')}:{line}: maker: cell longer than 4096 characters"]


@pytest.mark.parametrize("bad, reason", [(b"\xe9", "not UTF-8 text (byte 0xe9)"),
                                         (b"\x00", "contains a NUL character: not a text file")])
def test_bytes_that_are_not_text(catalog_copy, bad, reason):
    raw = catalog_copy.file("diodes.csv").read_bytes().split(b"\n")
    raw[4] = raw[4][:3] + bad + raw[4][3:]
    catalog_copy.file("diodes.csv").write_bytes(b"\n".join(raw))
    assert refused(catalog_copy.path) == [f"{catalog_copy.label('diodes.csv')}:5: {reason}"]


# ----------------------------------------------------------------------------- catalogue: read as meant


def test_crlf_and_byte_order_marks_everywhere_give_the_same_design(catalog_copy, tmp_path, clean_total):
    for path in catalog_copy.path.glob("*.csv"):
        text = path.read_text(encoding="utf-8")
        path.write_bytes(b"\xef\xbb\xbf" + text.replace("\n", "\r\n").encode("utf-8"))
    spec = tmp_path / "module.toml"
    spec.write_bytes(b"\xef\xbb\xbf" + MODULE.read_text(encoding="utf-8").replace("\n", "\r\n").encode("utf-8"))
    code, out, err = design(catalog_copy.path, spec)
    assert code == 0, err
    assert out.strip() == clean_total


def test_a_very_long_file_within_the_limit_gives_the_same_design(catalog_copy, clean_total):
    comment = "# " + "padding " * 10 + "\n"
    with open(catalog_copy.file("offers.csv"), "a", encoding="utf-8") as f:
        f.writelines(comment for _ in range(200_000))
    code, out, err = design(catalog_copy.path)
    assert code == 0, err
    assert out.strip() == clean_total


def test_names_with_terminal_markup_are_printed_as_written(catalog_copy, tmp_path, clean_total):
    """Square brackets in a name are text: a '[/]' once ended the run with a traceback."""
    text = catalog_copy.text("suppliers.csv")
    catalog_copy.write("suppliers.csv", text.replace("Tessaly Electronics", "[/]Tessaly [bold]Electronics"))
    catalog_copy.write("offers.csv", catalog_copy.text("offers.csv").replace("Tessaly Electronics", "[/]Tessaly [bold]Electronics"))
    spec = tmp_path / "module.toml"
    spec.write_text(MODULE.read_text(encoding="utf-8").replace('name = "', 'name = "[/] [red]'), encoding="utf-8")
    code, out, err = design(catalog_copy.path, spec, quiet=False)
    assert code == 0, err
    assert "[/]Tessaly [bold]Electronics" in out
    assert "[/] [red]Power module" in out
    assert clean_total in out


# ----------------------------------------------------------------------------- spec


def _spec(tmp_path: Path, text: str | bytes) -> Path:
    path = tmp_path / "amp.toml"
    path.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    return path


def test_missing_spec(tmp_path):
    assert refused(DEMO_CATALOG, tmp_path / "none.toml") == [f"{tmp_path / 'none.toml'}: spec file not found"]


def test_empty_spec_names_each_missing_section(tmp_path):
    spec = _spec(tmp_path, "")
    assert refused(DEMO_CATALOG, spec) == [f"{spec}: output: required key is missing",
                                            f"{spec}: supply: required key is missing"]


@pytest.mark.parametrize("value", ["nan", "inf", "-inf"])
def test_spec_number_must_be_finite(tmp_path, value):
    spec = _spec(tmp_path, MODULE.read_text(encoding="utf-8").replace("power_w = 60.0", f"power_w = {value}"))
    line = spec.read_text(encoding="utf-8").splitlines().index(f"power_w = {value}") + 1
    assert refused(DEMO_CATALOG, spec) == [f"{spec}:{line}: [output] power_w: Input should be a finite number"]


def test_spec_that_is_not_text(tmp_path):
    spec = _spec(tmp_path, b"name = \"\xff\"\n")
    assert refused(DEMO_CATALOG, spec) == [f"{spec}: not UTF-8 text"]
