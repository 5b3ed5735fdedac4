"""A panel plan as a workbook (issue 18 item 7): ``evcal plan PANEL_DIR ... --out plan.xlsx``.

One Plan sheet (keys first, the events' labels as headers over a hidden row of plan.csv's codes,
whole-unit formats, a total row) and a Notes sheet; with a panel target the sheet's first line says how
it was allocated. The total row is checked by LibreOffice Calc itself (one start for the file, the
recalculating profile of tests/test_workbook_planner.py; skipped when soffice is missing). Also
``--week-labels iso`` on a panel plan and ``--out -`` naming stdout in its last line.

Invented data: tests/test_panel.py's made-up Fernhollow products (weekly 2021-2023 with known lifts).
"""

from __future__ import annotations

import datetime
import re
from pathlib import Path

import pandas as pd
import pytest
from openpyxl import load_workbook
from test_panel import CAL, _panel_frame
from test_workbook_planner import recalculated
from typer.testing import CliRunner

from evcal.cli import app
from evcal.panel import fit_panel

KEYS = ["family", "product"]
runner = CliRunner()


@pytest.fixture(scope="module")
def panel_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("pbook") / "m"
    fit_panel(_panel_frame(n_items=3), CAL, KEYS, out=out)
    return out


def _plan(panel_dir: Path, out: Path | str, *extra: str):
    return runner.invoke(app, ["plan", str(panel_dir), "--from", "2024-01-01", "--to", "2024-12-31",
                               "--sims", "50", "--out", str(out), *extra])


def _rows(path: Path, data_only: bool = False) -> list[list]:
    ws = load_workbook(path, data_only=data_only)["Plan"]
    return [[c.value for c in row] for row in ws.iter_rows()]


@pytest.fixture(scope="module")
def books(panel_dir: Path, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    tmp = tmp_path_factory.mktemp("books")
    made = {}
    for name, extra in (("plain", ()), ("total", ("--total", "48000", "--round"))):
        res = _plan(panel_dir, tmp / f"{name}.xlsx", *extra)
        assert res.exit_code == 0, res.output
        made[name] = tmp / f"{name}.xlsx"
        made[name + ".csv"] = tmp / f"{name}.csv"
        assert _plan(panel_dir, made[name + ".csv"], *extra).exit_code == 0
    return made


def test_panel_plan_workbook_keys_first_labels_whole_units_total_row(books: dict[str, Path]) -> None:
    # fails on main: exit 2, "--out plan.xlsx: a panel plan is one long table; write it as CSV"
    wb = load_workbook(books["plain"])
    assert wb.sheetnames == ["Plan", "Notes"]
    ws = wb["Plan"]
    rows = _rows(books["plain"])
    assert rows[0][0].startswith("Each series is planned by its own model; no target")
    codes, header = rows[1], rows[2]
    assert ws.row_dimensions[2].hidden and not ws.row_dimensions[3].hidden
    assert codes[:3] == ["family", "product", "date"]  # keys first
    assert "lift:easter-run" in codes and "lift:easter-run" not in header
    csv = pd.read_csv(books["plain.csv"])
    assert codes == list(csv.columns)  # the same columns as plan.csv, in its order
    plan_col = codes.index("plan")
    assert ws.cell(4, plan_col + 1).number_format == "#,##0"  # whole units shown
    assert ws.cell(4, codes.index("date") + 1).is_date
    data = rows[3:-1]
    assert len(data) == len(csv)
    assert [r[plan_col] for r in data] == pytest.approx(csv["plan"].tolist(), abs=1e-6)
    assert rows[-1][0] == "Total" and rows[-1][plan_col] == f"=SUBTOTAL(109,{chr(65 + plan_col)}4:" \
        f"{chr(65 + plan_col)}{3 + len(csv)})"
    notes = [r[0] for r in load_workbook(books["plain"])["Notes"].iter_rows(values_only=True)]
    assert any("estimate" in str(n) for n in notes)


def test_panel_target_workbook_says_how_it_was_allocated(books: dict[str, Path]) -> None:
    rows = _rows(books["total"])
    assert "the target 48,000 is allocated over the 3 series in proportion to each series' own model " \
           "plan" in rows[0][0]
    plan_col = rows[1].index("plan")
    values = [r[plan_col] for r in rows[3:-1]]
    assert all(isinstance(v, int) for v in values) and sum(values) == 48_000  # --round: whole units


def test_calc_totals_the_panel_plan_and_each_series_adds_up(books: dict[str, Path], tmp_path: Path) -> None:
    # LibreOffice Calc computes the total row itself (SUBTOTAL of every row when nothing is filtered)
    done = recalculated([books["total"]], tmp_path)
    rows = _rows(done["total.xlsx"], data_only=True)
    plan_col, base_col = rows[1].index("plan"), rows[1].index("base")
    assert rows[-1][plan_col] == pytest.approx(48_000)
    assert rows[-1][base_col] == pytest.approx(sum(r[base_col] for r in rows[3:-1]))


def test_panel_week_labels_in_csv_and_xlsx(panel_dir: Path, tmp_path: Path) -> None:
    # fails on main: exit 2, "--week-labels: panel plans are written without week labels for now"
    for name in ("plan.csv", "plan.xlsx"):
        res = _plan(panel_dir, tmp_path / name, "--week-labels", "iso")
        assert res.exit_code == 0, res.output
    table = pd.read_csv(tmp_path / "plan.csv")
    assert list(table.columns[:4]) == ["family", "product", "date", "iso_week"]
    for date, label in zip(table["date"], table["iso_week"], strict=True):
        # outside check: Python's ISO calendar puts each label's Sunday on the row's date
        assert re.fullmatch(r"\d{4}-W\d{2}", label)
        assert datetime.date.fromisocalendar(int(label[:4]), int(label[6:]), 7).isoformat() == date
    assert table.loc[table["date"] == "2024-01-07", "iso_week"].unique().tolist() == ["2024-W01"]
    rows = _rows(tmp_path / "plan.xlsx")
    assert rows[1][:4] == ["family", "product", "date", "iso_week"]
    assert [r[3] for r in rows[3:-1]] == table["iso_week"].tolist()


def test_panel_plan_to_stdout_names_stdout_in_its_last_line(panel_dir: Path) -> None:
    # fails on main: the last line names a temporary file ("wrote /tmp/evcal-stdout-.../plan.csv (...)")
    res = _plan(panel_dir, "-")
    assert res.exit_code == 0, res.stderr
    assert res.stderr.strip().splitlines()[-1] == "wrote stdout (156 rows)"
    assert res.stdout.startswith("family,product,date,base,plan")
    assert "evcal-stdout" not in res.stderr + res.stdout


def test_totals_help_says_both_layouts() -> None:
    res = runner.invoke(app, ["plan", "--help"], terminal_width=200)
    text = " ".join(res.output.replace("│", " ").split())
    assert "CSV of targets: year,total; panels: key columns, total, optional year." in text


def test_a_panel_workbook_is_replaced_by_the_next_plan(books: dict[str, Path]) -> None:
    # fails on main: exit 2, "this file was not written by evcal and would be replaced" (its Plan and
    # Notes sheets were not among the workbooks evcal.outputs recognises as its own)
    from evcal.outputs import file_kind

    assert file_kind(books["plain"]) == "plan"


def test_a_labelled_panel_plan_reads_back_into_the_panel_report(panel_dir: Path, tmp_path: Path) -> None:
    """Before: the panel report read iso_week as a number and refused the plan (exit 2)."""
    out = tmp_path / "plan.csv"
    assert _plan(panel_dir, out, "--week-labels", "iso").exit_code == 0
    res = runner.invoke(app, ["report", str(panel_dir), "--plan", str(out), "-o", str(tmp_path / "r.html")])
    assert res.exit_code == 0, res.output
