"""The plan workbook a planner edits: a target cell, formulas that re-spread, a total row, readable headers.

The spreadsheet checks open the workbook in LibreOffice Calc (headless, Debian's libreoffice-calc-nogui),
after openpyxl changed the target cell, and read back what Calc computed. Calc does not recalculate an
.xlsx on load by default (its setting "Recalculation on File Load", Tools > Options > LibreOffice Calc >
Formula, stored as /org.openoffice.Office.Calc/Formula/Load OOXMLRecalcMode, default 1 "never" in
the installed registry, main.xcd): the test runs Calc with a fresh user profile whose setting is 0
("always recalculate"), so every formula is computed by Calc itself. Skipped when soffice is missing.

Plans here are invented (eight weeks of a made-up garden centre, a spring sale of known size), built
as :class:`evcal.plan.result.Plan` objects directly, so the truth of every spread is known.
"""

from __future__ import annotations

import datetime as dt
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook

from evcal.plan.result import Plan

WEEKS = pd.period_range("2027-03-01", periods=8, freq="W-SUN")
BASE = np.array([1000.0, 1010.0, 1030.0, 1050.0, 1040.0, 1060.0, 1080.0, 1100.0])  # invented
SALE = np.array([0.0, 0.0, 250.0, 300.0, 0.0, 0.0, 0.0, 0.0])  # invented: the spring sale's units
FACTOR = 0.9  # the model plan was spread to 90 % of itself by a target


def invented_plan(whole_units: bool = False, actuals: pd.DataFrame | None = None) -> Plan:
    base, sale = BASE * FACTOR, SALE * FACTOR
    plan = base + sale
    table = pd.DataFrame({"date": WEEKS.end_time.normalize(), "base": base, "plan": plan,
                          "low": plan * 0.9, "high": plan * 1.1, "lift:spring-sale": sale,
                          "assumptions": [""] * 8})
    if whole_units:
        from evcal.plan.spread import round_table

        total = int(round(plan.sum()))
        table = round_table(table, np.zeros(8, dtype=int), {0: total})
    target = float(table["plan"].sum())
    lifts = pd.DataFrame({"event": ["spring-sale"], "lift_pct": [26.1], "low_pct": [20.5],
                          "high_pct": [31.9], "identifiable": ["yes"], "label": ["Spring sale weekend"],
                          "note": [""]})
    profile = pd.DataFrame({"period": np.arange(1, 53), "index": np.linspace(60, 140, 52)})
    result = type("Invented", (), {"lifts": lifts, "profile": profile, "occurrences": pd.DataFrame(),
                                   "spec": None})()
    return Plan(table=table, periods=WEEKS, freq="W-SUN", label="end", events=["spring-sale"],
                assumptions={}, model_totals={2027: float((BASE + SALE).sum())}, target={2027: target},
                factors={2027: FACTOR}, full_years=[], last_year={}, average_share={},
                calendar_name="invented", interval_note="", target_total=target, result=result,
                whole_units=whole_units, actuals=actuals)


ACTUALS = pd.DataFrame({"date": pd.date_range("2027-01-03", periods=8, freq="W-SUN"),
                        "actual": [900.0, 950.0, 980.0, 1000.0, 990.0, 1005.0, 1010.0, 1020.0]})  # invented


def sheet_table(path: Path, values: bool) -> tuple[pd.DataFrame, dict]:
    """The Plan sheet as a frame keyed by the hidden codes row, and the target cells' values."""
    wb = load_workbook(path, data_only=values)
    ws = wb["Plan"]
    rows = [[c.value for c in row] for row in ws.iter_rows()]
    codes_at = next(i for i, r in enumerate(rows) if r[0] == "date")
    frame = pd.DataFrame(rows[codes_at + 2:], columns=rows[codes_at])
    targets = {name: ws[dn.attr_text.split("!")[1].replace("$", "")].value
               for name, dn in wb.defined_names.items()}
    return frame, targets


# ---------------------------------------------------------------- without a spreadsheet engine


def test_plan_sheet_has_a_named_target_readable_headers_codes_and_a_total_row(tmp_path: Path) -> None:
    # fails on main: no defined name (KeyError 'target'), headers were codes (lift:spring-sale)
    out = invented_plan().save(tmp_path / "plan.xlsx")
    wb = load_workbook(out)
    ws = wb["Plan"]
    assert "target" in wb.defined_names and "factor" in wb.defined_names
    assert ws["B1"].value == pytest.approx(float((BASE + SALE).sum() * FACTOR))
    rows = [[c.value for c in row] for row in ws.iter_rows()]
    codes_at = next(i for i, r in enumerate(rows) if r[0] == "date")
    assert ws.row_dimensions[codes_at + 1].hidden  # the codes of plan.csv stay, out of sight
    header = rows[codes_at + 1]
    assert "Spring sale weekend" in header and "lift:spring-sale" not in header
    plan_col = rows[codes_at].index("plan")
    assert str(rows[codes_at + 2][plan_col]).startswith("=")  # a formula, not a value
    assert rows[-1][0] == "Total" and str(rows[-1][plan_col]).startswith("=SUM(")
    cell = ws.cell(codes_at + 3, plan_col + 1)
    assert cell.number_format == "#,##0"  # whole units shown


def test_lift_intervals_are_percent_cells_and_the_season_has_dates(tmp_path: Path) -> None:
    # fails on main: 26.1 in a '0.0" %"' text-like format; no date beside the period number
    wb = load_workbook(invented_plan().save(tmp_path / "plan.xlsx"))
    lifts = wb["Lifts"]
    header = [c.value for c in lifts[1]]
    for name, pct in (("lift_pct", 26.1), ("low_pct", 20.5), ("high_pct", 31.9)):
        cell = lifts.cell(2, header.index(name) + 1)
        assert cell.value == pytest.approx(pct / 100) and cell.number_format == "0.0%"
    season = wb["Seasonal index"]
    assert [c.value for c in season[1]][:3] == ["period", "date", "index"]
    # week 1 of 2027 (its Thursday in 2027) ends Sunday 2027-01-10; week 10 ends 2027-03-14
    assert season["B2"].value == dt.datetime(2027, 1, 10)
    assert season["B11"].value == dt.datetime(2027, 3, 14)


def test_plan_read_back_from_csv_still_gets_a_target(tmp_path: Path) -> None:
    # the workbook from a model folder's files (no Plan object): one target, the plan's own total
    from evcal.plan.workbook import write_workbook

    plan = invented_plan().table
    wb = load_workbook(write_workbook(tmp_path / "p.xlsx", plan, pd.DataFrame(), pd.DataFrame(),
                                      pd.DataFrame()))
    assert wb["Plan"]["B1"].value == pytest.approx(plan["plan"].sum())
    assert "target" in wb.defined_names


# ---------------------------------------------------------------- LibreOffice recalculates

RECALC_ALWAYS = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema"
 xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse">
<value>0</value></prop></item>
</oor:items>
"""


def recalculated(files: list[Path], tmp: Path) -> dict[str, Path]:
    """Each workbook opened, recalculated and saved again by LibreOffice Calc (one start for all)."""
    soffice = shutil.which("soffice") or shutil.which("libreoffice")
    if soffice is None:
        pytest.skip("LibreOffice (soffice) is not installed")
    profile = tmp / "lo-profile"
    (profile / "user").mkdir(parents=True)
    (profile / "user" / "registrymodifications.xcu").write_text(RECALC_ALWAYS)
    out = tmp / "calc"
    subprocess.run([soffice, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--norestore",
                    "--convert-to", "xlsx", "--outdir", str(out), *map(str, files)],
                   check=True, capture_output=True, timeout=240)
    return {f.name: out / f.name for f in files}


def with_target(path: Path, new: float, name: str = "target") -> Path:
    wb = load_workbook(path)
    sheet, ref = wb.defined_names[name].attr_text.split("!")
    wb[sheet.strip("'")][ref.replace("$", "")] = new
    copy = path.with_name(f"changed-{path.name}")
    wb.save(copy)
    return copy


@pytest.fixture(scope="module")
def calc(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    tmp = tmp_path_factory.mktemp("calc")
    books = {"plain": invented_plan().save(tmp / "plain.xlsx"),
             "whole": invented_plan(whole_units=True).save(tmp / "whole.xlsx"),
             "ytd": invented_plan(actuals=ACTUALS).save(tmp / "ytd.xlsx")}
    files = [books["plain"], with_target(books["plain"], 12_000.0), books["whole"],
             with_target(books["whole"], 12_345.0), with_target(books["ytd"], 20_000.0)]
    done = recalculated(files, tmp)
    return {"plain": done["plain.xlsx"], "plain 12000": done["changed-plain.xlsx"],
            "whole": done["whole.xlsx"], "whole 12345": done["changed-whole.xlsx"],
            "ytd 20000": done["changed-ytd.xlsx"]}


def test_calc_opens_the_plan_as_written(calc: dict[str, Path]) -> None:
    table = invented_plan().table
    frame, _ = sheet_table(calc["plain"], values=True)
    plan = frame["plan"].iloc[:8].astype(float).to_numpy()
    assert plan == pytest.approx(table["plan"].to_numpy(), rel=1e-12)
    assert float(frame["plan"].iloc[8]) == pytest.approx(table["plan"].sum(), rel=1e-12)  # the total row


def test_a_new_target_respreads_every_period_by_its_share(calc: dict[str, Path]) -> None:
    # fails on main: the workbook has no target cell (KeyError 'target' in with_target)
    frame, targets = sheet_table(calc["plain 12000"], values=True)
    assert targets["target"] == 12_000.0
    rows = frame.iloc[:8]
    plan = rows["plan"].astype(float).to_numpy()
    model = BASE + SALE
    assert plan == pytest.approx(12_000.0 * model / model.sum(), rel=1e-12)  # each period's share x target
    assert rows["lift:spring-sale"].astype(float).to_numpy() == pytest.approx(12_000.0 * SALE / model.sum())
    parts = rows["base"].astype(float) + rows["lift:spring-sale"].astype(float)
    assert parts.to_numpy() == pytest.approx(plan, rel=1e-12)  # base plus lifts is still the plan
    assert float(frame["plan"].iloc[8]) == pytest.approx(12_000.0)  # the total row meets the target
    # the model plan beside stays as it was, unspread
    assert rows["model:plan"].astype(float).to_numpy() == pytest.approx(model, rel=1e-12)


def test_whole_units_open_as_the_csv_integers_and_stay_whole_after_a_change(calc: dict[str, Path]) -> None:
    written = invented_plan(whole_units=True).table
    frame, _ = sheet_table(calc["whole"], values=True)
    assert frame["plan"].iloc[:8].astype(float).tolist() == written["plan"].astype(float).tolist()
    frame, _ = sheet_table(calc["whole 12345"], values=True)
    plan = frame["plan"].iloc[:8].astype(float).to_numpy()
    assert (plan == np.round(plan)).all()
    model = BASE + SALE
    assert np.abs(plan - 12_345.0 * model / model.sum()).max() <= 0.5  # ROUND per period
    assert abs(plan.sum() - 12_345.0) <= 8 * 0.5  # the total may miss by at most half a unit a period
    assert (frame["low"].iloc[:8].astype(float) <= plan).all()
    assert (frame["high"].iloc[:8].astype(float) >= plan).all()


def test_actuals_first_and_the_rest_spread_to_target_less_actuals(calc: dict[str, Path]) -> None:
    frame, targets = sheet_table(calc["ytd 20000"], values=True)
    assert frame["actual"].iloc[:8].astype(float).tolist() == ACTUALS["actual"].tolist()
    assert frame["date"].iloc[0] == dt.datetime(2027, 1, 3)
    rest = frame.iloc[8:16]
    plan = rest["plan"].astype(float).to_numpy()
    model = BASE + SALE
    left = 20_000.0 - ACTUALS["actual"].sum()
    assert plan == pytest.approx(left * model / model.sum(), rel=1e-12)
    total = frame.iloc[16]
    assert float(total["actual"]) + float(total["plan"]) == pytest.approx(20_000.0)
