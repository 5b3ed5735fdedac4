"""Design blocks against reference libraries (Python's calendar module, statsmodels)."""

from __future__ import annotations

import calendar as pycal

import numpy as np
import pandas as pd
import pytest

import evcal
from evcal.design.interventions import InterventionTerm
from evcal.design.seasonal import SeasonalDummies, TradingDays, season_position


def test_trading_day_counts_match_python_calendar():
    # Reference library: calendar.monthcalendar gives the weekdays of every month.
    periods = pd.period_range("1999-01", "2030-12", freq="M")
    cols = TradingDays().columns(periods)
    for p in periods[::7]:
        weeks = pycal.monthcalendar(p.year, p.month)
        counts = [sum(1 for w in weeks if w[d] != 0) for d in range(7)]  # Monday..Sunday
        expected = [counts[d] - counts[6] for d in range(6)]
        assert cols.loc[p].tolist() == expected, p


def test_month_dummies_match_statsmodels_and_positions():
    # Reference library: statsmodels CalendarSeasonality (used inside) and the month number.
    periods = pd.period_range("2020-01", "2022-12", freq="M")
    d = SeasonalDummies("M").columns(periods)
    assert (d.sum(axis=1) == (periods.month != 1)).all()
    assert (season_position(periods) == periods.month).all()


def test_week_positions_run_1_to_52():
    weeks = pd.period_range("2015-01-04", "2026-12-27", freq="W-SUN")
    pos = season_position(weeks)
    assert pos.min() == 1 and pos.max() == 52
    # the week holding 1 July is week 26 or 27 every year (day 182 of 365)
    for y in range(2015, 2027):
        p = pd.Timestamp(f"{y}-07-01").to_period("W-SUN")
        assert pos[weeks.get_loc(p)] in (26, 27)


@pytest.mark.parametrize("kind,expected", [
    ("pulse", [0, 1, 0, 0]),
    ("level_shift", [0, 4 / 7, 1, 1]),
    ("temporary", [0, 1, 0.7, 0.49]),
])
def test_box_tiao_columns(kind, expected):
    # Box & Tiao (1975) intervention shapes on a 4-week grid; the change happens on the
    # Thursday of week 2, so a level shift covers 4 of that week's 7 days.
    periods = pd.period_range("2024-01-07", periods=4, freq="W-SUN")
    term = InterventionTerm("x", kind, pd.Timestamp("2024-01-11"),
                            decay=0.7 if kind == "temporary" else None)
    np.testing.assert_allclose(term.column(periods), expected)


def test_ramp_reaches_one_at_its_end():
    periods = pd.period_range("2024-01", "2024-06", freq="M")
    term = InterventionTerm("r", "ramp", pd.Timestamp("2024-02-01"), pd.Timestamp("2024-04-01"))
    col = term.column(periods)
    assert col[0] == 0 and col[-1] == 1 and col[-2] == 1
    assert 0 < col[1] < col[2] < 1


def test_event_without_history_is_listed_not_fitted():
    rng = np.random.default_rng(1)
    idx = pd.period_range("2019-01", "2023-12", freq="M")
    vals = 100 * np.exp(0.1 * np.cos(2 * np.pi * idx.month.to_numpy() / 12) + rng.normal(0, 0.02, len(idx)))
    cal = ("name: t (invented)\nevents:\n  - {name: far-future, when: {dates: [2031-05-01]}}\n"
           "  - {name: spring, when: {easter: -2}, length: 4}\n")
    res = evcal.fit(pd.DataFrame({"date": idx.to_timestamp(), "value": vals}), cal, errors="ols")
    row = res.lifts.set_index("event").loc["far-future"]
    assert row["identifiable"] == "no" and "no occurrence" in row["note"]
    assert any("far-future" in w for w in res.warnings)


def test_series_with_zeros_uses_a_count_model():
    # invented daily counts with genuine zeros (not closures): auto picks the count GLM
    rng = np.random.default_rng(2)
    days = pd.date_range("2021-01-01", "2023-12-31", freq="D")
    lam = 2.0 * np.exp(0.5 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365.25))
    vals = rng.poisson(lam)
    assert (vals == 0).any()
    res = evcal.fit(pd.DataFrame({"date": days, "value": vals}), None)
    assert res.transform == "count"
    assert res.model_choice["chosen"] in ("poisson", "negative_binomial")
    # the annual wave is recovered: index peak near day 91 (sin peak), trough near day 274
    prof = res.profile.set_index("period")["index"]
    assert 60 <= prof.idxmax() <= 120 and 240 <= prof.idxmin() <= 310
