"""Date rules against the outside world: dateutil, published Easter dates, the calendar module."""

from __future__ import annotations

import calendar
import datetime as dt

import pytest
from dateutil.easter import EASTER_ORTHODOX, EASTER_WESTERN, easter

from evcal.calendar import load_calendar
from evcal.calendar import rules as R


def _meeus_gregorian_easter(year: int) -> dt.date:
    """Anonymous Gregorian algorithm as printed in Meeus, *Astronomical Algorithms*
    (2nd ed., 1998), ch. 8 — an independent computus to set beside dateutil."""
    a, b, c = year % 19, year // 100, year % 100
    d, e = b // 4, b % 4
    f = (b + 8) // 25
    g = (b - f + 1) // 3
    h = (19 * a + b - d - g + 15) % 30
    i, k = c // 4, c % 4
    ell = (32 + 2 * e + 2 * i - h - k) % 7
    m = (a + 11 * h + 22 * ell) // 451
    month, day = divmod(h + ell - 7 * m + 114, 31)
    return dt.date(year, month, day + 1)


def _meeus_julian_easter(year: int) -> dt.date:
    """Julian computus from Meeus, *Astronomical Algorithms*, ch. 8, converted to the
    Gregorian calendar by adding 13 days (valid 1900-03-01 .. 2100-02-28)."""
    a, b, c = year % 4, year % 7, year % 19
    d = (19 * c + 15) % 30
    e = (2 * a + 4 * b - d + 34) % 7
    month, day = divmod(d + e + 114, 31)
    return dt.date(year, month, day + 1) + dt.timedelta(days=13)


def _rule_date(rule_yaml: str, year: int) -> dt.date:
    cal = load_calendar(f"name: t\nevents:\n  - {{name: e, when: {rule_yaml}}}\n")
    occ = cal.occurrences(year, year)
    assert len(occ) == 1
    return occ["start"].iloc[0].date()


def test_easter_matches_dateutil_1900_2100() -> None:
    # Source: dateutil.easter.easter (EASTER_WESTERN), every year 1900-2100.
    cal = load_calendar("name: t\nevents:\n  - {name: e, when: {easter: 0}}\n")
    occ = cal.occurrences(1900, 2100)
    got = {d.year: d.date() for d in occ["start"]}
    assert len(got) == 201
    for year in range(1900, 2101):
        assert got[year] == easter(year, EASTER_WESTERN), year
        # Source: Meeus, Astronomical Algorithms ch. 8 (independent of dateutil).
        assert got[year] == _meeus_gregorian_easter(year), year


def test_orthodox_easter_matches_dateutil_1900_2100() -> None:
    # Source: dateutil.easter.easter (EASTER_ORTHODOX), every year 1900-2100.
    cal = load_calendar("name: t\nevents:\n  - {name: e, when: {orthodox_easter: 0}}\n")
    occ = cal.occurrences(1900, 2100)
    got = {d.year: d.date() for d in occ["start"]}
    assert len(got) == 201
    for year in range(1900, 2100):  # the +13-day Julian offset holds until 2100-02-28
        assert got[year] == easter(year, EASTER_ORTHODOX), year
        # Source: Meeus, Astronomical Algorithms ch. 8, Julian computus + 13 days.
        assert got[year] == _meeus_julian_easter(year), year
    assert got[2100] == easter(2100, EASTER_ORTHODOX)


@pytest.mark.parametrize(
    ("year", "expected"),
    [
        # Western Easter Sundays as printed in published Easter tables (e.g. the
        # Book of Common Prayer tables); values recalled from memory.
        (1943, dt.date(1943, 4, 25)),  # the latest possible date
        (2000, dt.date(2000, 4, 23)),
        (2008, dt.date(2008, 3, 23)),
        (2011, dt.date(2011, 4, 24)),
        (2019, dt.date(2019, 4, 21)),
        (2024, dt.date(2024, 3, 31)),
        (2025, dt.date(2025, 4, 20)),
        (2038, dt.date(2038, 4, 25)),
    ],
)
def test_easter_published_dates(year: int, expected: dt.date) -> None:
    assert _rule_date("{easter: 0}", year) == expected


@pytest.mark.parametrize(
    ("year", "expected"),
    [
        # Orthodox Easter (Pascha) in the Gregorian calendar, from published church
        # calendars; values recalled from memory.
        (2019, dt.date(2019, 4, 28)),
        (2021, dt.date(2021, 5, 2)),
        (2022, dt.date(2022, 4, 24)),
        (2023, dt.date(2023, 4, 16)),
        (2024, dt.date(2024, 5, 5)),
        (2025, dt.date(2025, 4, 20)),  # same day as Western Easter
    ],
)
def test_orthodox_easter_published_dates(year: int, expected: dt.date) -> None:
    assert _rule_date("{orthodox_easter: 0}", year) == expected


def test_easter_offsets_and_extra_offset() -> None:
    # Good Friday = Easter - 2 (dateutil.easter as the reference).
    assert _rule_date("{easter: -2}", 2024) == easter(2024) - dt.timedelta(days=2)
    # `offset` adds to the rule's own days.
    assert _rule_date("{easter: -2, offset: 3}", 2024) == easter(2024) + dt.timedelta(days=1)


def _stdlib_nth_weekday(year: int, month: int, weekday: int, nth: int) -> dt.date | None:
    # Source: Python's calendar.monthcalendar (weeks as rows, 0 = not in month).
    days = [week[weekday] for week in calendar.monthcalendar(year, month) if week[weekday]]
    index = nth - 1 if nth > 0 else nth
    if -len(days) <= index < len(days):
        return dt.date(year, month, days[index])
    return None


def test_nth_and_last_weekday_match_calendar_module() -> None:
    # Source: Python's calendar module, every month of 1990-2040, every weekday, nth ±1..5.
    checked = 0
    for year in range(1990, 2041):
        for month in range(1, 13):
            for weekday in range(7):
                for nth in (1, 2, 3, 4, 5, -1, -2, -5):
                    want = _stdlib_nth_weekday(year, month, weekday, nth)
                    got = R.WeekdayRule(month=month, weekday=weekday, nth=nth).hits(year)
                    assert (got[0].start if got else None) == want, (year, month, weekday, nth)
                    checked += 1
    assert checked > 30_000


def test_weekday_rule_through_the_file_with_names_and_offset() -> None:
    # US Thanksgiving = 4th Thursday of November (calendar module as reference);
    # the day after with offset 1.
    want = _stdlib_nth_weekday(2024, 11, calendar.THURSDAY, 4)
    assert want == dt.date(2024, 11, 28)
    got = _rule_date("{weekday: {month: 11, day: Thursday, nth: 4}, offset: 1}", 2024)
    assert got == want + dt.timedelta(days=1)
    # Last Monday of May 2024 (calendar module).
    assert _rule_date("{weekday: {month: 5, day: mon, nth: -1}}", 2024) == _stdlib_nth_weekday(
        2024, 5, calendar.MONDAY, -1
    )


def test_fifth_weekday_missing_gives_no_occurrence() -> None:
    # February 2023 has four Mondays only (calendar module).
    assert _stdlib_nth_weekday(2023, 2, calendar.MONDAY, 5) is None
    cal = load_calendar(
        "name: t\nevents:\n  - {name: e, when: {weekday: {month: 2, day: mon, nth: 5}}}\n"
    )
    years = {d.year for d in cal.occurrences(2020, 2030)["start"]}
    want = {y for y in range(2020, 2031) if _stdlib_nth_weekday(y, 2, 0, 5)}
    assert years == want and 2023 not in years


def test_fixed_feb29_only_in_leap_years() -> None:
    cal = load_calendar("name: t\nevents:\n  - {name: leap, when: {fixed: '02-29'}}\n")
    years = [d.year for d in cal.occurrences(2000, 2030)["start"]]
    # Source: calendar.isleap.
    assert years == [y for y in range(2000, 2031) if calendar.isleap(y)]


def test_span_wraps_into_next_year() -> None:
    cal = load_calendar(
        "name: t\nevents:\n  - {name: s, when: {span: {start: '12-24', end: '01-01'}}}\n"
    )
    occ = cal.occurrences(2024, 2024)
    # The 2023 span ends on 2024-01-01 and so touches 2024; the 2024 one runs into 2025.
    assert [(r.start.date(), r.end.date()) for r in occ.itertuples()] == [
        (dt.date(2023, 12, 24), dt.date(2024, 1, 1)),
        (dt.date(2024, 12, 24), dt.date(2025, 1, 1)),
    ]
    assert cal.event("s").length == 9


def test_every_weekday_counts_match_calendar_module() -> None:
    cal = load_calendar("name: t\nevents:\n  - {name: shut, when: {every_weekday: [sun, Sat]}}\n")
    occ = cal.occurrences(2024, 2024)
    # Source: calendar.monthcalendar, Saturdays and Sundays of 2024.
    want = sum(
        1
        for m in range(1, 13)
        for week in calendar.monthcalendar(2024, m)
        for wd in (calendar.SATURDAY, calendar.SUNDAY)
        if week[wd]
    )
    assert len(occ) == want == 104
    assert set(occ["start"].dt.day_of_week) == {5, 6}


def test_years_every_skip_moved_and_range() -> None:
    cal = load_calendar(
        """
name: t
events:
  - name: cup
    when: {span: {start: "06-14", end: "07-15"}}
    years: {every: 4, start: 2018}
    skip: [2030]
    moved:
      2022: {start: 2022-11-20, end: 2022-12-18}
  - name: ranged
    when: {fixed: "09-01"}
    years: {from: 2019, to: 2021}
  - name: listed
    when: {fixed: "09-02"}
    years: [2017, 2023]
"""
    )
    occ = cal.occurrences(2014, 2034)
    cup = occ[occ.event == "cup"]
    assert [(r.start.date(), r.end.date()) for r in cup.itertuples()] == [
        (dt.date(2018, 6, 14), dt.date(2018, 7, 15)),
        (dt.date(2022, 11, 20), dt.date(2022, 12, 18)),
        (dt.date(2026, 6, 14), dt.date(2026, 7, 15)),
        (dt.date(2034, 6, 14), dt.date(2034, 7, 15)),
    ]
    assert list(occ[occ.event == "ranged"]["start"].dt.year) == [2019, 2020, 2021]
    assert list(occ[occ.event == "listed"]["start"].dt.year) == [2017, 2023]


def test_dates_rule_bare_dates_strength_and_length_default() -> None:
    cal = load_calendar(
        """
name: t
events:
  - name: promo
    length: 3
    when:
      dates:
        - 2024-03-02
        - {start: 2025-03-01, end: 2025-03-09, strength: 1.5}
"""
    )
    occ = cal.occurrences(2024, 2025)
    assert [(r.start.date(), r.end.date(), r.strength) for r in occ.itertuples()] == [
        (dt.date(2024, 3, 2), dt.date(2024, 3, 4), 1.0),  # bare date: `length` days
        (dt.date(2025, 3, 1), dt.date(2025, 3, 9), 1.5),
    ]
