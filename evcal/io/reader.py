"""``read_history``: a history file in, a clean regular :class:`History` out."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import HistoryError
from evcal.io.cells import (
    KEEP_PROBLEMS,
    RowProblem,
    capped,
    count_problems,
    empty_mask,
    parse_dates,
    parse_values,
    quote,
)
from evcal.io.drivers import (
    check_history_drivers,
    driver_cells,
    merge_drivers,
    named_by_calendar,
    parse_drivers,
)
from evcal.io.frequency import describe_freq, detect_freq, detect_label, parse_freq_option, resolve_freq
from evcal.io.history import History
from evcal.io.isoweeks import week_end_day
from evcal.io.tables import find_column, load_table
from evcal.spelling import option, options

_MAX_CLASHES = 3
# Rows named for one repeated date or period; the others are counted.
_MAX_ROWS_NAMED = 3


def read_history(
    source: str | Path | pd.DataFrame,
    date_col: str = "date",
    value_col: str = "value",
    freq: str | None = None,
    allow_negative: bool = False,
    sheet: str | int | None = None,
    drivers: Sequence[str | tuple[str, str]] | None = None,
) -> History:
    """Read a history of one value per period into a regular series.

    Parameters
    ----------
    source : str, Path or DataFrame
        A ``.csv`` (also ``;``- or tab-separated), ``.parquet`` or ``.xlsx``
        file, or a DataFrame (named ``"<frame>"`` in messages).
    date_col, value_col : str
        Column names; matched exactly, else ignoring case and spaces.
    freq : str, optional
        Force the frequency: ``"D"``/``"daily"``, ``"W"``/``"weekly"`` (week
        end taken from the dates), ``"W-MON"`` .. ``"W-SUN"``,
        ``"M"``/``"monthly"``, ``"Q"``/``"quarterly"``. Detected when omitted.
    allow_negative : bool
        Accept values below zero (returns, net flows).
    sheet : str or int, optional
        Excel sheet name or 0-based number (default: the first sheet).
    drivers : sequence of str, optional
        Outside drivers: columns of the file read as numbers, ``NAME`` (as it is)
        or ``NAME:log`` (entered as its logarithm); see :mod:`evcal.io.drivers`.

    Returns
    -------
    History
        Values on a regular PeriodIndex from the first to the last period;
        periods with no row or an empty value are NaN and listed in
        ``missing``.

    Raises
    ------
    HistoryError
        One line per problem, naming file, row and column: empty file,
        missing column, unparseable or duplicate dates, non-numeric or
        negative values, mixed or undetectable frequency.

    Notes
    -----
    Weekly dates name the last day of each week, so a file of Sundays is
    ``W-SUN`` (Monday to Sunday weeks) and a file of Wednesdays ``W-WED``.
    Monthly and quarterly dates may name the first day, the last day or any
    day of the period: ``2024-01-31`` and ``2024-01-01`` are both January.

    Examples
    --------
    >>> import pandas as pd
    >>> frame = pd.DataFrame({"date": ["2024-01-31", "2024-02-29", "2024-04-30"],
    ...                       "value": [10, 12, 9]})
    >>> h = read_history(frame)
    >>> h.freq, h.label, [str(p) for p in h.values.index], [str(p) for p in h.missing]
    ('M', 'end', ['2024-01', '2024-02', '2024-03', '2024-04'], ['2024-03'])
    """
    if freq is not None:
        parse_freq_option(freq)  # a bad --freq is one line before the file is read
    wanted = parse_drivers(drivers)
    table = load_table(source, sheet=sheet, date_col=date_col)
    name = table.source
    dcol = find_column(table, date_col, "date", option("date_col"))
    vcol = find_column(table, value_col, "value", option("value_col"))
    if dcol == vcol:
        raise HistoryError(
            f"{name}: the date and value columns are both {dcol!r}; name two different "
            f"columns with {option('date_col')} and {option('value_col')}"
        )

    frame = table.frame
    date_cells = frame[dcol].reset_index(drop=True)
    value_cells = frame[vcol].reset_index(drop=True)
    blank = empty_mask(date_cells) & empty_mask(value_cells)
    keep = np.flatnonzero(~blank)
    if len(keep) == 0:
        raise HistoryError(f"{name}: no data rows below the header; columns {dcol!r} and {vcol!r} are empty")
    rows = [table.rows[i] for i in keep]
    date_cells = date_cells.iloc[keep].reset_index(drop=True)
    value_cells = value_cells.iloc[keep].reset_index(drop=True)

    # ISO week labels end on Sunday unless the weeks are said to end on another day (freq='W-FRI')
    week_end = week_end_day(parse_freq_option(freq) if freq is not None else None)
    dates, problems = parse_dates(date_cells, rows, dcol, name, week_end)
    values, value_problems = parse_values(value_cells, rows, vcol, allow_negative)
    if problems and value_problems and _swapped(date_cells, value_cells):
        raise HistoryError(
            f"{name}: column {dcol!r} holds numbers and column {vcol!r} holds dates, so the two look "
            f"swapped; put the dates under {dcol!r} and the values under {vcol!r}, or pass "
            f"{options(option('date_col', vcol, quote=True), option('value_col', dcol, quote=True))}"
        )
    problems += value_problems
    dates = dates.dt.normalize()
    no_date = np.flatnonzero(dates.isna().to_numpy() & empty_mask(date_cells))
    problems += capped(no_date, lambda i: RowProblem(
        rows[i], dcol, f"empty date (value {quote(value_cells.iloc[i])}); every row needs a date"))
    problems += _duplicates(dates, date_cells, rows, dcol)
    if problems:
        raise HistoryError(_problem_lines(problems, name))
    if values.notna().sum() == 0:
        raise HistoryError(f"{name}: column {vcol!r} has no values; every cell is empty")

    stamps = pd.DatetimeIndex(dates)
    freq_used = resolve_freq(stamps, rows, name, freq)
    periods = stamps.to_period(freq_used)
    _check_one_row_per_period(periods, stamps, rows, name, freq_used)

    index = pd.period_range(periods.min(), periods.max(), freq=freq_used, name="period")
    series = pd.Series(np.nan, index=index, dtype="float64", name=value_col)
    series.loc[periods] = values.to_numpy(dtype="float64")
    missing = list(index[series.isna().to_numpy()])
    driver_frame = None
    if wanted:
        cells = driver_cells(table, keep, rows, wanted, [dcol, vcol], values.notna().to_numpy())
        driver_frame = pd.DataFrame(np.nan, index=index, columns=[n for n, _ in wanted])
        for n, v in cells.items():
            driver_frame.loc[periods, n] = v.to_numpy(dtype="float64")
        driver_frame = driver_frame.where(series.notna())  # a driver counts only where there are sales
    return History(series, freq_used, detect_label(stamps, freq_used), name, missing, driver_frame,
                   dict(wanted))


def _swapped(date_cells: pd.Series, value_cells: pd.Series) -> bool:
    """Whether nearly every date cell is a number and nearly every value cell a date (90 %: a few
    blank or odd cells should not hide the one-line answer behind hundreds of row problems)."""
    as_number = pd.to_numeric(date_cells.astype(str).str.strip(), errors="coerce").notna().mean()
    as_date = pd.to_datetime(value_cells.astype(str).str.strip(), errors="coerce", format="mixed").notna()
    return bool(as_number >= 0.9 and as_date.mean() >= 0.9)


def _repeats(keys: pd.Series | pd.Index) -> list[np.ndarray]:
    """Positions of each key that occurs more than once, in order of first row; NaN/NaT skipped.

    Vectorised (a file of two million rows of one date, or of every date twice,
    is one pass); the caller lists a few groups and counts the rest.
    """
    keys = pd.Series(keys).reset_index(drop=True)
    repeated = np.flatnonzero((keys.duplicated(keep=False) & keys.notna()).to_numpy())
    if len(repeated) == 0:
        return []
    codes, _ = pd.factorize(keys.iloc[repeated])  # numbered in order of first appearance
    order = np.argsort(codes, kind="stable")
    bounds = np.flatnonzero(np.diff(codes[order])) + 1
    return np.split(repeated[order], bounds)


def _rows_text(rows: list[int], positions: np.ndarray, cells: pd.Series) -> str:
    """``row 3 ('2024-01-07'), row 4 (...) and 1,999,997 more rows``: a few named, the rest counted."""
    named = positions[:_MAX_ROWS_NAMED]
    text = ", ".join(f"row {rows[i]} ({quote(cells.iloc[i])})" for i in named)
    if len(positions) > len(named):
        text += f" and {len(positions) - len(named):,} more rows"
    return text


def _duplicates(dates: pd.Series, cells: pd.Series, rows: list[int], column: str) -> list[RowProblem]:
    groups = _repeats(dates)

    def problem(g: int) -> RowProblem:
        first, others = groups[g][0], groups[g][1:]
        return RowProblem(
            rows[first],
            column,
            f"duplicate date {quote(cells.iloc[first])}, again in {_rows_text(rows, others, cells)}; "
            "keep one row per period (add the rows up if they are parts of the same period)",
        )

    return capped(range(len(groups)), problem)


def _check_one_row_per_period(
    periods: pd.PeriodIndex,
    stamps: pd.DatetimeIndex,
    rows: list[int],
    name: str,
    freq: str,
) -> None:
    if periods.is_unique:
        return
    try:
        shown_freq = detect_freq(stamps, source=name, rows=rows)
        hint = f"the dates look {describe_freq(shown_freq)}; leave out {option('freq')} to use that"
    except HistoryError:
        hint = "give one row per period"
    clashes = _repeats(pd.Series(periods.asi8))
    lines: list[str] = []
    for positions in clashes[:_MAX_CLASHES]:
        listed = ", ".join(f"{rows[i]} ({stamps[i].date()})" for i in positions[:_MAX_ROWS_NAMED])
        if len(positions) > _MAX_ROWS_NAMED:
            listed += f" and {len(positions) - _MAX_ROWS_NAMED:,} more"
        lines.append(
            f"{name} rows {listed}: all fall in the {describe_freq(freq)} period "
            f"{periods[positions[0]]}; evcal does not add rows up: {hint}"
        )
    if len(clashes) > _MAX_CLASHES:
        lines.append(f"{name}: and {len(clashes) - _MAX_CLASHES:,} more periods with several rows")
    raise HistoryError(lines)


def _problem_lines(problems: list[RowProblem], name: str) -> list[str]:
    ordered = sorted(problems)
    lines = [p.line(name) for p in ordered[:KEEP_PROBLEMS]]
    rest = count_problems(problems) - len(lines)
    if rest > 0:
        lines.append(f"{name}: and {rest:,} more problems like these (first {len(lines)} shown)")
    return lines


def history_for(history: Any, calendar: Any, drivers: Any = None, **read_options: Any) -> History:
    """The history a fit reads with ``calendar``: its ``drivers:`` plus ``drivers`` (``--driver``, which win).

    A :class:`History` is taken as it is. A driver column the history lacks is one line
    that says whether the calendar or ``--driver`` named it; a history read without a
    driver the calendar names is refused (:func:`evcal.io.drivers.check_history_drivers`).
    ``read_options`` go to :func:`read_history`.
    """
    if isinstance(history, History):
        hist = history
    else:
        wanted = merge_drivers(getattr(calendar, "drivers", ()), drivers)
        with named_by_calendar(calendar, drivers):
            hist = read_history(history, drivers=wanted or None, **read_options)
    check_history_drivers(hist, calendar)
    return hist
