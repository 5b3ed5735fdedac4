"""The one protocol every block of regressors follows.

A block is a small object holding *settings* (never data). Given a
:class:`pandas.PeriodIndex` it returns named columns. The same call builds the
fitted history and a future plan, so a plan can never use a column the fit
did not (the idea of ``statsmodels.tsa.deterministic``, extended to events).
"""

from __future__ import annotations

import functools
from typing import Any, Protocol

import numpy as np
import pandas as pd


class Block(Protocol):
    """A block of named regressor columns."""

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        """Return the block's columns for ``periods`` (index = ``periods``)."""
        ...


def term_columns(terms: Any, periods: pd.PeriodIndex) -> pd.DataFrame:
    """A block of one column per term (each has a ``name`` and a ``column(periods)``), in the terms' order."""
    data = {t.name: t.column(periods) for t in terms}
    return pd.DataFrame(data, index=periods, columns=[t.name for t in terms])


def _cached(fn: Any) -> Any:
    """Per-period arrays are asked for many times over the same runs of periods: keep them (read-only)."""

    @functools.lru_cache(maxsize=64)
    def on_run(freq: str, first: int, n: int) -> np.ndarray:
        out = fn(pd.period_range(pd.Period(ordinal=first, freq=freq), periods=n))
        out.setflags(write=False)
        return out

    @functools.wraps(fn)
    def wrapper(periods: pd.PeriodIndex) -> np.ndarray:
        ords = periods.asi8
        if len(ords) and int(ords[-1]) - int(ords[0]) == len(ords) - 1:  # a run of consecutive periods
            return on_run(periods.freqstr, int(ords[0]), len(ords))
        return fn(periods)

    return wrapper


@_cached
def period_days(periods: pd.PeriodIndex) -> np.ndarray:
    """Number of calendar days in each period (1 for daily data)."""
    start = periods.start_time.normalize()
    end = periods.end_time.normalize()
    return ((end - start).days + 1).to_numpy(dtype=float)


def day_span(periods: pd.PeriodIndex) -> tuple[pd.Timestamp, pd.Timestamp]:
    """First and last calendar day covered by ``periods``."""
    return periods[0].start_time.normalize(), periods[-1].end_time.normalize()


@_cached
def period_mid_years(periods: pd.PeriodIndex) -> np.ndarray:
    """Midpoint of each period as a fractional calendar year (e.g. 2024.49)."""
    start = periods.start_time.normalize()
    days = period_days(periods)
    mid = start + pd.to_timedelta((days - 1) / 2.0, unit="D")
    year = mid.year.to_numpy(dtype=float)
    year_start = pd.to_datetime(mid.year.astype(str) + "-01-01")
    length = np.where(mid.is_leap_year, 366.0, 365.0)
    return year + ((mid - year_start).days.to_numpy(dtype=float)) / length
