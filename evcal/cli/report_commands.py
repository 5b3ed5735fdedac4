"""``evcal report`` and ``evcal demo``: one HTML report of a model; the whole job on the demo data."""

from __future__ import annotations

import typer

from evcal.cli.console import app, guarded
from evcal.cli.options import Force

__all__ = ["demo_cmd", "report_command"]


@app.command("demo")
@guarded
def demo_cmd(
    out: str = typer.Option("demo-output", "--out", "-o", help="Folder for every demo output."),
    data: str = typer.Option(None, "--data", help="Folder with the demo history and calendar."),
    force: Force = False,
) -> None:
    """Run the whole job on the bundled, invented demo data (Fernhollow Garden Centres)."""
    from evcal.demo import run_demo

    run_demo(out, data=data, echo=typer.echo, force=force)  # checks --out first


@app.command("report")
@guarded
def report_command(
    model_dir: str = typer.Argument(..., help="Single or panel model folder written by `evcal fit`."),
    out: str = typer.Option(..., "--out", help="HTML file to write (one self-contained file)."),
    plan: str | None = typer.Option(None, "--plan", help="plan.csv written by `evcal plan`."),
    backtest: str | None = typer.Option(
        None, "--backtest", help="backtest.csv written by `evcal backtest`."
    ),
    calendar: str | None = typer.Option(
        None, "--calendar", help="Calendar file for the day-by-day calendar view of the plan."
    ),
    title: str | None = typer.Option(None, "--title", help="Heading of the report."),
    series: list[str] = typer.Option(
        None, "--series", help="Panel models: a section for these series (repeat; the first 12 by default)."),
    force: Force = False,
) -> None:
    """Write one HTML report: history, seasonal index, lifts, plan, calendar, backtest."""
    from evcal.outputs import check_output

    check_output(out, "report", inputs=[model_dir, plan, backtest, calendar], force=force)
    from evcal.report import write_report

    path = write_report(
        model_dir, out, plan_csv=plan, backtest_csv=backtest, calendar=calendar, title=title,
        series=series or None,
    )
    typer.echo(f"report written: {path}")
