"""``evcal report``: one self-contained HTML report of a model folder (single or panel)."""

from __future__ import annotations

import typer

from evcal.cli import talk
from evcal.cli.console import command
from evcal.cli.options import Force
from evcal.outputs import check_output

__all__ = ["report_command"]


@command("report")
def report_command(
    model_dir: str = typer.Argument(..., help="Single or panel model folder written by `evcal fit`."),
    out: str = typer.Option(..., "--out", "-o", help="HTML file to write (one self-contained file)."),
    plan: str | None = typer.Option(None, "--plan", help="plan.csv written by `evcal plan`."),
    backtest: str | None = typer.Option(None, "--backtest", help="backtest.csv written by `evcal backtest`."),
    calendar: str | None = typer.Option(
        None, "--calendar", "-c", help="Calendar file for the day-by-day calendar view of the plan."),
    title: str | None = typer.Option(None, "--title", help="Heading of the report."),
    series: list[str] = typer.Option(
        None, "--series", help="Panel models: a section for these series (repeat; the first 12 by default)."),
    force: Force = False,
) -> None:
    """Write one HTML report: history, seasonal index, lifts, plan, calendar, backtest."""
    talk.refuse_stdout(out, "an HTML page", "report.html")
    check_output(out, "report", inputs=[model_dir, plan, backtest, calendar], force=force)
    from evcal.report import write_report

    with talk.stage(f"report: reading {model_dir} and drawing the charts"):
        path = write_report(model_dir, out, plan_csv=plan, backtest_csv=backtest, calendar=calendar,
                            title=title, series=series or None)
    talk.say(f"report written: {path}")
