"""Shared fixtures: the demo catalogue, the examples, and a writable catalogue copy."""

from __future__ import annotations

import csv
import os
import shutil
from pathlib import Path

import pytest

from partpick.catalog import load_catalog
from partpick.errors import InputError, Problem

# The tests read catalogues afresh (and write none to the user's cache); the cache's own tests turn it on.
os.environ["PARTPICK_CACHE_DIR"] = "off"

ROOT = Path(__file__).resolve().parents[1]
DEMO_CATALOG = ROOT / "catalog"
EXAMPLES = sorted((ROOT / "examples").glob("*.toml"))

#: Characters that make a spreadsheet read a cell as a formula (OWASP, "CSV
#: Injection", https://owasp.org/www-community/attacks/CSV_Injection: cells
#: starting with =, +, -, @, tab or carriage return are to be prefixed with a
#: single quote).
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def is_number(cell: str) -> bool:
    """A CSV cell a spreadsheet reads as a number (not text, so not a formula either)."""
    try:
        float(cell)
    except ValueError:
        return False
    return True


def csv_records(path: Path) -> list[list[str]]:
    """Data records of a catalogue file read with the csv module alone (header dropped).

    An independent route to the row counts: ``#`` lines and blank lines are
    not records, the first remaining record is the header.
    """
    with open(path, newline="", encoding="utf-8-sig") as f:
        kept = [line for line in f if line.strip() and not line.lstrip().startswith("#")]
    return list(csv.reader(kept))[1:]


class CatalogCopy:
    """A copy of the demo catalogue in a temporary folder, to break one cell at a time."""

    def __init__(self, path: Path):
        self.path = path

    def file(self, name: str) -> Path:
        return self.path / name

    def label(self, name: str) -> str:
        """The file name as the loader reports it."""
        return str(self.path / name)

    def text(self, name: str) -> str:
        return self.file(name).read_text(encoding="utf-8")

    def write(self, name: str, text: str) -> None:
        self.file(name).write_text(text, encoding="utf-8", newline="")

    def replace(self, name: str, old: str, new: str) -> int:
        """Replace the only occurrence of ``old``; returns its physical line (1-based)."""
        text = self.text(name)
        assert text.count(old) == 1, f"{old!r} occurs {text.count(old)} times in {name}"
        line = text[: text.index(old)].count("\n") + 1
        self.write(name, text.replace(old, new))
        return line

    def append(self, name: str, line: str) -> int:
        """Append one line; returns its physical line number."""
        text = self.text(name)
        if not text.endswith("\n"):
            text += "\n"
        text += line + "\n"
        self.write(name, text)
        return text.count("\n")

    def line_of(self, name: str, start: str) -> int:
        """Physical line (1-based) of the only line that starts with ``start``."""
        hits = [i for i, line in enumerate(self.text(name).splitlines(), 1) if line.startswith(start)]
        assert len(hits) == 1, f"{start!r} starts {len(hits)} lines of {name}"
        return hits[0]

    def problems(self) -> list[Problem]:
        """Load the copy; it must be refused. Returns every problem reported."""
        with pytest.raises(InputError) as info:
            load_catalog(self.path)
        return info.value.problems


@pytest.fixture
def catalog_copy(tmp_path: Path) -> CatalogCopy:
    dest = tmp_path / "cat"
    shutil.copytree(DEMO_CATALOG, dest)
    return CatalogCopy(dest)


@pytest.fixture(scope="session")
def demo_catalog():
    return load_catalog(DEMO_CATALOG)
