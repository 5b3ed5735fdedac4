"""The parts of ``evcal explain`` everywhere a planner looks (issue 19 part 4): the workbook's Parts sheet,
the report's "What makes the plan" section, panel folders, the shared plan options.

Models: the bundled demo (invented Fernhollow data: a log model with ARIMA(1,0,1) errors, a level shift,
closures, an assumed lift) and the invented two-store file of ``docs/examples/stores.py``. The references
are the plan itself (the Plan sheet's amount, plan.csv's number: the parts must add up to them),
``evcal explain`` (the report and the sheet must show its parts, one computation) and the single model of
a panel series rebuilt from the panel folder. The spreadsheet checks open the workbook in LibreOffice Calc
with recalculation on load (the helper of tests/test_workbook_planner.py) and read what Calc computed.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.demo import CALENDAR, DEMO_DATA, HISTORY
from evcal.plan import make_plan
from evcal.plan.explain import plan_part_frame

runner = CliRunner()
YEAR = ("2027-01-01", "2027-12-31")


@pytest.fixture(scope="module")
def demo_model(tmp_path_factory: pytest.TempPathFactory) -> str:
    folder = tmp_path_factory.mktemp("demo") / "model"
    evcal.fit(str(DEMO_DATA / HISTORY), str(DEMO_DATA / CALENDAR)).save(folder)
    return str(folder)


def parts_sheet(path: Path, values: bool = False) -> tuple[pd.DataFrame, list[str]]:
    """The Parts sheet's periods as a frame (by header) and its kinds row."""
    ws = load_workbook(path, data_only=values)["Parts"]
    rows = [[c.value for c in row] for row in ws.iter_rows()]
    at = next(i for i, r in enumerate(rows) if r[0] == "date")
    frame = pd.DataFrame(rows[at + 1:], columns=rows[at])
    return frame, rows[at - 1]


def plan_sheet_amounts(path: Path) -> pd.Series:
    """The Plan sheet's ``plan`` column as Calc computed it, by date."""
    ws = load_workbook(path, data_only=True)["Plan"]
    rows = [[c.value for c in row] for row in ws.iter_rows()]
    at = next(i for i, r in enumerate(rows) if r[0] == "date")  # the hidden codes row
    frame = pd.DataFrame(rows[at + 2:], columns=rows[at])
    frame = frame[frame["date"] != "Total"]
    return pd.Series(frame["plan"].astype(float).to_numpy(), index=pd.to_datetime(frame["date"]))


# ---------------------------------------------------------------- the workbook's Parts sheet


@pytest.mark.parametrize("rounded", [False, True])
def test_parts_sheet_holds_the_explain_parts_of_every_period(demo_model: str, rounded: bool,
                                                             tmp_path: Path) -> None:
    result = evcal.load_model(demo_model)
    plan = make_plan(result, *YEAR, total=210_000, n_sims=0, whole_units=rounded)
    out = plan.save(tmp_path / "plan.xlsx")
    frame, kinds = parts_sheet(out)
    body = frame[frame["date"] != "Total"]
    assert len(body) == len(plan.table)
    parts, part_kinds = plan_part_frame(plan)
    model_parts = [c for c in parts.columns if part_kinds[c] not in ("target", "rounding")]
    # the static parts are explain's own, before the target (one computation)
    np.testing.assert_allclose(body[model_parts].astype(float).to_numpy(), parts[model_parts].to_numpy(),
                               rtol=1e-12)
    assert kinds[1:3] == ["base", "base"] and "target" in kinds and ("rounding" in kinds) == rounded
    # the lines that follow the target are formulas on the Plan sheet's factor and amounts
    assert str(body["spread to the target"].iat[0]).startswith("=(factor-1)*SUM(")
    assert str(body["Plan sheet"].iat[0]).startswith("=Plan!C")
    # as written, the parts times the factor are the spread plan (to the cent; whole units: within a unit)
    factor = next(iter(plan.factors.values()))
    spread = body[model_parts].astype(float).sum(axis=1).to_numpy() * factor
    tol = 1.0 if rounded else 0.005
    assert np.abs(spread - plan.table["plan"].to_numpy(dtype=float)).max() <= tol
    wb = load_workbook(out)
    about = " ".join(str(c.value) for row in wb["Parts"].iter_rows(max_row=2) for c in row if c.value)
    assert "Shapley" in about and "before the spread to the target" in about


def test_plans_without_parts_get_no_parts_sheet(demo_model: str, tmp_path: Path) -> None:
    """A year-to-date re-plan is not split: no Parts sheet, and the Notes sheet says why."""
    result = evcal.load_model(demo_model)
    history = pd.read_csv(DEMO_DATA / HISTORY)
    plan = make_plan(result, "2027-04-01", "2027-12-31", total=210_000, n_sims=0,
                     actuals=history.assign(date=pd.to_datetime(history["date"]) + pd.Timedelta(days=364))
                     .query("'2027-01-01' <= date < '2027-04-01'"))
    wb = load_workbook(plan.save(tmp_path / "ytd.xlsx"))
    assert "Parts" not in wb.sheetnames
    notes = " ".join(str(c.value) for c in wb["Notes"]["A"])
    assert "not split" in notes


def test_plan_over_its_own_workbook_with_parts_is_allowed(demo_model: str, tmp_path: Path) -> None:
    out = tmp_path / "plan.xlsx"
    args = ["plan", demo_model, *["--from", YEAR[0], "--to", YEAR[1]], "--sims", "0", "--out", str(out)]
    assert runner.invoke(app, args).exit_code == 0
    again = runner.invoke(app, args)
    assert again.exit_code == 0, again.output  # its own workbook (with Parts) is recognised and replaced
    assert "Parts" in load_workbook(out).sheetnames


@pytest.fixture(scope="module")
def calc_books(demo_model: str, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """Plan workbooks as Calc computes them: as written, and after a new target typed in."""
    from test_workbook_planner import recalculated, with_target

    tmp = tmp_path_factory.mktemp("calc-parts")
    result = evcal.load_model(demo_model)
    plain = make_plan(result, *YEAR, total=210_000, n_sims=0).save(tmp / "plain.xlsx")
    whole = make_plan(result, *YEAR, total=210_000, n_sims=0, whole_units=True).save(tmp / "whole.xlsx")
    done = recalculated([plain, with_target(plain, 250_000.0), whole, with_target(whole, 199_999.0)], tmp)
    return {"plain": done["plain.xlsx"], "plain 250000": done["changed-plain.xlsx"],
            "whole": done["whole.xlsx"], "whole 199999": done["changed-whole.xlsx"]}


@pytest.mark.parametrize("book", ["plain", "plain 250000", "whole", "whole 199999"])
def test_calc_parts_add_up_to_the_plan_sheet_per_period(calc_books: dict[str, Path], book: str) -> None:
    frame, _ = parts_sheet(calc_books[book], values=True)
    body = frame[frame["date"] != "Total"]
    check = body["sum of parts"].astype(float).to_numpy()
    plan = plan_sheet_amounts(calc_books[book]).to_numpy()
    assert np.abs(check - plan).max() < 0.005  # to the cent, every period
    assert np.abs(body["Plan sheet"].astype(float).to_numpy() - plan).max() < 1e-9
    target = {"plain": 210_000.0, "plain 250000": 250_000.0, "whole": 210_000.0,
              "whole 199999": 199_999.0}[book]
    if book.startswith("plain"):  # a new target: the parts' total follows it exactly
        assert float(frame["sum of parts"].iat[-1]) == pytest.approx(target, rel=1e-12)
    else:  # whole units: each period rounded, so the total misses by at most half a unit a period
        assert abs(float(frame["sum of parts"].iat[-1]) - target) <= 0.5 * len(body)


# ---------------------------------------------------------------- the report's "What makes the plan"


def _section(model: str, plan_csv: Path, calendar: object = None) -> dict:
    from evcal.report.context import ReportContext
    from evcal.report.explain_sections import explain_section
    from evcal.report.model_folder import read_model_folder

    return explain_section(ReportContext(read_model_folder(model, plan_csv=plan_csv), calendar))


def _units(text: str) -> float:
    return float(text.replace("−", "-").replace(",", "").replace("+", ""))


@pytest.mark.parametrize("options", [["--total", "210000"], ["--total", "210000", "--round"], []])
def test_report_section_shows_the_explain_parts_of_the_peak(demo_model: str, options: list[str],
                                                            tmp_path: Path) -> None:
    plan_csv = tmp_path / "plan.csv"
    args = ["plan", demo_model, "--from", YEAR[0], "--to", YEAR[1], "--sims", "0", "--out", str(plan_csv)]
    assert runner.invoke(app, [*args, *options]).exit_code == 0
    section = _section(demo_model, plan_csv)
    assert "muted" not in section, section
    file_plan = pd.read_csv(plan_csv)
    peak = file_plan.loc[file_plan["plan"].idxmax()]
    block = section["periods"][0]
    assert block["title"].startswith("Busiest period")
    rows = block["table"]["rows"]
    assert rows[-1][0] == "= plan"
    amounts = [_units(r[2]) for r in rows[:-1]]
    assert round(sum(amounts), 2) == round(float(peak["plan"]), 2)  # they add up to the plan, to the cent
    assert _units(rows[-1][2]) == round(float(peak["plan"]), 2)
    # the same parts as evcal explain prints for that period (one computation)
    r = runner.invoke(app, ["explain", demo_model, "--date", peak["date"], "--out", str(tmp_path / "e.csv"),
                            "--from", YEAR[0], "--to", YEAR[1], *options])
    assert r.exit_code == 0, r.output
    parts = pd.read_csv(tmp_path / "e.csv")
    assert amounts == pytest.approx(parts["amount"].tolist(), abs=1e-9)
    assert [row[1] for row in rows[:-1]] == parts["kind"].tolist()
    assert ("spread to the target" in parts["part"].tolist()) == bool(options)
    assert block["figure"]["uri"].startswith("data:image/png;base64,")
    assert "add up to the plan" in block["sum"]


def test_report_section_says_so_when_the_file_is_not_the_models_plan(demo_model: str, tmp_path: Path) -> None:
    plan_csv = tmp_path / "plan.csv"
    args = ["plan", demo_model, "--from", YEAR[0], "--to", YEAR[1], "--sims", "0", "--out", str(plan_csv)]
    assert runner.invoke(app, [*args, "--total", "210000"]).exit_code == 0
    edited = pd.read_csv(plan_csv)
    edited.loc[3, "plan"] += 250.0  # a planner's hand edit: no longer a plan of this model
    edited.to_csv(plan_csv, index=False)
    section = _section(demo_model, plan_csv)
    assert "could not be made again" in section["muted"]


def test_report_page_has_the_section(demo_model: str, tmp_path: Path) -> None:
    plan_csv = tmp_path / "plan.csv"
    args = ["plan", demo_model, "--from", YEAR[0], "--to", YEAR[1], "--sims", "0", "--out", str(plan_csv)]
    assert runner.invoke(app, [*args, "--total", "210000"]).exit_code == 0
    r = runner.invoke(app, ["report", demo_model, "--plan", str(plan_csv), "--out", str(tmp_path / "r.html")])
    assert r.exit_code == 0, r.output
    page = (tmp_path / "r.html").read_text()
    assert 'id="explain"' in page and "What makes the plan" in page and "to the cent" in page
    bare = runner.invoke(app, ["report", demo_model, "--out", str(tmp_path / "bare.html")])
    assert bare.exit_code == 0 and 'id="explain"' not in (tmp_path / "bare.html").read_text()


# ---------------------------------------------------------------- panel folders

KEY = "product=P0042,store=S07"


@pytest.fixture(scope="module")
def panel_model(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The invented six-series panel of docs/examples/stores.py (made from the demo's history), fitted."""
    import os
    import runpy
    import shutil

    tmp = tmp_path_factory.mktemp("panel")
    (tmp / "demo-output").mkdir()
    shutil.copy(DEMO_DATA / HISTORY, tmp / "demo-output" / "fernhollow-history.csv")
    here = os.getcwd()
    os.chdir(tmp)
    try:
        runpy.run_path(str(Path(evcal.__file__).resolve().parents[1] / "docs" / "examples" / "stores.py"))
    finally:
        os.chdir(here)
    r = runner.invoke(app, ["fit", str(tmp / "sales.parquet"), "--series-col", "product,store", "--calendar",
                            str(DEMO_DATA / CALENDAR), "--out", str(tmp / "all")])
    assert r.exit_code == 0, r.output
    return tmp / "all"


@pytest.mark.parametrize("args", [
    ["--date", "2027-05-09", "--from", YEAR[0], "--to", YEAR[1], "--total", "30000"],
    ["--date", "2027-12-26"],
    ["--date", "2024-03-31"],  # a past period: actual, fitted parts and residual
])
def test_panel_series_is_explained_as_its_own_model(panel_model: Path, args: list[str],
                                                    tmp_path: Path) -> None:
    from evcal.panel import load_panel

    single = tmp_path / "single"
    load_panel(panel_model).series_result(KEY).save(single)  # the series' single model, rebuilt
    a = runner.invoke(app, ["explain", str(panel_model), "--series", KEY, *args, "--out",
                            str(tmp_path / "a.csv")])
    b = runner.invoke(app, ["explain", str(single), *args, "--out", str(tmp_path / "b.csv")])
    assert a.exit_code == 0 and b.exit_code == 0, a.output + b.output
    pd.testing.assert_frame_equal(pd.read_csv(tmp_path / "a.csv"), pd.read_csv(tmp_path / "b.csv"))
    assert a.output.split("\nwrote")[0] == b.output.split("\nwrote")[0]


def test_panel_number_is_the_panel_plans(panel_model: Path, tmp_path: Path) -> None:
    """evcal plan PANEL --series KEY --total T writes the number explain PANEL --series KEY splits."""
    opts = ["--from", YEAR[0], "--to", YEAR[1], "--total", "30000"]
    p = runner.invoke(app, ["plan", str(panel_model), "--series", KEY, "--sims", "0", "--out",
                            str(tmp_path / "plan.csv"), *opts])
    assert p.exit_code == 0, p.output
    plan = pd.read_csv(tmp_path / "plan.csv").set_index("date")["plan"]
    for day in ("2027-05-09", "2027-10-03"):
        r = runner.invoke(app, ["explain", str(panel_model), "--series", KEY, "--date", day, "--out",
                                str(tmp_path / "e.csv"), *opts])
        assert r.exit_code == 0, r.output
        assert round(pd.read_csv(tmp_path / "e.csv")["amount"].sum(), 2) == round(plan.loc[day], 2)


@pytest.mark.parametrize("by_year", [False, True])
def test_panel_targets_file_gives_the_series_row(panel_model: Path, tmp_path: Path, by_year: bool) -> None:
    """explain PANEL --series KEY --totals FILE reads the panel's targets file (key columns, total, optionally
    year) as evcal plan PANEL --totals FILE does: the number split is the series' row of that panel plan."""
    examples = Path(evcal.__file__).resolve().parents[1] / "docs" / "examples"
    targets = pd.read_csv(examples / "store-targets.csv")
    if by_year:  # a target per series and year: 2027 and 2028 differ, so the year's own target must be taken
        later = targets.assign(year=2028, total=targets["total"] * 1.1)
        targets = pd.concat([targets.assign(year=2027), later])
    file = tmp_path / "targets.csv"
    targets.to_csv(file, index=False)
    opts = ["--from", YEAR[0], "--to", "2028-12-31" if by_year else YEAR[1], "--totals", str(file)]
    p = runner.invoke(app, ["plan", str(panel_model), "--sims", "0", "--out", str(tmp_path / "plan.csv"),
                            *opts])
    assert p.exit_code == 0, p.output
    plan = pd.read_csv(tmp_path / "plan.csv", dtype={"product": str, "store": str})
    mine = plan[(plan["product"] == "P0042") & (plan["store"] == "S07")].set_index("date")["plan"]
    for day in ("2027-05-09", "2028-10-01" if by_year else "2027-10-03"):
        r = runner.invoke(app, ["explain", str(panel_model), "--series", KEY, "--date", day, "--out",
                                str(tmp_path / "e.csv"), "--force", *opts])
        assert r.exit_code == 0, r.output
        assert round(pd.read_csv(tmp_path / "e.csv")["amount"].sum(), 2) == round(mine.loc[day], 2)


@pytest.mark.parametrize(("where", "args", "words"), [
    ("panel", ["--date", "2027-05-09"], "6 fitted series; name the one to explain"),
    ("panel", ["--date", "2027-05-09", "--series", "product=P9999,store=S07"], "no such series"),
    ("panel", ["--date", "2027-05-09", "--series", KEY, "--drivers", "d.csv"], "outside drivers"),
    ("single", ["--date", "2027-05-09", "--series", KEY], "single-series model folder"),
])
def test_panel_refusals_are_one_line(panel_model: Path, demo_model: str, where: str, args: list[str],
                                     words: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    folder = str(panel_model) if where == "panel" else demo_model
    r = runner.invoke(app, ["explain", folder, *args])
    assert r.exit_code == 2, r.output
    lines = [line for line in r.output.splitlines() if line.strip()]
    assert len(lines) == 1 and words in lines[0] and "Traceback" not in r.output, r.output
    assert list(tmp_path.iterdir()) == []  # nothing written


# ---------------------------------------------------------------- one definition of the plan options


def test_plan_options_of_explain_read_as_plans() -> None:
    """The options that shape a plan number (evcal.cli.options) read the same in explain as in plan."""
    import typer

    commands = typer.main.get_command(app).commands  # type: ignore[attr-defined]
    flags = ("--from", "--to", "--calendar", "--total", "--totals", "--round", "--drivers", "--new-events")

    def declared(name: str) -> dict[str, tuple]:
        return {p.opts[0]: (tuple(p.opts), p.help, p.default if p.opts[0] not in ("--from", "--to") else None)
                for p in commands[name].params if p.opts and p.opts[0] in flags}

    explain, plan = declared("explain"), declared("plan")
    assert set(explain) == set(flags)
    assert explain == {f: plan[f] for f in flags}
