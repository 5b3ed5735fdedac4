"""``evcal plan`` and ``evcal backtest``: plan future periods from a model, score past plans."""

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

__all__ = ["plan_cmd", "backtest_cmd"]


def _check_out(out: str, what: str = "plan") -> None:
    """Refuse an unknown output type before any work (nothing is written on error)."""
    from pathlib import Path

    from evcal.errors import PlanError

    if Path(out).suffix.lower() not in (".csv", ".xlsx"):
        raise PlanError(f"--out {out}: unknown file type; write {what}.csv or {what}.xlsx")


@app.command("plan")
@guarded
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
    force: Force = False,
) -> None:
    """Plan future periods from the base and the scheduled events, optionally spread to a total."""
    from evcal.outputs import check_output
    from evcal.panel.result import is_panel_dir

    if is_panel_dir(model_dir):  # many series: evcal.panel.planning
        from evcal.panel.planning import plan_panel_cmd

        return plan_panel_cmd(model_dir, start, end, out, typer.echo, calendar=calendar, total=total,
                              totals=totals, compare=compare_cal, new_events=new_events, n_sims=sims,
                              seed=seed, series=series or None, allocate=allocate, workers=workers,
                              force=force)
    kind = "compare" if compare_cal else "plan"
    _check_out(out, kind)
    check_output(out, kind, inputs=[model_dir, calendar, totals, compare_cal, allocate], force=force)
    from evcal.model import load_model
    from evcal.plan import compare, make_plan

    result = load_model(model_dir)
    options = {"total": total, "totals": totals, "new_events": new_events, "n_sims": sims, "seed": seed}
    if compare_cal:
        cmp = compare(result, start, end, compare_cal, calendar_a=calendar, **options)
        cmp.save(out)
        typer.echo(cmp.plan_a.summary())
        typer.echo("")
        typer.echo(cmp.summary())
        typer.echo(f"\nwrote {out} (date, plan_a, plan_b, difference; last row: totals)")
        return
    plan = make_plan(result, start, end, calendar=calendar, **options)
    plan.save(out)
    typer.echo(plan.summary())
    typer.echo(f"\nwrote {out} ({len(plan.table)} periods)")


@app.command("backtest")
@guarded
def backtest_cmd(
    history: str = typer.Argument(..., help="History file: CSV, Parquet or .xlsx."),
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
    fourier_order: FourierOrder = 10,
    trend_order: TrendOrder = 1,
    trading_days: TradingDays = False,
    allow_negative: AllowNegative = False,
    force: Force = False,
) -> None:
    """Hold out the last years one at a time; score evcal against average-share and seasonal naive."""
    from pathlib import Path

    from evcal._files import atomic_path
    from evcal.errors import PlanError
    from evcal.formula_safe import write_csv
    from evcal.outputs import check_output

    if Path(out).suffix.lower() != ".csv":
        raise PlanError(f"--out {out}: the backtest is written as CSV; use e.g. --out backtest.csv")
    check_output(out, "backtest", inputs=[history, calendar], force=force)
    from evcal.backtesting import backtest, format_table

    bt = backtest(history, calendar, holdout_years=holdout_years, date_col=date_col,
                  value_col=value_col, freq=freq,
                  **fit_options(transform, errors, arima_order, seasonal, fourier_order, trend_order,
                                trading_days, allow_negative))
    with atomic_path(out) as tmp:
        write_csv(bt, tmp, index=False, float_format="%.6f")
    typer.echo(format_table(bt))
    typer.echo("spread: scaled to each year's actual total (compares the profile); unspread: as planned.")
    typer.echo("Periods excluded in the calendar, and periods without a value, are not scored.")
    for note in bt.attrs.get("notes", []):
        typer.echo(f"note: {note}")
    typer.echo(f"\nwrote {out} ({len(bt)} rows)")
