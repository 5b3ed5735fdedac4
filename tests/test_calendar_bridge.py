"""Bridge days: ``when: {bridge: <event> | public_holidays}``.

A bridge day is a working day with a day off on both sides, at least one of them a holiday of the
target: the Friday after a Thursday holiday, the Monday before a Tuesday holiday (the definition is
this project's, after the trade's usual one; no source). The dates are checked against the
``holidays`` library's dates and weekdays (source named beside each check); the lift against an
invented daily series with a known truth.
"""

from __future__ import annotations

import calendar as pycal
import datetime as dt

import hypothesis.strategies as st
import numpy as np
import pandas as pd
import pytest
from calendar_problems import assert_one_problem
from hypothesis import given, settings

import evcal
from evcal.calendar import load_calendar
from evcal.plan.build import make_plan

holidays = pytest.importorskip("holidays")

DE_BRIDGES = ("name: t\npublic_holidays: {country: DE}\nevents:\n"
              "  - {name: bridge, when: {bridge: public_holidays}}\n")


def _bridges(cal, name: str, first: int, last: int) -> list[dt.date]:
    occ = cal.occurrences(first, last)
    occ = occ[(occ["event"] == name) & (occ["start"].dt.year.between(first, last))]
    assert (occ["start"] == occ["end"]).all()  # a bridge is one day
    return [d.date() for d in occ["start"]]


def test_german_bridge_days_match_the_holidays_library_weekdays() -> None:
    """Source: the ``holidays`` library's German (national) holidays, 2015-2030, and their weekdays.

    The reference is computed here from the library's dates alone: the Friday after each Thursday
    holiday and the Monday before each Tuesday holiday, unless that day is itself a holiday. German
    national holidays never leave a lone working day between two holidays, so that is all of them.
    """
    cal = load_calendar(DE_BRIDGES)
    years = range(2015, 2031)
    table = holidays.country_holidays("DE", years=years)
    expected = set()
    for day in table:
        if day.weekday() == 3:  # Thursday
            expected.add(day + dt.timedelta(days=1))
        if day.weekday() == 1:  # Tuesday
            expected.add(day - dt.timedelta(days=1))
    expected = sorted(d for d in expected if d not in table and d.year in years)
    got = _bridges(cal, "bridge", 2015, 2030)
    assert got == expected
    assert {d.weekday() for d in got} == {0, 4}
    # Ascension Day is always a Thursday (40 days after Easter), so its Friday is a bridge every year
    ascension = [d for d, n in table.items() if n == "Ascension Day"]
    assert len(ascension) == 16 and all(d + dt.timedelta(days=1) in got for d in ascension)


def test_known_german_bridge_days() -> None:
    """Weekdays from the standard library's ``calendar``; holidays from the ``holidays`` library.

    2024: 9 May Ascension (Thu) -> Fri 10 May; 3 Oct Unity Day (Thu) -> Fri 4 Oct; 26 Dec (Thu) ->
    Fri 27 Dec. 2025: 1 May (Thu) -> Fri 2 May; 29 May Ascension -> Fri 30 May; 25 Dec is a Thursday
    but 26 Dec is a holiday, so no bridge. 2026: 1 Jan (Thu) -> Fri 2 Jan.
    """
    got = _bridges(load_calendar(DE_BRIDGES), "bridge", 2024, 2026)
    known = [dt.date(2024, 5, 10), dt.date(2024, 10, 4), dt.date(2024, 12, 27), dt.date(2025, 5, 2),
             dt.date(2025, 5, 30), dt.date(2026, 1, 2), dt.date(2026, 5, 15)]
    assert [d for d in got if d in known] == known
    assert dt.date(2025, 12, 26) not in got
    assert all(pycal.weekday(d.year, d.month, d.day) in (0, 4) for d in got)


def test_bridge_of_one_named_event_and_of_a_year_boundary() -> None:
    """US Thanksgiving (``holidays`` library: 4th Thursday of November): its Friday is a bridge every
    year; a Tuesday New Year's Day (2019, 2030 by ``calendar``) bridges Monday 31 December of the
    year before, a Thursday one (2026) Friday 2 January."""
    cal = load_calendar(
        "name: t\npublic_holidays: {country: US, only: [Thanksgiving Day, New Year's Day]}\nevents:\n"
        "  - {name: black-friday, when: {bridge: Thanksgiving Day}}\n"
        "  - {name: nye-bridge, when: {bridge: New Year's Day}}\n"
    )
    table = holidays.country_holidays("US", years=range(2001, 2031))
    thanks = sorted(d for d, n in table.items() if n == "Thanksgiving Day")
    assert _bridges(cal, "black-friday", 2001, 2030) == [d + dt.timedelta(days=1) for d in thanks]
    assert _bridges(cal, "nye-bridge", 2018, 2030) == [dt.date(2018, 12, 31), dt.date(2026, 1, 2),
                                                        dt.date(2029, 12, 31)]
    assert [pycal.weekday(y, 1, 1) for y in (2019, 2026, 2030)] == [1, 3, 1]


@settings(max_examples=60, deadline=None)
@given(st.sets(st.dates(dt.date(2024, 1, 1), dt.date(2024, 12, 31)), min_size=1, max_size=25))
def test_bridge_days_follow_the_definition(days: set[dt.date]) -> None:
    """Property (invented holiday dates): a day of 2024 is a bridge exactly when it is a Monday to
    Friday that is not a holiday, both neighbours are a weekend day or a holiday, and one is a holiday."""
    dates = ", ".join(d.isoformat() for d in sorted(days))
    cal = load_calendar(f"name: t\nevents:\n  - {{name: h, when: {{dates: [{dates}]}}}}\n"
                        "  - {name: b, when: {bridge: h}}\n")
    one = dt.timedelta(days=1)

    def off(d: dt.date) -> bool:
        return d.weekday() >= 5 or d in days

    expected = [d for d in (dt.date(2024, 1, 1) + k * one for k in range(366))
                if not off(d) and off(d - one) and off(d + one) and (d - one in days or d + one in days)]
    assert _bridges(cal, "b", 2024, 2024) == expected


@pytest.mark.parametrize(("body", "line", "key", "words"), [
    ("  - {name: b, when: {bridge: xmass}}\n  - {name: xmas, when: {fixed: '12-25'}}\n",
     3, "events[b].when.bridge", "'xmass' is not an event of this calendar; did you mean 'xmas'?"),
    ("  - {name: b, when: {bridge: b}}\n", 3, "events[b].when.bridge", "cannot point at itself"),
    ("  - {name: b, when: {bridge: public_holidays}}\n", 3, "events[b].when.bridge",
     "no public_holidays block"),
    ("  - {name: x, when: {fixed: '05-01'}}\n  - {name: b, when: {bridge: x}}\n"
     "  - {name: c, when: {bridge: b}}\n", 5, "events[c].when.bridge", "'b' is itself a bridge"),
    ("  - {name: x, when: {fixed: '05-01'}}\n  - name: b\n    when: {bridge: x}\n    length: 2\n",
     6, "events[b].length", "a bridge day is one day"),
    ("  - {name: b, when: {bridge: ''}}\n", 3, "events[b].when.bridge", "names no event"),
])
def test_bad_bridge_is_one_line_with_file_line_and_key(tmp_path, body, line, key, words) -> None:
    path = tmp_path / "cal.yaml"
    path.write_text("name: t\nevents:\n" + body)
    assert_one_problem(path, line, key, words)


def _invented_daily(lifts: dict[str, float], cal, seed: int = 7) -> pd.DataFrame:
    """Invented daily sales: a weekday pattern, a yearly wave, the given lifts on their days, noise."""
    days = pd.date_range("2014-01-01", "2023-12-31", freq="D")
    rng = np.random.default_rng(seed)
    weekday = np.array([0.1, 0.12, 0.12, 0.12, 0.15, -0.3, -0.5])[days.day_of_week.to_numpy()]
    season = 0.2 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365.25)
    log_y = np.log(2000) + weekday + season + rng.normal(0, 0.04, len(days))
    occ = cal.occurrences(days[0], days[-1])
    for name, lift in lifts.items():
        hit = days.isin(occ.loc[occ["event"] == name, "start"])
        log_y[hit] += np.log1p(lift)
    return pd.DataFrame({"date": days, "value": np.exp(log_y)})


INVENTED_CAL = """name: invented bridge days
public_holidays: {country: DE, only: [New Year's Day, Labor Day, Ascension Day, German Unity Day,
  Christmas Day, Second Day of Christmas]}
events:
  - {name: bridge-day, when: {bridge: public_holidays}}
"""


@pytest.fixture(scope="module")
def bridge_fit():
    cal = load_calendar(INVENTED_CAL)
    truth = {"bridge-day": -0.25, "New Year's Day": -0.6, "Labor Day": -0.6, "Ascension Day": -0.6,
             "German Unity Day": -0.6, "Christmas Day": -0.7, "Second Day of Christmas": -0.6}
    return evcal.fit(_invented_daily(truth, cal), INVENTED_CAL, errors="ols")


def test_invented_bridge_lift_is_recovered_within_its_interval(bridge_fit) -> None:
    """Invented truth: -25 % on every bridge day of six German holidays (Thursday/Tuesday ones)."""
    row = bridge_fit.lifts.set_index("event").loc["bridge-day"]
    assert row["identifiable"] == "yes", row.to_dict()
    assert row["low_pct"] <= -25.0 <= row["high_pct"], row.to_dict()
    assert row["lift_pct"] == pytest.approx(-25.0, abs=3.0)
    occ = bridge_fit.occurrences[bridge_fit.occurrences["event"] == "bridge-day"]
    assert len(occ) == len(_bridges(load_calendar(INVENTED_CAL), "bridge-day", 2014, 2023)) >= 15


def test_bridge_days_are_planned_in_future_years(bridge_fit) -> None:
    """2026: 1 January and 14 May (Ascension Day) are Thursdays (``calendar``): 2 and 15 carry the lift."""
    t = make_plan(bridge_fit, "2026-01-01", "2026-05-31", n_sims=0).table.set_index("date")
    lift = t["lift:bridge-day"]
    on = [pd.Timestamp("2026-01-02"), pd.Timestamp("2026-05-15")]
    assert (lift.loc[on] < 0).all()
    assert lift.loc[on].to_numpy() / t.loc[on, "base"].to_numpy() == pytest.approx(
        bridge_fit.lifts.set_index("event").loc["bridge-day", "lift_pct"] / 100, abs=1e-6)
    assert (lift.drop(on) == 0).all()
