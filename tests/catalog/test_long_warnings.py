"""Catalogue-wide warnings stay short at catalogue scale, and the chosen design names its own parts without SOA curves."""

from __future__ import annotations

import csv
import io

from conftest import DEMO_CATALOG, EXAMPLES
from partpick.catalog import load_catalog
from partpick.catalog.loader import LISTED_MAX, listed


def _rows(path) -> tuple[list[str], list[tuple[int, list[str]]]]:
    """The header and ``(physical line, cells)`` of each data row of a catalogue CSV, read with the csv module."""
    header, rows = None, []
    for number, text in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        if not text.strip() or text.startswith("#"):
            continue
        cells = next(csv.reader(io.StringIO(text)))
        if header is None:
            header = cells
        else:
            rows.append((number, cells))
    return header, rows


def test_listed_names_the_first_ones_and_counts_the_rest():
    names = [f"P{i}" for i in range(LISTED_MAX + 7)]
    assert listed(names[:2]) == "P0, P1"
    assert listed(names[:LISTED_MAX]) == ", ".join(names[:LISTED_MAX])
    assert listed(names) == ", ".join(names[:LISTED_MAX]) + " and 7 more"
    assert listed([f"Q{i}" for i in range(LISTED_MAX + 12_345)]).endswith(" and 12,345 more")


def test_soa_warning_counts_every_transistor_without_a_curve_and_names_the_first_ones():
    header, rows = _rows(DEMO_CATALOG / "transistors.csv")
    mpn, soa = header.index("mpn"), header.index("soa_dc")
    without = [cells[mpn] for _line, cells in rows if not cells[soa].strip()]
    assert len(without) > LISTED_MAX  # the demo has more than one warning lists
    (warning,) = [w for w in load_catalog(DEMO_CATALOG).warnings if "soa_dc" in w]
    assert f"for {len(without)} transistors ({', '.join(without[:LISTED_MAX])} and {len(without) - LISTED_MAX} more)" in warning
    assert without[LISTED_MAX] not in warning


def test_offerless_parts_are_counted(catalog_copy):
    header, rows = _rows(catalog_copy.file("heatsinks.csv"))
    mpns = [cells[header.index("mpn")] for _line, cells in rows]
    kept = [line for line in catalog_copy.text("offers.csv").splitlines() if line.split(",")[0] not in mpns]
    catalog_copy.write("offers.csv", "\n".join(kept) + "\n")
    (warning,) = [w for w in load_catalog(catalog_copy.path).warnings if w.startswith("heatsinks.csv: no offer")]
    assert warning.startswith(f"heatsinks.csv: no offer for {len(mpns)} parts ({', '.join(mpns[:LISTED_MAX])}")
    assert warning.endswith(f" and {len(mpns) - LISTED_MAX} more): these cannot be chosen")


def test_implausible_rows_past_the_first_ones_are_counted_with_their_lines(catalog_copy):
    # No op-amp slews 10,000 V/us (the plausibility rule's limit, from memory).
    header, rows = _rows(catalog_copy.file("opamps.csv"))
    col = header.index("slew_v_us")
    n = LISTED_MAX + 3
    assert len(rows) >= n
    lines = catalog_copy.text("opamps.csv").splitlines()
    for number, cells in rows[:n]:
        cells[col] = "20000"
        out = io.StringIO()
        csv.writer(out, lineterminator="").writerow(cells)
        lines[number - 1] = out.getvalue()
    catalog_copy.write("opamps.csv", "\n".join(lines) + "\n")
    found = [w for w in load_catalog(catalog_copy.path).warnings if "slew_v_us" in w]
    label = f"{catalog_copy.path}/opamps.csv"
    assert [w.split(": ")[0] for w in found[:LISTED_MAX]] == [f"{label}:{number}" for number, _c in rows[:LISTED_MAX]]
    assert all("20000 looks implausible" in w for w in found[:LISTED_MAX])
    rest = [number for number, _c in rows[LISTED_MAX:n]]
    assert found[LISTED_MAX:] == [f"{label}: slew_v_us: 3 more rows look implausible the same way (lines {rest[0]} to {rest[-1]})"]


def test_design_warns_of_its_own_transistors_without_a_soa_curve(catalog_copy):
    """The bench example's design names its output and current-source transistors that have no soa_dc, and no other.

    Then each of them is given a curve along its own Ic/Pd/Vceo boundary:
    the new design names only its own transistors still without one.
    """
    from partpick.optimize.design import run
    from partpick.spec import load_spec

    spec = load_spec(next(e for e in EXAMPLES if e.stem.startswith("bench")))
    result = run(spec, load_catalog(catalog_copy.path))
    first = _curve_less_chosen(result, catalog_copy)
    assert first  # the demo's design uses some (VT2218N/P and the TWK pair, from the CSV)
    assert _soa_warnings(result) == [f"{', '.join(first)}: no DC SOA curve"]
    header, rows = _rows(catalog_copy.file("transistors.csv"))
    by_mpn = {cells[0]: (number, cells) for number, cells in rows}
    lines = catalog_copy.text("transistors.csv").splitlines()
    for mpn in first:
        number, cells = by_mpn[mpn]
        # Breakpoints on the device's own Ic/Pd/Vceo boundary: a valid curve that keeps the design feasible.
        vceo, ic, pd = (float(cells[header.index(c)]) for c in ("vceo_v", "ic_max_a", "pd_max_w"))
        knees = [v for v in (pd / ic, 2 * pd / ic, 4 * pd / ic) if 1.0 < v < vceo]
        cells[header.index("soa_dc")] = ";".join(f"{v:g}:{min(ic, pd / v):g}" for v in (1.0, *knees, vceo))
        out = io.StringIO()
        csv.writer(out, lineterminator="").writerow(cells)
        lines[number - 1] = out.getvalue()
    catalog_copy.write("transistors.csv", "\n".join(lines) + "\n")
    again = run(spec, load_catalog(catalog_copy.path))
    second = _curve_less_chosen(again, catalog_copy)
    assert not set(first) & set(second)
    assert _soa_warnings(again) == ([f"{', '.join(second)}: no DC SOA curve"] if second else [])


def _curve_less_chosen(result, catalog_copy) -> list[str]:
    """The design's output and current-source transistors (report order) whose CSV row has an empty soa_dc."""
    from partpick.optimize.design import role_parts

    header, rows = _rows(catalog_copy.file("transistors.csv"))
    empty = {cells[0] for _n, cells in rows if not cells[header.index("soa_dc")].strip()}
    parts = role_parts(result)
    chosen = [p["mpn"] for role in ("output_npn", "output_pnp", "bias_source_transistor") for p in parts if p["role"] == role]
    return [m for m in chosen if m in empty]


def _soa_warnings(result) -> list[str]:
    return [w.split(" (soa_dc)")[0] for w in result.warnings if "no DC SOA curve" in w]
