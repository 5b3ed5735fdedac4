"""Outside drivers in files: the driver columns of a history, and a file of their future values.

A driver is named ``NAME`` (entered as it is: ``level``) or ``NAME:log`` (entered
as its logarithm, so its coefficient is an elasticity in a log model). Every
problem with a driver column is one line naming the file, the column and the
first bad row, with the count of the others.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import HistoryError
from evcal.io.cells import RowProblem, count_problems, empty_mask, parse_dates, parse_values, quote
from evcal.io.tables import RawTable, find_column, load_table
from evcal.spelling import option

SCALES = ("level", "log")


class DriverError(HistoryError):
    """A driver named wrongly, or a driver column that cannot be used."""


def history_advice() -> str:
    """The advice of a history without a driver's column, when the user named the driver."""
    return f"name the driver column with {_driver_option()}"


def _driver_option(value: str | None = None) -> str:
    """``--driver`` on the command line, ``drivers=`` in Python (with ``value`` when given)."""
    if value is None:
        return option("drivers", flag="--driver")
    return option("drivers", [value], flag="--driver", cli_value=value)


class MissingDriverColumn(DriverError):
    """A file without a driver's column: ``found`` says which file and what columns it has, ``driver``
    which driver, so the caller can word the advice for whoever named the driver (:meth:`advised`)."""

    def __init__(self, found: str, driver: str, advice: str | None = None) -> None:
        self.found, self.driver = found, driver
        super().__init__(f"{found}; {history_advice() if advice is None else advice}")

    def advised(self, advice: str) -> MissingDriverColumn:
        """The same line with other advice."""
        return MissingDriverColumn(self.found, self.driver, advice)


def parse_driver(text: str | tuple[str, str]) -> tuple[str, str]:
    """``"price:log"`` -> ``("price", "log")``; ``"temperature"`` -> ``("temperature", "level")``.

    Examples
    --------
    >>> parse_driver("price:log"), parse_driver("temperature"), parse_driver(("spend", "level"))
    (('price', 'log'), ('temperature', 'level'), ('spend', 'level'))
    """
    if isinstance(text, tuple):
        name, scale = text
    else:
        name, sep, scale = str(text).rpartition(":")
        if not sep:
            name, scale = str(text), "level"
    name, scale = str(name).strip(), str(scale).strip().lower()
    if not name or scale not in SCALES:
        raise DriverError(f"driver {text!r}: write NAME, NAME:log or NAME:level (NAME a column of the "
                          "history; log enters log(value), level the value as it is)")
    return name, scale


def parse_drivers(drivers: Sequence[str | tuple[str, str]] | None) -> list[tuple[str, str]]:
    """Each driver's (name, scale); a name given twice is one line."""
    out = [parse_driver(d) for d in (drivers or [])]
    names = [n for n, _ in out]
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        raise DriverError(f"driver {twice[0]!r} is named more than once; name each driver once")
    return out


def merge_drivers(from_calendar: Sequence[tuple[str, str]], given: Sequence[str | tuple[str, str]] | None
                  ) -> list[tuple[str, str]]:
    """The calendar's ``drivers:`` with the command line's ``--driver`` added; the command line wins.

    A driver named in both takes the command line's scale (``--driver price:level``
    over ``drivers: {price: {scale: log}}``), so one run can try the other scale
    without editing the calendar.

    Examples
    --------
    >>> merge_drivers([("price", "log"), ("temperature", "level")], ["price:level", "spend:log"])
    [('price', 'level'), ('temperature', 'level'), ('spend', 'log')]
    """
    out = dict(from_calendar)
    out.update(parse_drivers(given))
    return list(out.items())


def check_history_drivers(history: object, calendar: object) -> None:
    """One line when the calendar names a driver the history was read without (never ignored silently)."""
    wanted = [n for n, _ in getattr(calendar, "drivers", ())]
    frame = getattr(history, "drivers", None)
    have = set(frame.columns) if frame is not None else set()
    missing = [n for n in wanted if n not in have]
    if missing:
        source = getattr(calendar, "source", "the calendar")
        raise DriverError(f"{source}: drivers: {missing[0]!r} is not among the history's driver columns; "
                          "read the history with its drivers "
                          "(read_history(..., drivers=...)), or give the history as a file")


@contextmanager
def named_by_calendar(calendar: Any, given: Sequence[str | tuple[str, str]] | None = None) -> Iterator[None]:
    """Around reading a history: a driver column it lacks that the calendar's ``drivers:`` named (and
    ``--driver``, ``given``, did not) is one line saying so, with the calendar file, not "--driver"."""
    try:
        yield
    except MissingDriverColumn as err:
        by_option = {n for n, _ in parse_drivers(given)}
        if err.driver in by_option or err.driver not in {n for n, _ in getattr(calendar, "drivers", ())}:
            raise
        source = getattr(calendar, "source", "the calendar")
        raise err.advised(f"the calendar's drivers: ({source}) names it; add the column to the history, or "
                          f"remove {err.driver!r} from the calendar's drivers:") from None


def driver_cells(table: RawTable, keep: np.ndarray, rows: list[int], drivers: list[tuple[str, str]],
                 reserved: Sequence[str], needed: np.ndarray, advice: str | None = None
                 ) -> dict[str, pd.Series]:
    """Each driver's values on the kept rows of ``table``, positionally (float, NaN where empty).

    ``needed`` marks the rows that must have a value (the rows with sales). A
    missing column, a date or value column named as a driver, a cell that is
    not a number, an empty cell on a needed row, or (``log``) a value not above
    zero is one line naming the file, the column and the first bad row; a missing column's line ends
    with ``advice`` (:class:`MissingDriverColumn`).
    """
    name = table.source
    out: dict[str, pd.Series] = {}
    lines: list[str] = []
    for driver, scale in drivers:
        try:
            col = find_column(table, driver, "driver", _driver_option())
        except HistoryError as err:
            raise MissingDriverColumn(err.problems[0].removesuffix(f"; {history_advice()}"), driver,
                                      advice) from None
        if col in reserved:
            raise DriverError(f"{name} row 1: column {col!r} is the date or value column and cannot "
                              f"also be a driver; name another column with {_driver_option()}")
        cells = table.frame[col].reset_index(drop=True).iloc[keep].reset_index(drop=True)
        values, problems = parse_values(cells, rows, col, allow_negative=True)
        empty = np.flatnonzero(empty_mask(cells) & needed)
        problems += [RowProblem(rows[i], col, "empty driver value on a row with sales; every period with "
                                "sales needs the driver's value (or leave that row's sales empty too)")
                     for i in empty[:1]]
        if scale == "log":
            low = np.flatnonzero((values <= 0).to_numpy())
            problems += [RowProblem(rows[i], col, f"value {values.iloc[i]:g} is not above zero and the "
                                    "driver is entered on the log scale; use "
                                    f"{_driver_option(f'{driver}:level')}, or fix the value")
                         for i in low[:1]]
            n_low = len(low)
        else:
            n_low = 0
        if problems:
            first = min(problems)
            total = count_problems(problems) + max(len(empty) - 1, 0) + max(n_low - 1, 0)
            more = f" (and {total - 1:,} more bad cells in this column)" if total > 1 else ""
            lines.append(first.line(name) + more)
        out[driver] = values
    if lines:
        raise DriverError(lines)
    return out


def read_driver_file(source: str | Path | pd.DataFrame, drivers: Sequence[str | tuple[str, str]], freq: str,
                     date_col: str = "date") -> pd.DataFrame:
    """Read a file of drivers' future values: a date column and one column per driver.

    Parameters
    ----------
    source : path or DataFrame
        ``.csv``, ``.parquet`` or ``.xlsx`` (as histories are read).
    drivers : sequence of str or (name, scale)
        The drivers (``NAME`` or ``NAME:log``: columns of the file; other columns are ignored).
    freq : str
        The model's period frequency; each date names the period holding it.

    Returns
    -------
    DataFrame
        One column per driver on a PeriodIndex at ``freq`` (the periods the file names).

    Examples
    --------
    >>> import pandas as pd
    >>> f = pd.DataFrame({"date": ["2026-01-31", "2026-02-28"], "price": ["2.5", "2.25"]})
    >>> read_driver_file(f, ["price"], "M")["price"].tolist()
    [2.5, 2.25]
    """
    table = load_table(source, date_col=date_col)
    name = table.source
    dcol = find_column(table, date_col, "date", option("date_col"))
    cells = table.frame[dcol].reset_index(drop=True)
    keep = np.flatnonzero(~empty_mask(cells))
    rows = [table.rows[i] for i in keep]
    dates, problems = parse_dates(cells.iloc[keep].reset_index(drop=True), rows, dcol, name)
    if problems:
        raise DriverError(min(problems).line(name))
    wanted = parse_drivers(drivers)
    advice = (f"a drivers file has a date column and one column per outside driver of the model "
              f"({', '.join(n for n, _ in wanted)})")
    values = driver_cells(table, keep, rows, wanted, [dcol], np.ones(len(keep), bool), advice)
    periods = pd.DatetimeIndex(dates.dt.normalize()).to_period(freq)
    repeated = np.flatnonzero(periods.duplicated())
    if len(repeated):
        i = int(repeated[0])
        raise DriverError(f"{name} row {rows[i]}, column {dcol!r}: {quote(cells.iloc[keep[i]])} falls in "
                          f"period {periods[i]}, which an earlier row already gives; one row per period")
    return pd.DataFrame({d: v.to_numpy(dtype=float) for d, v in values.items()}, index=periods,
                        columns=list(values))
