"""The catalogue cache: a second load of the same files gives the same catalogue without reading them; any change reads them again."""

from __future__ import annotations

import os
from pathlib import Path

import pandas as pd
import pytest

from partpick.catalog import cache, loader
from partpick.catalog.loader import load_catalog
from partpick.errors import InputError

FRAMES = ("transistors", "opamps", "regulators", "heatsinks", "passives", "diodes", "suppliers", "offers")


@pytest.fixture
def cache_dir(tmp_path: Path, monkeypatch) -> Path:
    where = tmp_path / "cache"
    monkeypatch.setenv("PARTPICK_CACHE_DIR", str(where))
    return where


def _entries(where: Path) -> list[Path]:
    return sorted(where.glob("catalog-*.pickle")) if where.exists() else []


def _no_parsing(monkeypatch) -> None:
    def refuse(*_args, **_kwargs):
        raise AssertionError("the files were parsed")

    monkeypatch.setattr(loader, "_parse", refuse)


def _same(a, b) -> None:
    for name in FRAMES:
        pd.testing.assert_frame_equal(getattr(a, name), getattr(b, name))
    assert a.file_sha256 == b.file_sha256 and a.warnings == b.warnings


def test_a_second_load_comes_from_the_cache_and_equals_the_files(catalog_copy, cache_dir, monkeypatch) -> None:
    first = load_catalog(catalog_copy.path)
    assert len(_entries(cache_dir)) == 1
    monkeypatch.setenv("PARTPICK_CACHE_DIR", "off")
    fresh = load_catalog(catalog_copy.path)
    monkeypatch.setenv("PARTPICK_CACHE_DIR", str(cache_dir))
    _no_parsing(monkeypatch)
    again = load_catalog(catalog_copy.path)
    _same(again, fresh)
    _same(first, fresh)
    assert again.folder == str(catalog_copy.path)


def test_an_edited_file_is_read_again(catalog_copy, cache_dir) -> None:
    before = load_catalog(catalog_copy.path)
    price = float(before.offers["unit_price"].iloc[0])
    line = int(before.offers["line"].iloc[0])
    rows = catalog_copy.text("offers.csv").splitlines(keepends=True)
    cells = rows[line - 1].split(",")
    header = next(r for r in rows if not r.startswith("#")).strip().split(",")
    at = header.index("unit_price")
    cells[at] = f"{price + 1.25:g}"
    rows[line - 1] = ",".join(cells)
    catalog_copy.write("offers.csv", "".join(rows))
    after = load_catalog(catalog_copy.path)
    assert float(after.offers["unit_price"].iloc[0]) == pytest.approx(price + 1.25)
    assert after.file_sha256["offers.csv"] != before.file_sha256["offers.csv"]
    assert len(_entries(cache_dir)) == 2


def test_a_broken_entry_is_ignored(catalog_copy, cache_dir) -> None:
    want = load_catalog(catalog_copy.path)
    for entry in _entries(cache_dir):
        entry.write_bytes(b"not a pickle")
    _same(load_catalog(catalog_copy.path), want)


def test_an_invalid_catalogue_is_never_kept_and_still_reports_its_problems(catalog_copy, cache_dir) -> None:
    load_catalog(catalog_copy.path)
    line = catalog_copy.append("offers.csv", "no-such-supplier,NOPE,1,abc,10,1")
    with pytest.raises(InputError) as info:
        load_catalog(catalog_copy.path)
    assert any(p.line == line for p in info.value.problems)
    assert len(_entries(cache_dir)) == 1  # the valid state only


def test_off_writes_nothing(catalog_copy, tmp_path, monkeypatch) -> None:
    monkeypatch.setenv("PARTPICK_CACHE_DIR", "off")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    load_catalog(catalog_copy.path)
    assert not (tmp_path / "xdg").exists()


def test_without_a_setting_it_lives_under_the_users_cache_folder(catalog_copy, tmp_path, monkeypatch) -> None:
    monkeypatch.delenv("PARTPICK_CACHE_DIR")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    load_catalog(catalog_copy.path)
    assert len(_entries(tmp_path / "xdg" / "partpick")) == 1
    assert sorted(p.name for p in catalog_copy.path.iterdir()) == sorted(loader.FILES)  # nothing written beside the catalogue


def test_only_the_most_recent_entries_are_kept(catalog_copy, cache_dir, monkeypatch) -> None:
    monkeypatch.setattr(cache, "KEEP", 2)
    for i in range(4):
        catalog_copy.append("suppliers.csv", f"# edit {i}")  # a comment: the same catalogue, other bytes
        load_catalog(catalog_copy.path)
        stamp = 1_000_000 + i
        for entry in _entries(cache_dir):
            if os.stat(entry).st_mtime > stamp:
                os.utime(entry, (stamp, stamp))
    assert len(_entries(cache_dir)) == 2
