"""Seasonal blocks: period dummies, annual Fourier terms (statsmodels' ``CalendarFourier``), weekday terms.

The dummies come from each period's position in the year (statsmodels has no
week-of-year seasonality): a week's is its midpoint's, and week 53 shares week
52's so the profile always has 52 positions.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd

from evcal.design.base import period_days, period_mid_years


def base_freq(freq: str) -> str:
    """'W-SUN' -> 'W', 'Q-DEC' -> 'Q', 'M' -> 'M', 'D' -> 'D'."""
    return freq.split("-")[0].rstrip("E").upper() or freq


def cycle_length(freq: str) -> int:
    """Positions in one annual cycle of the seasonal profile."""
    return {"D": 365, "W": 52, "M": 12, "Q": 4}[base_freq(freq)]


def season_position(periods: pd.PeriodIndex) -> np.ndarray:
    """Position of each period in its annual cycle, 1-based (month 1..12, week 1..52, ...)."""
    b = base_freq(periods.freqstr)
    if b == "M":
        return periods.month.to_numpy()
    if b == "Q":
        return periods.quarter.to_numpy()
    start = periods.start_time.normalize()
    if b == "W":
        mid = start + pd.Timedelta(days=3)
        return np.minimum((mid.day_of_year.to_numpy() - 1) // 7 + 1, 52)
    doy = start.day_of_year.to_numpy()
    # 29 February shares 28 February's position so every year has 365.
    leap_shift = (start.is_leap_year & (doy > 59)).astype(int)
    return doy - leap_shift


def season_year(periods: pd.PeriodIndex) -> np.ndarray:
    """The year whose annual cycle each period's :func:`season_position` counts in.

    A week is placed by its middle day (the Thursday of a Monday-to-Sunday week), so it
    belongs to that day's year: the week of Monday 30 December 2019 to Sunday 5 January
    2020 is week 1 of 2020. Other periods belong to the year they start in.

    Examples
    --------
    >>> import pandas as pd
    >>> season_year(pd.period_range("2020-01-05", periods=2, freq="W-SUN")).tolist()
    [2020, 2020]
    """
    start = periods.start_time.normalize()
    if base_freq(periods.freqstr) == "W":
        start = start + pd.Timedelta(days=3)
    return start.year.to_numpy()


@dataclass(frozen=True)
class SeasonalDummies:
    """One dummy per position of the annual cycle except the first (the reference).

    Examples
    --------
    >>> import pandas as pd
    >>> cols = SeasonalDummies("M").columns(pd.period_range("2024-01", periods=3, freq="M"))
    >>> list(cols.columns[:2]), float(cols.iloc[1, 0])
    (['season[2]', 'season[3]'], 1.0)
    """

    freq: str

    def _at(self, position: np.ndarray, index: pd.Index) -> pd.DataFrame:
        p = cycle_length(self.freq)
        values = (position[:, None] == np.arange(2, p + 1)[None, :]).astype(float)
        return pd.DataFrame(values, index=index, columns=[f"season[{k}]" for k in range(2, p + 1)])

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        return self._at(season_position(periods), periods)

    def cycle(self) -> pd.DataFrame:
        """Columns for one reference cycle, rows = positions 1..P."""
        p = cycle_length(self.freq)
        return self._at(np.arange(1, p + 1), pd.RangeIndex(1, p + 1, name="period"))


@dataclass(frozen=True)
class SeasonDrift:
    """A season that drifts: each seasonal dummy times the years from ``origin`` (an evolving season).

    Column ``season_drift[k]`` is ``season[k] × (t − origin)``, ``t`` the
    period's midpoint in calendar years: position ``k``'s departure from the
    reference position changes by its coefficient each year, in a straight
    line. With ``origin`` in the history's last year the seasonal dummies are
    the season of that year (what the seasonal index shows and the plan starts
    from), and the plan extends the same lines into the future with this code.
    It is the deterministic form of the slowly changing seasonal of a
    structural time-series model (Harvey 1989, *Forecasting, structural time
    series models and the Kalman filter*, ch. 2, from memory): a straight line
    per position instead of a random walk, so it stays one block of columns
    on the same regression.

    Examples
    --------
    >>> import pandas as pd
    >>> cols = SeasonDrift("Q", origin=2021.5).columns(pd.period_range("2020Q1", periods=5, freq="Q"))
    >>> list(cols.columns), (cols["season_drift[2]"].round(2) + 0.0).tolist()
    (['season_drift[2]', 'season_drift[3]', 'season_drift[4]'], [0.0, -1.13, 0.0, 0.0, 0.0])
    """

    freq: str
    origin: float

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        dummies = SeasonalDummies(self.freq).columns(periods).to_numpy()
        t = period_mid_years(periods) - self.origin
        p = cycle_length(self.freq)
        return pd.DataFrame(dummies * t[:, None], index=periods,
                            columns=[f"season_drift[{k}]" for k in range(2, p + 1)])


@dataclass(frozen=True)
class AnnualFourier:
    """``order`` sine/cosine pairs of the calendar year (``CalendarFourier``).

    Used for daily data (where 364 dummies would be absurd) and optionally
    for weekly data.
    """

    order: int

    def _at(self, stamps: pd.DatetimeIndex, index: pd.Index) -> pd.DataFrame:
        from statsmodels.tsa.deterministic import CalendarFourier  # slow import: when used

        with warnings.catch_warnings():  # statsmodels' frequency inference warns; the frequency is known here
            warnings.simplefilter("ignore")
            raw = CalendarFourier("YE", self.order).in_sample(stamps)
        raw.columns = [c.replace(",freq=YE-DEC", "").replace(" ", "") for c in raw.columns]
        raw.index = index
        return raw

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        mid = periods.start_time.normalize() + pd.to_timedelta((period_days(periods) - 1) / 2.0, unit="D")
        return self._at(pd.DatetimeIndex(mid), periods)

    def cycle(self) -> pd.DataFrame:
        """Columns for a reference non-leap year, rows = day of year 1..365."""
        days = pd.date_range("2023-01-01", "2023-12-31", freq="D")
        return self._at(days, pd.RangeIndex(1, 366, name="period"))


@dataclass(frozen=True)
class WeekdayDummies:
    """Day-of-week dummies for daily data (Monday is the reference)."""

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        dow = periods.start_time.day_of_week.to_numpy()
        values = (dow[:, None] == np.arange(1, 7)[None, :]).astype(float)
        names = [f"weekday[{d}]" for d in ("tue", "wed", "thu", "fri", "sat", "sun")]
        return pd.DataFrame(values, index=periods, columns=names)


@dataclass(frozen=True)
class TradingDays:
    """Weekday composition of each month or quarter (trading-day regressors).

    Six contrasts: the count of each of Monday..Saturday minus the count of
    Sundays in the period (the usual trading-day contrast of Young 1965 and
    X-11/X-13 practice). A month with five Saturdays gets its extra Saturday's
    effect instead of having it read as seasonality.
    """

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        start = periods.start_time.normalize().to_numpy().astype("datetime64[D]")
        end = start + period_days(periods).astype(int)
        # the count of each weekday (Monday first) in [start, end)
        counts = np.column_stack([np.busday_count(start, end, weekmask=[d == k for k in range(7)])
                                  for d in range(7)]).astype(float)
        contrasts = counts[:, :6] - counts[:, 6:7]
        names = [f"trading[{d}]" for d in ("mon", "tue", "wed", "thu", "fri", "sat")]
        return pd.DataFrame(contrasts, index=periods, columns=names)


@dataclass(frozen=True)
class LeapYear:
    """The leap-year column of monthly and quarterly data.

    0.75 in a February (or first quarter) of a leap year, -0.25 in one of a
    common year, 0 elsewhere: the mean-corrected leap-year regressor of the
    Eurostat handbook on seasonal adjustment (2018 edition, chapter 5). Over a
    four-year cycle it sums to zero, so it moves no level into or out of the
    seasonal profile; it carries only the 29th of February.

    Examples
    --------
    >>> import pandas as pd
    >>> # February 2024 is a leap February
    >>> LeapYear().columns(pd.period_range("2023-12", periods=3, freq="M"))["leap_year"].tolist()
    [0.0, 0.0, 0.75]
    """

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        start = periods.start_time
        holds_feb = (start.month <= 2) & (periods.end_time.month >= 2)  # February, or the quarter holding it
        values = np.where(holds_feb, np.where(start.is_leap_year, 0.75, -0.25), 0.0)
        return pd.DataFrame({"leap_year": values}, index=periods)
