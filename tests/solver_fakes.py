"""Stand-ins for the CBC program, to test how partpick meets a broken, killed, slow or stopped solver.

Each fake is a small POSIX shell script put where PuLP looks for its bundled
CBC program (``pulp.PULP_CBC_CMD.pulp_cbc_path``). ``$REAL`` in a script is
the real program, so a fake can run it and then alter what it reports.
"""

from __future__ import annotations

import stat
from pathlib import Path

import pulp

REAL_CBC = pulp.PULP_CBC_CMD.pulp_cbc_path

#: Exits with an error at once, as a program built for another machine does.
CRASHES = "echo 'cbc: cannot start' >&2\nexit 1\n"
#: Killed by the operating system (out of memory, or by a user) while solving.
KILLED = "kill -KILL $$\n"
#: Runs the real program, then reports the design it found as stopped on the
#: time limit: the incumbent is kept but its optimality is not proven (the
#: status line CBC writes when its -sec limit ends the search).
STOPPED_WITH_DESIGN = """\
"$REAL" "$@" || exit $?
prev=""; for a in "$@"; do [ "$prev" = "-solution" ] && sol="$a"; prev="$a"; done
sed -i '1s/^Optimal/Stopped on time/' "$sol"
"""
#: Stops on the time limit before finding any design.
STOPPED_WITHOUT_DESIGN = """\
prev=""; for a in "$@"; do [ "$prev" = "-solution" ] && sol="$a"; prev="$a"; done
echo 'Stopped on time (no integer solution - continuous used) - objective value 0' > "$sol"
"""


def slow(marker: Path) -> str:
    """Writes its process id to ``marker``, then solves nothing for a minute."""
    return f"echo $$ > '{marker}'\nexec sleep 60\n"


def fake_cbc(folder: Path, body: str) -> Path:
    """A fake CBC program running ``body`` (a shell script); returns its path."""
    path = folder / "fake-cbc"
    path.write_text(f"#!/bin/sh\nREAL='{REAL_CBC}'\n{body}", encoding="utf-8")
    path.chmod(path.stat().st_mode | stat.S_IXUSR)
    return path
