"""The Excel workbook opens with openpyxl, with real numbers, real dates and a frozen header.

Data here is invented (a few weeks of a made-up garden-centre plan), written in
the shapes of the output contract (plan.csv, lifts.csv, profile.csv,
occurrences.csv).
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook

from evcal.report import write_workbook
from evcal.report.model_folder import read_plan_csv


def invented_frames(tmp_path: Path) -> dict[str, pd.DataFrame]:
    plan_csv = tmp_path / "plan.csv"
    pd.DataFrame(
        {
            "date": ["2027-03-21", "2027-03-28", "2027-04-04"],
            "base": [900.5, 940.0, 960.25],
            "plan": [900.5, 1240.0, 1100.25],
            "low": [800.0, 1100.0, 990.0],
            "high": [1010.0, 1390.0, 1230.0],
            "lift:spring-weekend": [0.0, 300.0, 140.0],
            "assumptions": ["", "", "autumn-fair: assumed +15%"],
        }
    ).to_csv(plan_csv, index=False)
    plan = read_plan_csv(plan_csv)  # as the CLI would read it: dates parsed, numbers as floats
    lifts = pd.DataFrame(
        {
            "event": ["spring-weekend", "new-year-sale"],
            "lift_pct": [31.5, np.nan],
            "low_pct": [24.0, np.nan],
            "high_pct": [39.6, np.nan],
            "units_per_occurrence": [410.0, np.nan],
            "identifiable": [True, False],
            "note": ["", "always in week 1"],
        }
    )
    profile = pd.DataFrame({"period": np.arange(1, 53), "index": np.linspace(60, 140, 52)})
    occurrences = pd.DataFrame(
        {
            "event": ["spring-weekend", "spring-weekend"],
            "start": ["2025-04-14", "2026-03-30"],  # ISO strings, as read from the CSV
            "end": ["2025-04-21", "2026-04-06"],
            "added_units": [390.2, 401.0],
            "added_pct": [32.0, 31.1],
        }
    )
    return {"plan": plan, "lifts": lifts, "profile": profile, "occurrences": occurrences}


@pytest.fixture()
def book(tmp_path: Path):
    frames = invented_frames(tmp_path)
    out = write_workbook(tmp_path / "out" / "plan.xlsx", **frames)
    return load_workbook(out), frames, out


def plan_rows(ws) -> tuple[list[str], list[tuple]]:
    """The Plan sheet's codes (its hidden row, plan.csv's column names) and its periods' cells.

    The sheet starts with the target block (issue 18: a target a planner edits) and ends with a total row.
    """
    rows = list(ws.iter_rows())
    at = next(i for i, r in enumerate(rows) if r[0].value == "date")
    return [c.value for c in rows[at]], [r for r in rows[at + 2:] if r[0].value != "Total"]


def test_sheets_and_frozen_header(book) -> None:
    wb, _, _ = book
    assert wb.sheetnames[:4] == ["Plan", "Lifts", "Seasonal index", "Past occurrences"]
    for name in wb.sheetnames[1:4]:
        assert wb[name].freeze_panes == "A2"
    # the Plan sheet freezes below its header row (after the target block): the date column stays too
    assert wb["Plan"].freeze_panes == "B5"


def test_numbers_are_numbers_and_dates_are_dates(book) -> None:
    wb, frames, _ = book
    ws = wb["Plan"]
    header, rows = plan_rows(ws)
    assert header[:len(frames["plan"].columns)] == list(frames["plan"].columns)
    col = {name: i for i, name in enumerate(header)}
    assert len(rows) == 3
    for row in rows:
        date_cell = row[col["date"]]
        assert isinstance(date_cell.value, dt.datetime)
        assert date_cell.number_format == "yyyy-mm-dd"
        for name in ("base", "plan", "low", "high", "lift:spring-weekend"):
            # the spread amounts are formulas (model value x factor); the model's own values are numbers
            assert str(row[col[name]].value).startswith("=")
            assert isinstance(row[col[f"model:{name}"]].value, int | float)
    assert rows[1][col["date"]].value == dt.datetime(2027, 3, 28)
    assert sum(r[col["model:plan"]].value for r in rows) == pytest.approx(900.5 + 1240.0 + 1100.25)
    # an empty assumption is an empty cell; a real one stays text
    assert rows[0][col["assumptions"]].value is None
    assert rows[2][col["assumptions"]].value == "autumn-fair: assumed +15%"


def test_lifts_occurrences_and_profile_types(book) -> None:
    wb, _, _ = book
    lifts = list(wb["Lifts"].iter_rows(min_row=2, values_only=True))
    assert lifts[0][1] == pytest.approx(0.315) and lifts[0][5] is True  # 31.5 % in a percent format
    # a lift the history cannot identify is left empty, not written as text "nan"
    assert lifts[1][1] is None and lifts[1][5] is False
    occ = wb["Past occurrences"]
    assert isinstance(occ["B2"].value, dt.datetime) and occ["B2"].number_format == "yyyy-mm-dd"
    assert occ["C3"].value == dt.datetime(2026, 4, 6)
    assert isinstance(occ["D2"].value, float) and occ["D2"].value == pytest.approx(390.2)
    prof = list(wb["Seasonal index"].iter_rows(min_row=2, values_only=True))
    assert len(prof) == 52 and all(isinstance(v, int | float) for r in prof for v in r)
    assert np.mean([r[1] for r in prof]) == pytest.approx(100.0)


def test_column_widths_fit_the_header(book) -> None:
    wb, _, _ = book
    for ws in (wb["Lifts"], wb["Past occurrences"]):
        for cell in ws[1]:
            width = ws.column_dimensions[cell.column_letter].width
            assert width >= len(str(cell.value)), cell.value
            assert width <= 60


def test_plan_with_datetime_index(tmp_path: Path) -> None:
    plan = pd.DataFrame(
        {"base": [1.0, 2.0], "plan": [1.5, 2.5], "low": [1.0, 2.0], "high": [2.0, 3.0]},
        index=pd.to_datetime(["2027-01-31", "2027-02-28"]),
    )
    out = write_workbook(tmp_path / "p.xlsx", plan, pd.DataFrame(), pd.DataFrame(), pd.DataFrame())
    _, rows = plan_rows(load_workbook(out)["Plan"])
    assert rows[1][0].value == dt.datetime(2027, 2, 28)


def test_failed_write_leaves_nothing(tmp_path: Path) -> None:
    class Unprintable:
        def __str__(self) -> str:
            raise RuntimeError("cannot print")

    bad = pd.DataFrame({"date": ["2027-01-03"], "plan": [Unprintable()]})
    target = tmp_path / "plan.xlsx"
    with pytest.raises(RuntimeError):
        write_workbook(target, bad, pd.DataFrame(), pd.DataFrame(), pd.DataFrame())
    assert list(tmp_path.iterdir()) == []


def test_workbook_from_model_folder_files(tmp_path: Path) -> None:
    # The invented weekly model of tests/test_report.py, read back from its files.
    from test_report import write_invented_model

    from evcal.report import workbook_from_files

    paths = write_invented_model(tmp_path / "model")
    out = workbook_from_files(tmp_path / "plan.xlsx", paths["model"], paths["plan"])
    wb = load_workbook(out)
    plan = pd.read_csv(paths["plan"])
    _, rows = plan_rows(wb["Plan"])
    assert len(rows) == len(plan)
    assert isinstance(rows[0][0].value, dt.datetime)
    lifts_header = [c.value for c in wb["Lifts"][1]]
    assert lifts_header[:7] == [
        "event",
        "lift_pct",
        "low_pct",
        "high_pct",
        "units_per_occurrence",
        "identifiable",
        "note",
    ]
    occ = wb["Past occurrences"]
    assert isinstance(occ["B2"].value, dt.datetime)
    assert occ.max_row == len(pd.read_csv(paths["model"] / "occurrences.csv")) + 1


def test_every_percentage_column_is_formatted_as_a_percentage(tmp_path: Path) -> None:
    # the net lift's columns (events with dip periods) are percentages like lift_pct: before, only four
    # named columns were, and net_pct showed as units ("12.5" in a units format)
    frames = invented_frames(tmp_path)
    lifts = frames["lifts"].assign(net_pct=12.5, net_low_pct=12.0, net_high_pct=13.0)
    out = write_workbook(tmp_path / "net.xlsx", **{**frames, "lifts": lifts})
    ws = load_workbook(out)["Lifts"]
    header = [c.value for c in ws[1]]
    for name in ("lift_pct", "net_pct", "net_low_pct", "net_high_pct"):
        cell = ws.cell(row=2, column=header.index(name) + 1)
        assert cell.number_format == "0.0%", (name, cell.number_format)  # a fraction in a percent format
