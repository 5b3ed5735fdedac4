"""User-facing errors.

Every problem a user can fix (a bad calendar key, an unparseable date, a
missing model file) is raised as an :class:`EvcalError` whose ``problems`` are
one line each: where (file, line or row, key), what is wrong and what would be
right. The CLI prints those lines and exits with code 2, never a traceback.

A hostile input must not turn into a hostile message: each line is cut to
:data:`MAX_LINE` characters and at most :data:`MAX_PROBLEMS` lines are kept
(with a count of the rest), so an error about a 300 MB value or two million
duplicate rows stays a few lines long.
"""

from __future__ import annotations

from collections.abc import Iterable

#: longest problem line kept (characters); the rest is replaced by an ellipsis
MAX_LINE = 400
#: most problem lines kept; the others are counted in one closing line
MAX_PROBLEMS = 30


def clip(text: str, limit: int = 200) -> str:
    """``text`` cut to ``limit`` characters, with an ellipsis and the full length when cut.

    Use it to quote a value from the user's file inside a message.

    Examples
    --------
    >>> clip("abc", 10)
    'abc'
    >>> clip("x" * 500, 10)
    'xxxxxxxxxx… (500 characters)'
    """
    text = str(text)
    if len(text) <= limit:
        return text
    return f"{text[:limit]}… ({len(text)} characters)"


def _lines(problems: str | Iterable[str]) -> list[str]:
    if isinstance(problems, str):
        problems = [problems]
    lines: list[str] = []
    extra = 0
    for p in problems:
        if not p or not str(p).strip():
            continue
        if len(lines) >= MAX_PROBLEMS:
            extra += 1
            continue
        one = " ".join(str(p).split())  # one line each, whatever the value held
        lines.append(clip(one, MAX_LINE))
    if extra:
        lines.append(f"... and {extra} more problem(s) of the same kinds; fix the ones above first")
    return lines


class EvcalError(Exception):
    """An input problem the user can fix; ``problems`` holds one line per issue.

    Examples
    --------
    >>> EvcalError(["a", "", "b"]).problems
    ['a', 'b']
    >>> len(EvcalError(["x"] * 1000).problems) == MAX_PROBLEMS + 1
    True
    """

    exit_code = 2

    def __init__(self, problems: str | Iterable[str]) -> None:
        self.problems: list[str] = _lines(problems)
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


class OutputError(EvcalError):
    """An output location evcal must not write to (an input, a folder it did not write, no access)."""
