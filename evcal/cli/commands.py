"""The commands of ``evcal``: each parses its options, checks ``--out`` first, calls one step, writes.

Registered on the app in the order ``evcal --help`` lists them.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import typer

from evcal._files import atomic_path
from evcal.cli.console import calendar_app, command
from evcal.errors import CalendarError, EvcalError, PlanError
from evcal.outputs import check_output

__all__ = ["backtest_cmd", "calendar_check", "calendar_dates", "demo_cmd", "discover_cmd", "fit_cmd",
           "fit_options", "parse_order", "plan_cmd", "report_command", "show_cmd"]


# the options several commands share: one definition each, so names, defaults and help never drift apart
DateCol = Annotated[str, typer.Option("--date-col", help="Column with the period dates.")]
ValueCol = Annotated[str, typer.Option("--value-col", help="Column with the values.")]
Freq = Annotated[str | None, typer.Option("--freq", help="daily, weekly, W-SAT, monthly, quarterly.")]
Transform = Annotated[str, typer.Option("--transform", help="auto | log | none | count")]
Errors = Annotated[str, typer.Option("--errors", help="auto | ols | arima")]
ArimaOrder = Annotated[str | None, typer.Option("--arima-order", help="p,d,q for errors arima, e.g. 0,1,1")]
Seasonal = Annotated[str, typer.Option("--seasonal", help="auto | dummies | fourier")]
FourierOrder = Annotated[str, typer.Option(
    "--fourier-order", help="Harmonics of annual Fourier terms (1..60), or auto: chosen by AICc.")]
TrendOrder = Annotated[int, typer.Option("--trend-order", help="0 flat, 1 linear, 2 quadratic.")]
TradingDays = Annotated[bool | None, typer.Option(
    "--trading-days/--no-trading-days",
    help="Weekday-composition terms (monthly, quarterly); neither given: chosen by AICc.")]
LeapYear = Annotated[bool | None, typer.Option(
    "--leap-year/--no-leap-year", help="Leap-year term (monthly, quarterly); neither given: chosen by AICc.")]
AllowNegative = Annotated[bool, typer.Option("--allow-negative", help="Accept negative values.")]
Driver = Annotated[list[str] | None, typer.Option(
    "--driver", help="An outside driver: a numeric column of the history, NAME (as it is) or NAME:log "
    "(entered as its log: an elasticity); repeat for several; adds to the calendar's drivers: (and wins).")]
Db = Annotated[str | None, typer.Option(
    "--db", help="Database to read the history from with --sql: a SQLAlchemy URL (sqlite:///sales.db), "
    "duckdb:///sales.duckdb, or a .duckdb/.db/.sqlite file; left out: DuckDB over the files the query "
    "names.")]
Sql = Annotated[str | None, typer.Option(
    "--sql", help="Read the history from this query instead of a file, e.g. \"SELECT day AS date, units AS "
    "value FROM sales\"; the same columns and checks as a file (panels: the long format).")]
Force = Annotated[bool, typer.Option(
    "--force", help="Replace evcal's own output of another kind or version at --out (never a file or "
    "folder evcal did not write, never an input).")]


def _query_inputs(history: str | None, db: str | None, sql: str | None) -> list[Any]:
    """The history's inputs for ``check_output`` (a database file too); one line if they clash."""
    from evcal.io.database import check_query_options, database_file

    check_query_options(history, db, sql)
    return [history, database_file(db)]


def _history_source(history: str | None, db: str | None, sql: str | None) -> Any:
    """The history file, or the rows of ``--sql`` as a frame (read only after ``--out`` was checked)."""
    if sql is None:
        return history
    from evcal.io.database import read_query

    return read_query(sql, db)


def parse_order(text: str | None) -> tuple[int, int, int] | None:
    """The ``--arima-order`` text ``p,d,q`` as three integers (None when not given).

    Examples
    --------
    >>> parse_order("1,0,1")
    (1, 0, 1)
    """
    if text is None:
        return None
    try:
        parts = tuple(int(v) for v in text.split(","))
    except ValueError:
        parts = ()
    if len(parts) != 3:
        raise EvcalError(f"option --arima-order: {text!r} is not three integers p,d,q (e.g. 1,0,0)")
    return parts  # type: ignore[return-value]


def fit_options(transform: str, errors: str, arima_order: str | None, seasonal: str, fourier_order: int | str,
                trend_order: int, trading_days: bool | None, allow_negative: bool,
                leap_year: bool | None = None) -> dict[str, Any]:
    """The fit options of a command line, as keyword arguments of :func:`evcal.fit`.

    Examples
    --------
    ``None`` for ``trading_days``/``leap_year`` (neither flag given) and ``auto`` for
    ``fourier_order`` leave the setting to the data (:mod:`evcal.model.choose`).

    >>> fit_options("auto", "ols", None, "auto", 10, 1, False, False)["errors"]
    'ols'
    >>> fit_options("auto", "ols", None, "auto", "auto", 1, None, False)["trading_days"]
    'auto'
    """
    return {"transform": transform, "errors": errors, "arima_order": parse_order(arima_order),
            "seasonal": seasonal, "fourier_order": parse_fourier_order(fourier_order),
            "trend_order": trend_order, "trading_days": "auto" if trading_days is None else trading_days,
            "allow_negative": allow_negative, "leap_year": "auto" if leap_year is None else leap_year}


def parse_fourier_order(text: int | str) -> int | str:
    """``--fourier-order``: a whole number, or ``auto``."""
    if isinstance(text, int) or str(text).strip().lower() == "auto":
        return text if isinstance(text, int) else "auto"
    try:
        return int(text)
    except ValueError:
        raise EvcalError(f"option --fourier-order: {text!r} is not a whole number or auto (e.g. 10, or "
                         "auto: chosen by AICc)") from None


@command("fit")
def fit_cmd(
    history: str | None = typer.Argument(None, help="History file: CSV, Parquet or .xlsx (or --sql)."),
    calendar: str = typer.Option(None, "--calendar", "-c", help="Event calendar (YAML)."),
    out: str = typer.Option(..., "--out", "-o", help="Output folder for the model."),
    date_col: DateCol = "date",
    value_col: ValueCol = "value",
    freq: Freq = None,
    transform: Transform = "auto",
    errors: Errors = "auto",
    arima_order: ArimaOrder = None,
    seasonal: Seasonal = "auto",
    fourier_order: FourierOrder = "auto",
    trend_order: TrendOrder = 1,
    trading_days: TradingDays = None,
    allow_negative: AllowNegative = False,
    leap_year: LeapYear = None,
    series_col: list[str] = typer.Option(
        None, "--series-col", help="Key column(s) of a long file, one series per key (repeat, or a,b)."),
    level: str = typer.Option(None, "--level", help="Add the series up to these key columns first (a,b)."),
    group_col: str = typer.Option(None, "--group-col", help="Column grouping series for pooled lifts."),
    workers: int = typer.Option(None, "--workers", help="Fit on a local Dask cluster of N processes."),
    scheduler: str = typer.Option(None, "--scheduler", help="Fit on the Dask cluster at this address."),
    driver: Driver = None,
    db: Db = None,
    sql: Sql = None,
    force: Force = False,
) -> None:
    """Fit base, event lifts and interventions; write the model folder."""
    panel = bool(series_col or level or group_col or workers or scheduler)
    if panel and driver:
        from evcal.panel import refuse_drivers

        refuse_drivers("--driver")
    inputs = _query_inputs(history, db, sql)
    check_output(out, "panel" if panel else "model", inputs=[*inputs, calendar], force=force)
    history = _history_source(history, db, sql)
    options = fit_options(transform, errors, arima_order, seasonal, fourier_order, trend_order,
                          trading_days, allow_negative, leap_year)
    if panel:  # many series: evcal.panel
        from evcal.panel import fit_panel

        result = fit_panel(history, calendar, series_col, level=level, group_col=group_col, workers=workers,
                           scheduler=scheduler, out=out, date_col=date_col, value_col=value_col, freq=freq,
                           **options)
        typer.echo(result.summary())
        typer.echo(f"\nwrote {out}/ (panel.json, series.csv, lifts.csv, pooling.csv, occurrences.csv, "
                   "profile.csv, fitted.parquet, coefficients.parquet, skipped.csv)")
        return
    from evcal.engine import fit
    from evcal.model.summary import describe

    result = fit(history, calendar, date_col=date_col, value_col=value_col, freq=freq, drivers=driver,
                 **options)
    result.save(out)
    typer.echo(describe(result))
    files = "model.json, lifts.csv, occurrences.csv, profile.csv, fitted.csv"
    if result.spec.drivers:
        files += ", drivers.csv"
    typer.echo(f"\nwrote {out}/ ({files})")


@command("show")
def show_cmd(
    model_dir: str = typer.Argument(..., help="Model folder written by evcal fit."),
    series: str = typer.Option(None, "--series", help="Panel models: one series, e.g. product=P1,store=S2."),
) -> None:
    """Print a readable summary of a fitted model."""
    from evcal.model import load_model
    from evcal.model.summary import describe
    from evcal.panel import is_panel_dir, load_panel

    if not is_panel_dir(model_dir):
        typer.echo(describe(load_model(model_dir)))
    elif series is None:
        typer.echo(load_panel(model_dir).summary())
    else:
        typer.echo(describe(load_panel(model_dir).series_result(series)))


@command("plan")
def plan_cmd(
    model_dir: str = typer.Argument(..., help="Model folder written by `evcal fit`."),
    start: str = typer.Option(..., "--from", help="First day (or year) of the plan, e.g. 2027-01-01."),
    end: str = typer.Option(..., "--to", help="Last day (or year) of the plan, e.g. 2027-12-31."),
    out: str = typer.Option(..., "--out", "-o", help="plan.csv or plan.xlsx."),
    calendar: str | None = typer.Option(
        None, "--calendar", "-c", help="Plan calendar (YAML); default: the fitted one."),
    total: str | None = typer.Option(None, "--total", help="Target total for the whole horizon."),
    totals: str | None = typer.Option(None, "--totals", help="CSV of year,total targets."),
    compare_cal: str | None = typer.Option(
        None, "--compare", help="Second calendar: write both plans side by side."),
    new_events: str = typer.Option(
        "error", "--new-events", help="error | zero: events the model never saw."),
    sims: int = typer.Option(1000, "--sims", help="Simulation draws for low/high (0: none)."),
    seed: int = typer.Option(0, "--seed", help="Random seed of the simulation."),
    series: list[str] = typer.Option(None, "--series", help="Panel models: plan these series only."),
    allocate: str | None = typer.Option(
        None, "--allocate", help="Panel models: spread the plan over this child panel model."),
    workers: int | None = typer.Option(None, "--workers", help="Panel models: plan on N processes."),
    drivers: str | None = typer.Option(
        None, "--drivers",
        help="Outside drivers' future values: a file with a date column and one column per driver."),
    compare_drivers: str | None = typer.Option(
        None, "--compare-drivers",
        help="Scenario B's outside drivers' future values (a file like --drivers, e.g. with a price cut): "
        "write both plans side by side; calendar B is --compare, or the same calendar."),
    round_units: bool = typer.Option(
        False, "--round", help="Whole units: integers adding up exactly to the target (largest remainder)."),
    force: Force = False,
) -> None:
    """Plan future periods from the base and the scheduled events, optionally spread to a total."""
    from evcal.panel.result import is_panel_dir

    if is_panel_dir(model_dir):  # many series: evcal.panel.planning
        if drivers or compare_drivers:
            from evcal.panel import refuse_drivers

            refuse_drivers("--drivers" if drivers else "--compare-drivers")
        from evcal.panel.planning import plan_panel_cmd

        return plan_panel_cmd(model_dir, start, end, out, typer.echo, calendar=calendar, total=total,
                              totals=totals, compare=compare_cal, new_events=new_events, n_sims=sims,
                              seed=seed, series=series or None, allocate=allocate, workers=workers,
                              force=force, whole_units=round_units)
    if compare_drivers and not drivers:
        raise PlanError(f"--compare-drivers {compare_drivers}: give scenario A's driver values with "
                        "--drivers too (scenario B is the same file with the change, e.g. a price cut)")
    kind = "compare" if compare_cal or compare_drivers else "plan"
    if Path(out).suffix.lower() not in (".csv", ".xlsx"):  # refused before any work
        raise PlanError(f"--out {out}: unknown file type; write {kind}.csv or {kind}.xlsx")
    check_output(out, kind, force=force,
                 inputs=[model_dir, calendar, totals, compare_cal, allocate, drivers, compare_drivers])
    from evcal.model import load_model
    from evcal.plan import compare, make_plan

    result = load_model(model_dir)
    options = {"total": total, "totals": totals, "new_events": new_events, "n_sims": sims, "seed": seed,
               "whole_units": round_units}
    if compare_cal or compare_drivers:
        cmp = compare(result, start, end, compare_cal, calendar_a=calendar, drivers_a=drivers,
                      drivers_b=compare_drivers, **options)
        cmp.save(out)
        typer.echo(cmp.plan_a.summary())
        typer.echo("")
        typer.echo(cmp.summary())
        typer.echo(f"\nwrote {out} (date, plan_a, plan_b, difference; last row: totals)")
        return
    plan = make_plan(result, start, end, calendar=calendar, drivers=drivers, **options)
    plan.save(out)
    typer.echo(plan.summary())
    typer.echo(f"\nwrote {out} ({len(plan.table)} periods)")


@command("backtest")
def backtest_cmd(
    history: str | None = typer.Argument(None, help="History file: CSV, Parquet or .xlsx (or --sql)."),
    calendar: str = typer.Option(..., "--calendar", "-c", help="Event calendar (YAML)."),
    out: str = typer.Option(..., "--out", "-o", help="backtest.csv to write."),
    holdout_years: int = typer.Option(2, "--holdout-years", help="Last full years to hold out, one each."),
    date_col: DateCol = "date",
    value_col: ValueCol = "value",
    freq: Freq = None,
    transform: Transform = "auto",
    errors: Errors = "auto",
    arima_order: ArimaOrder = None,
    seasonal: Seasonal = "auto",
    fourier_order: FourierOrder = "auto",
    trend_order: TrendOrder = 1,
    trading_days: TradingDays = None,
    allow_negative: AllowNegative = False,
    leap_year: LeapYear = None,
    driver: Driver = None,
    db: Db = None,
    sql: Sql = None,
    force: Force = False,
) -> None:
    """Hold out the last years one at a time; score evcal against average-share and seasonal naive."""
    if Path(out).suffix.lower() != ".csv":
        raise PlanError(f"--out {out}: the backtest is written as CSV; use e.g. --out backtest.csv")
    inputs = _query_inputs(history, db, sql)
    check_output(out, "backtest", inputs=[*inputs, calendar], force=force)
    history = _history_source(history, db, sql)
    from evcal.backtesting import backtest, format_table, save_backtest

    bt = backtest(history, calendar, holdout_years=holdout_years, date_col=date_col,
                  value_col=value_col, freq=freq, drivers=driver,
                  **fit_options(transform, errors, arima_order, seasonal, fourier_order, trend_order,
                                    trading_days, allow_negative, leap_year))
    save_backtest(bt, out)
    typer.echo(format_table(bt))
    typer.echo("spread: scaled to each year's actual total (compares the profile); unspread: as planned.")
    typer.echo("Periods excluded in the calendar, and periods without a value, are not scored.")
    for note in bt.attrs.get("notes", []):
        typer.echo(f"note: {note}")
    typer.echo(f"\nwrote {out} ({len(bt)} rows)")


@command("demo")
def demo_cmd(
    out: str = typer.Option("demo-output", "--out", "-o", help="Folder for every demo output."),
    data: str = typer.Option(None, "--data", help="Folder with the demo history and calendar."),
    force: Force = False,
) -> None:
    """Run the whole job on the bundled, invented demo data (Fernhollow Garden Centres)."""
    from evcal.demo import run_demo

    run_demo(out, data=data, echo=typer.echo, force=force)  # checks --out first


@command("report")
def report_command(
    model_dir: str = typer.Argument(..., help="Single or panel model folder written by `evcal fit`."),
    out: str = typer.Option(..., "--out", help="HTML file to write (one self-contained file)."),
    plan: str | None = typer.Option(None, "--plan", help="plan.csv written by `evcal plan`."),
    backtest: str | None = typer.Option(None, "--backtest", help="backtest.csv written by `evcal backtest`."),
    calendar: str | None = typer.Option(
        None, "--calendar", help="Calendar file for the day-by-day calendar view of the plan."),
    title: str | None = typer.Option(None, "--title", help="Heading of the report."),
    series: list[str] = typer.Option(
        None, "--series", help="Panel models: a section for these series (repeat; the first 12 by default)."),
    force: Force = False,
) -> None:
    """Write one HTML report: history, seasonal index, lifts, plan, calendar, backtest."""
    check_output(out, "report", inputs=[model_dir, plan, backtest, calendar], force=force)
    from evcal.report import write_report

    path = write_report(model_dir, out, plan_csv=plan, backtest_csv=backtest, calendar=calendar, title=title,
                        series=series or None)
    typer.echo(f"report written: {path}")


@command("discover")
def discover_cmd(
    history: str | None = typer.Argument(
        None, help="History file (CSV, Parquet or .xlsx), a model folder written by evcal fit, or --sql."),
    calendar: str = typer.Option(None, "--calendar", "-c", help="Event calendar (YAML), if any."),
    out: str = typer.Option(..., "--out", "-o", help="Output folder for the suggestions."),
    stockouts: str = typer.Option(None, "--stockouts", help="CSV of stock-outs: start,end[,reason]."),
    date_col: DateCol = "date",
    value_col: ValueCol = "value",
    freq: Freq = None,
    transform: Transform = "auto",
    errors: Errors = "auto",
    critical: float = typer.Option(None, "--critical", help="Chen-Liu critical |tau| (default by length)."),
    series: str = typer.Option(None, "--series", help="Panel model folders: the one series to look into."),
    db: Db = None,
    sql: Sql = None,
    force: Force = False,
) -> None:
    """Find cycles, unexplained peaks, dips and breaks, abnormal years and lost demand."""
    inputs = _query_inputs(history, db, sql)
    check_output(out, "findings", inputs=[*inputs, calendar, stockouts], force=force)
    if critical is not None and not 2.0 <= critical <= 10.0:
        raise EvcalError(f"option --critical: {critical:g} must be between 2 and 10 (3 to 4 is usual)")
    from evcal.discovery import discover

    history = _history_source(history, db, sql)
    found = discover(history, calendar, stockouts=stockouts, date_col=date_col, value_col=value_col,
                     freq=freq, cval=critical, transform=transform, errors=errors, series=series)
    found.save(out)
    typer.echo(found.summary())
    extra = [n for n, keep in (("index_effects.csv", not found.index_effects.empty),
                               ("lost_demand.csv", bool(found.lost))) if keep]
    typer.echo(f"\nwrote {out}/ (suggestions.csv, suggestions.yaml, findings.png"
               f"{''.join(', ' + e for e in extra)})")


@command("check", calendar_app)
def calendar_check(
    file: str = typer.Argument(..., help="Calendar file (YAML)."),
    from_year: int | None = typer.Option(
        None, "--from", help="First year to check (default: the first year the file names)."),
    to_year: int | None = typer.Option(
        None, "--to", help="Last year to check (default: the last year the file names)."),
) -> None:
    """Validate a calendar file and print a short summary and warnings."""
    from evcal.calendar import load_calendar
    from evcal.calendar.summary import check_calendar, default_years

    cal = load_calendar(Path(file))
    lo, hi = default_years(cal)
    first, last = from_year or lo, to_year or hi
    _check_year_range(first, last)
    report = check_calendar(cal, first, last)
    for line in report.lines:
        typer.echo(line)
    if report.warnings:
        typer.echo(f"warnings ({len(report.warnings)}):")
        for line in report.warnings:
            typer.echo(f"  - {line}")
    else:
        typer.echo("warnings: none")
    typer.echo("ok: the calendar is valid")


@command("dates", calendar_app)
def calendar_dates(
    file: str = typer.Argument(..., help="Calendar file (YAML)."),
    from_year: int = typer.Option(..., "--from", help="First year (inclusive)."),
    to_year: int = typer.Option(..., "--to", help="Last year (inclusive)."),
    out: str | None = typer.Option(None, "--out", help="CSV file to write (default: print to stdout)."),
    force: Force = False,
) -> None:
    """List every occurrence (event, start, end, strength) between two years, as CSV."""
    from evcal.calendar import load_calendar
    from evcal.calendar.summary import auto_run_up_text
    from evcal.formula_safe import formula_safe_frame

    if out is not None:
        check_output(out, "dates", inputs=[file], force=force)
    _check_year_range(from_year, to_year)
    cal = load_calendar(Path(file))
    table = cal.occurrences(from_year, to_year)
    for ev in (e for e in cal.events if getattr(e, "before_auto", False)):  # the rows hold no run-up
        typer.echo(f"note: {ev.name}: before: {auto_run_up_text(ev)}; the rows are the event's own days",
                   err=True)
    table["start"] = table["start"].dt.strftime("%Y-%m-%d")
    table["end"] = table["end"].dt.strftime("%Y-%m-%d")
    text = formula_safe_frame(table).to_csv(index=False, float_format="%g", lineterminator="\n")
    if out is None:
        typer.echo(text, nl=False)
        return
    with atomic_path(out) as tmp:
        tmp.write_text(text, encoding="utf-8")
    typer.echo(f"{len(table)} occurrences written to {out}", err=True)


def _check_year_range(first: int, last: int) -> None:
    from evcal.calendar import year_span_problems

    problems = year_span_problems(first, last)
    if problems:
        raise CalendarError(problems)
