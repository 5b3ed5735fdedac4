"""Issue 15, observation 10: a weekly plan's "last full year" is the last year the history holds whole.

Weeks belong to the year of their date label (the rule by which a plan's yearly
totals count them). The histories are invented for the test (named as such): a
flat shop whose last year sells 10 % more than the ones before, so the right
comparison year and its total are known.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import evcal
from evcal.model.summary import last_full_year
from evcal.plan import make_plan

CAL = """name: invented flat shop
events:
  - {name: promo, when: {dates: [2021-05-10, 2022-05-09, 2023-05-08, 2024-05-13, 2025-05-12, 2026-05-11]},
     after: 6}
"""


def weekly_shop(last: str = "2025-12-28", weekday: str = "SUN", label: str = "end") -> pd.DataFrame:
    """Invented weekly shop: 1,000 a week, 1,100 a week in the weeks dated in 2025, 0.5 % noise."""
    idx = pd.period_range(end=pd.Timestamp(last).to_period(f"W-{weekday}"), periods=52 * 5 + 1,
                          freq=f"W-{weekday}")
    dates = idx.end_time.normalize() if label == "end" else idx.start_time
    rng = np.random.default_rng(15)
    y = np.where(dates.year == 2025, 1100.0, 1000.0) * np.exp(rng.normal(0, 0.005, len(idx)))
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": y})


def test_weekly_plan_compares_with_the_last_complete_year() -> None:
    # Weeks dated by their Sunday, history to Sunday 2025-12-28: the 52 weeks dated
    # in 2025 are all there, and the first of them starts on Monday 2024-12-30.
    # Taking each week's year from its start day made 2025 a 51-week part year and
    # compared the 2026 plan with 2024.
    hist = weekly_shop()
    dates = pd.to_datetime(hist["date"])
    truth = float(hist["value"][dates.dt.year == 2025].sum())
    res = evcal.fit(hist, CAL, errors="ols")
    assert res.last_year["year"] == 2025
    assert res.last_year["total"] == pytest.approx(truth, rel=1e-12)
    plan = make_plan(res, "2026", "2026", n_sims=0)
    text = plan.summary()
    assert "on 2025 (" in text and "the last full year of history" in text
    assert "on 2024 (" not in text


@pytest.mark.parametrize("label", ["end", "start"])
def test_last_full_year_weekly_edges(label: str) -> None:
    # Weeks dated by their Monday: the last week dated in 2025 starts on 2025-12-29
    # and ends in 2026. A history whose last week dated in 2025 is missing, or has
    # no value, is not whole in 2025.
    hist = weekly_shop(last="2025-12-28" if label == "end" else "2026-01-04", label=label)
    idx = pd.PeriodIndex(pd.to_datetime(hist["date"]), freq="W-SUN")
    values = pd.Series(hist["value"].to_numpy(), index=idx)
    years = (idx.end_time if label == "end" else idx.start_time).year
    got = last_full_year(values, label)
    assert got == {"year": 2025, "total": pytest.approx(float(values[years == 2025].sum()))}
    assert last_full_year(values.iloc[:-1], label)["year"] == 2024
    gap = values.copy()
    gap.iloc[-10] = np.nan
    assert last_full_year(gap, label)["year"] == 2024


def test_last_full_year_monthly_unchanged() -> None:
    idx = pd.period_range("2023-01", "2025-11", freq="M")
    v = pd.Series(1.0, index=idx)
    assert last_full_year(v, "end") == {"year": 2024, "total": 12.0}
    assert last_full_year(v, "start") == {"year": 2024, "total": 12.0}
    assert last_full_year(v.iloc[:11], "end") == {}
