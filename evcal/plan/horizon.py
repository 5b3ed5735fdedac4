"""The plan's horizon: the future periods, checked against the history they follow.

A horizon is given as two days (``--from``/``--to``), or years, and becomes
the periods of the fitted frequency that hold them. Dates are written back
with the history's own label convention (period start or end), so a plan
lines up with the file it came from.
"""

from __future__ import annotations

import re
from typing import Any

import numpy as np
import pandas as pd

from evcal.calendar import YEAR_RANGE
from evcal.calendar.occurrences import as_day
from evcal.design.seasonal import base_freq
from evcal.errors import CalendarError, PlanError, clip
from evcal.io.history import period_dates
from evcal.spelling import option, options, subject

_YEAR = re.compile(r"^\s*(\d{4})\s*$")


def _as_day(value: Any, *, end: bool, what: str) -> pd.Timestamp:
    """A day from a date-like value, a period, or a year (1 January; 31 December for ``end``)."""
    if isinstance(value, pd.Period):
        return value.end_time.normalize() if end else value.start_time.normalize()
    if isinstance(value, str) and _YEAR.match(value):
        value = int(value)
    try:
        day = as_day(value, end=end, what=what)
    except (CalendarError, ValueError, OverflowError):  # OutOfBoundsDatetime is a ValueError
        raise PlanError(f"{what} {clip(str(value), 40)!r}: not a date; write YYYY-MM-DD or a four-digit "
                        "year") from None
    if not YEAR_RANGE[0] <= day.year <= YEAR_RANGE[1]:  # the years a calendar can hold
        raise PlanError(f"{what} {day.date()}: outside the years a plan can cover; give a date from "
                        f"{YEAR_RANGE[0]} to {YEAR_RANGE[1]}")
    return day


def _from(day: pd.Timestamp) -> str:
    """The first day of the horizon as the user gave it: ``--from 2026-07-01`` / ``start='2026-07-01'``."""
    return option("start", str(day.date()), flag="--from")


def _to(day: pd.Timestamp) -> str:
    """The last day of the horizon: ``--to 2026-12-31`` / ``end='2026-12-31'``."""
    return option("end", str(day.date()), flag="--to")


def horizon_periods(result: Any, start: Any, end: Any) -> pd.PeriodIndex:
    """The periods from the one holding ``start`` to the one holding ``end``.

    Days, months and quarters: the periods that hold the two days. Weeks are
    known by their date label (the history's convention: last or first day),
    so the horizon is the weeks whose label falls between the two days: with
    weeks dated by their Sunday, ``2027-01-01`` to ``2027-12-31`` is the 52
    weeks dated in 2027, as the yearly totals count them.

    Parameters
    ----------
    result : FitResult
        Supplies the frequency and the end of the history.
    start, end : str, date, Timestamp, Period or int
        Days (or years: a year means 1 January for ``start``, 31 December for ``end``).

    Raises
    ------
    PlanError
        The horizon starts inside the history, or ends before it starts.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> res = SimpleNamespace(freq="M", history_end="2024-12")
    >>> [str(p) for p in horizon_periods(res, "2025", "2025-03-15")]
    ['2025-01', '2025-02', '2025-03']
    """
    first_day = _as_day(start, end=False, what=subject("start", flag="--from"))
    last_day = _as_day(end, end=True, what=subject("end", flag="--to"))
    freq = result.freq
    first, last = first_day.to_period(freq), last_day.to_period(freq)
    if base_freq(freq) == "W" and last >= first:
        label = getattr(result, "label", "end")
        around = pd.period_range(first - 1, last + 1, freq=freq)
        stamps = period_dates(around, label)
        inside = around[(stamps >= first_day) & (stamps <= last_day)]
        if len(inside) == 0:
            raise PlanError(
                f"{options(_from(first_day), _to(last_day))}: no week is dated "
                "between these days "
                f"(weeks are dated by their {'last' if label == 'end' else 'first'} day); widen the horizon")
        first, last = inside[0], inside[-1]
    hist_end = pd.Period(result.history_end, freq=freq)
    if first <= hist_end:
        raise PlanError(
            f"{_from(first_day)}: the plan must start after the history, which ends with "
            f"period {hist_end}; start on or after {(hist_end + 1).start_time.date()} (to re-plan the rest "
            f"of a year against its target, start there and give the sales so far with {option('actuals')})")
    if last < first:
        raise PlanError(
            f"{_to(last_day)} is before {_from(first_day)}; the horizon must end on or "
            "after the day it starts")
    return pd.period_range(first, last, freq=freq)


def period_years(periods: pd.PeriodIndex, label: str) -> np.ndarray:
    """The calendar year each period belongs to, read from its date label."""
    return period_dates(periods, label).year.to_numpy()


def full_years(periods: pd.PeriodIndex, label: str) -> list[int]:
    """The years whose every period (by date label) lies inside ``periods`` (a contiguous range)."""
    out = []
    for year in np.unique(period_years(periods, label)):
        span = pd.period_range(pd.Timestamp(year, 1, 1).to_period(periods.freq),
                               pd.Timestamp(year, 12, 31).to_period(periods.freq))
        need = span[period_years(span, label) == year]
        if len(need) and need[0] >= periods[0] and need[-1] <= periods[-1]:
            out.append(int(year))
    return out
