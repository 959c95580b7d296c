"""This process's child processes (a solver program still running), read from ``/proc``; Linux, best effort."""

from __future__ import annotations

import os
from pathlib import Path


def child_pids() -> list[int]:
    """Process ids of this process's children (every thread's); none where ``/proc`` does not list them."""
    out = []
    for task in Path(f"/proc/{os.getpid()}/task").glob("*/children"):
        try:
            out += [int(p) for p in task.read_text().split()]
        except (OSError, ValueError):
            continue
    return out
