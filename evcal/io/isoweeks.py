"""ISO 8601 week labels in a date column (``2024-W05``, ``2024 W05``, ``2024W05``, ``202405``), read as
the Sunday that ends each week (or the week-ending day the user names, ``freq='W-FRI'``).

ISO weeks run Monday to Sunday; week 01 is the week holding the year's first
Thursday (4 January), so a year has 52 or 53 weeks.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from evcal.errors import HistoryError
from evcal.io.problems import RowProblem, capped, quote

__all__ = ["iso_week_sundays", "read_iso_weeks", "week_end_day"]

#: ISO 8601 week labels: ``2024-W05``, ``2024 W05``, ``2024W05`` (a lower-case w too).
_ISO_WEEK = re.compile(r"^(\d{4})(?:-| ?)[Ww](\d{2})$")
_SIX_DIGITS = re.compile(r"^(\d{4})(\d{2})$")
#: 1970-01-01, day 0 of numpy's datetime64[D], was a Thursday (Monday = 0 is 3 days before).
_EPOCH_WEEKDAY = 3


def _first_monday(years: np.ndarray) -> np.ndarray:
    """Day number (datetime64[D]) of the Monday of ISO week 01 of each year: the week holding 4 January."""
    jan4 = (years - 1970).astype("datetime64[Y]").astype("datetime64[D]") + np.timedelta64(3, "D")
    weekday = (jan4.astype(np.int64) + _EPOCH_WEEKDAY) % 7
    return jan4 - weekday.astype("timedelta64[D]")


def _week_table(years: np.ndarray, weeks: np.ndarray, last_day: int = 6) -> tuple[np.ndarray, np.ndarray]:
    """Each week's day ``last_day`` (Monday 0 .. Sunday 6; NaT where the week does not exist) and how many
    ISO weeks its year has."""
    years = np.asarray(years, dtype=np.int64)
    weeks = np.asarray(weeks, dtype=np.int64)
    monday = _first_monday(years)
    in_year = (_first_monday(years + 1) - monday).astype(np.int64) // 7
    real = (weeks >= 1) & (weeks <= in_year)
    day = monday + (7 * (weeks - 1) + last_day).astype("timedelta64[D]")
    return np.where(real, day, np.datetime64("NaT", "D")), in_year


def iso_week_sundays(years: np.ndarray, weeks: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The Sunday (last day) of ISO week ``weeks`` of ``years``, and whether that week exists.

    Week 00, and week 53 of a 52-week year, do not exist (their Sunday is NaT).

    Examples
    --------
    >>> days, real = iso_week_sundays(np.array([1991, 2020, 2021]), np.array([6, 53, 53]))
    >>> [str(d) for d in days], real.tolist()
    (['1991-02-10', '2021-01-03', 'NaT'], [True, True, False])
    """
    sundays, _ = _week_table(years, weeks)
    return sundays, ~np.isnat(sundays)


def _week_text(cell: object) -> str:
    # Whole numbers from a Parquet or xlsx column (202405, 202405.0) are read as they are typed.
    if isinstance(cell, float | np.floating) and np.isfinite(cell) and float(cell).is_integer():
        return str(int(cell))
    return str(cell).strip()


def week_end_day(freq: str | None) -> int:
    """The weekday (Monday 0 .. Sunday 6) that ends the weeks of a forced weekly frequency (``W-FRI``: 4);
    Sunday, the end of an ISO week, for anything else.

    Examples
    --------
    >>> week_end_day("W-FRI"), week_end_day("W-SUN"), week_end_day(None), week_end_day("M")
    (4, 6, 6, 6)
    """
    days = ("MON", "TUE", "WED", "THU", "FRI", "SAT", "SUN")
    code = str(freq or "").upper()
    return days.index(code[2:]) if code.startswith("W-") and code[2:] in days else 6


def read_iso_weeks(
    cells: np.ndarray, empty: np.ndarray, rows: list[int], column: str, source: str, last_day: int = 6
) -> tuple[np.ndarray, np.ndarray, list[RowProblem]]:
    """Read the ISO week labels of a date column: (mask of label cells, their last days, problems).

    A label is dated by its week's Sunday, the last day of the ISO week, unless the weeks are said to end
    on another day (``last_day``, from ``freq='W-FRI'``): then by that day of the labelled ISO week, as
    published series that label a week ending Friday by the ISO week of that Friday do.

    ``YYYY-Www``, ``YYYY Www`` and ``YYYYWww`` are labels wherever they stand.
    ``YYYYww`` (six digits) is a label only when every filled cell of the column
    is six digits and some cell's last two digits are above 12; if none is, the
    column may as well be months (``YYYYMM``) and is refused in one line.
    A label naming a week that does not exist (week 00, week 53 of a 52-week
    year) is a problem naming its row.
    """
    n = len(cells)
    filled = np.flatnonzero(~empty)
    six_digits = len(filled) > 0 and _SIX_DIGITS.match(_week_text(cells[filled[0]])) is not None
    if not six_digits:  # only cells with a W can be labels: a quick look keeps big date columns fast
        has_w = pd.Series(cells[filled], dtype=object).str.contains("w", case=False, regex=False)
        filled = filled[has_w.fillna(False).to_numpy(dtype=bool)]
    texts = pd.Series([_week_text(cells[i]) for i in filled], index=filled, dtype=object)
    parts = texts.str.extract(_SIX_DIGITS if six_digits else _ISO_WEEK)
    if six_digits and not parts[0].notna().all():  # six digits first, other text later: labels with a W only
        parts = texts.str.extract(_ISO_WEEK)
    elif six_digits and (parts[1].astype(int) <= 12).all():
        i = int(filled[0])
        raise HistoryError(
            f"{source} row {rows[i]}, column {column!r}: six-digit dates such as {quote(texts.iloc[0])} "
            "can be months (YYYYMM) or ISO weeks (YYYYww), and none is past 12; write months as "
            "YYYY-MM or weeks as YYYY-Www"
        )
    found = parts[0].notna().to_numpy()
    at = filled[found]
    mask = np.zeros(n, dtype=bool)
    mask[at] = True
    ends = np.full(n, np.datetime64("NaT", "D"))
    years, weeks = parts[0][found].astype(int).to_numpy(), parts[1][found].astype(int).to_numpy()
    ends[at], in_year = _week_table(years, weeks, last_day)

    def no_such_week(j: int) -> RowProblem:
        return RowProblem(
            rows[int(at[j])],
            column,
            f"{quote(cells[at[j]])} is not an ISO week: {years[j]} has ISO weeks 01 to {in_year[j]} (Monday "
            "to Sunday, week 01 holds the year's first Thursday)",
        )

    return mask, ends, capped(np.flatnonzero(np.isnat(ends[at])), no_such_week)
