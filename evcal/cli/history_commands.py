"""``evcal backtest``, ``evcal discover`` (both read a history) and ``evcal demo`` (the whole job on the
bundled history)."""

from __future__ import annotations

from pathlib import Path

import typer

from evcal.cli import talk
from evcal.cli.console import command
from evcal.cli.options import (
    AllowNegative,
    ArimaOrder,
    DateCol,
    Db,
    Driver,
    Errors,
    Force,
    FourierOrder,
    Freq,
    LeapYear,
    Seasonal,
    Sql,
    TradingDays,
    Transform,
    TrendOrder,
    ValueCol,
    fit_options,
    history_source,
    query_inputs,
)
from evcal.errors import EvcalError, PlanError
from evcal.outputs import check_output

__all__ = ["backtest_cmd", "demo_cmd", "discover_cmd"]


@command("backtest")
def backtest_cmd(
    history: str | None = typer.Argument(None, help="History file: CSV, Parquet or .xlsx (or --sql)."),
    calendar: str = typer.Option(..., "--calendar", "-c", help="Event calendar (YAML)."),
    out: str = typer.Option(..., "--out", "-o", help="backtest.csv to write; - prints it on stdout."),
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
    path = talk.table_path(out, "backtest.csv")  # out, or the file printed on stdout for --out -
    if Path(path).suffix.lower() != ".csv":
        raise PlanError(f"--out {out}: the backtest is written as CSV; use e.g. --out backtest.csv (or - for "
                        "stdout)")
    inputs = query_inputs(history, db, sql)
    check_output(path, "backtest", inputs=[*inputs, calendar], force=force)
    history = history_source(history, db, sql)
    from evcal.backtesting import backtest, format_table, save_backtest

    bt = backtest(history, calendar, holdout_years=holdout_years, date_col=date_col,
                  value_col=value_col, freq=freq, drivers=driver,
                  **fit_options(transform, errors, arima_order, seasonal, fourier_order, trend_order,
                                    trading_days, allow_negative, leap_year))
    save_backtest(bt, path)
    talk.say(format_table(bt))
    talk.say("spread: scaled to each year's actual total (compares the profile); unspread: as planned.")
    talk.say("Periods excluded in the calendar, and periods without a value, are not scored.")
    for note in bt.attrs.get("notes", []):
        talk.say(f"note: {note}")
    talk.say(f"\nwrote {talk.named(out)} ({len(bt)} rows)")


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
    talk.refuse_stdout(out, "a folder of findings", "findings")
    inputs = query_inputs(history, db, sql)
    check_output(out, "findings", inputs=[*inputs, calendar, stockouts], force=force)
    if critical is not None and not 2.0 <= critical <= 10.0:
        raise EvcalError(f"option --critical: {critical:g} must be between 2 and 10 (3 to 4 is usual)")
    from evcal.discovery import discover

    history = history_source(history, db, sql)
    found = discover(history, calendar, stockouts=stockouts, date_col=date_col, value_col=value_col,
                     freq=freq, cval=critical, transform=transform, errors=errors, series=series)
    found.save(out)
    talk.say(found.summary())
    extra = [n for n, keep in (("index_effects.csv", not found.index_effects.empty),
                               ("lost_demand.csv", bool(found.lost))) if keep]
    talk.say(f"\nwrote {out}/ (suggestions.csv, suggestions.yaml, findings.png"
               f"{''.join(', ' + e for e in extra)})")


@command("demo")
def demo_cmd(
    out: str = typer.Option("demo-output", "--out", "-o", help="Folder for every demo output."),
    data: str = typer.Option(None, "--data", help="Folder with the demo history and calendar."),
    force: Force = False,
) -> None:
    """Run the whole job on the bundled, invented demo data (Fernhollow Garden Centres)."""
    from evcal.demo import run_demo

    talk.refuse_stdout(out, "a folder of outputs", "demo-output")
    run_demo(out, data=data, echo=talk.say, force=force)  # checks --out first
