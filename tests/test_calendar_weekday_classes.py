"""Weekday classes: ``by_weekday: [weekend, monday_friday, midweek]`` splits an event's lift by the
weekday its occurrence starts on, one event per class (``july-4 (weekend)``, ...).

The weekdays are checked against the ``holidays`` library's dates (source named beside each check);
the lifts against an invented daily series with a known truth per class.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest
from calendar_problems import assert_one_problem

import evcal
from evcal.calendar import load_calendar
from evcal.plan.build import make_plan

holidays = pytest.importorskip("holidays")

CLASSES = {"weekend": {5, 6}, "monday_friday": {0, 4}, "midweek": {1, 2, 3}}
US_CAL = """name: t
public_holidays: {country: US, only: [Thanksgiving Day]}
events:
  - name: july-4
    when: {holiday: Independence Day}
    by_weekday: [weekend, monday_friday, midweek]
"""


def test_classes_follow_the_holidays_library_weekdays() -> None:
    """Source: the ``holidays`` library's US Independence Day, 2001-2030, and its weekday."""
    cal = load_calendar(US_CAL)
    occ = cal.occurrences(2001, 2030)
    occ = occ[occ["start"].dt.year.between(2001, 2030) & occ["event"].str.startswith("july-4")]
    table = holidays.country_holidays("US", years=range(2001, 2031))
    days = sorted(d for d, n in table.items() if n == "Independence Day")
    assert sorted(d.date() for d in occ["start"]) == days  # every occurrence in exactly one class
    for cls, weekdays in CLASSES.items():
        mine = [d.date() for d in occ.loc[occ["event"] == f"july-4 ({cls})", "start"]]
        assert mine == [d for d in days if d.weekday() in weekdays], cls
    # 2020-07-04 was a Saturday, 2025-07-04 a Friday, 2024-07-04 a Thursday (holidays library)
    by_day = dict(zip(occ["start"].dt.date, occ["event"], strict=True))
    assert by_day[dt.date(2020, 7, 4)] == "july-4 (weekend)"
    assert by_day[dt.date(2025, 7, 4)] == "july-4 (monday_friday)"
    assert by_day[dt.date(2024, 7, 4)] == "july-4 (midweek)"
    assert cal.event("july-4 (weekend)").label == "july-4 (weekend)"
    assert [e.name for e in cal.events] == ["july-4 (weekend)", "july-4 (monday_friday)", "july-4 (midweek)",
                                            "Thanksgiving Day"]


def test_single_days_and_moved_occurrences() -> None:
    """A moved occurrence goes to the class of its new weekday (2024-12-27 is a Friday: ``calendar``)."""
    cal = load_calendar("name: t\nevents:\n  - name: party\n    when: {fixed: '12-24'}\n"
                        "    by_weekday: [sat, sun, workday]\n    moved: {2024: {start: 2024-12-27}}\n")
    occ = cal.occurrences(2023, 2025).set_index("start")["event"]
    assert occ[pd.Timestamp("2023-12-24")] == "party (sun)"
    assert occ[pd.Timestamp("2024-12-27")] == "party (workday)"
    assert occ[pd.Timestamp("2025-12-24")] == "party (workday)"
    assert len(occ) == 3


@pytest.mark.parametrize(("body", "line", "key", "words"), [
    ("    by_weekday: [weekend, weekdays]\n", 5, "events[h].by_weekday", "'weekdays' is not a weekday class"),
    ("    by_weekday: [weekend, workday, fri]\n", 5, "events[h].by_weekday",
     "fri is in both workday and fri"),
    ("    by_weekday: [weekend, midweek]\n", 5, "events[h].by_weekday", "no class holds mon, fri"),
    ("    by_weekday: weekend\n", 5, "events[h].by_weekday", "two or more weekday classes"),
    ("    by_weekday: [weekend, workday]\n    effect: zero\n", 5, "events[h].by_weekday",
     "for estimated lifts"),
])
def test_bad_classes_are_one_line_with_file_line_and_key(tmp_path, body, line, key, words) -> None:
    path = tmp_path / "cal.yaml"
    path.write_text("name: t\nevents:\n  - name: h\n    when: {fixed: '12-25'}\n" + body)
    assert_one_problem(path, line, key, words)


@pytest.mark.parametrize(("text", "line", "key", "words"), [
    ("  - {name: e, when: {easter: 0}, by_weekday: [weekend, workday]}\n", 3, "events[e].by_weekday",
     "not a `easter` rule"),
    ("  - {name: x, when: {fixed: '12-25'}, by_weekday: [weekend, workday]}\n"
     "  - {name: y, when: {fixed: '12-26'}, effect: {like: x}}\n", 4, "events[y].effect.like",
     "'x' is split by_weekday"),
    ("  - {name: x, when: {fixed: '12-25'}, by_weekday: [weekend, workday]}\n"
     "  - {name: x (weekend), when: {fixed: '12-26'}}\n", 3, "events[x].by_weekday",
     "has the name of another event"),
])
def test_bad_uses_of_classes(tmp_path, text, line, key, words) -> None:
    path = tmp_path / "cal.yaml"
    path.write_text("name: t\nevents:\n" + text)
    assert_one_problem(path, line, key, words, cli=False)


def test_bridge_of_a_split_event_uses_all_its_classes() -> None:
    """1 January 2026 is a Thursday (``calendar``): the bridge of the whole event is Friday 2 January."""
    cal = load_calendar("name: t\nevents:\n"
                        "  - {name: ny, when: {fixed: '01-01'}, by_weekday: [weekend, workday]}\n"
                        "  - {name: b, when: {bridge: ny}}\n")
    occ = cal.occurrences(2026, 2026)
    assert occ.loc[occ["event"] == "b", "start"].tolist() == [pd.Timestamp("2026-01-02")]


# ------------------------------------------------------------------ invented series, known truth

TRUTH = {"weekend": -0.10, "monday_friday": 0.30, "midweek": -0.40}  # invented per-class lifts
INVENTED_CAL = """name: invented weekday classes
events:
  - name: fete
    when: {fixed: "07-04"}
    by_weekday: [weekend, monday_friday, midweek]
"""


@pytest.fixture(scope="module")
def class_fit():
    days = pd.date_range("2004-01-01", "2023-12-31", freq="D")
    rng = np.random.default_rng(11)
    weekday = np.array([0.1, 0.12, 0.12, 0.12, 0.15, -0.3, -0.5])[days.day_of_week.to_numpy()]
    season = 0.2 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365.25)
    log_y = np.log(1500) + weekday + season + rng.normal(0, 0.04, len(days))
    fete = (days.month == 7) & (days.day == 4)
    for cls, lift in TRUTH.items():
        log_y[fete & np.isin(days.day_of_week, list(CLASSES[cls]))] += np.log1p(lift)
    history = pd.DataFrame({"date": days, "value": np.exp(log_y)})
    return evcal.fit(history, INVENTED_CAL, errors="ols")


def test_invented_class_lifts_are_recovered(class_fit) -> None:
    """Invented truth: -10 % on a weekend, +30 % on a Monday or Friday, -40 % midweek."""
    lifts = class_fit.lifts.set_index("event")
    occ = class_fit.occurrences["event"].value_counts()
    for cls, lift in TRUTH.items():
        row = lifts.loc[f"fete ({cls})"]
        assert row["identifiable"] == "yes", row.to_dict()
        assert row["low_pct"] <= 100 * lift <= row["high_pct"], (cls, row.to_dict())
        assert row["lift_pct"] == pytest.approx(100 * lift, abs=4.0)
    # 20 years of 4 July (2004-2023): 6 on a weekend, 6 on a Monday or Friday, 8 midweek (``calendar``)
    assert [occ[f"fete ({c})"] for c in TRUTH] == [6, 6, 8]


def test_future_occurrence_is_planned_with_its_class_lift(class_fit) -> None:
    """4 July 2026 is a Saturday, 2025 a Friday (``calendar``): each takes its own class's lift."""
    t = make_plan(class_fit, "2025-07-01", "2026-07-31", n_sims=0).table.set_index("date")
    lifts = class_fit.lifts.set_index("event")["lift_pct"] / 100
    for day, cls in (("2025-07-04", "monday_friday"), ("2026-07-04", "weekend")):
        row = t.loc[pd.Timestamp(day)]
        assert row[f"lift:fete ({cls})"] / row["base"] == pytest.approx(lifts[f"fete ({cls})"], abs=1e-6)
        others = [c for c in TRUTH if c != cls]
        assert all(row[f"lift:fete ({c})"] == 0 for c in others if f"lift:fete ({c})" in t.columns)


def test_class_with_one_occurrence_is_not_called_identified() -> None:
    """Invented: three years of daily history hold 4 July once on a Monday or Friday (2025, a Friday;
    2023 Tuesday, 2024 Thursday by ``calendar``): that class's lift must not be reported as well
    identified (the existing identification's rule of at least 3 occurrences)."""
    days = pd.date_range("2023-01-01", "2025-12-31", freq="D")
    rng = np.random.default_rng(3)
    y = 1000 * np.exp(rng.normal(0, 0.05, len(days)))
    history = pd.DataFrame({"date": days, "value": y})
    cal = ("name: t\nevents:\n"
           "  - {name: fete, when: {fixed: '07-04'}, by_weekday: [monday_friday, midweek, weekend]}\n")
    lifts = evcal.fit(history, cal, errors="ols").lifts.set_index("event")
    assert lifts.loc["fete (monday_friday)", "identifiable"] == "weak"
    assert "rests on 1 occurrence" in lifts.loc["fete (monday_friday)", "note"]
    assert lifts.loc["fete (midweek)", ["identifiable", "occurrences_fitted"]].tolist() == ["weak", 2]
    assert lifts.loc["fete (weekend)", "identifiable"] == "no"  # no occurrence at all
