"""User-facing errors.

Every problem a user can fix (a bad calendar key, an unparseable date, a
missing model file) is raised as an :class:`EvcalError` whose ``problems`` are
one line each: where (file, line or row, key), what is wrong and what would be
right. The CLI prints those lines and exits with code 2, never a traceback.
"""

from __future__ import annotations

from collections.abc import Iterable


class EvcalError(Exception):
    """An input problem the user can fix; ``problems`` holds one line per issue."""

    exit_code = 2

    def __init__(self, problems: str | Iterable[str]) -> None:
        if isinstance(problems, str):
            problems = [problems]
        self.problems: list[str] = [p.strip() for p in problems if p and p.strip()]
        if not self.problems:
            self.problems = ["unknown problem"]
        super().__init__("\n".join(self.problems))


class CalendarError(EvcalError):
    """The calendar file is not valid (YAML, keys, rules, dates)."""


class HistoryError(EvcalError):
    """The history file cannot be used (columns, dates, values, frequency)."""


class ModelError(EvcalError):
    """A model folder is missing files or was written by an incompatible version."""


class PlanError(EvcalError):
    """The plan request is not valid (horizon, totals, unknown events)."""
