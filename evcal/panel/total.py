"""The grand total of a long file as one series: ``evcal fit long.csv --series-col a,b --level total``.

A planner reconciling product × store plans also plans the head office's
number, every series added up to one. ``--level total`` adds every series of
the long file up (:func:`evcal.panel.rollup.aggregate` with no columns: a
period is a gap where a series inside its span has no value) and fits the sum
as one series, the same as a history file of the sum would be fitted: the model
folder is a one-series folder, the grand-total level of ``evcal plan
--reconcile`` (:mod:`evcal.panel.levels`). ``total`` is the name the
reconciled plan gives that level (its ``level`` column), so the word is kept
for the grand total: a file with a column called ``total`` (matched as a
column name is, ignoring case and spaces), other than its date or value
column, is refused in one line, since ``--level total`` could mean that column.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from evcal.errors import EvcalError, HistoryError
from evcal.io.longformat import split_key_option
from evcal.panel.reconcile import TOTAL
from evcal.spelling import option, subject

__all__ = ["TOTAL", "fit_total", "is_total", "refuse_with_total"]


def _is_word(name: Any) -> bool:
    return str(name).strip().lower() == TOTAL


def is_total(level: Any) -> bool:
    """Whether ``level`` (``"a,b"`` or a list) asks for the grand total (``total``, alone or not).

    Examples
    --------
    >>> is_total("total"), is_total(["Total"]), is_total("product,store"), is_total(None)
    (True, True, False, False)
    """
    return any(_is_word(c) for c in split_key_option(level))


def refuse_with_total(level: Any, *, group_col: str | None = None, workers: int | None = None,
                      scheduler: str | None = None) -> None:
    """One line for a setting the grand total cannot take, before any work.

    Examples
    --------
    >>> refuse_with_total("total")
    >>> refuse_with_total("total,store")
    Traceback (most recent call last):
    ...
    evcal.errors.EvcalError: level='total,store': total adds every series up to one, so it stands alone; \
fit level='total' and level='store' as two models
    """
    cols = split_key_option(level)
    if len(cols) > 1:
        others = ",".join(c for c in cols if not _is_word(c))
        raise EvcalError(f"{option('level', ','.join(cols))}: {TOTAL} adds every series up to one, so it "
                         f"stands alone; fit {option('level', TOTAL)} and {option('level', others)} as two "
                         "models")
    for arg, value in (("group_col", group_col), ("workers", workers), ("scheduler", scheduler)):
        if value:
            raise EvcalError(f"{option(arg, value)} with {option('level', TOTAL)}: the grand total is one "
                             f"series, fitted alone; leave out {subject(arg)}")


def _read(history: Any, keys: list[str], date_col: str, value_col: str, freq: str | None
          ) -> tuple[Any, list[str]]:
    """The panel of the long table and all its column names, the table read once (as ``read_panel`` does)."""
    from evcal.io.longformat import panel_from_frame, read_panel
    from evcal.io.tables import PARQUET_SUFFIXES, load_table

    if not keys:
        raise HistoryError(f"{option('level', TOTAL)} needs {option('series_cols', flag='--series-col')}: "
                           "the series to add up")
    if isinstance(history, str | Path) and Path(history).suffix.lower() in PARQUET_SUFFIXES:
        import pyarrow.parquet as pq

        panel = read_panel(history, keys, date_col=date_col, value_col=value_col, freq=freq)
        return panel, list(pq.read_schema(history).names)  # read above: its schema is readable
    table = load_table(history, date_col=date_col)
    return panel_from_frame(table, keys, date_col, value_col, freq), [str(c) for c in table.frame.columns]


def fit_total(history: Any, calendar: Any = None, series_cols: list[str] | str | None = None, *,
              date_col: str = "date", value_col: str = "value", freq: str | None = None,
              **options: Any) -> Any:
    """Add every series of a long table up to one and fit that sum as one series.

    Parameters
    ----------
    history : path or DataFrame
        Long table: key columns, a date column, a value column (as for :func:`evcal.panel.fit_panel`).
    calendar : path, YAML text, Calendar or None
    series_cols : list of str or "a,b"
        The key columns: each distinct combination is one series, and all are added up.
    date_col, value_col, freq, **options
        As for :func:`evcal.fit`.

    Returns
    -------
    FitResult
        The grand total's model (save it with ``.save(folder)``: a one-series model folder).

    Examples
    --------
    >>> res = fit_total("sales.parquet", "calendar.yaml", ["product", "store"])  # doctest: +SKIP
    >>> res.save("models/total")                                                # doctest: +SKIP
    """
    from evcal.engine import fit
    from evcal.model.inputs import load_calendar_any
    from evcal.panel.rollup import aggregate

    keys = split_key_option(series_cols)
    panel, names = _read(history, keys, date_col, value_col, freq)
    kept = {c.strip().lower() for c in (date_col, value_col)}
    clash = [c for c in names if _is_word(c) and c.strip().lower() not in kept]
    if clash:
        raise HistoryError(f"{panel.source}: has a column named {clash[0]!r}, and {option('level', TOTAL)} "
                           "adds every series up to one (the grand total), not up to that column; rename "
                           f"the column to fit a level by it")
    cal = load_calendar_any(calendar)
    if getattr(cal, "drivers", None):
        from evcal.panel import refuse_drivers

        refuse_drivers("drivers:", cal.source)
    total = aggregate(panel, [])
    return fit(total.history(0), cal, **options)
