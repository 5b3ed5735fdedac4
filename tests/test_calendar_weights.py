"""Day weights, shapes and the share-of-window (Bell–Hillmer) aggregation."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest
from dateutil.easter import easter

from evcal.calendar import load_calendar
from evcal.design.dayweights import aggregate_day_weights


def _cal(events_yaml: str):
    return load_calendar("name: t\nevents:\n" + events_yaml)


# ------------------------------------------------------------------ share of window, by hand

# Bell & Hillmer (1983), "Modeling time series with calendar variation", JASA 78:
# the Easter regressor for a month is the share of the w days before Easter that fall in
# that month. Here the window is Easter Sunday and the 10 days before it (11 days).
EASTER_WINDOW = "  - {name: easter-window, when: {easter: 0}, before: 10}\n"


@pytest.mark.parametrize(
    ("year", "easter_day", "march_days", "april_days"),
    [
        # Dates from dateutil.easter (asserted below); the days are counted by hand:
        (2024, dt.date(2024, 3, 31), 11, 0),  # Mar 21-31: wholly in March
        (2016, dt.date(2016, 3, 27), 11, 0),  # Mar 17-27: wholly in March
        (2018, dt.date(2018, 4, 1), 10, 1),  # Mar 22-31 and Apr 1
        (2021, dt.date(2021, 4, 4), 7, 4),  # Mar 25-31 and Apr 1-4
        (2025, dt.date(2025, 4, 20), 0, 11),  # Apr 10-20: wholly in April
    ],
)
def test_easter_window_split_between_march_and_april(
    year: int, easter_day: dt.date, march_days: int, april_days: int
) -> None:
    assert easter(year) == easter_day  # source: dateutil.easter
    cal = _cal(EASTER_WINDOW)
    days = cal.day_weights(f"{year}-01-01", f"{year}-12-31")
    months = pd.period_range(f"{year}-01", f"{year}-12", freq="M")
    shares = aggregate_day_weights(days, months)["easter-window"]
    assert shares[pd.Period(f"{year}-03", "M")] == pytest.approx(march_days / 11)
    assert shares[pd.Period(f"{year}-04", "M")] == pytest.approx(april_days / 11)
    assert shares.drop([pd.Period(f"{year}-03", "M"), pd.Period(f"{year}-04", "M")]).sum() == 0
    # Quarterly: March and April are in different quarters.
    quarters = aggregate_day_weights(days, pd.period_range(f"{year}Q1", f"{year}Q4", freq="Q-DEC"))
    assert quarters["easter-window"].iloc[0] == pytest.approx(march_days / 11)
    assert quarters["easter-window"].iloc[1] == pytest.approx(april_days / 11)


def test_ramp_window_split_by_hand() -> None:
    # Easter 2018 = 1 April (dateutil). Ramp with before: 3 over a 1-day occurrence:
    # factors 1/4, 2/4, 3/4 (Mar 29-31) and 1 (Apr 1); total 2.5.
    assert easter(2018) == dt.date(2018, 4, 1)
    cal = _cal("  - {name: e, when: {easter: 0}, before: 3, shape: ramp}\n")
    days = cal.day_weights("2018-03-01", "2018-04-30")
    months = pd.period_range("2018-03", "2018-04", freq="M")
    agg = aggregate_day_weights(days, months)["e"]
    assert agg.iloc[0] == pytest.approx((0.25 + 0.5 + 0.75) / 2.5)  # 0.6
    assert agg.iloc[1] == pytest.approx(1 / 2.5)  # 0.4


def test_weekly_aggregation_with_wednesday_week_end() -> None:
    # A 7-day promotion Mon 2024-03-25 .. Sun 2024-03-31 (weekdays from the calendar module:
    # 2024-03-25 is a Monday).
    assert dt.date(2024, 3, 25).weekday() == 0
    cal = _cal("  - {name: promo, when: {dates: [{start: 2024-03-25, end: 2024-03-31}]}}\n")
    days = cal.day_weights("2024-03-01", "2024-04-30")
    # Weeks ending Wednesday: Thu Mar 21 - Wed Mar 27 holds Mon-Wed (3 days),
    # Thu Mar 28 - Wed Apr 3 holds Thu-Sun (4 days).
    weeks = pd.period_range("2024-03-07", "2024-04-24", freq="W-WED")
    agg = aggregate_day_weights(days, weeks)["promo"]
    first = pd.Period("2024-03-27", "W-WED")
    assert first.start_time == pd.Timestamp("2024-03-21")
    assert agg[first] == pytest.approx(3 / 7)
    assert agg[pd.Period("2024-04-03", "W-WED")] == pytest.approx(4 / 7)
    assert agg.sum() == pytest.approx(1.0)
    # Weeks ending Sunday: the whole promotion is one week.
    sunday_weeks = pd.period_range("2024-03-10", "2024-04-28", freq="W-SUN")
    agg_sun = aggregate_day_weights(days, sunday_weeks)["promo"]
    assert agg_sun[pd.Period("2024-03-31", "W-SUN")] == pytest.approx(1.0)
    assert (agg_sun > 0).sum() == 1


def test_daily_periods_are_the_day_weights() -> None:
    cal = _cal("  - {name: e, when: {fixed: '06-01'}, before: 2, after: 2}\n")
    days = cal.day_weights("2024-05-01", "2024-06-30")
    agg = aggregate_day_weights(days, pd.period_range("2024-05-01", "2024-06-30", freq="D"))
    np.testing.assert_allclose(agg.to_numpy(), days.to_numpy())


def test_aggregation_refuses_periods_outside_the_days() -> None:
    cal = _cal(EASTER_WINDOW)
    days = cal.day_weights("2024-03-05", "2024-12-31")
    with pytest.raises(ValueError, match="periods need 2024-03-01"):
        aggregate_day_weights(days, pd.period_range("2024-03", "2024-12", freq="M"))


# ------------------------------------------------------------------ shapes and normalisation


def test_flat_window_normalisation_sums_to_strength() -> None:
    cal = _cal(
        "  - name: p\n    before: 2\n    after: 1\n    when:\n      dates:\n"
        "        - {start: 2024-03-10, end: 2024-03-12, strength: 2.5}\n"
        "        - 2024-06-01\n"
    )
    w = cal.day_weights("2024-01-01", "2024-12-31")["p"]
    # First occurrence: window Mar 8 .. Mar 13 (6 days), each 2.5 / 6.
    assert w["2024-03-08":"2024-03-13"].tolist() == pytest.approx([2.5 / 6] * 6)
    assert w["2024-03-08":"2024-03-13"].sum() == pytest.approx(2.5)
    # Second: May 30 .. Jun 2 (4 days), strength 1.
    assert w["2024-05-30":"2024-06-02"].sum() == pytest.approx(1.0)
    assert w.sum() == pytest.approx(3.5)
    raw = cal.day_weights("2024-01-01", "2024-12-31", normalize="none")["p"]
    assert raw["2024-03-08":"2024-03-13"].tolist() == [2.5] * 6
    assert raw.sum() == pytest.approx(2.5 * 6 + 4)


def test_ramp_factors() -> None:
    # before 3, length 2, after 2: 1/4, 2/4, 3/4, 1, 1, 2/3, 1/3 (docs/calendar.md table).
    cal = _cal("  - {name: r, when: {fixed: '06-10'}, length: 2, before: 3, after: 2, "
               "shape: ramp}\n")
    raw = cal.day_weights("2024-06-01", "2024-06-20", normalize="none")["r"]
    want = [0.25, 0.5, 0.75, 1, 1, 2 / 3, 1 / 3]
    assert raw["2024-06-07":"2024-06-13"].tolist() == pytest.approx(want)
    assert raw.sum() == pytest.approx(sum(want))
    norm = cal.day_weights("2024-06-01", "2024-06-20")["r"]
    assert norm["2024-06-07":"2024-06-13"].tolist() == pytest.approx([x / sum(want) for x in want])


def test_decay_factors() -> None:
    # before 1, length 1, after 3: 1, 1, 0.5, 0.25, 0.125.
    cal = _cal("  - {name: d, when: {fixed: '06-10'}, before: 1, after: 3, shape: decay}\n")
    raw = cal.day_weights("2024-06-01", "2024-06-20", normalize="none")["d"]
    want = [1, 1, 0.5, 0.25, 0.125]
    assert raw["2024-06-09":"2024-06-13"].tolist() == pytest.approx(want)
    norm = cal.day_weights("2024-06-01", "2024-06-20")["d"]
    assert norm.sum() == pytest.approx(1.0)
    assert norm["2024-06-11"] == pytest.approx(0.5 / 2.875)


def test_daily_shape_gives_one_column_per_offset() -> None:
    cal = _cal("  - {name: easter-run, when: {easter: 0}, before: 3, after: 1, shape: daily}\n"
               "  - {name: other, when: {fixed: '01-01'}}\n")
    w = cal.day_weights("2024-03-01", "2024-04-30")
    cols = ["easter-run[-3]", "easter-run[-2]", "easter-run[-1]", "easter-run[+0]",
            "easter-run[+1]", "other"]
    assert list(w.columns) == cols
    assert cal.event_columns() == {**{c: "easter-run" for c in cols[:-1]}, "other": "other"}
    assert cal.event("easter-run").window_offsets == [-3, -2, -1, 0, 1]
    # Easter 2024 = Mar 31 (dateutil): column [-3] is 1 on Mar 28 only, [+1] on Apr 1 only.
    assert easter(2024) == dt.date(2024, 3, 31)
    assert w.index[w["easter-run[-3]"] == 1].tolist() == [pd.Timestamp("2024-03-28")]
    assert w.index[w["easter-run[+0]"] == 1].tolist() == [pd.Timestamp("2024-03-31")]
    assert w.index[w["easter-run[+1]"] == 1].tolist() == [pd.Timestamp("2024-04-01")]
    assert w[cols[:-1]].to_numpy().sum() == 5


def test_overlapping_occurrences_of_one_event_add() -> None:
    cal = _cal("  - name: p\n    when:\n      dates:\n"
               "        - {start: 2024-05-01, end: 2024-05-04}\n"
               "        - {start: 2024-05-03, end: 2024-05-06, strength: 2}\n")
    raw = cal.day_weights("2024-05-01", "2024-05-06", normalize="none")["p"]
    assert raw.tolist() == [1, 1, 3, 3, 2, 2]


def test_window_past_the_range_keeps_whole_window_normalisation() -> None:
    cal = _cal("  - {name: e, when: {fixed: '01-02'}, before: 4}\n")
    # Window Dec 29 .. Jan 2 (5 days); only Jan 1-2 are inside the range.
    w = cal.day_weights("2025-01-01", "2025-01-31")["e"]
    assert w.iloc[:2].tolist() == pytest.approx([0.2, 0.2])
    assert w.sum() == pytest.approx(0.4)
    occ = cal.occurrences("2024-12-30", "2024-12-31")  # only the window touches
    assert occ["start"].tolist() == [pd.Timestamp("2025-01-02")]


def test_day_weights_index_columns_and_restriction() -> None:
    cal = _cal("  - {name: a, when: {fixed: '03-01'}}\n  - {name: b, when: {fixed: '03-02'}}\n")
    w = cal.day_weights(2024, 2024)
    assert w.index[0] == pd.Timestamp("2024-01-01") and w.index[-1] == pd.Timestamp("2024-12-31")
    assert len(w) == 366 and w.index.freqstr == "D"
    assert list(w.columns) == ["a", "b"] and all(dt_ == np.float64 for dt_ in w.dtypes)
    only_b = cal.day_weights("2024-01-01", "2024-12-31", events=["b"])
    assert list(only_b.columns) == ["b"]
    from evcal.errors import CalendarError

    with pytest.raises(CalendarError, match="did you mean 'a'"):
        cal.day_weights(2024, 2024, events=["aa"])
    with pytest.raises(ValueError, match="normalize"):
        cal.day_weights(2024, 2024, normalize="sum")


def test_closed_days_cover_zero_effect_windows() -> None:
    cal = _cal(
        "  - {name: xmas, when: {fixed: '12-25'}, effect: zero}\n"
        "  - {name: sundays, when: {every_weekday: [sun]}, effect: zero}\n"
        "  - {name: shutdown, when: {span: {start: '07-29', end: '08-02'}}, before: 1, "
        "effect: zero}\n"
        "  - {name: open-event, when: {fixed: '12-24'}}\n"
    )
    closed = cal.closed_days("2024-01-01", "2024-12-31")
    assert closed.dtype == bool and len(closed) == 366
    assert closed["2024-12-25"] and not closed["2024-12-24"]
    # Sundays of 2024 (calendar module: 52), shutdown Jul 28 (a Sunday) .. Aug 2, Christmas
    # (a Wednesday in 2024).
    import calendar

    sundays = sum(1 for m in range(1, 13) for wk in calendar.monthcalendar(2024, m) if wk[6])
    assert sundays == 52
    assert closed.sum() == sundays + 5 + 1  # Jul 28 is a Sunday already counted
    assert closed["2024-07-28":"2024-08-02"].all()


def test_occurrence_table_sorted_by_start_then_event() -> None:
    cal = _cal("  - {name: zeta, when: {fixed: '05-01'}}\n  - {name: alpha, when: {fixed: "
               "'05-01'}}\n  - {name: mid, when: {fixed: '04-01'}}\n")
    occ = cal.occurrences(2024, 2025)
    assert list(occ.columns) == ["event", "start", "end", "strength"]
    assert occ["event"].tolist() == ["mid", "alpha", "zeta", "mid", "alpha", "zeta"]
