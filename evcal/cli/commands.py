"""``evcal fit`` and ``evcal show``: each command parses its options, checks ``--out`` first, calls one
step, writes.

:mod:`evcal.cli` imports the command modules in the order ``evcal --help`` lists them: this one (fit,
show), :mod:`~evcal.cli.plan_command`, :mod:`~evcal.cli.history_commands` (backtest, discover, demo),
:mod:`~evcal.cli.report_command`, :mod:`~evcal.cli.calendar_commands`.
"""

from __future__ import annotations

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
from evcal.outputs import check_output

__all__ = ["fit_cmd", "show_cmd"]


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
    level: str = typer.Option(
        None, "--level", help="Add the series up to these key columns first (a,b); total: every series up to "
        "one, fitted as one series."),
    group_col: str = typer.Option(None, "--group-col", help="Column grouping series for pooled lifts."),
    workers: int = typer.Option(None, "--workers", help="Fit on a local Dask cluster of N processes."),
    scheduler: str = typer.Option(None, "--scheduler", help="Fit on the Dask cluster at this address."),
    driver: Driver = None,
    db: Db = None,
    sql: Sql = None,
    force: Force = False,
) -> None:
    """Fit base, event lifts and interventions; write the model folder."""
    talk.refuse_stdout(out, "a model folder", "model")
    total = False
    if level:  # the grand total of a long file is one series: a one-series model folder
        from evcal.panel.total import is_total, refuse_with_total

        total = is_total(level)
        if total:
            refuse_with_total(level, group_col=group_col, workers=workers, scheduler=scheduler)
    panel = bool(series_col or level or group_col or workers or scheduler) and not total
    if (panel or total) and driver:
        from evcal.panel import refuse_drivers

        refuse_drivers("--driver")
    inputs = query_inputs(history, db, sql)
    check_output(out, "panel" if panel else "model", inputs=[*inputs, calendar], force=force)
    history = history_source(history, db, sql)
    options = fit_options(transform, errors, arima_order, seasonal, fourier_order, trend_order,
                          trading_days, allow_negative, leap_year)
    if panel:  # many series: evcal.panel
        from evcal.panel import fit_panel

        result = fit_panel(history, calendar, series_col, level=level, group_col=group_col, workers=workers,
                           scheduler=scheduler, out=out, date_col=date_col, value_col=value_col, freq=freq,
                           **options)
        talk.say(result.summary())
        talk.say(f"\nwrote {out}/ (panel.json, series.csv, lifts.csv, pooling.csv, occurrences.csv, "
                   "profile.csv, fitted.parquet, coefficients.parquet, skipped.csv)")
        return
    from evcal.engine import fit
    from evcal.model.summary import describe

    with talk.stage("fit: reading the history and fitting the model"):
        if total:
            from evcal.panel.total import fit_total

            result = fit_total(history, calendar, series_col, date_col=date_col, value_col=value_col,
                               freq=freq, **options)
        else:
            result = fit(history, calendar, date_col=date_col, value_col=value_col, freq=freq,
                         drivers=driver, **options)
    with talk.stage(f"fit: writing {out}"):
        result.save(out)
    talk.say(describe(result))
    files = "model.json, lifts.csv, occurrences.csv, profile.csv, fitted.csv"
    if result.spec.drivers:
        files += ", drivers.csv"
    talk.say(f"\nwrote {out}/ ({files})")


@command("show")
def show_cmd(
    model_dir: str = typer.Argument(..., help="Model folder written by evcal fit."),
    series: str = typer.Option(None, "--series", help="Panel models: one series, e.g. product=P1,store=S2."),
) -> None:
    """Print a readable summary of a fitted model."""
    from evcal.model import load_model
    from evcal.model.summary import describe
    from evcal.panel import is_panel_dir, load_panel

    # the summary is what `show` is for: printed under --quiet too, like a table on stdout
    if not is_panel_dir(model_dir):
        typer.echo(describe(load_model(model_dir)))
    elif series is None:
        typer.echo(load_panel(model_dir).summary())
    else:
        typer.echo(describe(load_panel(model_dir).series_result(series)))
