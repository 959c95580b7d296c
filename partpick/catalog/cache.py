"""Validated catalogues kept between runs, keyed by the files' contents.

A design is re-run many times on the same catalogue while a spec is tuned;
reading and validating a large catalogue (about 200,000 offer rows) takes
over a second each time, unpickling the validated frames a few hundredths.
:func:`key` names a catalogue state by the sha256 of every file (read anew
on every run, so an edited file is never served stale), the folder, the
partpick version and the source of this package (a change to the reader or
its rules starts afresh), and the Python, pandas and numpy versions. Only a catalogue that loaded without problems is
kept, so every problem is still reported with its file, line and column.

The entries live in ``$PARTPICK_CACHE_DIR``, else ``$XDG_CACHE_HOME/partpick``,
else ``~/.cache/partpick``; ``PARTPICK_CACHE_DIR=off`` (or empty) turns the
cache off. They are partpick's own files: written whole to a temporary file
and renamed, at most :data:`KEEP` of them (the least recently used go), and
any entry that cannot be read is ignored and the catalogue read from its
files. Nothing in the catalogue folder is written.
"""

from __future__ import annotations

import functools
import hashlib
import os
import pickle
import tempfile
from pathlib import Path

#: Most catalogue states kept.
KEEP = 8
#: Bump when the entries' layout changes.
FORMAT = 1
_PREFIX = "catalog-"


def folder() -> Path | None:
    """Where entries are kept, or None when the cache is off."""
    given = os.environ.get("PARTPICK_CACHE_DIR")
    if given is not None:
        return None if given.strip().lower() in ("", "off") else Path(given)
    base = os.environ.get("XDG_CACHE_HOME")
    if not base:
        try:
            base = str(Path.home() / ".cache")
        except (RuntimeError, KeyError):  # no home folder to be found: no cache
            return None
    return Path(base) / "partpick"


@functools.lru_cache(maxsize=1)
def _code() -> str:
    """The partpick version, a digest of this package's source (the reader's rules) and the versions the entries' frames depend on."""
    import sys

    import numpy
    import pandas

    from partpick import __version__

    h = hashlib.sha256(f"{FORMAT}|{__version__}|{sys.version}|{pandas.__version__}|{numpy.__version__}".encode())
    for path in sorted(Path(__file__).parent.glob("*.py")):
        h.update(path.name.encode())
        h.update(path.read_bytes())
    return h.hexdigest()


def key(catalog_dir: Path, digests: dict[str, str]) -> str:
    """The name of a catalogue state: its folder, every file's sha256 and the reader's code."""
    h = hashlib.sha256(_code().encode())
    h.update(str(catalog_dir.resolve()).encode())
    for name in sorted(digests):
        h.update(f"|{name}={digests[name]}".encode())
    return h.hexdigest()


def get(name: str):
    """The catalogue kept under ``name``, or None (cache off, no entry, or an entry that cannot be read)."""
    where = folder()
    if where is None:
        return None
    path = where / f"{_PREFIX}{name}.pickle"
    try:
        with path.open("rb") as f:
            value = pickle.load(f)
        os.utime(path)  # most recently used
    except Exception:  # missing, truncated, from another version: read the files instead
        return None
    return value


def put(name: str, catalog) -> None:
    """Keep ``catalog`` under ``name`` (silently nothing when the folder cannot be written)."""
    where = folder()
    if where is None:
        return
    try:
        where.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=".partial-", dir=where)
        try:
            with os.fdopen(fd, "wb") as f:
                pickle.dump(catalog, f, protocol=pickle.HIGHEST_PROTOCOL)
            os.replace(tmp, where / f"{_PREFIX}{name}.pickle")
        except BaseException:
            Path(tmp).unlink(missing_ok=True)
            raise
        _prune(where)
    except OSError:
        return


def _prune(where: Path) -> None:
    """Remove all but the :data:`KEEP` most recently used entries."""
    entries = sorted(where.glob(f"{_PREFIX}*.pickle"), key=lambda p: p.stat().st_mtime, reverse=True)
    for old in entries[KEEP:]:
        old.unlink(missing_ok=True)
