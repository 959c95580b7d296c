"""Size limits: a catalogue file of 1,000,000 offer rows is refused at once, with bounded memory."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from conftest import DEMO_CATALOG, ROOT
from partpick.catalog import loader

PARTPICK = ROOT / ".venv" / "bin" / "partpick"

#: Runs a command as its child and prints the child's peak resident set size [KiB on Linux].
PEAK_RSS = (
    "import resource, subprocess, sys\n"
    "p = subprocess.run(sys.argv[1:], capture_output=True, text=True)\n"
    "sys.stderr.write(p.stderr)\n"
    "print(p.returncode, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)\n"
)


def peak_rss(folder: Path) -> tuple[int, int, str]:
    """``partpick catalog-check folder`` in a fresh process: (exit code, peak RSS in KiB, stderr)."""
    proc = subprocess.run([sys.executable, "-c", PEAK_RSS, str(PARTPICK), "--no-color", "catalog-check", str(folder)],
                          capture_output=True, text=True, timeout=300, env={"COLUMNS": "250", "PATH": "/usr/bin:/bin"})
    code, rss = proc.stdout.split()
    return int(code), int(rss), proc.stderr


def test_a_million_offer_rows_are_refused_without_reading_them_into_memory(catalog_copy):
    offers = catalog_copy.file("offers.csv")
    row = "VT2606N,Tessaly Electronics,{},0.39,100000,1\n"
    with open(offers, "w", encoding="utf-8") as f:
        f.write("mpn,supplier,min_qty,unit_price,stock,moq\n")
        f.writelines(row.format(i) for i in range(1, 1_000_001))
    size_kib = offers.stat().st_size // 1024
    code, big_rss, err = peak_rss(catalog_copy.path)
    _, base_rss, _ = peak_rss(DEMO_CATALOG)
    assert code == 3
    assert (f"{offers}: file has 1000001 lines; partpick reads at most 500000 lines per file "
            "(split the catalogue or filter it)") in err.splitlines()
    assert "Traceback" not in err
    # The file is ~48 MiB; holding it whole once would add that much to the peak.
    assert size_kib > 40 * 1024
    assert big_rss < base_rss + size_kib // 2, (big_rss, base_rss, size_kib)


@pytest.mark.parametrize("ending", ["\n", "\r\n", "\r", "\u2028"])
def test_line_count_of_the_first_pass_matches_the_parser(tmp_path, ending):
    text = ending.join(["# comment", "a,b", "", "1,2", "3,4"]) + ending + "5,6"
    path = tmp_path / "f.csv"
    path.write_bytes(text.encode("utf-8"))
    _digest, lines = loader._fingerprint(path)
    assert lines == len(text.splitlines()) == 6


def test_the_limit_is_exact_one_line_more_is_refused(catalog_copy, monkeypatch):
    counts = {p.name: p.read_bytes().count(b"\n") for p in catalog_copy.path.glob("*.csv")}
    longest = max(counts, key=counts.get)
    monkeypatch.setattr(loader, "MAX_LINES", counts[longest])
    loader.load_catalog(catalog_copy.path)  # the longest file exactly at the limit: read
    catalog_copy.append(longest, "# one line more")
    assert [str(p) for p in catalog_copy.problems()] == [
        f"{catalog_copy.label(longest)}: file has {counts[longest] + 1} lines; partpick reads at most "
        f"{counts[longest]} lines per file (split the catalogue or filter it)"
    ]
