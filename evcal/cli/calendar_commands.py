"""``evcal calendar check`` and ``evcal calendar dates``: a calendar file on its own."""

from __future__ import annotations

from pathlib import Path

import typer

from evcal._files import atomic_path
from evcal.cli import talk
from evcal.cli.console import calendar_app, command
from evcal.cli.options import Force
from evcal.errors import CalendarError
from evcal.outputs import check_output

__all__ = ["calendar_check", "calendar_dates"]


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
        talk.say(line)
    if report.warnings:
        talk.say(f"warnings ({len(report.warnings)}):")
        for line in report.warnings:  # under --quiet too: they are the warnings
            (talk.warn if talk.quiet() else talk.say)(f"  - {line}")
    else:
        talk.say("warnings: none")
    talk.say("ok: the calendar is valid")


@command("dates", calendar_app)
def calendar_dates(
    file: str = typer.Argument(..., help="Calendar file (YAML)."),
    from_year: int = typer.Option(..., "--from", help="First year (inclusive)."),
    to_year: int = typer.Option(..., "--to", help="Last year (inclusive)."),
    out: str | None = typer.Option(
        None, "--out", "-o", help="CSV file to write; - or left out: print it on stdout."),
    force: Force = False,
) -> None:
    """List every occurrence (event, start, end, strength) between two years, as CSV."""
    from evcal.calendar import load_calendar
    from evcal.calendar.summary import auto_run_up_text
    from evcal.formula_safe import formula_safe_frame

    if talk.is_stdout(out):
        out = None
    if out is not None:
        check_output(out, "dates", inputs=[file], force=force)
    _check_year_range(from_year, to_year)
    cal = load_calendar(Path(file))
    table = cal.occurrences(from_year, to_year)
    for ev in (e for e in cal.events if getattr(e, "before_auto", False)):  # the rows hold no run-up
        talk.warn(f"note: {ev.name}: before: {auto_run_up_text(ev)}; the rows are the event's own days")
    table["start"] = table["start"].dt.strftime("%Y-%m-%d")
    table["end"] = table["end"].dt.strftime("%Y-%m-%d")
    text = formula_safe_frame(table).to_csv(index=False, float_format="%g", lineterminator="\n")
    if out is None:
        typer.echo(text, nl=False)
        return
    with atomic_path(out) as tmp:
        tmp.write_text(text, encoding="utf-8")
    if not talk.quiet():
        typer.echo(f"{len(table)} occurrences written to {out}", err=True)


def _check_year_range(first: int, last: int) -> None:
    from evcal.calendar import year_span_problems

    problems = year_span_problems(first, last)
    if problems:
        raise CalendarError(problems)
