"""Recurring rules, abnormal years and lost demand on their own (known truths)."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest
from dateutil.easter import easter

from evcal.discovery.abnormal import abnormal_years
from evcal.discovery.lost_demand import StockOut, is_stockout, read_stockouts, simulate_lost_demand
from evcal.discovery.recurring import Finding, Rule, find_recurring
from evcal.errors import CalendarError


def test_rules_give_the_dates_of_the_reference_libraries() -> None:
    # dateutil.easter (reference library) for Easter; the 4th Thursday of
    # November 2024 is 28 Nov (calendar fact, checked with the calendar module).
    assert Rule("easter", (-2,)).date(2024) == easter(2024) - dt.timedelta(days=2)
    assert Rule("weekday", (11, 3, 4, 0)).date(2024) == dt.date(2024, 11, 28)
    assert Rule("weekday", (5, 0, -1, 0)).date(2024) == dt.date(2024, 5, 27)  # last Monday of May
    assert Rule("weekday", (11, 3, 4, 1)).date(2019) == dt.date(2019, 11, 29)
    assert Rule("fixed", (2, 29)).date(2023) is None
    assert Rule("week", (1,)).date(2021) == dt.date.fromisocalendar(2021, 1, 1)
    assert Rule("weekday", (11, 3, 4, 0)).when(2024) == {"weekday": {"month": 11, "day": "thu", "nth": 4}}
    assert Rule("weekday", (11, 3, 4, 1)).when(2024) == {
        "weekday": {"month": 11, "day": "thu", "nth": 4}, "offset": 1}


def test_daily_findings_on_easter_monday_give_the_easter_rule() -> None:
    # Known truth: a peak on Easter Monday (Easter + 1) in 5 of 6 years, plus noise findings.
    idx = pd.period_range("2018-01-01", "2023-12-31", freq="D")
    days = [pd.Period(easter(y) + dt.timedelta(days=1), "D") for y in (2018, 2019, 2020, 2022, 2023)]
    noise = [pd.Period("2019-07-03", "D"), pd.Period("2021-02-11", "D")]
    found = find_recurring([Finding(p, +1, 30.0) for p in days + noise], idx)
    assert len(found) == 1
    assert found[0].rule == Rule("easter", (1,))
    assert found[0].years_seen == [2018, 2019, 2020, 2022, 2023]
    assert len(found[0].years_available) == 6


def test_thanksgiving_friday_is_a_weekday_rule_not_a_fixed_date() -> None:
    # Known truth: a peak the day after the 4th Thursday of November (moves
    # between Nov 23 and Nov 29), every year 2017-2023.
    idx = pd.period_range("2017-01-01", "2023-12-31", freq="D")
    days = [pd.Period(Rule("weekday", (11, 3, 4, 0)).date(y) + dt.timedelta(days=1), "D")
            for y in range(2017, 2024)]
    found = find_recurring([Finding(p, +1) for p in days], idx)
    # 2019: Nov 1 is a Friday, so the day after the 4th Thursday is the 5th
    # (last) Friday; only "4th Thursday + 1 day" fits all seven years
    assert found[0].rule == Rule("weekday", (11, 3, 4, 1))
    assert len(found[0].years_seen) == 7


def test_findings_in_too_few_years_or_excluded_years_are_not_a_pattern() -> None:
    idx = pd.period_range("2016-01-01", "2023-12-31", freq="D")
    seen = (2016, 2018, 2019, 2023)
    days = [pd.Period(f"{y}-06-15", "D") for y in seen]  # 4 of 8 years: not "most"
    assert find_recurring([Finding(p, -1) for p in days], idx) == []
    # ... but if the other years' June 15 were out of the fit, 4 of 4 is a pattern
    in_fit = np.array([not (p.month == 6 and p.day == 15 and p.year not in seen) for p in idx])
    # (a rule available in few years, like a 5th Wednesday, needs half the years too)
    assert find_recurring([Finding(p, -1) for p in days[:2]], idx, in_fit) == []
    found = find_recurring([Finding(p, -1) for p in days], idx, in_fit)
    assert found and found[0].rule == Rule("fixed", (6, 15)) and found[0].share == 1.0


def test_abnormal_year_false_alarms_near_the_family_rate_on_noise() -> None:
    # Known truth: white noise and AR(1) noise (phi 0.5) have no abnormal year.
    # Each of the two tests is set to a 1 % family-wise rate (Bonferroni over
    # years); we allow up to 4 % of 300 seeded 8-year monthly series to show any flag.
    idx = pd.period_range("2016-01", "2023-12", freq="M")
    flagged = 0
    for seed in range(150):
        rng = np.random.default_rng(seed)
        flagged += bool(abnormal_years(pd.Series(rng.normal(size=len(idx)), index=idx)))
        e = rng.normal(size=len(idx))
        x = np.zeros(len(idx))
        for i in range(1, len(idx)):
            x[i] = 0.5 * x[i - 1] + e[i]
        flagged += bool(abnormal_years(pd.Series(x, index=idx)))
    assert flagged / 300 <= 0.04


def test_abnormal_year_found_in_residuals() -> None:
    # Known truth: residual noise sd 0.05, 2020 shifted down by 0.3 (log scale).
    rng = np.random.default_rng(0)
    idx = pd.period_range("2015-01", "2023-12", freq="M")
    r = pd.Series(rng.normal(0, 0.05, len(idx)), index=idx)
    r[idx.year == 2020] -= 0.3
    found = abnormal_years(r)
    assert [(a.year, a.kind) for a in found] == [(2020, "level")]
    assert found[0].z < -5
    assert found[0].value == pytest.approx(-0.3, abs=0.05)
    assert found[0].start == pd.Timestamp("2020-01-01") and found[0].end == pd.Timestamp("2020-12-31")
    # fewer than three usable years: no verdict
    assert abnormal_years(r[idx.year >= 2022]) == []


def test_stockout_reasons() -> None:
    # the words the issue names ("stock-out", "stockout", "out of stock"), case-insensitive
    assert all(is_stockout(r) for r in ("STOCK-OUT", "Stockout at DC", "shelves out of stock",
                                        "stock out"))
    assert not any(is_stockout(r) for r in ("lockdown", "refit", "", None))


def test_read_stockouts_reports_rows(tmp_path) -> None:
    good = tmp_path / "s.csv"
    good.write_text("start,end,reason\n2024-01-01,2024-01-07,depot fire\n2024-03-01,2024-03-02,\n")
    rows = read_stockouts(good)
    assert [r.reason for r in rows] == ["depot fire", "stock-out"]
    bad = tmp_path / "b.csv"
    bad.write_text("start,end\n2024-01-09,2024-01-07\n01/02/2024,2024-02-03\n")
    with pytest.raises(CalendarError) as err:
        read_stockouts(bad)
    assert len(err.value.problems) == 2
    assert "row 2" in err.value.problems[0] and "before start" in err.value.problems[0]
    assert "row 3: column start" in err.value.problems[1]
    with pytest.raises(CalendarError, match="header"):
        (tmp_path / "h.csv").write_text("from,to\n")
        read_stockouts(tmp_path / "h.csv")


def test_lost_demand_interval_covers_the_truth_at_its_nominal_rate() -> None:
    # Known truth by simulation: demand = expected * lognormal noise (sd 0.1);
    # the 95 % interval of a 3-period total should cover the realised demand
    # about 95 % of the time (coefficient uncertainty tiny here).
    rng = np.random.default_rng(1)
    expected = np.array([100.0, 120.0, 90.0]) * np.exp(0.1**2 / 2)
    window = StockOut(pd.Timestamp("2024-01-01"), pd.Timestamp("2024-03-31"), "stock-out")
    hits = 0
    for i in range(200):
        demand = (expected * np.exp(rng.normal(0, 0.1, 3) - 0.1**2 / 2)).sum()
        r = simulate_lost_demand(window, expected, np.zeros(3), np.ones((3, 1)), np.array([[1e-8]]),
                                 0.01, "log", draws=2000, seed=i)
        hits += r.expected_low <= demand <= r.expected_high
    assert 0.90 <= hits / 200 <= 0.99
