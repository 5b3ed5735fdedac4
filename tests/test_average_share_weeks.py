"""The average-share profile counts a week in the year of its Thursday, as its position does.

Invented weekly series (two years of flat sales, named as such): the weeks ending
Sunday 5 January 2020 .. Sunday 26 December 2021 are two whole ISO years (ISO 8601:
a week belongs to the year of its Thursday). Counted by the year each week starts in,
neither year was whole (the first week starts on 30 December 2019, the week of
28 December 2021 was missing), the profile was empty and the backtest printed nan%.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd

from evcal.backtesting import backtest, format_table
from evcal.design.seasonal import season_position, season_year
from evcal.model.inputs import average_share_profile


def test_weeks_belong_to_the_iso_year_of_their_thursday():
    """Checked against the standard library's ISO calendar (datetime.date.isocalendar)."""
    weeks = pd.period_range("2019-12-01", "2027-01-31", freq="W-SUN")
    iso_years = [(w.start_time + pd.Timedelta(days=3)).date().isocalendar().year for w in weeks]
    assert season_year(weeks).tolist() == iso_years
    # and the position is the ISO week, with week 53 sharing 52
    iso_weeks = [min(dt.date.fromisoformat(str(w.start_time.date())).isocalendar().week, 52) for w in weeks]
    assert season_position(weeks).tolist() == iso_weeks


def test_two_whole_years_of_weeks_give_a_whole_profile():
    idx = pd.period_range("2020-01-05", "2021-12-26", freq="W-SUN")
    profile = average_share_profile(pd.Series(1.0, index=idx))
    assert len(profile) == 52  # before: 0
    assert np.isclose(profile.sum(), 1.0, atol=0.02)


def test_backtest_scores_average_share_after_two_years():
    idx = pd.date_range("2020-01-05", periods=3 * 52, freq="W-SUN")
    rng = np.random.default_rng(5)
    week = idx.isocalendar().week.to_numpy()
    y = 100 * np.exp(0.3 * np.sin(2 * np.pi * week / 52) + rng.normal(0, 0.05, len(idx)))
    bt = backtest(pd.DataFrame({"date": idx, "value": y}), "name: none\n", holdout_years=1, errors="ols")
    avg = bt[bt["method"] == "average_share"]
    assert avg["wape"].notna().all() and (avg["wape"] < 0.15).all()  # the season is known: a good profile
    assert "nan" not in format_table(bt)


def test_a_method_without_a_plan_reads_n_a_with_its_reason():
    """A year the average share cannot plan (no whole year before it) is n/a, not nan% and a peak of 22."""
    from evcal.backtesting import score

    none = score(np.array([np.nan, np.nan]), np.array([1.0, 2.0]))
    assert np.isnan(none["wape"]) and np.isnan(none["bias"]) and none["peak_error"] is None
    bt = pd.DataFrame({"year": [2022, 2022], "method": ["evcal", "average_share"], "spread": ["spread"] * 2,
                       "wape": [0.05, np.nan], "bias": [0.0, np.nan],
                       "peak_error": pd.array([0, None], dtype="Int64")})
    text = format_table(bt)
    assert "nan" not in text and "average_share: n/a in 2022: no full calendar year before it" in text
