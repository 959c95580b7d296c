"""Catalogue loader: the demo catalogue, and every kind of bad input named by file:line: column."""

from __future__ import annotations

import hashlib

import pandas as pd
import pytest

from conftest import DEMO_CATALOG, csv_records
from partpick.catalog import load_catalog
from partpick.catalog.rows import FILES
from partpick.errors import InputError, Problem

CATEGORIES = {
    "transistors.csv": "transistors",
    "opamps.csv": "opamps",
    "regulators.csv": "regulators",
    "heatsinks.csv": "heatsinks",
    "passives.csv": "passives",
    "diodes.csv": "diodes",
    "suppliers.csv": "suppliers",
    "offers.csv": "offers",
}
KEY = {"passives.csv": "family", "suppliers.csv": "supplier"}


def only(problems: list[Problem]) -> Problem:
    assert len(problems) == 1, "\n".join(map(str, problems))
    return problems[0]


# ----------------------------------------------------------------------------- the demo catalogue


def test_demo_catalogue_loads(demo_catalog):
    assert demo_catalog.currency == "EUR"
    assert set(demo_catalog.file_sha256) == set(FILES)


@pytest.mark.parametrize("name", list(CATEGORIES))
def test_row_count_per_category_matches_the_csv_module(demo_catalog, name):
    records = csv_records(DEMO_CATALOG / name)
    assert len(records) > 0
    frame = getattr(demo_catalog, CATEGORIES[name])
    assert len(frame) == len(records)
    key = KEY.get(name, "mpn")
    with open(DEMO_CATALOG / name, encoding="utf-8") as f:
        header = next(line for line in f if not line.startswith("#")).strip().split(",")
    col = header.index(key)
    assert list(frame[key]) == [r[col].strip() for r in records]


def test_float_columns_are_float_dtype(demo_catalog):
    for name, model in FILES.items():
        frame = getattr(demo_catalog, CATEGORIES[name])
        for column, info in model.model_fields.items():
            if "float" in str(info.annotation):
                assert frame[column].dtype == "float64", f"{name}: {column} is {frame[column].dtype}"
    tr = demo_catalog.transistors
    assert pd.api.types.is_float_dtype(tr["vceo_v"])
    assert pd.api.types.is_float_dtype(tr["ft_mhz"])  # optional column, still float
    assert pd.api.types.is_integer_dtype(demo_catalog.heatsinks["max_devices"])
    assert pd.api.types.is_integer_dtype(demo_catalog.offers["min_qty"])
    assert pd.api.types.is_integer_dtype(demo_catalog.opamps["per_package"])
    # A blank optional cell is "unknown", NaN in a float column.
    hs = demo_catalog.heatsinks.set_index("mpn")
    assert pd.isna(hs.loc["FTX-C220-21", "rth_cs_k_w"])
    assert hs.loc["FTX-C126-25", "rth_cs_k_w"] == 1.2


def test_passive_values_parsed_from_letter_codes(demo_catalog):
    pa = demo_catalog.passives.set_index("family")
    # Cells "0R1" and "10R" (IEC 60062), "4700u" (SI prefix), "1.0n" and "1.0u".
    assert pa.loc["AR-PW12-3W", "value_min"] == pytest.approx(0.1)
    assert pa.loc["AR-PW12-3W", "value_max"] == pytest.approx(10.0)
    assert pa.loc["AC-EL6-25V", "value_max"] == pytest.approx(4.7e-3)
    assert pa.loc["AC-FP6-100V", "value_min"] == pytest.approx(1e-9)
    assert pa.loc["AC-FP6-100V", "value_max"] == pytest.approx(1e-6)


def test_soa_columns_are_tuples_of_the_breakpoints(demo_catalog):
    tr = demo_catalog.transistors.set_index("mpn")
    # transistors.csv, VT1480N: soa_dc "2:4;10:4;20:1.6;40:0.5;80:0.12"
    assert tr.loc["VT1480N", "soa_v"] == (2.0, 10.0, 20.0, 40.0, 80.0)
    assert tr.loc["VT1480N", "soa_a"] == (4.0, 4.0, 1.6, 0.5, 0.12)
    # A blank soa_dc gives empty tuples.
    assert tr.loc["VT1360N", "soa_v"] == () and tr.loc["VT1360N", "soa_a"] == ()
    assert all(isinstance(v, tuple) for v in tr["soa_v"])
    assert all(len(v) == len(a) for v, a in zip(tr["soa_v"], tr["soa_a"]))


def test_line_column_is_the_physical_line(demo_catalog):
    lines = (DEMO_CATALOG / "transistors.csv").read_text(encoding="utf-8").splitlines()
    row = demo_catalog.transistors.set_index("mpn").loc["VT2810N"]
    assert lines[int(row["line"]) - 1].startswith("VT2810N,Vellmark Semiconductor,npn,")
    # Two comment lines and the header come first: the first record is on line 4.
    assert int(demo_catalog.transistors["line"].iloc[0]) == 4


@pytest.mark.parametrize("name", list(CATEGORIES))
def test_every_line_number_points_at_its_row(demo_catalog, name):
    lines = (DEMO_CATALOG / name).read_text(encoding="utf-8").splitlines()
    frame = getattr(demo_catalog, CATEGORIES[name])
    key = KEY.get(name, "mpn")
    for line, value in zip(frame["line"], frame[key]):
        assert lines[int(line) - 1].split(",")[0].strip() == value


def test_file_sha256_is_the_digest_of_the_bytes(demo_catalog):
    for name in FILES:
        assert demo_catalog.file_sha256[name] == hashlib.sha256((DEMO_CATALOG / name).read_bytes()).hexdigest()


def test_comments_and_blank_lines_are_skipped(catalog_copy):
    catalog_copy.replace("diodes.csv", "VD3110,", "\n# a comment between rows\n   \n  # indented comment\nVD3110,")
    cat = load_catalog(catalog_copy.path)
    assert list(cat.diodes["mpn"]) == ["VD2215", "VD3110", "VD3330", "VL18R3", "VL20G3"]
    assert list(cat.diodes["line"]) == [4, 9, 10, 11, 12]
    assert catalog_copy.line_of("diodes.csv", "VD3110,") == 9


def test_utf8_byte_order_mark_is_tolerated(catalog_copy):
    # BOM before a comment line, and BOM directly before the header row.
    for name in ("transistors.csv", "suppliers.csv"):
        catalog_copy.file(name).write_bytes(b"\xef\xbb\xbf" + catalog_copy.file(name).read_bytes())
    body = catalog_copy.text("diodes.csv").split("\n", 2)[2]  # drop the two comment lines
    catalog_copy.file("diodes.csv").write_bytes(b"\xef\xbb\xbf" + body.encode("utf-8"))
    cat = load_catalog(catalog_copy.path)
    assert list(cat.diodes["mpn"])[0] == "VD2215"
    assert int(cat.diodes["line"].iloc[0]) == 2
    assert len(cat.transistors) == len(csv_records(DEMO_CATALOG / "transistors.csv"))
    assert list(cat.suppliers["supplier"])[0] == "Parlowe Distribution"


def test_crlf_line_endings_are_tolerated(catalog_copy, demo_catalog):
    for name in FILES:
        raw = catalog_copy.file(name).read_bytes()
        assert b"\r\n" not in raw
        catalog_copy.file(name).write_bytes(raw.replace(b"\n", b"\r\n"))
    cat = load_catalog(catalog_copy.path)
    for attr in CATEGORIES.values():
        pd.testing.assert_frame_equal(getattr(cat, attr), getattr(demo_catalog, attr))


def test_unknown_columns_are_accepted(catalog_copy):
    text = catalog_copy.text("diodes.csv").replace(",kind\n", ",kind,note\n")
    text = text.replace(",diode\n", ",diode,spare bin\n").replace(",led\n", ",led,\n")
    catalog_copy.write("diodes.csv", text)
    cat = load_catalog(catalog_copy.path)
    assert len(cat.diodes) == 5


def test_whitespace_and_case_around_cells_are_tolerated(catalog_copy):
    catalog_copy.replace("diodes.csv", "VD2215,Vellmark Semiconductor,SOD-27,0.65,0.2,diode",
                         " VD2215 , Vellmark Semiconductor ,SOD-27, 0.65 ,0.2, DIODE ")
    d = load_catalog(catalog_copy.path).diodes.set_index("mpn")
    assert d.loc["VD2215", "vf_v"] == 0.65 and d.loc["VD2215", "kind"] == "diode"


# ----------------------------------------------------------------------------- bad cells


def test_non_number_in_a_unit_column(catalog_copy):
    line = catalog_copy.replace("transistors.csv", "VT2810N,Vellmark Semiconductor,npn,VT2810P,TO-220,80,",
                                "VT2810N,Vellmark Semiconductor,npn,VT2810P,TO-220,eighty,")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("transistors.csv"), line, "vceo_v")
    assert p.reason == "'eighty' is not a number"
    assert str(p) == f"{catalog_copy.label('transistors.csv')}:{line}: vceo_v: 'eighty' is not a number"


def test_si_prefix_in_a_unit_column_is_refused(catalog_copy):
    # formats.md: "comp_pf = 22p is refused" (the column is already in pF).
    line = catalog_copy.replace("opamps.csv", "0.035,2,22\n", "0.035,2,22p\n")
    assert catalog_copy.line_of("opamps.csv", "OMC183,") == line
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("opamps.csv"), line, "comp_pf")
    assert "'22p'" in p.reason and "SI prefix" in p.reason


def test_bad_letter_code_in_value_min(catalog_copy):
    line = catalog_copy.replace("passives.csv", "AR-MF24-025,resistor,E24,1,1R,", "AR-MF24-025,resistor,E24,1,4k7k,")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("passives.csv"), line, "value_min")
    assert "'4k7k' is not a value" in p.reason and "IEC 60062" in p.reason


@pytest.mark.parametrize(
    ("old", "new", "column"),
    [
        ("VT2810N,Vellmark Semiconductor,npn,VT2810P,TO-220,80,10,80,150,1.56,25,",
         "VT2810N,Vellmark Semiconductor,npn,VT2810P,TO-220,80,10,80,150,1.56,,", "hfe_min"),
        ("VT2810N,Vellmark Semiconductor,", "VT2810N,  ,", "maker"),
    ],
)
def test_required_value_missing(catalog_copy, old, new, column):
    line = catalog_copy.replace("transistors.csv", old, new)
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("transistors.csv"), line, column)
    assert p.reason == "required value is missing"


@pytest.mark.parametrize(("cell", "shown"), [("0", "0"), ("-2.5", "-2.5")])
def test_zero_or_negative_where_positive_is_required(catalog_copy, cell, shown):
    line = catalog_copy.replace("heatsinks.csv", "FTX-C126-25,Fenmoor Thermal,25,", f"FTX-C126-25,Fenmoor Thermal,{cell},")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("heatsinks.csv"), line, "rth_sa_k_w")
    assert p.reason == f"must be greater than zero, got {shown}"


def test_negative_where_non_negative_is_required(catalog_copy):
    line = catalog_copy.replace("suppliers.csv", "Tessaly Electronics,EUR,6.50", "Tessaly Electronics,EUR,-6.50")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("suppliers.csv"), line, "order_fee")
    assert p.reason == "must not be negative, got -6.5"


@pytest.mark.parametrize(
    ("name", "old", "new", "column", "bad", "allowed"),
    [
        ("transistors.csv", "VT2810N,Vellmark Semiconductor,npn,", "VT2810N,Vellmark Semiconductor,npx,",
         "polarity", "npx", ("'npn'", "'pnp'")),
        ("regulators.csv", "QVF120,Quillon Power Integrated,TO-220,fixed,", "QVF120,Quillon Power Integrated,TO-220,fxed,",
         "kind", "fxed", ("'fixed'", "'adjustable'")),
        ("passives.csv", "AR-MF24-025,resistor,", "AR-MF24-025,resistr,", "kind", "resistr", ("'resistor'", "'cap_film'")),
        ("passives.csv", "AR-MF24-025,resistor,E24,", "AR-MF24-025,resistor,E25,", "series", "E25", ("'E24'", "'E192'")),
        ("opamps.csv", "OMC118,Ossely Microcircuits,DIP-8,1,", "OMC118,Ossely Microcircuits,DIP-8,3,",
         "per_package", "3", ("1", "2", "4")),
    ],
)
def test_wrong_enum(catalog_copy, name, old, new, column, bad, allowed):
    line = catalog_copy.replace(name, old, new)
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label(name), line, column)
    assert f"'{bad}'" in p.reason or bad in p.reason
    assert all(a in p.reason for a in allowed), p.reason


@pytest.mark.parametrize(("row", "cells"), [("VD2215,Vellmark Semiconductor,SOD-27,0.65,0.2,diode,extra", 7),
                                            ("VD2215,Vellmark Semiconductor,SOD-27,0.65,0.2", 5)])
def test_row_with_wrong_number_of_cells(catalog_copy, row, cells):
    line = catalog_copy.replace("diodes.csv", "VD2215,Vellmark Semiconductor,SOD-27,0.65,0.2,diode", row)
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("diodes.csv"), line, "")
    assert p.reason == f"has {cells} cells, the header has 6"


def test_unclosed_quote_is_named_by_the_line_it_opens(catalog_copy):
    line = catalog_copy.replace("diodes.csv", "VD2215,Vellmark Semiconductor,", 'VD2215,"Vellmark Semiconductor,')
    p = only(catalog_copy.problems())
    assert (p.file, p.line) == (catalog_copy.label("diodes.csv"), line)
    assert p.reason.startswith("unreadable CSV")


# ----------------------------------------------------------------------------- bad files


def test_missing_required_column(catalog_copy):
    line = catalog_copy.replace("heatsinks.csv", "mpn,maker,rth_sa_k_w,", "mpn,maker,rth_sa,")
    assert line == 3
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("heatsinks.csv"), 3, "rth_sa_k_w")
    assert p.reason == "required column is missing"


def test_column_twice_in_the_header(catalog_copy):
    catalog_copy.write("diodes.csv", "mpn,maker,package,vf_v,vf_v,if_max_a,kind\n")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("diodes.csv"), 1, "vf_v")
    assert "twice" in p.reason


def test_missing_file(catalog_copy):
    catalog_copy.file("regulators.csv").unlink()
    p = only(catalog_copy.problems())
    assert p == Problem(catalog_copy.label("regulators.csv"), 0, "", "file is missing")
    assert str(p) == f"{catalog_copy.label('regulators.csv')}: file is missing"


def test_missing_folder(tmp_path):
    with pytest.raises(InputError) as info:
        load_catalog(tmp_path / "nowhere")
    assert only(info.value.problems) == Problem(str(tmp_path / "nowhere"), 0, "", "catalogue folder not found")


@pytest.mark.parametrize("content", [b"", b"# only a comment\n\n   \n"])
def test_empty_file(catalog_copy, content):
    catalog_copy.file("regulators.csv").write_bytes(content)
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("regulators.csv"), 0, "")
    assert "empty" in p.reason and "header" in p.reason


def test_semicolon_separated_file(catalog_copy):
    catalog_copy.write("suppliers.csv", "supplier;currency;order_fee\nParlowe Distribution;EUR;12\n")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("suppliers.csv"), 1, "")
    assert "semicolon" in p.reason and "comma" in p.reason


def test_non_utf8_bytes(catalog_copy):
    raw = catalog_copy.file("diodes.csv").read_bytes()
    line = raw[: raw.index(b"VD3110")].count(b"\n") + 1
    # "Vellmärk" in Latin-1: the byte 0xe4 is not valid UTF-8 here.
    catalog_copy.file("diodes.csv").write_bytes(raw.replace(b"VD3110,Vellmark", "VD3110,Vellm\u00e4rk".encode("latin-1")))
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("diodes.csv"), line, "")
    assert p.reason == "not UTF-8 text (byte 0xe4)"


def test_nul_character(catalog_copy):
    catalog_copy.file("diodes.csv").write_bytes(catalog_copy.file("diodes.csv").read_bytes() + b"VD9\x00\n")
    p = only(catalog_copy.problems())
    assert (p.file, p.line) == (catalog_copy.label("diodes.csv"), 9)
    assert "NUL" in p.reason


# ----------------------------------------------------------------------------- cross-file checks


def test_unknown_supplier_in_offers(catalog_copy):
    line = catalog_copy.replace("offers.csv", "VT2810N,Parlowe Distribution,1,", "VT2810N,Parlowe Distributon,1,")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("offers.csv"), line, "supplier")
    assert p.reason == "unknown supplier 'Parlowe Distributon'"


def test_unknown_mpn_in_offers(catalog_copy):
    line = catalog_copy.replace("offers.csv", "VT2810N,Parlowe Distribution,1,", "VT2801N,Parlowe Distribution,1,")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("offers.csv"), line, "mpn")
    assert p.reason == "unknown part or family 'VT2801N'"


def test_duplicate_mpn_in_the_same_file(catalog_copy):
    first = catalog_copy.line_of("diodes.csv", "VD2215,")
    line = catalog_copy.append("diodes.csv", "VD2215,Vellmark Semiconductor,SOD-27,0.66,0.2,diode")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("diodes.csv"), line, "mpn")
    assert p.reason == f"'VD2215' already used in diodes.csv line {first}"


def test_duplicate_mpn_across_files(catalog_copy):
    first = catalog_copy.line_of("transistors.csv", "VT1360N,")
    line = catalog_copy.append("diodes.csv", "VT1360N,Vellmark Semiconductor,SOD-27,0.66,0.2,diode")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("diodes.csv"), line, "mpn")
    assert p.reason == f"'VT1360N' already used in transistors.csv line {first}"


def test_passive_family_clashing_with_a_part_mpn(catalog_copy):
    line = catalog_copy.append("passives.csv", "VD3110,resistor,E24,1,1R,1M,0.25,,,Asterby Components")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("passives.csv"), line, "family")
    assert "'VD3110' already used in diodes.csv" in p.reason


def test_complement_that_does_not_exist(catalog_copy):
    line = catalog_copy.replace("transistors.csv", "npn,VT2810P,TO-220", "npn,VT2810Q,TO-220")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("transistors.csv"), line, "complement")
    assert p.reason == "unknown transistor 'VT2810Q'"


def test_complement_with_the_same_polarity(catalog_copy):
    line = catalog_copy.replace("transistors.csv", "npn,VT2810P,TO-220", "npn,TWK221,TO-220")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("transistors.csv"), line, "complement")
    assert p.reason == "'TWK221' is also npn, not its complement"


@pytest.mark.parametrize(
    ("soa", "reason_part"),
    [
        ("3:10;8-10;20:4", "'8-10' is not of the form 'V:A'"),
        ("3:10;8:ten;20:4", "not numeric"),
        ("3:10;20:4;8:10", "strictly increase"),
        ("3:10;8:10;20:4;40:1.3;120:0.2", "beyond vceo_v"),
    ],
)
def test_soa_dc_malformed_or_decreasing(catalog_copy, soa, reason_part):
    line = catalog_copy.replace("transistors.csv", "6,3,3:10;8:10;20:4;40:1.3;80:0.35,BCE,62\nVT2810P",
                                f"6,3,{soa},BCE,62\nVT2810P")
    assert catalog_copy.line_of("transistors.csv", "VT2810N,") == line
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("transistors.csv"), line, "soa_dc")
    assert reason_part in p.reason
    assert not p.reason.startswith("soa_dc:")  # the column is named once, by Problem


def test_value_min_above_value_max(catalog_copy):
    line = catalog_copy.replace("passives.csv", "AR-MF24-025,resistor,E24,1,1R,1M,", "AR-MF24-025,resistor,E24,1,1M,1R,")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("passives.csv"), line, "value_max")
    assert p.reason == "is below value_min"


def test_several_currencies(catalog_copy):
    line = catalog_copy.replace("suppliers.csv", "Tessaly Electronics,EUR,", "Tessaly Electronics,GBP,")
    p = only(catalog_copy.problems())
    assert (p.file, p.line, p.column) == (catalog_copy.label("suppliers.csv"), line, "currency")
    assert "several currencies (EUR, GBP)" in p.reason


def test_other_physical_checks(catalog_copy):
    tj = catalog_copy.replace("transistors.csv", "VT2810N,Vellmark Semiconductor,npn,VT2810P,TO-220,80,10,80,150,",
                              "VT2810N,Vellmark Semiconductor,npn,VT2810P,TO-220,80,10,80,25,")
    reg = catalog_copy.replace("regulators.csv", "TO-220,fixed,12,", "TO-220,fixed,,")
    op = catalog_copy.replace("opamps.csv", "OMC118,Ossely Microcircuits,DIP-8,1,6,36,", "OMC118,Ossely Microcircuits,DIP-8,1,36,36,")
    got = {(p.file, p.line, p.column): p.reason for p in catalog_copy.problems()}
    assert got == {
        (catalog_copy.label("transistors.csv"), tj, "tj_max_c"): "must be above 25 degC",
        (catalog_copy.label("regulators.csv"), reg, "vout_v"): "a fixed regulator needs vout_v",
        (catalog_copy.label("opamps.csv"), op, "supply_max_v"): "is not above supply_min_v",
    }


# ----------------------------------------------------------------------------- all problems at once


def test_problems_in_several_files_are_all_reported_together(catalog_copy):
    expected = {
        (catalog_copy.label("transistors.csv"),
         catalog_copy.replace("transistors.csv", "VT2606N,Vellmark Semiconductor,npn,", "VT2606N,Vellmark Semiconductor,nnp,"),
         "polarity"),
        (catalog_copy.label("transistors.csv"),
         catalog_copy.replace("transistors.csv", "TWK241,Tarnwick Devices,npn,TWK242,TO-220,100,", "TWK241,Tarnwick Devices,npn,TWK242,TO-220,1OO,"),
         "vceo_v"),
        (catalog_copy.label("opamps.csv"), catalog_copy.replace("opamps.csv", "0.035,2,22\n", "0.035,2,22p\n"), "comp_pf"),
        (catalog_copy.label("passives.csv"),
         catalog_copy.replace("passives.csv", "AC-FP6-63V,cap_film,E6,10,1n,2u2,", "AC-FP6-63V,cap_film,E6,10,1n,2x2,"),
         "value_max"),
        (catalog_copy.label("diodes.csv"), catalog_copy.append("diodes.csv", "VD9000,Vellmark Semiconductor,SOD-27,0.6"), ""),
        (catalog_copy.label("regulators.csv"), 0, ""),
    }
    catalog_copy.file("regulators.csv").unlink()
    with pytest.raises(InputError) as info:
        load_catalog(catalog_copy.path)
    problems = info.value.problems
    assert len(problems) == 6
    assert {(p.file, p.line, p.column) for p in problems} == expected
    assert len({p.file for p in problems}) == 5
    # The exception text lists every problem, one per line.
    assert str(info.value).splitlines() == [str(p) for p in problems]


def test_cross_file_problems_are_all_reported_together(catalog_copy):
    sup = catalog_copy.replace("offers.csv", "TWK141,Parlowe Distribution,1,", "TWK141,Parlow Distribution,1,")
    mpn = catalog_copy.replace("offers.csv", "TWK142,Parlowe Distribution,1,", "TWK143,Parlowe Distribution,1,")
    comp = catalog_copy.replace("transistors.csv", "npn,TWK222,TO-220", "npn,TWK241,TO-220")
    cur = catalog_copy.replace("suppliers.csv", "Brindlecombe Parts,EUR,", "Brindlecombe Parts,USD,")
    problems = catalog_copy.problems()
    assert len(problems) == 4
    assert {(p.file, p.line, p.column) for p in problems} == {
        (catalog_copy.label("offers.csv"), sup, "supplier"),
        (catalog_copy.label("offers.csv"), mpn, "mpn"),
        (catalog_copy.label("transistors.csv"), comp, "complement"),
        (catalog_copy.label("suppliers.csv"), cur, "currency"),
    }
