"""``evcal discover``: suggest calendar entries from what the history shows and the calendar misses."""

from __future__ import annotations

import typer

from evcal.cli.console import app, guarded
from evcal.cli.options import DateCol, Errors, Force, Freq, Transform, ValueCol
from evcal.errors import EvcalError

__all__ = ["discover_cmd"]


@app.command("discover")
@guarded
def discover_cmd(
    history: str = typer.Argument(
        ..., help="History file (CSV, Parquet or .xlsx), or a model folder written by evcal fit."),
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
    force: Force = False,
) -> None:
    """Find cycles, unexplained peaks, dips and breaks, abnormal years and lost demand."""
    from evcal.outputs import check_output

    check_output(out, "findings", inputs=[history, calendar, stockouts], force=force)
    if critical is not None and not 2.0 <= critical <= 10.0:
        raise EvcalError(f"option --critical: {critical:g} must be between 2 and 10 (3 to 4 is usual)")
    from evcal.discovery import discover

    found = discover(history, calendar, stockouts=stockouts, date_col=date_col, value_col=value_col,
                     freq=freq, cval=critical, transform=transform, errors=errors, series=series)
    found.save(out)
    typer.echo(found.summary())
    extra = [n for n, keep in (("index_effects.csv", not found.index_effects.empty),
                               ("lost_demand.csv", bool(found.lost))) if keep]
    typer.echo(f"\nwrote {out}/ (suggestions.csv, suggestions.yaml, findings.png"
               f"{''.join(', ' + e for e in extra)})")
