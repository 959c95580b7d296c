"""Input problems, collected and reported together as ``file:line: column: reason``."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, order=True)
class Problem:
    """One problem found in a user's file.

    ``line`` is the 1-based physical line in the file (0 when the problem
    concerns the whole file); ``column`` is the column or key name ("" when
    none applies).
    """

    file: str
    line: int
    column: str
    reason: str

    def __str__(self) -> str:
        where = f"{self.file}:{self.line}" if self.line else self.file
        return f"{where}: {self.column}: {self.reason}" if self.column else f"{where}: {self.reason}"


class InputError(Exception):
    """Raised when the user's input files are invalid; carries every problem found."""

    def __init__(self, problems: list[Problem]):
        self.problems = sorted(set(problems), key=lambda p: (p.file, p.line, p.column, p.reason))
        super().__init__("\n".join(str(p) for p in self.problems))


class UsageError(Exception):
    """A command-line request that cannot be carried out as asked (exit 2)."""


class SizeLimitError(UsageError):
    """A design would need more configurations than partpick optimises in one run (exit 2, with what to change)."""


class SolverError(Exception):
    """The solver is missing, broken, or ran out of time without any design."""


class SolverTimeout(SolverError):
    """The time limit ran out before the solver found any design (neither feasible nor infeasible is known)."""

    def __init__(self, time_limit: float, hint: str = ""):
        more = f", or {hint}" if hint else ""
        super().__init__(f"the solver found no design within the time limit of {time_limit:g} s; allow more time{more}")
        self.time_limit = time_limit
