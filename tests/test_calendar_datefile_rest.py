"""Dates from a file, the rest: notes where the file does not reach, weekday classes, dips and bridges.

Every series, date and effect here is invented (named so), with a known truth: a file of
occurrences, a daily series with log-scale effects on the file's days, fitted by ``evcal fit``.
"""

from __future__ import annotations

import datetime as dt
import json

import hypothesis.strategies as st
import numpy as np
import pandas as pd
import pytest
from calendar_problems import assert_one_problem
from hypothesis import given, settings
from typer.testing import CliRunner

import evcal
from evcal.calendar import load_calendar
from evcal.calendar.datefile import history_notes, saved_text
from evcal.cli import app
from evcal.plan.build import make_plan

RUN = CliRunner()


def _invented_daily(first: str, last: str, effects: list[tuple[pd.DatetimeIndex, float]], seed: int = 5
                    ) -> pd.DataFrame:
    """An invented daily shop: weekday pattern, a yearly wave, 5 % noise, ``effects`` as (days, lift)."""
    days = pd.date_range(first, last, freq="D")
    rng = np.random.default_rng(seed)
    weekday = np.array([0.0, 0.02, 0.02, 0.05, 0.15, 0.3, -0.2])[days.day_of_week.to_numpy()]
    log_y = np.log(800) + weekday + 0.15 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365.25)
    log_y += rng.normal(0, 0.05, len(days))
    for on, lift in effects:
        log_y[days.isin(on)] += np.log1p(lift)
    return pd.DataFrame({"date": days, "value": np.exp(log_y)})


def _fit(folder, history: pd.DataFrame, calendar: str) -> CliRunner:
    (folder / "cal.yaml").write_text(calendar)
    history.to_csv(folder / "history.csv", index=False)
    result = RUN.invoke(app, ["fit", str(folder / "history.csv"), "-c", str(folder / "cal.yaml"), "--errors",
                              "ols", "--out", str(folder / "model")])
    assert result.exit_code == 0, result.output
    return result


def _days(rows: list[tuple[str, str]]) -> pd.DatetimeIndex:
    return pd.DatetimeIndex(np.concatenate([pd.date_range(s, e).to_numpy() for s, e in rows]))


# ------------------------------------------------- (a) the fit says where the file does not reach

PROMOS = [  # invented promotion weeks, 2018-2021 only; the history runs 2016-2023
    ("2018-03-05", "2018-03-11"), ("2018-09-10", "2018-09-16"), ("2019-04-01", "2019-04-07"),
    ("2019-10-14", "2019-10-20"), ("2020-02-17", "2020-02-23"), ("2020-08-03", "2020-08-09"),
    ("2021-05-10", "2021-05-16"), ("2021-11-01", "2021-11-07"),
]


@pytest.fixture(scope="module")
def short_file_model(tmp_path_factory):
    folder = tmp_path_factory.mktemp("short")
    (folder / "promotions.csv").write_text("start,end\n" + "".join(f"{s},{e}\n" for s, e in PROMOS))
    history = _invented_daily("2016-01-01", "2023-12-31", [(_days(PROMOS), 0.30)])
    calendar = "name: invented\nevents:\n  - name: promo\n    when: {file: promotions.csv}\n"
    fit = _fit(folder, history, calendar)
    return folder, fit.output


def test_fit_notes_the_history_the_file_does_not_reach(short_file_model) -> None:
    """The file lists 2018-03-05 .. 2021-11-07 (longest gap between rows: 2020-08-10 .. 2021-05-09, 273
    days); the history runs 2016-01-01 .. 2023-12-31: both ends are longer stretches, so both get a note
    naming the event, the file, the row and the days fitted as if no promotion happened."""
    folder, output = short_file_model
    start = ("promo: promotions.csv lists dates from 2018-03-05 (row 2) and the history starts on "
             "2016-01-01, so 2016-01-01 .. 2018-03-04 is fitted as if no promo happened")
    end = ("promo: promotions.csv lists dates up to 2021-11-07 (row 9) and the history runs to 2023-12-31, "
           "so 2021-11-08 .. 2023-12-31 is fitted as if no promo happened")
    flat = " ".join(output.split())
    assert start in flat and end in flat
    shown = RUN.invoke(app, ["show", str(folder / "model")])
    assert shown.exit_code == 0, shown.output
    assert start in " ".join(shown.output.split()) and end in " ".join(shown.output.split())
    # kept with the model's warnings, so the report (and anything reading model.json) has it too
    saved = json.loads((folder / "model" / "model.json").read_text(encoding="utf-8"))["warnings"]
    assert [w.split(";")[0] for w in saved if w.startswith("promo: promotions.csv")] == [start, end]


def test_a_history_within_the_files_own_gaps_gets_no_note() -> None:
    """History 2018-01-01 .. 2022-08-07: 63 days before the first row and 273 after the last, none longer
    than the 273-day gap the file itself leaves between rows: nothing to say; one day more is a note."""
    cal = load_calendar("name: t\nevents:\n  - {name: promo, when: {file: p.csv}}\n" + saved_text(
        {"p.csv": "start,end\n" + "".join(f"{s},{e}\n" for s, e in PROMOS)}))
    assert history_notes(cal, dt.date(2018, 1, 1), dt.date(2022, 8, 7)) == []
    assert len(history_notes(cal, dt.date(2018, 1, 1), dt.date(2022, 8, 8))) == 1  # 274 days after


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 60), st.integers(1, 7)), min_size=1, max_size=8),
       st.integers(0, 120), st.integers(0, 120))
def test_a_note_exactly_when_a_stretch_outruns_the_files_gaps(rows, before, after) -> None:
    """For any rows and history: a note on a side iff the history runs past the rows by more days than
    the longest gap between two rows (a file of one row: by any day)."""
    day, spans = dt.date(2020, 1, 1), []
    for gap, length in rows:
        start = day + dt.timedelta(days=gap)
        day = start + dt.timedelta(days=length)
        spans.append((start, day - dt.timedelta(days=1)))
    longest = max([0] + [(b[0] - a[1]).days - 1 for a, b in zip(spans, spans[1:], strict=False)])
    cal = load_calendar("name: t\nevents:\n  - {name: e, when: {file: d.csv}}\n" + saved_text(
        {"d.csv": "start,end\n" + "".join(f"{s},{e}\n" for s, e in spans)}))
    first, last = spans[0][0] - dt.timedelta(days=before), spans[-1][1] + dt.timedelta(days=after)
    notes = history_notes(cal, first, last)
    assert any("history starts" in n for n in notes) == (before > longest)
    assert any("history runs to" in n for n in notes) == (after > longest)


# ------------------------------------------------- (c) by_weekday on a file event, through fit and plan

CLASS_TRUTH = {"weekend": 0.10, "monday_friday": -0.20, "midweek": -0.35}  # invented


def _school_days() -> list[str]:
    """Invented one-day closures, four a year 2016-2024 on days chosen so every class has many."""
    rng = np.random.default_rng(11)
    out = []
    for year in range(2016, 2025):
        for month in (2, 5, 8, 11):
            out.append(str(dt.date(year, month, 1) + dt.timedelta(days=int(rng.integers(0, 25)))))
    return out


def _class_of(day: pd.Timestamp) -> str:
    return "weekend" if day.day_of_week >= 5 else "monday_friday" if day.day_of_week in (0, 4) else "midweek"


@pytest.fixture(scope="module")
def class_model(tmp_path_factory):
    folder = tmp_path_factory.mktemp("classes")
    days = pd.DatetimeIndex(_school_days())
    (folder / "closures.csv").write_text("start\n" + "".join(f"{d.date()}\n" for d in days))
    effects = [(days[[_class_of(d) == c for d in days]], lift) for c, lift in CLASS_TRUTH.items()]
    _fit(folder, _invented_daily("2016-01-01", "2023-12-31", effects),
         "name: invented\nevents:\n  - name: closure\n    when: {file: closures.csv}\n"
         "    by_weekday: [weekend, monday_friday, midweek]\n")
    return folder, days


def test_weekday_classes_of_a_file_event_recover_each_truth(class_model) -> None:
    folder, days = class_model
    lifts = pd.read_csv(folder / "model" / "lifts.csv").set_index("event")
    occ = pd.read_csv(folder / "model" / "occurrences.csv")
    history = days[days.year <= 2023]
    for cls, truth in CLASS_TRUTH.items():
        row = lifts.loc[f"closure ({cls})"]
        assert row["low_pct"] <= truth * 100 <= row["high_pct"], (cls, row.to_dict())
        assert row["lift_pct"] == pytest.approx(truth * 100, abs=3.0), cls
        assert (occ["event"] == f"closure ({cls})").sum() == sum(_class_of(d) == cls for d in history)


def test_the_plan_gives_each_future_file_row_its_own_class_lift(class_model) -> None:
    folder, days = class_model
    plan = make_plan(evcal.load_model(folder / "model"), "2024-01-01", "2024-12-31", n_sims=0)
    t = plan.table.set_index("date")
    lifts = pd.read_csv(folder / "model" / "lifts.csv").set_index("event")["lift_pct"]
    for day in days[days.year == 2024]:
        col = f"lift:closure ({_class_of(day)})"
        assert t.loc[day, col] / t.loc[day, "base"] == pytest.approx(lifts[col[5:]] / 100, abs=1e-6)
    # the rows stop on 2024-11-13: one note for the entry, not one per weekday class
    assert [n for n in plan.notes if "closures.csv" in n] == [
        "closure: closures.csv lists dates up to 2024-11-13 (row 37) and the plan runs to 2024-12-31, so the "
        "plan has no closure after 2024-11-13; add the later dates to the file and plan again"]


# ------------------------------------------------- (c) dip_after on a file event, through fit and plan

DIP_PROMOS = [(f"{y}-{m:02d}-{d:02d}", f"{y}-{m:02d}-{d + 6:02d}") for y in range(2016, 2025)
              for m, d in ((3, 7), (6, 10), (10, 3))]  # invented promotion weeks, three a year


@pytest.fixture(scope="module")
def dip_model(tmp_path_factory):
    folder = tmp_path_factory.mktemp("dips")
    (folder / "promos.csv").write_text("start,end\n" + "".join(f"{s},{e}\n" for s, e in DIP_PROMOS))
    hist = [(s, e) for s, e in DIP_PROMOS if s < "2024"]
    after = [(str(pd.Timestamp(e).date() + dt.timedelta(days=1)), str(pd.Timestamp(e).date()
              + dt.timedelta(days=7))) for _, e in hist]
    _fit(folder, _invented_daily("2016-01-01", "2023-12-31", [(_days(hist), 0.40), (_days(after), -0.15)]),
         "name: invented\nevents:\n  - name: promo\n    when: {file: promos.csv}\n    dip_after: 7\n")
    return folder


def test_a_file_event_with_a_dip_recovers_gross_and_dip(dip_model) -> None:
    """Invented truth: +40 % on the file's weeks, -15 % on the 7 days after each."""
    lifts = pd.read_csv(dip_model / "model" / "lifts.csv").set_index("event")
    for event, truth in (("promo", 40.0), ("promo (dip after)", -15.0)):
        row = lifts.loc[event]
        assert row["low_pct"] <= truth <= row["high_pct"], (event, row.to_dict())
        assert row["lift_pct"] == pytest.approx(truth, abs=2.0)


def test_the_plan_puts_the_dip_after_each_future_row_and_notes_the_file_once(dip_model) -> None:
    """2024's rows get the promotion and the 7 days after it the dip; past the last row (2024-10-09) one
    note for the event, not a second one for its dip (main: two notes, one for 'promo (dip after)')."""
    plan = make_plan(evcal.load_model(dip_model / "model"), "2024-01-01", "2024-12-31", n_sims=0)
    t = plan.table.set_index("date")
    want = _days([(s, e) for s, e in DIP_PROMOS if s > "2024"])
    assert list(t.index[t["lift:promo"] > 0]) == list(want)
    dip = t.index[t["lift:promo (dip after)"] < 0]
    assert list(dip) == list(want + pd.Timedelta(days=7))
    notes = [n for n in plan.notes if "promos.csv" in n]
    assert notes == ["promo: promos.csv lists dates up to 2024-10-09 (row 28) and the plan runs to "
                     "2024-12-31, so the plan has no promo after 2024-10-09; add the later dates to the file "
                     "and plan again"]


# ------------------------------------------------- (d) a bridge rule pointing at a file event

def _fete_days() -> list[dt.date]:
    """Invented one-day local fetes, four a year 2016-2024, far apart (none next to another)."""
    rng = np.random.default_rng(21)
    return [dt.date(y, m, 1) + dt.timedelta(days=int(rng.integers(0, 27))) for y in range(2016, 2025)
            for m in (2, 5, 8, 11)]


def _bridges_by_hand(fetes: list[dt.date]) -> list[dt.date]:
    """With Saturday and Sunday the weekend and lone fetes: Thursday's is bridged by Friday, Tuesday's by
    Monday; no other weekday has a working day between it and the weekend."""
    shift = {3: 1, 1: -1}
    return sorted(d + dt.timedelta(days=shift[d.weekday()]) for d in fetes if d.weekday() in shift)


BRIDGE_CAL = ("name: invented\nevents:\n  - name: fete\n    when: {file: fetes.csv}\n"
              "  - name: fete-bridge\n    when: {bridge: fete}\n")


@pytest.fixture(scope="module")
def bridge_model(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bridge")
    fetes = _fete_days()
    (folder / "fetes.csv").write_text("start\n" + "".join(f"{d}\n" for d in fetes))
    past = [d for d in fetes if d.year <= 2023]
    effects = [(pd.DatetimeIndex(past), -0.40), (pd.DatetimeIndex(_bridges_by_hand(past)), -0.20)]
    _fit(folder, _invented_daily("2016-01-01", "2023-12-31", effects), BRIDGE_CAL)
    return folder, fetes


def test_bridge_days_of_a_file_event_are_the_days_by_hand(bridge_model) -> None:
    folder, fetes = bridge_model
    occ = load_calendar(folder / "cal.yaml").occurrences(2016, 2024)
    got = list(occ.loc[occ["event"] == "fete-bridge", "start"].dt.date)
    assert got == _bridges_by_hand(fetes) and len(got) >= 8


def test_a_bridge_of_a_file_event_is_fitted_and_planned(bridge_model) -> None:
    """Invented truth: fetes -40 %, their bridge days -20 %; 2024's bridge days come from 2024's rows."""
    folder, fetes = bridge_model
    lifts = pd.read_csv(folder / "model" / "lifts.csv").set_index("event")
    for event, truth in (("fete", -40.0), ("fete-bridge", -20.0)):
        row = lifts.loc[event]
        assert row["low_pct"] <= truth <= row["high_pct"], (event, row.to_dict())
        assert row["lift_pct"] == pytest.approx(truth, abs=3.0)
    plan = make_plan(evcal.load_model(folder / "model"), "2024-01-01", "2024-12-31", n_sims=0)
    t = plan.table.set_index("date")
    want = [d for d in _bridges_by_hand(fetes) if d.year == 2024]
    assert [d.date() for d in t.index[t["lift:fete-bridge"] < 0]] == want


def test_a_bridge_pointing_at_a_misspelt_file_event_is_one_line(tmp_path) -> None:
    (tmp_path / "fetes.csv").write_text("start\n2024-05-09\n")
    path = tmp_path / "cal.yaml"
    path.write_text(BRIDGE_CAL.replace("{bridge: fete}", "{bridge: fetes}"))
    assert_one_problem(path, 6, "events[fete-bridge].when.bridge",
                       "'fetes' is not an event of this calendar; did you mean 'fete'?")


# ------------------------------------------------- (b) the coverage note in panel plans

def test_a_panel_plan_past_the_files_last_row_notes_it_once(tmp_path) -> None:
    """Two invented weekly stores with the same promotion file (rows to 2024-10-13): a panel plan to the end
    of 2025 says once, as the single-series plan does, that the file stops (main: no note)."""
    from evcal.panel import fit_panel

    rows = list(DIP_PROMOS)
    (tmp_path / "promos.csv").write_text("start,end\n" + "".join(f"{s},{e}\n" for s, e in rows))
    (tmp_path / "cal.yaml").write_text("name: invented\nevents:\n  - name: promo\n"
                                       "    when: {file: promos.csv}\n")
    frames = []
    for k, store in enumerate(("north", "south")):
        daily = _invented_daily("2016-01-04", "2023-12-31", [(_days(rows[:24]), 0.25)], seed=k)
        weekly = daily.set_index("date")["value"].resample("W-SUN").sum().reset_index()
        frames.append(weekly.assign(store=store))
    fit_panel(pd.concat(frames), tmp_path / "cal.yaml", ["store"], out=tmp_path / "panel")
    out = tmp_path / "plan.csv"
    result = RUN.invoke(app, ["plan", str(tmp_path / "panel"), "--from", "2024-01-01", "--to", "2025-12-31",
                              "--sims", "0", "--out", str(out)])
    assert result.exit_code == 0, result.output
    note = ("Note: promo: promos.csv lists dates up to 2024-10-09 (row 28) and the plan runs to 2025-12-28, "
            "so the plan has no promo after 2024-10-09; add the later dates to the file and plan again")
    assert " ".join(result.output.split()).count(note) == 1, result.output
