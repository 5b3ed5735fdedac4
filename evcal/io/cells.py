"""Turn date and value cells into timestamps and floats, naming every bad cell.

Each parser returns the parsed column and a list of :class:`RowProblem`, one
per bad cell, so a file with several mistakes is reported in one go.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import re
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import HistoryError

# Cell text that means "no value here" (a gap), compared case-insensitively.
EMPTY_TOKENS = frozenset({"", "na", "n/a", "nan", "null", "none", "#n/a"})

#: Problems of one kind kept with their row (the first rows); the others are only
#: counted. At least as many as a message shows, so the first rows shown are the
#: file's first problem rows whatever their kinds.
KEEP_PROBLEMS = 10

#: Days a history date may name: pandas' nanosecond Timestamps (every later step
#: indexes by them) run from 1677-09-21 00:12 to 2262-04-11 23:47; whole days inside.
FIRST_DAY = pd.Timestamp("1677-09-22")
LAST_DAY = pd.Timestamp("2262-04-11")


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


def outside_days(stamps: pd.Series) -> np.ndarray:
    """Mask of parsed dates outside :data:`FIRST_DAY`..:data:`LAST_DAY` (any datetime unit)."""
    if stamps.empty:
        return np.zeros(0, dtype=bool)
    return (stamps.notna() & ((stamps < FIRST_DAY) | (stamps >= LAST_DAY + pd.Timedelta(days=1)))).to_numpy()


def _range_problem(row: int, column: str, cell: object) -> RowProblem:
    return RowProblem(
        row,
        column,
        f"date {quote(cell)} is outside the dates evcal can hold ({FIRST_DAY.date()} to "
        f"{LAST_DAY.date()}); check the year",
    )


def _unreadable(row: int, column: str, cell: object) -> RowProblem:
    return RowProblem(row, column, f"cannot read {quote(cell)} as a date; write YYYY-MM-DD")


def empty_mask(cells: pd.Series) -> np.ndarray:
    """Mask of the cells that are NaN/None/NaT or blank or NA-like text (:data:`EMPTY_TOKENS`)."""
    missing = cells.isna().to_numpy()
    if cells.dtype.kind in "biufcmM":
        return missing
    text = cells.astype(object).where(~missing, "").astype(str).str.strip().str.lower()
    return missing | text.isin(EMPTY_TOKENS).to_numpy()


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


def _naive(ts: pd.Timestamp) -> pd.Timestamp:
    # A timestamp with a UTC offset keeps its local wall-clock day.
    return ts.tz_localize(None) if ts.tzinfo is not None else ts


def _parse(texts: pd.Series, **how: Any) -> pd.Series:
    """``pd.to_datetime(texts, **how)`` with NaT for failures, timezone-free, in microseconds (dates outside
    the nanosecond range stay readable, so the caller can name them).

    An ISO parse (``format``) that meets mixed UTC offsets goes one cell at a
    time; pandas' inference reads one format for the column or none.
    """
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            parsed = pd.to_datetime(texts, errors="coerce", **how)
            if isinstance(parsed.dtype, pd.DatetimeTZDtype):
                parsed = parsed.dt.tz_localize(None)
            return parsed.astype("datetime64[us]")
        except (ValueError, TypeError, OverflowError):
            if "format" not in how:
                return pd.Series(pd.NaT, index=texts.index, dtype="datetime64[us]")
        out = []
        for text in texts:
            try:
                out.append(_naive(pd.Timestamp(pd.to_datetime(text, **how))))
            except (ValueError, TypeError):
                out.append(pd.NaT)
        return pd.Series(out, index=texts.index, dtype="datetime64[us]")


_BARE_NUMBER = re.compile(r"^[+-]?\d+(\.\d*)?$")

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


def iso_week_sundays(years: np.ndarray, weeks: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The Sunday (last day) of ISO week ``weeks`` of ``years``, and whether that week exists.

    ISO 8601 weeks run Monday to Sunday; week 01 is the week holding the year's
    first Thursday, so a year has 52 or 53 weeks. Week 00, and week 53 of a
    52-week year, do not exist (their Sunday is NaT).

    Examples
    --------
    >>> days, real = iso_week_sundays(np.array([1991, 2020, 2021]), np.array([6, 53, 53]))
    >>> [str(d) for d in days], real.tolist()
    (['1991-02-10', '2021-01-03', 'NaT'], [True, True, False])
    """
    years = np.asarray(years, dtype=np.int64)
    weeks = np.asarray(weeks, dtype=np.int64)
    monday = _first_monday(years)
    in_year = (_first_monday(years + 1) - monday).astype(np.int64) // 7
    real = (weeks >= 1) & (weeks <= in_year)
    sunday = monday + (7 * (weeks - 1) + 6).astype("timedelta64[D]")
    return np.where(real, sunday, np.datetime64("NaT", "D")), real


def _week_text(cell: object) -> str:
    # Whole numbers from a Parquet or xlsx column (202405, 202405.0) are read as they are typed.
    if isinstance(cell, float | np.floating) and np.isfinite(cell) and float(cell).is_integer():
        return str(int(cell))
    return str(cell).strip()


def _iso_weeks(
    cells: np.ndarray, empty: np.ndarray, rows: list[int], column: str, source: str
) -> tuple[np.ndarray, np.ndarray, list[RowProblem]]:
    """Read the ISO week labels of a date column: (mask of label cells, their Sundays, problems).

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
    parts = texts.str.extract(_ISO_WEEK)
    six = texts.str.extract(_SIX_DIGITS)
    if six_digits and six[0].notna().all():
        if (six[1].astype(int) <= 12).all():
            i = int(filled[0])
            raise HistoryError(
                f"{source} row {rows[i]}, column {column!r}: six-digit dates such as {quote(texts.iloc[0])} "
                "can be months (YYYYMM) or ISO weeks (YYYYww), and none is past 12; write months as "
                "YYYY-MM or weeks as YYYY-Www"
            )
        parts = six
    found = parts[0].notna().to_numpy()
    mask = np.zeros(n, dtype=bool)
    mask[filled[found]] = True
    sundays = np.full(n, np.datetime64("NaT", "D"))
    years, weeks = parts[0][found].astype(int).to_numpy(), parts[1][found].astype(int).to_numpy()
    days, real = iso_week_sundays(years, weeks)
    sundays[filled[found]] = days

    def no_such_week(j: int) -> RowProblem:
        i, year = int(filled[found][j]), int(years[j])
        has = int(iso_week_sundays(np.array([year]), np.array([53]))[1][0]) + 52
        return RowProblem(
            rows[i],
            column,
            f"{quote(cells[i])} is not an ISO week: {year} has ISO weeks 01 to {has} (Monday to Sunday, "
            "week 01 holds the year's first Thursday)",
        )

    return mask, sundays, capped(np.flatnonzero(~real), no_such_week)


_YEAR_FIRST = r"^\d{4}[-/.]"


def parse_dates(
    cells: pd.Series, rows: list[int], column: str, source: str
) -> tuple[pd.Series, list[RowProblem]]:
    """Parse a date column. Empty cells become NaT; bad cells become problems.

    ISO week labels (``2024-W05``, ``2024 W05``, ``2024W05``; ``202405`` in a
    column of six-digit cells, see :func:`_iso_weeks`) are read as the week's
    Sunday, the last day of the ISO week, so the history is weekly ending Sunday.
    Other text is read as ISO 8601 first (``2024-01-31``, ``2024-01``). Text that is
    not ISO goes to pandas' format inference, once month-first and once
    day-first: if both read every such cell but disagree (``03/04/2024``), the
    file is ambiguous and the user is asked for ISO dates. A date outside
    :data:`FIRST_DAY`..:data:`LAST_DAY` (``1500-01-01``) is a problem naming
    its row. At most :data:`KEEP_PROBLEMS` problems of each kind are kept, the
    others counted (:func:`count_problems`).

    Examples
    --------
    >>> dates, problems = parse_dates(pd.Series(["2024-01-07", "1500-01-01"]), [2, 3], "date", "f")
    >>> problems[0].line("f")
    "f row 3, column 'date': date '1500-01-01' is outside the dates evcal can hold \
(1677-09-22 to 2262-04-11); check the year"
    """
    n = len(cells)
    out = pd.Series(pd.NaT, index=range(n), dtype="datetime64[ns]")
    problems: list[RowProblem] = []
    values = cells.reset_index(drop=True)
    if pd.api.types.is_datetime64_any_dtype(values.dtype):
        stamps = values.dt.tz_localize(None) if isinstance(values.dtype, pd.DatetimeTZDtype) else values
        far = outside_days(stamps)
        problems += capped(np.flatnonzero(far), lambda i: _range_problem(rows[i], column, stamps.iloc[i]))
        return stamps.where(~far).astype("datetime64[ns]"), problems

    cells_array = values.to_numpy(dtype=object)
    week_cells, sundays, week_problems = _iso_weeks(cells_array, empty_mask(values), rows, column, source)
    problems += week_problems
    if week_cells.any():
        given = pd.Series(sundays[week_cells].astype("datetime64[us]"), index=np.flatnonzero(week_cells))
        far = outside_days(given)
        problems += capped(
            np.flatnonzero(far),
            lambda j: _range_problem(rows[given.index[j]], column, cells_array[given.index[j]]),
        )
        out.iloc[given.index] = given.where(~far).to_numpy(dtype="datetime64[ns]")
    empty = empty_mask(values) | week_cells  # a week label is read; the rest of the column as dates
    is_text = np.array([isinstance(c, str) for c in cells_array], dtype=bool) & ~empty
    stripped = pd.Series(cells_array[is_text], dtype=object).astype(str).str.strip()
    # Bare numbers are not dates, except ISO 8601 years (2024) and basic dates (20240131).
    bare = stripped.str.match(_BARE_NUMBER) & ~stripped.str.len().isin([4, 8])
    text_pos = list(np.flatnonzero(is_text)[~bare.to_numpy(dtype=bool)])
    stamp_pos: list[int] = []
    stamp_vals: list[pd.Timestamp] = []
    unreadable: list[int] = []
    for i in np.flatnonzero(~is_text & ~empty):
        cell = cells_array[i]
        if isinstance(cell, pd.Timestamp | dt.datetime | dt.date | np.datetime64):
            stamp_pos.append(int(i))
            stamp_vals.append(_naive(pd.Timestamp(cell)))
        else:
            unreadable.append(int(i))
    unreadable += [int(i) for i in np.flatnonzero(is_text)[bare.to_numpy(dtype=bool)]]
    problems += capped(
        sorted(unreadable),
        lambda i: _unreadable(rows[i], column, cells_array[i]),
    )
    if stamp_pos:
        given = pd.Series(pd.DatetimeIndex(stamp_vals).as_unit("us"), index=stamp_pos)
        far = outside_days(given)
        problems += capped(
            np.flatnonzero(far), lambda j: _range_problem(rows[stamp_pos[j]], column, given.iloc[j])
        )
        out.iloc[stamp_pos] = given.where(~far).to_numpy(dtype="datetime64[ns]")
    if not text_pos:
        return out, problems

    texts = pd.Series([str(cells_array[i]).strip() for i in text_pos], index=text_pos)
    iso = _parse(texts, format="ISO8601")
    # Year-first text is only ever year-month-day: 2024/01/31 is read, 2024-13-01 is
    # a mistake (pandas' inference would quietly read it as 13 January).
    year_first = texts.str.match(_YEAR_FIRST)
    retry = year_first & iso.isna()
    if retry.any():
        iso.loc[retry] = _parse(texts[retry].str.replace(r"[/.]", "-", regex=True), format="ISO8601")
    rest = texts[iso.isna() & ~year_first]
    parsed = iso
    if len(rest):
        month_first = _parse(rest, dayfirst=False)
        day_first = _parse(rest, dayfirst=True)
        both = month_first.notna() & day_first.notna()
        if both.all() and not month_first.equals(day_first):
            differ = rest[month_first != day_first]
            i = int(differ.index[0])
            raise HistoryError(
                f"{source} row {rows[i]}, column {column!r}: dates such as "
                f"{quote(differ.iloc[0])} can be read day-first or month-first; "
                "write dates as YYYY-MM-DD"
            )
        better = day_first if day_first.notna().sum() > month_first.notna().sum() else month_first
        parsed = iso.copy()
        parsed.loc[rest.index] = better
    far = outside_days(parsed)
    problems += capped(
        parsed.index[far].to_numpy(dtype=int), lambda i: _range_problem(rows[i], column, texts.loc[i])
    )
    good = parsed.notna() & ~far
    out.iloc[parsed.index[good].to_numpy(dtype=int)] = parsed[good].to_numpy(dtype="datetime64[ns]")
    problems += capped(
        parsed.index[~good & ~far].to_numpy(dtype=int),
        lambda i: _unreadable(rows[i], column, texts.loc[i]),
    )
    return out, problems


#: the largest value a history may hold: far above any sales or demand figure (a quadrillion),
#: and far below where sums of squares overflow (about 1e154) — common practice, no source
MAX_VALUE = 1e15

_THOUSANDS = re.compile(r"^[+-]?\d{1,3}([,. ']\d{3})+([.,]\d+)?$")


def parse_values(
    cells: pd.Series, rows: list[int], column: str, allow_negative: bool
) -> tuple[pd.Series, list[RowProblem]]:
    """Parse a value column to float64. Empty cells become NaN; bad cells problems."""
    values = cells.reset_index(drop=True)
    problems: list[RowProblem] = []
    if pd.api.types.is_bool_dtype(values.dtype):
        numbers = pd.Series(np.nan, index=values.index)
        problems += capped(range(len(values)), lambda i: RowProblem(
            rows[i], column, f"{quote(values.iloc[i])} is not a number"))
        return numbers, problems
    if pd.api.types.is_numeric_dtype(values.dtype):
        numbers = pd.Series(values.to_numpy(dtype="float64", na_value=np.nan), index=values.index)
    else:
        empty = pd.Series(empty_mask(values), index=values.index)
        texts = values.astype(object).where(~empty, "").astype(str).str.strip()
        numbers = pd.to_numeric(texts.where(~empty), errors="coerce").astype("float64")

        def not_a_number(i: int) -> RowProblem:
            text = texts.iloc[i]
            hint = "write plain numbers such as 1234.5"
            if _THOUSANDS.match(text):
                hint = "write it without thousands separators, e.g. 1234.5"
            elif re.search(r"\d", text):
                hint = "write a plain number without units or currency signs, e.g. 1234.5"
            return RowProblem(rows[i], column, f"{quote(values.iloc[i])} is not a number; {hint}")

        problems += capped(np.flatnonzero((numbers.isna() & ~empty).to_numpy()), not_a_number)
    bad = (~np.isfinite(numbers) & numbers.notna()).to_numpy()
    problems += capped(np.flatnonzero(bad), lambda i: RowProblem(
        rows[i], column, f"{quote(values.iloc[i])} is not a finite number"))
    numbers[bad] = np.nan
    huge = (numbers.abs() > MAX_VALUE).to_numpy()
    problems += capped(np.flatnonzero(huge), lambda i: RowProblem(
        rows[i], column, f"{quote(values.iloc[i])} is larger than any value evcal fits (at most "
        f"{MAX_VALUE:.0e} in size); check the cell, or write the column in thousands"))
    numbers[huge] = np.nan
    if not allow_negative:
        problems += capped(np.flatnonzero((numbers < 0).to_numpy()), lambda i: RowProblem(
            rows[i],
            column,
            f"negative value {numbers.iloc[i]:g}; sales and demand cannot be below "
            "zero: fix the value, or pass --allow-negative (allow_negative=True) if "
            "negatives are real (returns, net flows)",
        ))
    return numbers, problems
