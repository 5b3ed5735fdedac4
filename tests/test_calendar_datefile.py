"""Dates from a CSV file: ``when: {file: ...}`` (evcal.calendar.datefile).

Sources: the real dates are the `holidays` library's bank holidays of England and of Scotland
(``holidays.GB(subdiv=...)``), written to a CSV with a region column; the lift test's series and
promotion dates are invented (named so below) with a known +30 % lift.
"""

from __future__ import annotations

import datetime as dt
import hashlib

import hypothesis.strategies as st
import numpy as np
import pandas as pd
import pytest
from calendar_problems import assert_one_problem
from hypothesis import given, settings
from typer.testing import CliRunner

import evcal
from evcal.calendar import load_calendar
from evcal.calendar.datefile import saved_text
from evcal.cli import app
from evcal.errors import CalendarError
from evcal.plan.build import make_plan

holidays = pytest.importorskip("holidays")

YEARS = range(2015, 2031)


def _bank_holiday_csv(path) -> dict[str, list[dt.date]]:
    """The `holidays` library's GB bank holidays of England and Scotland 2015-2030, one row per day."""
    days = {sub: sorted(holidays.GB(subdiv=sub, years=YEARS)) for sub in ("ENG", "SCT")}
    rows = [(sub, d) for sub, ds in days.items() for d in ds]
    rows.sort(key=lambda r: (r[1], r[0]))
    path.write_text("Region, start ,end\n" + "".join(f"{s},{d},{d}\n" for s, d in rows))
    return days


@pytest.mark.parametrize("region", ["ENG", "SCT"])
def test_rows_of_one_region_are_the_holidays_library_dates(tmp_path, region) -> None:
    """Source: holidays.GB(subdiv=ENG/SCT), 2015-2030; the filter keeps one region's rows exactly."""
    days = _bank_holiday_csv(tmp_path / "bank-holidays.csv")
    (tmp_path / "cal.yaml").write_text(
        f"name: t\nevents:\n  - name: bank\n    when: {{file: {{path: bank-holidays.csv, where: "
        f"{{region: {region}}}}}}}\n")
    occ = load_calendar(tmp_path / "cal.yaml").occurrences(2015, 2030)
    assert list(occ["start"].dt.date) == days[region]
    assert (occ["end"] == occ["start"]).all() and (occ["strength"] == 1.0).all()


def test_the_file_is_never_modified_and_is_kept_with_the_calendar(tmp_path) -> None:
    csv = tmp_path / "bank-holidays.csv"
    days = _bank_holiday_csv(csv)
    before = (hashlib.sha256(csv.read_bytes()).hexdigest(), csv.stat().st_mtime_ns)
    (tmp_path / "cal.yaml").write_text("name: t\nevents:\n  - name: bank\n    when: {file: {path: "
                                       "bank-holidays.csv, where: {region: SCT}}}\n")
    cal = load_calendar(tmp_path / "cal.yaml")
    assert (hashlib.sha256(csv.read_bytes()).hexdigest(), csv.stat().st_mtime_ns) == before
    csv.unlink()  # the saved text (what a model folder keeps) needs no file
    again = load_calendar(cal.text)
    assert list(again.occurrences(2015, 2030)["start"].dt.date) == days["SCT"]


def _load_one(tmp_path, csv_text: str | None, when: str, extra: str = ""):
    if csv_text is not None:
        (tmp_path / "dates.csv").write_text(csv_text)
    path = tmp_path / "cal.yaml"
    path.write_text(f"name: t\nevents:\n  - name: e\n    when: {when}\n{extra}")
    return path


GOOD = "region,start,end\nnorth,2024-02-12,2024-02-16\nsouth,2024-02-19,2024-02-23\n"


@pytest.mark.parametrize("csv_text, when, extra, words", [
    (None, "{file: dates.csv}", "", "dates.csv: no such file in the calendar file's folder"),
    ("region,first,end\nnorth,2024-02-12,2024-02-16\n", "{file: dates.csv}", "",
     "dates.csv has no column 'start' (its columns: region, first, end)"),
    (GOOD, "{file: {path: dates.csv, where: {regoin: north}}}", "",
     "has no column 'regoin' to keep rows by (where: {regoin: north}); did you mean 'region'?"),
    ("start,end\n2024-02-12,2024-02-16\n2024-02-30,2024-03-02\n", "{file: dates.csv}", "",
     "dates.csv row 3, column 'start': 2024-02-30 is not a date (February 2024 has 29 days)"),
    ("start,end\n2024-02-12,2024-02-16\n2024-03-12,12/03/2024\n", "{file: dates.csv}", "",
     "dates.csv row 3, column 'end': '12/03/2024' is not a date; write it as YYYY-MM-DD"),
    ("start,end\n2024-02-12,2024-02-06\n", "{file: dates.csv}", "",
     "dates.csv row 2: end 2024-02-06 is before start 2024-02-12; end must be on or after start"),
    ("start,end\n2024-06-01,2024-06-05\n2024-01-01,2024-01-02\n2024-06-04,2024-06-08\n",
     "{file: dates.csv}", "",
     "dates.csv rows 2 and 4 overlap (2024-06-01 to 2024-06-05 and 2024-06-04 to 2024-06-08)"),
    (GOOD, "{file: {path: dates.csv, where: {region: nort}}}", "",
     "dates.csv has no row with region = 'nort'; did you mean 'north'?"),
    ("start,end\n", "{file: dates.csv}", "", "dates.csv has no rows; add one row per occurrence"),
    ("", "{file: dates.csv}", "", "dates.csv has no header row"),
    ("start,strength\n2024-02-12,-1\n", "{file: dates.csv}", "",
     "dates.csv row 2, column 'strength': '-1' is not a strength"),
    ("start,end\n2024-02-12,2024-02-16,x\n", "{file: dates.csv}", "",
     "dates.csv row 2: 3 cells but 2 columns"),
    ("start,start\n2024-02-12,2024-02-16\n", "{file: dates.csv}", "", "has the column 'start' twice"),
])
def test_bad_date_file_is_one_line_with_calendar_line_csv_row(tmp_path, csv_text, when, extra, words) -> None:
    path = _load_one(tmp_path, csv_text, when, extra)
    assert_one_problem(path, 4, "events[e].when.file", words)


@pytest.mark.parametrize("when, extra, line, key, words", [
    ("{file: ''}", "", 4, "events[e].when.file.path", "`file` names no file"),
    ("{file: {path: dates.csv, where: north}}", "", 4, "events[e].when.file.where", "is not a filter"),
    ("{file: dates.csv}", "    years: {from: 2020}\n", 5, "events[e].years",
     "a `file` rule lists its own years"),
])
def test_bad_file_key_is_one_line(tmp_path, when, extra, line, key, words) -> None:
    path = _load_one(tmp_path, GOOD, when, extra)
    assert_one_problem(path, line, key, words)


def test_many_bad_rows_are_counted_not_listed(tmp_path) -> None:
    rows = "".join(f"2024-{m:02d}-31\n" for m in (2, 4, 6, 9, 11)) + "2025-02-30\n2025-04-31\n"
    path = _load_one(tmp_path, "start\n" + rows, "{file: dates.csv}")
    with pytest.raises(CalendarError) as err:
        load_calendar(path)
    assert len(err.value.problems) == 5
    assert err.value.problems[-1].endswith("(and 2 more rows)")


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 40), st.integers(1, 9)), min_size=1, max_size=12))
def test_rows_become_the_occurrences_exactly(gaps) -> None:
    """Any rows that do not overlap, in any order: one occurrence per row, same start, end, strength."""
    day, rows = dt.date(2020, 1, 1), []
    for gap, length in gaps:
        start = day + dt.timedelta(days=gap)
        day = start + dt.timedelta(days=length)
        rows.append((start, day - dt.timedelta(days=1), 0.5 + gap / 10))
    text = "end,strength,start\n" + "".join(f"{e},{k},{s}\n" for s, e, k in reversed(rows))
    head = "name: t\nevents:\n  - {name: e, when: {file: d.csv}}\n"
    cal = load_calendar(head + saved_text({"d.csv": text}))
    occ = cal.occurrences(2019, 2022)
    assert [(r.start.date(), r.end.date(), r.strength) for r in occ.itertuples()] == rows


# ----------------------------------------------------------- an invented series with a known lift

PROMOS = [  # invented promotion weeks of an invented retailer, north and south stores
    ("north", "2016-03-07", "2016-03-13"), ("north", "2016-09-12", "2016-09-18"),
    ("north", "2017-04-03", "2017-04-09"), ("north", "2017-10-16", "2017-10-22"),
    ("north", "2018-02-19", "2018-02-25"), ("north", "2018-08-06", "2018-08-12"),
    ("north", "2019-05-13", "2019-05-19"), ("north", "2019-11-04", "2019-11-10"),
    ("north", "2020-03-02", "2020-03-08"), ("north", "2020-09-21", "2020-09-27"),
    ("north", "2021-06-07", "2021-06-13"), ("north", "2021-10-04", "2021-10-10"),
    ("north", "2022-02-07", "2022-02-13"), ("north", "2022-07-18", "2022-07-24"),
    ("north", "2023-04-17", "2023-04-23"), ("north", "2023-09-04", "2023-09-10"),
    ("north", "2024-03-11", "2024-03-17"), ("north", "2024-10-07", "2024-10-13"),
    ("south", "2024-05-06", "2024-05-12"),
]
TRUE_LIFT = 0.30  # invented


@pytest.fixture(scope="module")
def promo_model(tmp_path_factory):
    folder = tmp_path_factory.mktemp("promo")
    (folder / "promotions.csv").write_text("store_region,start,end\n" + "".join(
        f"{r},{s},{e}\n" for r, s, e in PROMOS))
    (folder / "cal.yaml").write_text(
        "name: invented retailer\nevents:\n  - name: promo-week\n"
        "    when: {file: {path: promotions.csv, where: {store_region: north}}}\n")
    days = pd.date_range("2016-01-01", "2023-12-31", freq="D")
    rng = np.random.default_rng(3)
    weekday = np.array([0.0, 0.02, 0.02, 0.05, 0.15, 0.3, -0.2])[days.day_of_week.to_numpy()]
    log_y = np.log(500) + weekday + 0.15 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365.25)
    log_y += rng.normal(0, 0.05, len(days))
    for region, s, e in PROMOS:
        if region == "north":
            log_y[(days >= s) & (days <= e)] += np.log1p(TRUE_LIFT)
    history = pd.DataFrame({"date": days, "value": np.exp(log_y)})
    (folder / "history.csv").write_text(history.to_csv(index=False))
    result = CliRunner().invoke(app, ["fit", str(folder / "history.csv"), "-c", str(folder / "cal.yaml"),
                                      "--errors", "ols", "--out", str(folder / "model")])
    assert result.exit_code == 0, result.output
    return folder


def test_invented_promotion_lift_from_a_file_is_recovered(promo_model) -> None:
    """Invented truth: +30 % on the 16 north promotion weeks of 2016-2023 (the file also lists 2024)."""
    lifts = pd.read_csv(promo_model / "model" / "lifts.csv").set_index("event")
    row = lifts.loc["promo-week"]
    assert row["identifiable"] == "yes"
    assert row["low_pct"] <= 30.0 <= row["high_pct"], row.to_dict()
    assert row["lift_pct"] == pytest.approx(30.0, abs=3.0)
    occ = pd.read_csv(promo_model / "model" / "occurrences.csv")
    assert (occ["event"] == "promo-week").sum() == 16


def test_plan_uses_the_files_future_rows_without_the_file(promo_model, tmp_path) -> None:
    """2024's north rows (11-17 March, 7-13 October) are planned; the south row is not; the file may go.

    The horizon ends on the file's last north day, so no note (the next test runs past it).
    """
    (promo_model / "promotions.csv").rename(promo_model / "promotions.kept")
    try:
        plan = make_plan(evcal.load_model(promo_model / "model"), "2024-01-01", "2024-10-13", n_sims=0)
    finally:
        (promo_model / "promotions.kept").rename(promo_model / "promotions.csv")
    t = plan.table.set_index("date")
    on = t["lift:promo-week"] > 0
    want = pd.date_range("2024-03-11", "2024-03-17").append(pd.date_range("2024-10-07", "2024-10-13"))
    assert list(t.index[on]) == list(want)
    fitted = pd.read_csv(promo_model / "model" / "lifts.csv").set_index("event").loc["promo-week", "lift_pct"]
    ratio = (t.loc[on, "lift:promo-week"] / t.loc[on, "base"]).to_numpy()
    assert ratio == pytest.approx(fitted / 100, abs=1e-6)
    assert not any("promotions.csv" in n for n in plan.notes)


def test_a_horizon_past_the_files_last_row_gets_a_note(promo_model, tmp_path) -> None:
    out = tmp_path / "plan.csv"
    result = CliRunner().invoke(app, ["plan", str(promo_model / "model"), "--from", "2024-01-01", "--to",
                                      "2025-12-31", "--sims", "0", "--out", str(out)])
    assert result.exit_code == 0, result.output
    note = ("promo-week: promotions.csv (rows with store_region = north) lists dates up to 2024-10-13 "
            "(row 19) and the plan runs to 2025-12-31, so the plan has no promo-week after 2024-10-13")
    assert note in result.output
