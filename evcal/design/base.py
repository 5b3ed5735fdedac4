"""The one protocol every block of regressors follows.

A block is a small object holding *settings* (never data). Given a
:class:`pandas.PeriodIndex` it returns named columns. The same call builds the
fitted history and a future plan, so a plan can never use a column the fit
did not (the idea of ``statsmodels.tsa.deterministic``, extended to events).
"""

from __future__ import annotations

import functools
from typing import Any, Protocol, runtime_checkable

import numpy as np
import pandas as pd


@runtime_checkable
class Block(Protocol):
    """A block of named regressor columns."""

    #: short name used in model.json and messages
    kind: str

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        """Return the block's columns for ``periods`` (index = ``periods``)."""
        ...

    def to_dict(self) -> dict[str, Any]:
        """Settings as plain JSON-able data."""
        ...


def _run_key(periods: pd.PeriodIndex) -> tuple[str, int, int] | None:
    """(frequency, first ordinal, length) for a run of consecutive periods, else None."""
    n = len(periods)
    if n == 0:
        return None
    ords = periods.asi8
    if int(ords[-1]) - int(ords[0]) != n - 1:
        return None
    return periods.freqstr, int(ords[0]), n


def _cached(fn: Any) -> Any:
    """Per-period arrays are asked for many times over the same runs: keep them (read-only)."""
    cache = functools.lru_cache(maxsize=64)(
        lambda freq, first, n: _readonly(fn(pd.period_range(pd.Period(ordinal=first, freq=freq),
                                                             periods=n))))

    @functools.wraps(fn)
    def wrapper(periods: pd.PeriodIndex) -> np.ndarray:
        key = _run_key(periods)
        return fn(periods) if key is None else cache(*key)

    return wrapper


def _readonly(a: np.ndarray) -> np.ndarray:
    a.setflags(write=False)
    return a


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
