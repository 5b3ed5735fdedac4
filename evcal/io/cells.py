"""Turn date and value cells into timestamps and floats, naming every bad cell.

Each parser returns the parsed column and a list of :class:`RowProblem`, one
per bad cell, so a file with several mistakes is reported in one go.
"""

from __future__ import annotations

import datetime as dt
import re
import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd

from evcal.errors import HistoryError

# Cell text that means "no value here" (a gap), compared case-insensitively.
EMPTY_TOKENS = frozenset({"", "na", "n/a", "nan", "null", "none", "#n/a"})


@dataclass(frozen=True, order=True)
class RowProblem:
    """One bad cell: its spreadsheet row, its column and what is wrong."""

    row: int
    column: str
    text: str

    def line(self, source: str) -> str:
        return f"{source} row {self.row}, column {self.column!r}: {self.text}"


def is_empty(cell: object) -> bool:
    """True for NaN/None/NaT and for blank or NA-like text."""
    if cell is None:
        return True
    if isinstance(cell, str):
        return cell.strip().lower() in EMPTY_TOKENS
    try:
        return bool(pd.isna(cell))
    except (TypeError, ValueError):
        return False


def empty_mask(cells: pd.Series) -> np.ndarray:
    """Vectorised :func:`is_empty` over a column."""
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


def _naive(ts: pd.Timestamp) -> pd.Timestamp:
    # A timestamp with a UTC offset keeps its local wall-clock day.
    return ts.tz_localize(None) if ts.tzinfo is not None else ts


def _parse_iso(texts: pd.Series) -> pd.Series:
    """ISO 8601 parse with NaT for failures; mixed UTC offsets parsed one by one."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            parsed = pd.to_datetime(texts, format="ISO8601", errors="coerce")
            if isinstance(parsed.dtype, pd.DatetimeTZDtype):
                parsed = parsed.dt.tz_localize(None)
            return parsed.astype("datetime64[ns]")
        except (ValueError, TypeError):
            pass
        out = []
        for text in texts:
            try:
                out.append(_naive(pd.Timestamp(pd.to_datetime(text, format="ISO8601"))))
            except (ValueError, TypeError):
                out.append(pd.NaT)
        return pd.Series(out, index=texts.index, dtype="datetime64[ns]")


def _parse_inferred(texts: pd.Series, dayfirst: bool) -> pd.Series:
    """pandas' own format inference (one format for the column), NaT for failures."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            parsed = pd.to_datetime(texts, errors="coerce", dayfirst=dayfirst)
        except (ValueError, TypeError, OverflowError):
            return pd.Series(pd.NaT, index=texts.index, dtype="datetime64[ns]")
    if isinstance(parsed.dtype, pd.DatetimeTZDtype):
        parsed = parsed.dt.tz_localize(None)
    return parsed.astype("datetime64[ns]")


_BARE_NUMBER = re.compile(r"^[+-]?\d+(\.\d*)?$")
_YEAR_FIRST = r"^\d{4}[-/.]"


def parse_dates(
    cells: pd.Series, rows: list[int], column: str, source: str
) -> tuple[pd.Series, list[RowProblem]]:
    """Parse a date column. Empty cells become NaT; bad cells become problems.

    Text is read as ISO 8601 first (``2024-01-31``, ``2024-01``). Text that is
    not ISO goes to pandas' format inference, once month-first and once
    day-first: if both read every such cell but disagree (``03/04/2024``), the
    file is ambiguous and the user is asked for ISO dates.
    """
    n = len(cells)
    out = pd.Series(pd.NaT, index=range(n), dtype="datetime64[ns]")
    problems: list[RowProblem] = []
    values = cells.reset_index(drop=True)
    if pd.api.types.is_datetime64_any_dtype(values.dtype):
        stamps = values
        if isinstance(stamps.dtype, pd.DatetimeTZDtype):
            stamps = stamps.dt.tz_localize(None)
        return stamps.astype("datetime64[ns]"), problems

    cells_array = values.to_numpy(dtype=object)
    empty = empty_mask(values)
    is_text = np.array([isinstance(c, str) for c in cells_array], dtype=bool) & ~empty
    stripped = pd.Series(cells_array[is_text], dtype=object).astype(str).str.strip()
    # Bare numbers are not dates, except ISO 8601 years (2024) and basic dates (20240131).
    bare = stripped.str.match(_BARE_NUMBER) & ~stripped.str.len().isin([4, 8])
    text_pos = list(np.flatnonzero(is_text)[~bare.to_numpy(dtype=bool)])
    stamp_pos: list[int] = []
    stamp_vals: list[pd.Timestamp] = []
    for i in np.flatnonzero(~is_text & ~empty):
        cell = cells_array[i]
        if isinstance(cell, pd.Timestamp | dt.datetime | dt.date | np.datetime64):
            stamp_pos.append(int(i))
            stamp_vals.append(_naive(pd.Timestamp(cell)))
        else:
            problems.append(
                RowProblem(rows[i], column, f"cannot read {quote(cell)} as a date; write YYYY-MM-DD")
            )
    for i in np.flatnonzero(is_text)[bare.to_numpy(dtype=bool)]:
        problems.append(
            RowProblem(rows[i], column, f"cannot read {quote(cells_array[i])} as a date; write YYYY-MM-DD")
        )
    if stamp_pos:
        out.iloc[stamp_pos] = pd.DatetimeIndex(stamp_vals).as_unit("ns")
    if not text_pos:
        return out, problems

    texts = pd.Series([str(cells_array[i]).strip() for i in text_pos], index=text_pos)
    iso = _parse_iso(texts)
    # Year-first text is only ever year-month-day: 2024/01/31 is read, 2024-13-01 is
    # a mistake (pandas' inference would quietly read it as 13 January).
    year_first = texts.str.match(_YEAR_FIRST)
    retry = year_first & iso.isna()
    if retry.any():
        iso.loc[retry] = _parse_iso(texts[retry].str.replace(r"[/.]", "-", regex=True))
    rest = texts[iso.isna() & ~year_first]
    parsed = iso
    if len(rest):
        month_first = _parse_inferred(rest, dayfirst=False)
        day_first = _parse_inferred(rest, dayfirst=True)
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
    good = parsed.notna()
    out.iloc[parsed.index[good].to_numpy(dtype=int)] = parsed[good].to_numpy()
    for i in parsed.index[~good]:
        problems.append(
            RowProblem(rows[int(i)], column, f"cannot read {quote(texts.loc[i])} as a date; write YYYY-MM-DD")
        )
    return out, problems


_THOUSANDS = re.compile(r"^[+-]?\d{1,3}([,. ']\d{3})+([.,]\d+)?$")


def parse_values(
    cells: pd.Series, rows: list[int], column: str, allow_negative: bool
) -> tuple[pd.Series, list[RowProblem]]:
    """Parse a value column to float64. Empty cells become NaN; bad cells problems."""
    values = cells.reset_index(drop=True)
    problems: list[RowProblem] = []
    if pd.api.types.is_bool_dtype(values.dtype):
        numbers = pd.Series(np.nan, index=values.index)
        problems += [RowProblem(rows[i], column, f"{quote(v)} is not a number") for i, v in values.items()]
        return numbers, problems
    if pd.api.types.is_numeric_dtype(values.dtype):
        numbers = pd.Series(values.to_numpy(dtype="float64", na_value=np.nan), index=values.index)
    else:
        empty = pd.Series(empty_mask(values), index=values.index)
        texts = values.astype(object).where(~empty, "").astype(str).str.strip()
        numbers = pd.to_numeric(texts.where(~empty), errors="coerce").astype("float64")
        for i in np.flatnonzero((numbers.isna() & ~empty).to_numpy()):
            text = texts.iloc[i]
            hint = "write plain numbers such as 1234.5"
            if _THOUSANDS.match(text):
                hint = "write it without thousands separators, e.g. 1234.5"
            elif re.search(r"\d", text):
                hint = "write a plain number without units or currency signs, e.g. 1234.5"
            problems.append(RowProblem(rows[i], column, f"{quote(values.iloc[i])} is not a number; {hint}"))
    bad = ~np.isfinite(numbers) & numbers.notna()
    for i in np.flatnonzero(bad.to_numpy()):
        problems.append(RowProblem(rows[i], column, f"{quote(values.iloc[i])} is not a finite number"))
        numbers.iloc[i] = np.nan
    if not allow_negative:
        for i in np.flatnonzero((numbers < 0).to_numpy()):
            problems.append(
                RowProblem(
                    rows[i],
                    column,
                    f"negative value {numbers.iloc[i]:g}; sales and demand cannot be below "
                    "zero: fix the value, or pass --allow-negative (allow_negative=True) if "
                    "negatives are real (returns, net flows)",
                )
            )
    return numbers, problems
