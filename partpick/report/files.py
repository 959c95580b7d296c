"""Safe file output: every file is written whole or not at all.

Each file goes to a temporary file in its own folder first (flushed to disk),
then replaces its target by a rename, which the operating system performs
atomically. When a run writes several files, all are staged before the
first rename, and an interrupt (Ctrl-C) is held back while the renames run,
so an interrupted run leaves either every output of the run or none, and
never a partial file nor a stray temporary file.
"""

from __future__ import annotations

import contextlib
import os
import signal
import tempfile
from collections.abc import Iterator, Mapping
from pathlib import Path


def atomic_write_bytes(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path``; see :func:`write_all`."""
    write_all({Path(path): data})


def write_all(files: Mapping[Path, bytes]) -> None:
    """Write every file of ``files`` (path -> content), all or nothing.

    Folders are created as needed. On any failure or interrupt before the
    renames, no target is touched and every temporary file is removed.

    Parameters
    ----------
    files : the content of each file to write
    """
    staged: list[tuple[str, Path]] = []
    try:
        for path, data in files.items():
            staged.append((_stage(Path(path), data), Path(path)))
        with _interrupts_held():
            while staged:
                tmp, path = staged[0]
                os.replace(tmp, path)
                staged.pop(0)
    finally:
        for tmp, _path in staged:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(tmp)


def _stage(path: Path, data: bytes) -> str:
    """``data`` in a flushed temporary file beside ``path``; returns the temporary file's name."""
    folder = path.parent if str(path.parent) else Path(".")
    folder.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        # mkstemp makes the file private (0600); give it the mode a plain open would.
        os.fchmod(fd, 0o666 & ~_umask())
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
    except BaseException:
        os.unlink(tmp)
        raise
    return tmp


def _umask() -> int:
    """The process's file-mode creation mask (read by setting it and putting it back)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def _interrupts_held() -> Iterator[None]:
    """Hold SIGINT and SIGTERM back in the block; one that arrived is delivered after it."""
    held = {signal.SIGINT, signal.SIGTERM}
    if not hasattr(signal, "pthread_sigmask"):  # pragma: no cover - not on POSIX
        yield
        return
    previous = signal.pthread_sigmask(signal.SIG_BLOCK, held)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, previous)
