"""``evcal fit`` and ``evcal show``: fit a model (one series or a panel), print its summary."""

from __future__ import annotations

import typer

from evcal.cli.console import app, guarded
from evcal.cli.options import (
    AllowNegative,
    ArimaOrder,
    DateCol,
    Errors,
    Force,
    FourierOrder,
    Freq,
    Seasonal,
    TradingDays,
    Transform,
    TrendOrder,
    ValueCol,
    fit_options,
)

__all__ = ["fit_cmd", "show_cmd"]


@app.command("fit")
@guarded
def fit_cmd(
    history: str = typer.Argument(..., help="History file: CSV, Parquet or .xlsx."),
    calendar: str = typer.Option(None, "--calendar", "-c", help="Event calendar (YAML)."),
    out: str = typer.Option(..., "--out", "-o", help="Output folder for the model."),
    date_col: DateCol = "date",
    value_col: ValueCol = "value",
    freq: Freq = None,
    transform: Transform = "auto",
    errors: Errors = "auto",
    arima_order: ArimaOrder = None,
    seasonal: Seasonal = "auto",
    fourier_order: FourierOrder = 10,
    trend_order: TrendOrder = 1,
    trading_days: TradingDays = False,
    allow_negative: AllowNegative = False,
    series_col: list[str] = typer.Option(
        None, "--series-col", help="Key column(s) of a long file, one series per key (repeat, or a,b)."),
    level: str = typer.Option(None, "--level", help="Add the series up to these key columns first (a,b)."),
    group_col: str = typer.Option(None, "--group-col", help="Column grouping series for pooled lifts."),
    workers: int = typer.Option(None, "--workers", help="Fit on a local Dask cluster of N processes."),
    scheduler: str = typer.Option(None, "--scheduler", help="Fit on the Dask cluster at this address."),
    force: Force = False,
) -> None:
    """Fit base, event lifts and interventions; write the model folder."""
    from evcal.outputs import check_output

    panel = bool(series_col or level or group_col or workers or scheduler)
    check_output(out, "panel" if panel else "model", inputs=[history, calendar], force=force)
    options = fit_options(transform, errors, arima_order, seasonal, fourier_order, trend_order,
                          trading_days, allow_negative)
    if panel:  # many series: evcal.panel
        from evcal.panel.cli_support import fit_panel_cmd

        return fit_panel_cmd(history, calendar, out, series_col, echo=typer.echo, level=level,
                             group_col=group_col, workers=workers, scheduler=scheduler, date_col=date_col,
                             value_col=value_col, freq=freq, **options)
    from evcal.engine import fit
    from evcal.model.summary import describe

    result = fit(history, calendar, date_col=date_col, value_col=value_col, freq=freq, **options)
    result.save(out)
    typer.echo(describe(result))
    typer.echo(f"\nwrote {out}/ (model.json, lifts.csv, occurrences.csv, profile.csv, fitted.csv)")


@app.command("show")
@guarded
def show_cmd(
    model_dir: str = typer.Argument(..., help="Model folder written by evcal fit."),
    series: str = typer.Option(None, "--series", help="Panel models: one series, e.g. product=P1,store=S2."),
) -> None:
    """Print a readable summary of a fitted model."""
    from evcal.panel.result import is_panel_dir

    if is_panel_dir(model_dir):
        from evcal.panel.cli_support import show_panel_cmd

        return show_panel_cmd(model_dir, series, typer.echo)
    from evcal.model import load_model
    from evcal.model.summary import describe

    typer.echo(describe(load_model(model_dir)))
