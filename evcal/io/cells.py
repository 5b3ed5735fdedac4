"""Turn date and value cells into timestamps and floats, naming every bad cell.

Each parser returns the parsed column and a list of :class:`RowProblem`, one
per bad cell, so a file with several mistakes is reported in one go.
"""

from __future__ import annotations

import datetime as dt
import re
import warnings
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import HistoryError
from evcal.io.isoweeks import read_iso_weeks
from evcal.io.problems import KEEP_PROBLEMS, RowProblem, capped, count_problems, key_text, quote
from evcal.spelling import option

# the readers import the cell problems from here, beside the parsers
__all__ = ["EMPTY_TOKENS", "FIRST_DAY", "KEEP_PROBLEMS", "LAST_DAY", "MAX_VALUE", "RowProblem", "capped",
           "count_problems", "empty_mask", "key_text", "outside_days", "parse_dates", "parse_values", "quote"]

# Cell text that means "no value here" (a gap), compared case-insensitively.
EMPTY_TOKENS = frozenset({"", "na", "n/a", "nan", "null", "none", "#n/a"})

#: Days a history date may name: pandas' nanosecond Timestamps (every later step
#: indexes by them) run from 1677-09-21 00:12 to 2262-04-11 23:47; whole days inside.
FIRST_DAY = pd.Timestamp("1677-09-22")
LAST_DAY = pd.Timestamp("2262-04-11")


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


def _place(out: pd.Series, positions: np.ndarray, stamps: pd.Series, shown: list[Any], rows: list[int],
           column: str) -> list[RowProblem]:
    """Put the parsed ``stamps`` at ``positions`` of ``out``; those outside the days evcal can hold stay
    NaT and become problems naming their row and the cell as written (``shown``)."""
    far = outside_days(stamps)
    out.iloc[positions] = stamps.where(~far).to_numpy(dtype="datetime64[ns]")
    return capped(np.flatnonzero(far), lambda j: _range_problem(rows[positions[j]], column, shown[j]))


def _unreadable(row: int, column: str, cell: object) -> RowProblem:
    return RowProblem(row, column, f"cannot read {quote(cell)} as a date; write YYYY-MM-DD")


def empty_mask(cells: pd.Series) -> np.ndarray:
    """Mask of the cells that are NaN/None/NaT or blank or NA-like text (:data:`EMPTY_TOKENS`)."""
    missing = cells.isna().to_numpy()
    if cells.dtype.kind in "biufcmM":
        return missing
    text = cells.astype(object).where(~missing, "").astype(str).str.strip().str.lower()
    return missing | text.isin(EMPTY_TOKENS).to_numpy()


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

_YEAR_FIRST = r"^\d{4}[-/.]"


def parse_dates(
    cells: pd.Series, rows: list[int], column: str, source: str, week_end: int = 6
) -> tuple[pd.Series, list[RowProblem]]:
    """Parse a date column. Empty cells become NaT; bad cells become problems.

    ISO week labels (``2024-W05``, ``2024 W05``, ``2024W05``; ``202405`` in a
    column of six-digit cells, see
    :func:`~evcal.io.isoweeks.read_iso_weeks`) are read as the week's
    Sunday, the last day of the ISO week, so the history is weekly ending Sunday; ``week_end`` (Monday 0 ..
    Sunday 6, from a forced ``freq='W-FRI'``) dates them by that day of the labelled week instead.
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
        problems += _place(out, np.arange(n), stamps.reset_index(drop=True), list(stamps), rows, column)
        return out, problems

    cells_array = values.to_numpy(dtype=object)
    week_cells, ends, week_problems = read_iso_weeks(cells_array, empty_mask(values), rows, column, source,
                                                     week_end)
    problems += week_problems
    if week_cells.any():
        at = np.flatnonzero(week_cells)
        problems += _place(out, at, pd.Series(ends[at].astype("datetime64[us]")), list(cells_array[at]),
                           rows, column)
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
        problems += _place(out, np.array(stamp_pos), pd.Series(pd.DatetimeIndex(stamp_vals).as_unit("us")),
                           stamp_vals, rows, column)
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
    positions = parsed.index.to_numpy(dtype=int)
    problems += _place(out, positions, parsed.reset_index(drop=True), list(texts), rows, column)
    unread = positions[parsed.isna().to_numpy()]
    problems += capped(unread, lambda i: _unreadable(rows[i], column, texts.loc[i]))
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
            f"zero: fix the value, or pass {option('allow_negative', True)} if "
            "negatives are real (returns, net flows)",
        ))
    return numbers, problems
