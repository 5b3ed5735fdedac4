"""Public holidays against the holidays library and a government's published list."""

from __future__ import annotations

import datetime as dt

import holidays
import pytest

from evcal.calendar import load_calendar
from evcal.errors import CalendarError


def test_only_names_match_the_holidays_library_2015_2030() -> None:
    names = ["Good Friday", "Easter Monday", "Spring Bank Holiday", "Christmas Day"]
    cal = load_calendar(
        "name: t\npublic_holidays:\n  country: GB\n  subdivision: ENG\n"
        f"  only: [{', '.join(names)}]\n"
    )
    assert [e.name for e in cal.events] == names
    assert all(e.group == "public_holiday" and e.rule == "holiday" for e in cal.events)
    occ = cal.occurrences(2015, 2030)
    # Source: holidays.country_holidays("GB", subdiv="ENG"), the reference library.
    lib = holidays.country_holidays("GB", subdiv="ENG", years=range(2015, 2031))
    for name in names:
        want = sorted(d for d, n in lib.items() if name in n.split("; "))
        got = sorted(occ.loc[occ.event == name, "start"].dt.date)
        assert got == want, name
        assert len(got) == 16


def test_gb_england_2024_bank_holidays_against_gov_uk() -> None:
    # Source: the UK government's published list of bank holidays in England and
    # Wales for 2024 (gov.uk/bank-holidays); dates recalled from memory.
    gov_uk_2024 = {
        dt.date(2024, 1, 1),  # New Year's Day
        dt.date(2024, 3, 29),  # Good Friday
        dt.date(2024, 4, 1),  # Easter Monday
        dt.date(2024, 5, 6),  # Early May bank holiday
        dt.date(2024, 5, 27),  # Spring bank holiday
        dt.date(2024, 8, 26),  # Summer bank holiday
        dt.date(2024, 12, 25),  # Christmas Day
        dt.date(2024, 12, 26),  # Boxing Day
    }
    cal = load_calendar("name: t\npublic_holidays: {country: GB, subdivision: ENG}\n")
    occ = cal.occurrences(2024, 2024)
    occ = occ[occ.start.dt.year == 2024]
    assert set(occ["start"].dt.date) == gov_uk_2024
    assert len(occ) == 8


def test_observed_days_are_left_out_unless_named() -> None:
    # Christmas 2021 fell on a Saturday; the holidays library names the substitute days
    # "Christmas Day (observed)" (27 Dec) and "Boxing Day (observed)" (28 Dec).
    lib = holidays.country_holidays("GB", subdiv="ENG", years=2021)
    assert lib.get(dt.date(2021, 12, 27)) == "Christmas Day (observed)"
    cal = load_calendar("name: t\npublic_holidays: {country: GB, subdivision: ENG}\n")
    assert not any("(observed)" in e.name for e in cal.events)
    named = load_calendar(
        "name: t\npublic_holidays:\n  country: GB\n  subdivision: ENG\n"
        "  only: [Christmas Day, Christmas Day (observed)]\n"
    )
    occ = named.occurrences(2021, 2021)
    obs = occ[occ.event == "Christmas Day (observed)"]
    assert obs["start"].dt.date.tolist() == [dt.date(2021, 12, 27)]


def test_window_and_shape_come_from_the_block() -> None:
    cal = load_calendar(
        "name: t\npublic_holidays: {country: GB, subdivision: ENG, only: [Boxing Day], "
        "before: 2, after: 1}\n"
    )
    ev = cal.event("Boxing Day")
    assert (ev.before, ev.after, ev.window_offsets) == (2, 1, [-2, -1, 0, 1])
    w = cal.day_weights("2024-12-20", "2024-12-31")["Boxing Day"]
    assert w["2024-12-24":"2024-12-27"].tolist() == pytest.approx([0.25] * 4)


def test_file_events_come_first_then_holidays_and_holiday_rule_uses_the_source() -> None:
    cal = load_calendar(
        """
name: t
public_holidays: {country: US, only: [Thanksgiving Day]}
events:
  - {name: black-friday, when: {holiday: Thanksgiving Day, offset: 1}}
  - {name: xmas-closed, when: {holiday: Christmas Day}, effect: zero}
"""
    )
    assert [e.name for e in cal.events] == ["black-friday", "xmas-closed", "Thanksgiving Day"]
    occ = cal.occurrences(2024, 2024)
    # Source: holidays library, US Thanksgiving 2024 = 28 November.
    thanks = holidays.country_holidays("US", years=2024)
    assert thanks.get(dt.date(2024, 11, 28)) == "Thanksgiving Day"
    row = occ[occ.event == "black-friday"].iloc[0]
    assert row.start.date() == dt.date(2024, 11, 29)


def test_multi_day_holidays_merge_into_one_occurrence() -> None:
    # Source: the holidays library. Find a Chinese holiday name that falls on consecutive
    # days in 2024, so the test does not depend on recalling that year's schedule.
    lib = holidays.country_holidays("CN", years=2024)
    by_name: dict[str, list[dt.date]] = {}
    for day, names in sorted(lib.items()):
        for n in names.split("; "):
            by_name.setdefault(n, []).append(day)
    name, days = next(
        (n, d) for n, d in by_name.items()
        if len(d) >= 2 and (d[1] - d[0]).days == 1 and "(observed)" not in n
    )
    cal = load_calendar(f"name: t\npublic_holidays:\n  country: CN\n  only: [\"{name}\"]\n")
    occ = cal.occurrences(2024, 2024)
    occ = occ[occ.start.dt.year == 2024]
    covered = set()
    for r in occ.itertuples():
        covered |= {r.start.date() + dt.timedelta(days=i) for i in range((r.end - r.start).days + 1)}
    assert covered == set(days)
    assert len(occ) < len(days)  # consecutive days were merged


def test_unknown_country_subdivision_and_names_suggest() -> None:
    with pytest.raises(CalendarError) as err:
        load_calendar("name: t\npublic_holidays: {country: Germny}\n")
    assert "DE (Germany)" in err.value.problems[0]
    with pytest.raises(CalendarError) as err:
        load_calendar("name: t\npublic_holidays: {country: GB, subdivision: ENGLND}\n")
    assert "'ENG'" in err.value.problems[0] or "'England'" in err.value.problems[0]
    with pytest.raises(CalendarError) as err:
        load_calendar("name: t\npublic_holidays: {country: GB, only: [Boxing Dy]}\n")
    assert "did you mean 'Boxing Day'" in err.value.problems[0]
    with pytest.raises(CalendarError) as err:
        load_calendar("name: t\nevents:\n  - {name: x, when: {holiday: Boxing Day}}\n")
    assert "no public_holidays block" in err.value.problems[0]


def test_country_code_no_is_not_read_as_false() -> None:
    # YAML 1.1 would read the bare word NO (Norway) as false; the loader reads YAML 1.2 booleans.
    cal = load_calendar("name: t\npublic_holidays: {country: NO, only: [Constitution Day]}\n")
    assert cal.public_holidays is not None and cal.public_holidays.source.country == "NO"
