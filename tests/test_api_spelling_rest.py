"""Errors speak the user's language, the rest of the modules (issue 18 item 8): the same bad input
through the Python API names the argument (``holdout_years=0``, ``out='...'``) and through ``evcal`` on
the command line (in-process) the flag (``--holdout-years 0``, ``--out ...``); the rest of the line is
the same text. Modules: backtesting, plan/simulate, plan/schedule, demo, outputs (through the demo),
and further below the panel and report modules. The histories and calendars are invented (a few
weekly rows, a street fair), named as such.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
from test_api_spelling import _api_line, _cli_line, _same_but_spelling
from typer.testing import CliRunner

import evcal
from evcal.cli import app

runner = CliRunner()
#: invented weekly Sundays, 2020-2024 (four full calendar years and a bit)
WEEKS = pd.date_range("2020-01-05", periods=260, freq="W-SUN")
#: an invented calendar: one event inside the history
CALENDAR = """name: invented shop
events:
  - {name: spring-sale, when: {fixed: "04-01"}}
"""
#: the same with an event the history never saw, inside the plan's year
NEW_EVENT = CALENDAR + '  - {name: street-fair, when: {dates: [2025-06-15]}}\n'


@pytest.fixture(scope="module")
def files(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """An invented weekly history, its calendar, a plan calendar with a new event, and a model."""
    folder = tmp_path_factory.mktemp("spelling-rest")
    history = folder / "h.csv"
    pd.DataFrame({"date": WEEKS.strftime("%Y-%m-%d"), "value": 100.0 + (WEEKS.month % 5)}).to_csv(
        history, index=False)
    calendar = folder / "cal.yaml"
    calendar.write_text(CALENDAR)
    new_event = folder / "new.yaml"
    new_event.write_text(NEW_EVENT)
    evcal.fit(history, calendar, errors="ols").save(folder / "model")
    return {"history": history, "calendar": calendar, "new_event": new_event, "model": folder / "model"}


def test_backtest_holdout_years_not_a_whole_number(files: dict[str, Path], tmp_path: Path) -> None:
    """backtesting. Fails on main: the API said '--holdout-years 0: must be a whole number'."""
    api = _api_line(lambda: evcal.backtest(files["history"], files["calendar"], holdout_years=0))
    cli = _cli_line(["backtest", str(files["history"]), "-c", str(files["calendar"]), "--holdout-years", "0",
                     "-o", str(tmp_path / "bt.csv")])
    assert api == "holdout_years=0: must be a whole number of years, 1 or more"
    _same_but_spelling(api, cli, [("holdout_years=0", "--holdout-years 0")])


def test_backtest_more_holdout_years_than_the_history_has(files: dict[str, Path], tmp_path: Path) -> None:
    """backtesting: the setting inside the line, after the history. Fails on main ('--holdout-years 9')."""
    api = _api_line(lambda: evcal.backtest(files["history"], files["calendar"], holdout_years=9))
    cli = _cli_line(["backtest", str(files["history"]), "-c", str(files["calendar"]), "--holdout-years", "9",
                     "-o", str(tmp_path / "bt.csv")])
    assert "h.csv: holdout_years=9 but the history has only 4 full calendar year(s)" in api
    _same_but_spelling(api, cli, [("holdout_years=9", "--holdout-years 9")])


def test_plan_simulation_draws_out_of_range(files: dict[str, Path], tmp_path: Path) -> None:
    """plan/simulate.check_sims: the argument is n_sims, the flag --sims. Fails on main ('--sims -1')."""
    from evcal.plan import make_plan

    fitted = evcal.load_model(files["model"])
    api = _api_line(lambda: make_plan(fitted, "2025-01-01", "2025-12-31", n_sims=-1))
    cli = _cli_line(["plan", str(files["model"]), "--from", "2025-01-01", "--to", "2025-12-31",
                     "--sims", "-1", "-o", str(tmp_path / "p.csv")])
    assert api.startswith("n_sims=-1: must be 0 (no interval) to ")
    _same_but_spelling(api, cli, [("n_sims=-1", "--sims -1")])


def test_plan_unknown_new_events_choice(files: dict[str, Path], tmp_path: Path) -> None:
    """plan/schedule: a choice that is not one of error, zero. Fails on main ('--new-events 'maybe'')."""
    from evcal.plan import make_plan

    fitted = evcal.load_model(files["model"])
    api = _api_line(lambda: make_plan(fitted, "2025-01-01", "2025-12-31", calendar=files["new_event"],
                                      new_events="maybe", n_sims=0))
    cli = _cli_line(["plan", str(files["model"]), "--from", "2025-01-01", "--to", "2025-12-31", "-c",
                     str(files["new_event"]), "--new-events", "maybe", "--sims", "0",
                     "-o", str(tmp_path / "p.csv")])
    assert api == "new_events='maybe': must be one of error, zero"
    _same_but_spelling(api, cli, [("new_events='maybe'", "--new-events 'maybe'")])


def test_plan_an_event_the_model_never_saw(files: dict[str, Path], tmp_path: Path) -> None:
    """plan/schedule: the advice to plan it with no lift. Fails on main: 'or pass --new-events zero'."""
    from evcal.plan import make_plan

    fitted = evcal.load_model(files["model"])
    api = _api_line(lambda: make_plan(fitted, "2025-01-01", "2025-12-31", calendar=files["new_event"],
                                      n_sims=0))
    cli = _cli_line(["plan", str(files["model"]), "--from", "2025-01-01", "--to", "2025-12-31", "-c",
                     str(files["new_event"]), "--sims", "0", "-o", str(tmp_path / "p.csv")])
    assert api.startswith("event street-fair is new in the plan calendar")
    assert "or pass new_events='zero' to plan it with no lift" in api
    _same_but_spelling(api, cli, [("new_events='zero'", "--new-events zero")])


def test_demo_data_folder_without_the_files(tmp_path: Path) -> None:
    """demo.find_demo_data. Fails on main: the API said '--data ...: ... or leave --data out'."""
    from evcal.demo import run_demo

    empty = tmp_path / "empty"
    empty.mkdir()
    api = _api_line(lambda: run_demo(tmp_path / "d1", data=empty, echo=lambda _: None))
    cli = _cli_line(["demo", "--data", str(empty), "-o", str(tmp_path / "d2")])
    assert api.startswith(f"data={str(empty)!r}: no ")
    assert api.endswith("or leave data= out to use the bundled demo data")
    _same_but_spelling(api, cli, [(f"data={str(empty)!r}", f"--data {empty}"), ("data=", "--data")])
    assert not (tmp_path / "d1").exists() and not (tmp_path / "d2").exists()


def test_output_over_a_file_of_the_users(tmp_path: Path) -> None:
    """outputs.check_output through the demo. Fails on main: the API said '--out ...: is a file ...'."""
    from evcal.demo import run_demo

    mine = tmp_path / "sales.csv"
    mine.write_text("date,value\n")
    api = _api_line(lambda: run_demo(mine, echo=lambda _: None))
    cli = _cli_line(["demo", "-o", str(mine)])
    assert api.startswith(f"out={str(mine)!r}: is a file, and the demo folder is a folder; choose a new")
    _same_but_spelling(api, cli, [(f"out={str(mine)!r}", f"--out {mine}")])
    assert mine.read_text() == "date,value\n"


def test_output_over_evcals_own_output_of_another_kind(files: dict[str, Path], tmp_path: Path) -> None:
    """outputs.check_output: the switch that would replace it. Fails on main: 'or add --force'."""
    import shutil

    from evcal.demo import run_demo

    model = tmp_path / "model"
    shutil.copytree(files["model"], model)
    api = _api_line(lambda: run_demo(model, echo=lambda _: None))
    cli = _cli_line(["demo", "-o", str(model)])
    assert api.endswith("or add force=True to replace it")
    _same_but_spelling(api, cli, [(f"out={str(model)!r}", f"--out {model}"), ("force=True", "--force")])


# ---------------------------------------------------------------- panels and the report
@pytest.fixture(scope="module")
def panel(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """An invented long table of two stores' weekly sales, and its panel model fitted once."""
    from evcal.panel import fit_panel

    folder = tmp_path_factory.mktemp("spelling-panel")
    long = folder / "long.csv"
    dates = list(WEEKS.strftime("%Y-%m-%d"))
    pd.DataFrame({"date": dates * 2, "value": list(100.0 + (WEEKS.month % 5)) * 2,
                  "store": ["north"] * len(WEEKS) + ["south"] * len(WEEKS)}).to_csv(long, index=False)
    fit_panel(long, None, ["store"], errors="ols", progress=False).save(folder / "panel")
    return {"long": long, "panel": folder / "panel"}


def test_panel_level_without_key_columns(panel: dict[str, Path], tmp_path: Path) -> None:
    """panel/build.read_for_panel. Fails on main: the API said '--level needs --series-col'."""
    from evcal.panel import fit_panel

    api = _api_line(lambda: fit_panel(panel["long"], None, level="store", progress=False))
    cli = _cli_line(["fit", str(panel["long"]), "--level", "store", "-o", str(tmp_path / "m")])
    assert api == "level= needs series_cols=: the child series to add up"
    _same_but_spelling(api, cli, [("level=", "--level"), ("series_cols=", "--series-col")])


def test_panel_plan_of_a_series_not_in_the_model(panel: dict[str, Path], tmp_path: Path) -> None:
    """panel/result.PanelResult.find through plan_panel. Fails on main ('--series store=east: ...')."""
    from evcal.panel.planning import plan_panel

    api = _api_line(lambda: plan_panel(panel["panel"], "2025-01-01", "2025-12-31", series=["store=east"],
                                       n_sims=0, progress=False))
    cli = _cli_line(["plan", str(panel["panel"]), "--from", "2025-01-01", "--to", "2025-12-31", "--series",
                     "store=east", "--sims", "0", "-o", str(tmp_path / "p.csv")])
    assert api == "series='store=east': no such series in the model; see series.csv for the keys"
    _same_but_spelling(api, cli, [("series='store=east'", "--series store=east")])


def test_panel_plan_with_both_kinds_of_target(panel: dict[str, Path], tmp_path: Path) -> None:
    """panel/planning.plan_panel. Fails on main: 'give either --total ... or --totals ...'."""
    from evcal.panel.planning import plan_panel

    targets = tmp_path / "targets.csv"
    targets.write_text("store,total\nnorth,100\nsouth,200\n")
    api = _api_line(lambda: plan_panel(panel["panel"], "2025-01-01", "2025-12-31", total=300.0,
                                       totals=targets, n_sims=0, progress=False))
    cli = _cli_line(["plan", str(panel["panel"]), "--from", "2025-01-01", "--to", "2025-12-31", "--total",
                     "300", "--totals", str(targets), "--sims", "0", "-o", str(tmp_path / "p.csv")])
    assert api.startswith("give either total= (one target, allocated over the series) or totals= (a file")
    _same_but_spelling(api, cli, [("total=", "--total"), ("totals=", "--totals")])


def test_report_series_for_a_single_model(files: dict[str, Path], tmp_path: Path) -> None:
    """report/html.write_report. Fails on main: the API said '--series picks series ... (leave --series'."""
    from evcal.report.html import write_report

    api = _api_line(lambda: write_report(files["model"], tmp_path / "r1.html", series=["north"]))
    cli = _cli_line(["report", str(files["model"]), "--series", "north", "-o", str(tmp_path / "r2.html")])
    assert api.endswith("this is a single-series model folder (leave series= out)")
    _same_but_spelling(api, cli, [("series=", "--series")])
    assert not (tmp_path / "r1.html").exists() and not (tmp_path / "r2.html").exists()


def test_report_backtest_for_a_panel(panel: dict[str, Path], tmp_path: Path) -> None:
    """report/html: a setting read for single models only; the argument is backtest_csv, the flag
    --backtest. Fails on main: the API said '--backtest is read for a single-series model folder'."""
    from evcal.report.html import write_report

    bt = tmp_path / "bt.csv"
    bt.write_text("year,method,spread,wape,bias,peak_error\n")
    api = _api_line(lambda: write_report(panel["panel"], tmp_path / "r1.html", backtest_csv=bt))
    cli = _cli_line(["report", str(panel["panel"]), "--backtest", str(bt), "-o", str(tmp_path / "r2.html")])
    assert "a panel model folder: backtest_csv= is read for a single-series model folder only" in api
    _same_but_spelling(api, cli, [("backtest_csv=", "--backtest")])


def test_panel_workers_below_one(panel: dict[str, Path], tmp_path: Path) -> None:
    """panel/distributed.make_runner. Fails on main: the API said '--workers 0: give 1 or more'."""
    from evcal.panel import fit_panel

    api = _api_line(lambda: fit_panel(panel["long"], None, ["store"], workers=0, progress=False))
    cli = _cli_line(["fit", str(panel["long"]), "--series-col", "store", "--workers", "0",
                     "-o", str(tmp_path / "m")])
    assert api == "workers=0: give 1 or more worker processes"
    _same_but_spelling(api, cli, [("workers=0", "--workers 0")])


# ---------------------------------------------------------------- plan targets, actuals, the plan file
def test_plan_totals_without_a_year_of_the_horizon(files: dict[str, Path], tmp_path: Path) -> None:
    """plan/spread.spread: the line starts with the setting. Fails on main: '--totals: no total for 2026'."""
    from evcal.plan import make_plan

    targets = tmp_path / "totals.csv"
    targets.write_text("year,total\n2025,5000\n")
    fitted = evcal.load_model(files["model"])
    api = _api_line(lambda: make_plan(fitted, "2025-01-01", "2026-12-31", totals=targets, n_sims=0))
    cli = _cli_line(["plan", str(files["model"]), "--from", "2025-01-01", "--to", "2026-12-31", "--totals",
                     str(targets), "--sims", "0", "-o", str(tmp_path / "p.csv")])
    assert api.startswith("totals: no total for 2026; the horizon covers 2025, 2026")
    assert api.replace("totals:", "--totals:", 1) == cli


def test_plan_actuals_that_run_into_the_plan(files: dict[str, Path], tmp_path: Path) -> None:
    """plan/actuals.year_to_date: file and start. Fails on main: '--actuals ...: ... before --from'."""
    from evcal.plan import make_plan

    weeks = pd.date_range("2025-01-05", "2025-07-13", freq="W-SUN")
    actuals = tmp_path / "actuals.csv"
    pd.DataFrame({"date": weeks.strftime("%Y-%m-%d"), "value": 100.0}).to_csv(actuals, index=False)
    fitted = evcal.load_model(files["model"])
    api = _api_line(lambda: make_plan(fitted, "2025-07-01", "2025-12-31", actuals=actuals, n_sims=0))
    cli = _cli_line(["plan", str(files["model"]), "--from", "2025-07-01", "--to", "2025-12-31", "--actuals",
                     str(actuals), "--sims", "0", "-o", str(tmp_path / "p.csv")])
    assert api.startswith(f"actuals={str(actuals)!r}: the row dated 2025-07-06")
    assert api.endswith("the actuals must end before start: give only the periods sold so far")
    _same_but_spelling(api, cli, [(f"actuals={str(actuals)!r}", f"--actuals {actuals}"),
                                  ("before start:", "before --from:")])


def test_plan_target_below_the_actuals_so_far(files: dict[str, Path], tmp_path: Path) -> None:
    """plan/actuals.check_rest. Fails on main: the API said '--total 1,000 is not above ...'."""
    from evcal.plan import make_plan

    weeks = pd.date_range("2025-01-05", "2025-06-29", freq="W-SUN")
    actuals = tmp_path / "actuals.csv"
    pd.DataFrame({"date": weeks.strftime("%Y-%m-%d"), "value": 100.0}).to_csv(actuals, index=False)
    fitted = evcal.load_model(files["model"])
    api = _api_line(lambda: make_plan(fitted, "2025-07-01", "2025-12-31", total=1000, actuals=actuals,
                                      n_sims=0))
    cli = _cli_line(["plan", str(files["model"]), "--from", "2025-07-01", "--to", "2025-12-31", "--total",
                     "1000", "--actuals", str(actuals), "--sims", "0", "-o", str(tmp_path / "p.csv")])
    assert api.startswith("total 1,000 is not above the 2,600 already sold in 2025")
    assert api.replace("total", "--total", 1) == cli


def test_plan_saved_to_an_unknown_file_type(files: dict[str, Path], tmp_path: Path) -> None:
    """plan/result.output_path (Plan.save). Fails on main: the API said '--out ...: unknown file type'."""
    from evcal.plan import make_plan

    plan = make_plan(evcal.load_model(files["model"]), "2025-01-01", "2025-12-31", n_sims=0)
    api = _api_line(lambda: plan.save(tmp_path / "plan.txt"))
    cli = _cli_line(["plan", str(files["model"]), "--from", "2025-01-01", "--to", "2025-12-31", "--sims", "0",
                     "-o", str(tmp_path / "plan.txt")])
    assert api == f"path={str(tmp_path / 'plan.txt')!r}: unknown file type .txt; write plan.csv or plan.xlsx"
    # the command line checks --out itself first and adds stdout to its advice
    assert cli.startswith(f"--out {tmp_path / 'plan.txt'}: unknown file type") and "path=" not in cli


# ---------------------------------------------------------------- outside drivers in plans and scenarios
@pytest.fixture(scope="module")
def priced(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """An invented weekly history with a price column, its model, and future prices for part of 2025."""
    folder = tmp_path_factory.mktemp("spelling-drivers")
    history = folder / "h.csv"
    price = 2.0 + 0.1 * (WEEKS.month % 3)
    pd.DataFrame({"date": WEEKS.strftime("%Y-%m-%d"), "value": 100.0 + (WEEKS.month % 5) - 3 * price,
                  "price": price}).to_csv(history, index=False)
    evcal.fit(history, drivers=["price"], errors="ols").save(folder / "model")
    future = pd.date_range("2024-12-29", periods=60, freq="W-SUN")
    short = folder / "short.csv"
    pd.DataFrame({"date": future[:20].strftime("%Y-%m-%d"), "price": 2.0}).to_csv(short, index=False)
    base = folder / "base.csv"
    pd.DataFrame({"date": future.strftime("%Y-%m-%d"), "price": 2.0}).to_csv(base, index=False)
    return {"model": folder / "model", "short": short, "base": base}


def test_plan_driver_values_that_stop_early(priced: dict[str, Path], tmp_path: Path) -> None:
    """design/drivers.DriverTerm.column. Fails on main: the API said '(--drivers FILE)'."""
    from evcal.plan import make_plan

    fitted = evcal.load_model(priced["model"])
    api = _api_line(lambda: make_plan(fitted, "2025-01-01", "2025-12-31", drivers=priced["short"], n_sims=0))
    cli = _cli_line(["plan", str(priced["model"]), "--from", "2025-01-01", "--to", "2025-12-31", "--drivers",
                     str(priced["short"]), "--sims", "0", "-o", str(tmp_path / "p.csv")])
    assert api.startswith("driver 'price' has no value for period 2025-05-12/2025-05-18 (and 32 more")
    assert api.endswith("a 'price' column covering every planned period (drivers='FILE')")
    _same_but_spelling(api, cli, [("drivers='FILE'", "--drivers FILE")])


def test_compare_driver_values_that_stop_early(priced: dict[str, Path], tmp_path: Path) -> None:
    """plan/scenarios.compare names scenario B. Fails on main: '--compare-drivers short.csv: ...'."""
    from evcal.plan.comparison import compare

    fitted = evcal.load_model(priced["model"])
    api = _api_line(lambda: compare(fitted, "2025-01-01", "2025-12-31", drivers_a=priced["base"],
                                    drivers_b=priced["short"], n_sims=0))
    cli = _cli_line(["plan", str(priced["model"]), "--from", "2025-01-01", "--to", "2025-12-31", "--drivers",
                     str(priced["base"]), "--compare-drivers", str(priced["short"]), "--sims", "0",
                     "-o", str(tmp_path / "c.csv")])
    assert api.startswith("drivers_b short.csv: driver 'price' has no value for period")
    _same_but_spelling(api, cli, [("drivers_b short.csv", "--compare-drivers short.csv"),
                                  ("drivers='FILE'", "--drivers FILE")])


def test_compare_without_a_second_scenario(priced: dict[str, Path]) -> None:
    """plan/scenarios.compare from Python only (the command line compares only when asked to).
    Fails on main: 'a second calendar (--compare) or second driver values (--compare-drivers)'."""
    from evcal.plan.comparison import compare

    fitted = evcal.load_model(priced["model"])
    api = _api_line(lambda: compare(fitted, "2025-01-01", "2025-12-31"))
    assert api == ("a comparison needs a second scenario: a second calendar (calendar_b=) or second driver "
                   "values (drivers_b=)")


def test_panel_series_skipped_for_a_negative_value(tmp_path: Path) -> None:
    """engine/screen: the skip detail of skipped.csv (its reason, a documented value, stays). Fails on
    main: the API's detail said 'or pass --allow-negative if negatives are real'."""
    from evcal.panel import fit_panel

    south = list(100.0 + (WEEKS.month % 5))
    south[3] = -2.0
    long = tmp_path / "long.csv"
    pd.DataFrame({"date": list(WEEKS.strftime("%Y-%m-%d")) * 2,
                  "value": list(100.0 + (WEEKS.month % 5)) + south,
                  "store": ["north"] * len(WEEKS) + ["south"] * len(WEEKS)}).to_csv(long, index=False)
    api = fit_panel(long, None, ["store"], errors="ols", progress=False).skipped
    res = runner.invoke(app, ["fit", str(long), "--series-col", "store", "--errors", "ols",
                              "-o", str(tmp_path / "m")])
    assert res.exit_code == 0, res.output
    cli = pd.read_csv(tmp_path / "m" / "skipped.csv")
    assert list(api["reason"]) == list(cli["reason"]) == ["negative values"]
    (api_detail,), (cli_detail,) = api["detail"], cli["detail"]
    assert api_detail.endswith("fix the values, or pass allow_negative=True if negatives are real")
    _same_but_spelling(api_detail, cli_detail, [("allow_negative=True", "--allow-negative")])


def test_week_labels_of_an_unknown_kind(files: dict[str, Path], tmp_path: Path) -> None:
    """io/weeklabels: the default names the argument from Python. Fails on main: '--week-labels fiscal'."""
    from evcal.io.weeklabels import with_week_labels
    from evcal.plan import make_plan

    plan = make_plan(evcal.load_model(files["model"]), "2025-01-01", "2025-03-31", n_sims=0)
    api = _api_line(lambda: with_week_labels(plan.table, "W-SUN", "fiscal"))
    cli = _cli_line(["plan", str(files["model"]), "--from", "2025-01-01", "--to", "2025-03-31", "--sims", "0",
                     "--week-labels", "fiscal", "-o", str(tmp_path / "p.csv")])
    assert api == ("week_labels='fiscal': unknown kind of week label; use iso (2027-W05: ISO 8601 year "
                   "and week)")
    _same_but_spelling(api, cli, [("week_labels='fiscal'", "--week-labels fiscal")])


def test_database_that_is_a_table_file(files: dict[str, Path], tmp_path: Path) -> None:
    """io/database.read_query (public; the commands' --db/--sql read through it). Fails on main: the API
    said '--db ...: not a database file or URL; ... a table file needs no --db: --sql "SELECT ..."'."""
    from evcal.io.database import read_query

    table = str(files["history"])
    api = _api_line(lambda: read_query("SELECT date, value FROM t", table))
    cli = _cli_line(["fit", "--db", table, "--sql", "SELECT date, value FROM t", "-o", str(tmp_path / "m")])
    query = f"SELECT * FROM '{table}'"
    assert api.startswith(f"db={table!r}: not a database file or URL; ")
    assert api.endswith(f"; a table file needs no db=: sql={query!r} (DuckDB reads it)")
    _same_but_spelling(api, cli, [(f"db={table!r}", f"--db {table}"), (f"sql={query!r}", f'--sql "{query}"'),
                                  ("no db=", "no --db")])


def test_database_file_that_is_not_there(tmp_path: Path) -> None:
    """io/database: a missing file is never created. Fails on main: the API said '--db ...: no such file'."""
    from evcal.io.database import read_query

    missing = str(tmp_path / "sales.db")
    api = _api_line(lambda: read_query("SELECT date, value FROM sales", missing))
    cli = _cli_line(["fit", "--db", missing, "--sql", "SELECT date, value FROM sales",
                     "-o", str(tmp_path / "m")])
    assert api == f"db={missing!r}: no such file; check the path (evcal never creates a database)"
    _same_but_spelling(api, cli, [(f"db={missing!r}", f"--db {missing}")])
    assert not Path(missing).exists()
