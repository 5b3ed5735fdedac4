"""One bad cell of an input table, and how many of them a message keeps.

The readers (:mod:`evcal.io.cells`, :mod:`evcal.io.isoweeks`, the history and driver readers)
collect a :class:`RowProblem` per bad cell so a file with several mistakes is reported in one go.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pandas as pd

__all__ = ["KEEP_PROBLEMS", "RowProblem", "capped", "count_problems", "key_text", "quote"]

#: Problems of one kind kept with their row (the first rows); the others are only
#: counted. At least as many as a message shows, so the first rows shown are the
#: file's first problem rows whatever their kinds.
KEEP_PROBLEMS = 10

@dataclass(frozen=True, order=True)
class RowProblem:
    """One bad cell: its spreadsheet row, its column and what is wrong.

    ``more`` counts further cells with the same problem that were not kept
    (see :func:`capped`); a message says how many there are in all.
    """

    row: int
    column: str
    text: str
    more: int = dataclasses.field(default=0, compare=False)

    def line(self, source: str) -> str:
        return f"{source} row {self.row}, column {self.column!r}: {self.text}"


def count_problems(problems: list[RowProblem]) -> int:
    """How many bad cells ``problems`` stand for, the counted-only ones included.

    Examples
    --------
    >>> count_problems([RowProblem(2, "value", "x"), RowProblem(3, "value", "y", more=98)])
    100
    """
    return sum(1 + p.more for p in problems)


def capped(positions: np.ndarray | list[int], make: Callable[[int], RowProblem]) -> list[RowProblem]:
    """``make(i)`` for the first :data:`KEEP_PROBLEMS` positions; the rest only counted.

    Keeps a file with two million bad cells from building two million messages.

    Examples
    --------
    >>> kept = capped(range(25), lambda i: RowProblem(i + 2, "value", "bad"))
    >>> len(kept), count_problems(kept)
    (10, 25)
    """
    positions = np.asarray(positions, dtype=np.int64)
    kept = [make(int(i)) for i in positions[:KEEP_PROBLEMS]]
    if len(positions) > KEEP_PROBLEMS:
        kept[-1] = dataclasses.replace(kept[-1], more=len(positions) - KEEP_PROBLEMS)
    return kept


def quote(cell: object) -> str:
    """The cell as the user would recognise it, quoted."""
    text = cell if isinstance(cell, str) else str(cell)
    if len(text) > 40:
        text = text[:37] + "..."
    return repr(text)


def key_text(keys: pd.DataFrame, j: int) -> str:
    """``product='P1', store='S2'``: how messages name series ``j`` of the key rows ``keys``."""
    row = keys.iloc[int(j)]
    return ", ".join(f"{c}={quote(row[c])}" for c in keys.columns)
