"""Additive fits (``transform: none``) with an assumed lift keep every period in the fit.

Before, the periods an assumed event touched were left out of an additive fit;
an assumed event on every Monday then left no period at all, and the fit
stopped. The assumed lift is a share of the base (as the plan applies it, in
``evcal.effects.decompose``), so the base columns carry ``1 + lift x column``.
The data are invented with a known truth (a flat level of 1,000 a day, +15 %
on Mondays, zeros in a few months so the automatic transform is additive).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

import evcal
from evcal.plan import make_plan

CAL = """
name: invented shop with an assumed Monday lift
events:
  - name: monday-market
    when: {every_weekday: [mon]}
    effect: {assume: 15%}
"""


def _monthly() -> pd.DataFrame:
    days = pd.date_range("2019-01-01", "2022-12-31", freq="D")
    daily = pd.Series(1000.0 * np.where(days.day_of_week == 0, 1.15, 1.0), index=days)
    monthly = daily.resample("MS").sum()
    # two empty months (June 2019, September 2020): zeros outside the calendar, so additive, not log
    monthly.iloc[[5, 20]] = 0.0
    return pd.DataFrame({"date": monthly.index.strftime("%Y-%m-%d"), "value": monthly.to_numpy()})


def test_assumed_event_in_every_period_leaves_the_additive_fit_whole() -> None:
    res = evcal.fit(_monthly(), CAL, errors="ols", transform="none", trend_order=0)
    assert res.transform == "none"
    assert res.fitted["in_fit"].all()  # before: every period (each has Mondays) was left out
    # the base is 1,000 a day (the invented truth) in the typical month, to 5 %
    days = pd.to_datetime(res.fitted["date"]).dt.days_in_month.to_numpy()
    per_day = np.median(res.fitted["base"].to_numpy(dtype=float) / days)
    assert abs(per_day / 1000.0 - 1) < 0.05, per_day
    plan = make_plan(res, "2023-01-01", "2023-12-31", n_sims=0)
    mondays = pd.date_range("2023-01-01", "2023-12-31", freq="D").day_of_week == 0
    # the plan adds the assumed +15 % on the Mondays of the year: 52 Mondays x 150 = 7,800 over base
    assert abs(plan.table["plan"].sum() - plan.table["base"].sum() - mondays.sum() * 150) < 0.1 * 7800
