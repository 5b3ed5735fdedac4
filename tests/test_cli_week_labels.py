"""``evcal plan ... --week-labels iso`` (issue 18 item 3, the writer): an ISO week label column after
``date`` in the CSV and xlsx of a weekly plan, refused in one line for any other frequency.

The labels are checked against Python's own ISO calendar (``datetime.date.fromisocalendar``: the label's
Sunday is the row's date) and read back by evcal's reader. Histories are invented (a seasonal shop with
3 % noise).
"""

from __future__ import annotations

import datetime
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from test_workbook_planner import sheet_table
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.io import read_history

runner = CliRunner()
CAL = "name: invented shop (test)\nevents:\n  - {name: easter-week, when: {easter: 0}, before: 6}\n"


def _model(folder: Path, dates: pd.DatetimeIndex) -> Path:
    rng = np.random.default_rng(3)
    y = 500 * (1.0 + 0.3 * np.sin(2 * np.pi * dates.day_of_year / 365.25)) * np.exp(
        rng.normal(0, 0.03, len(dates)))
    pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": y}).to_csv(folder / "history.csv", index=False)
    (folder / "cal.yaml").write_text(CAL)
    evcal.fit(folder / "history.csv", folder / "cal.yaml", errors="ols").save(folder / "model")
    return folder / "model"


@pytest.fixture(scope="module")
def weekly(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return _model(tmp_path_factory.mktemp("weekly"), pd.date_range("2020-01-05", "2024-12-29", freq="W-SUN"))


def _plan(model: Path, out: Path, *extra: str):
    return runner.invoke(app, ["plan", str(model), "--from", "2026-12-01", "--to", "2027-12-31",
                               "--sims", "0", "-o", str(out), "--week-labels", "iso", *extra])


def test_weekly_plan_csv_has_iso_weeks_after_date(weekly: Path, tmp_path: Path) -> None:
    # main: "No such option: --week-labels"
    out = tmp_path / "plan.csv"
    res = _plan(weekly, out)
    assert res.exit_code == 0, res.output
    table = pd.read_csv(out)
    assert list(table.columns[:2]) == ["date", "iso_week"]
    assert all(re.fullmatch(r"\d{4}-W\d{2}", w) for w in table["iso_week"])
    # outside check: Python's ISO calendar puts each label's Sunday on the row's date
    for date, label in zip(table["date"], table["iso_week"], strict=True):
        year, week = int(label[:4]), int(label[6:])
        assert datetime.date.fromisocalendar(year, week, 7).isoformat() == date
    # the year's edge: Sunday 3 January 2027 ends ISO week 53 of 2026 (2026 begins on a Thursday)
    assert table.loc[table["date"] == "2027-01-03", "iso_week"].item() == "2026-W53"


def test_labels_read_back_as_the_same_weeks(weekly: Path, tmp_path: Path) -> None:
    out = tmp_path / "plan.csv"
    assert _plan(weekly, out).exit_code == 0
    table = pd.read_csv(out)
    by_label = read_history(table[["iso_week", "plan"]], date_col="iso_week", value_col="plan")
    by_date = read_history(table[["date", "plan"]], date_col="date", value_col="plan")
    assert by_label.freq == by_date.freq == "W-SUN"
    assert by_label.values.index.equals(by_date.values.index)


def test_weekly_plan_xlsx_has_the_column(weekly: Path, tmp_path: Path) -> None:
    out = tmp_path / "plan.xlsx"
    res = _plan(weekly, out)
    assert res.exit_code == 0, res.output
    # the Plan sheet's target rows come first; its table is keyed by the hidden row of plan.csv's codes
    sheet, _ = sheet_table(out, values=False)
    assert list(sheet.columns[:2]) == ["date", "iso_week"]
    assert sheet["iso_week"].iloc[0] == "2026-W49"  # week ending Sunday 6 December 2026


def test_monthly_plan_refused_in_one_line(tmp_path_factory: pytest.TempPathFactory, tmp_path: Path) -> None:
    monthly = _model(tmp_path_factory.mktemp("monthly"), pd.date_range("2018-01-31", "2024-12-31", freq="ME"))
    out = tmp_path / "plan.csv"
    res = _plan(monthly, out)
    assert res.exit_code == 2
    assert res.stderr == ("error: --week-labels iso: ISO week labels are for weekly plans whose weeks end on "
                          "Sunday (ISO weeks run Monday to Sunday); this plan is monthly; leave out "
                          "--week-labels\n")
    assert not out.exists()


def test_weeks_ending_saturday_refused(tmp_path_factory: pytest.TempPathFactory, tmp_path: Path) -> None:
    # a week ending Saturday straddles two ISO weeks: no label rather than one a day off
    saturday = _model(tmp_path_factory.mktemp("sat"), pd.date_range("2020-01-04", "2024-12-28", freq="W-SAT"))
    res = _plan(saturday, tmp_path / "plan.csv")
    assert res.exit_code == 2
    assert "this plan is weekly (week ending Saturday)" in res.stderr
    assert len(res.stderr.splitlines()) == 1


def test_unknown_kind_refused(weekly: Path, tmp_path: Path) -> None:
    res = runner.invoke(app, ["plan", str(weekly), "--from", "2027-01-01", "--to", "2027-12-31", "-o",
                              str(tmp_path / "p.csv"), "--week-labels", "us"])
    assert res.exit_code == 2
    assert res.stderr.startswith("error: --week-labels us: unknown kind of week label; use iso")


def test_a_labelled_plan_reads_back_into_the_report(weekly: Path, tmp_path: Path) -> None:
    """The round trip: a plan written with --week-labels iso is read by `evcal report --plan`.
    Before: "plan.csv: line 2: column iso_week: '2026-W53' is not a number" (exit 2)."""
    out = tmp_path / "plan.csv"
    assert _plan(weekly, out).exit_code == 0
    html = tmp_path / "r.html"
    res = runner.invoke(app, ["report", str(weekly), "--plan", str(out), "-o", str(html)])
    assert res.exit_code == 0, res.output
    assert "2027" in html.read_text(encoding="utf-8")
