"""The ``evcal`` command line: thin wrappers over the steps.

Each command parses options, checks its output location
(:func:`evcal.outputs.check_output`) before reading anything, calls one step's
API and writes its outputs atomically. Any :class:`~evcal.errors.EvcalError`
becomes one line per problem on stderr and exit code 2; any other exception
one line naming the command and its inputs, exit code 1. No traceback reaches
the user unless asked for (``evcal --debug ...`` or ``EVCAL_DEBUG=1``).
"""

from __future__ import annotations

import contextlib
import functools
import os
import sys
import traceback
from collections.abc import Callable
from typing import Annotated, Any, TypeVar

import click
import typer

from evcal.errors import EvcalError, clip

F = TypeVar("F", bound=Callable[..., Any])

app = typer.Typer(
    name="evcal",
    help="Calendar-effect models: event lifts, a clean seasonal base, forward plans.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)
calendar_app = typer.Typer(help="Check an event calendar and list its dates.", no_args_is_help=True)
app.add_typer(calendar_app, name="calendar")

#: set by the global ``--debug`` flag for the command being run
_DEBUG = {"on": False}
#: parameters of the commands that name an input (file or folder), for the last-resort message
_INPUT_PARAMS = ("history", "file", "model_dir", "calendar", "plan", "backtest", "totals", "compare_cal",
                 "stockouts", "allocate", "data")
_REPORT = "please report this with the command line and the input files"


@app.callback()
def _root(
    debug: bool = typer.Option(
        False, "--debug", help="Show the traceback of an unexpected problem (as EVCAL_DEBUG=1 does)."),
) -> None:
    """Calendar-effect models: event lifts, a clean seasonal base, forward plans."""
    _DEBUG["on"] = debug


def _debug() -> bool:
    return _DEBUG["on"] or bool(os.environ.get("EVCAL_DEBUG"))


def _command_name(callback: Callable[..., Any]) -> str:
    """``evcal fit``, ``evcal calendar dates``: the command registered with ``callback``."""
    for prefix, group in (("evcal", app), ("evcal calendar", calendar_app)):
        for info in group.registered_commands:
            if info.callback is callback:
                return f"{prefix} {info.name or callback.__name__}"
    return "evcal"


def last_resort_line(err: BaseException, command: str, inputs: list[str]) -> str:
    """The one line an unexpected exception ends in: the command, its inputs, what to do.

    Examples
    --------
    >>> last_resort_line(RecursionError("maximum recursion depth exceeded"), "evcal fit", ["a.csv"])
    'evcal fit: unexpected problem (RecursionError: maximum recursion depth exceeded) with input a.csv; \
please report this with the command line and the input files (add --debug to see the traceback)'
    """
    name = type(err).__name__
    shown = f" with input{'s' if len(inputs) > 1 else ''} {', '.join(clip(i, 120) for i in inputs)}" \
        if inputs else ""
    debug = "add --debug to see the traceback"
    if isinstance(err, OSError):
        where = err.filename if err.filename is not None else "a file or folder"
        reason = err.strerror or clip(str(err))
        return (f"{command}: {clip(str(where), 200)}: {reason} ({name}); check that the path exists, "
                f"that you may read or write it and that the disk has room ({debug})")
    if isinstance(err, MemoryError):
        return (f"{command}: ran out of memory (MemoryError){shown}; try smaller inputs or options "
                f"(e.g. fewer --sims); if it should fit, {_REPORT} ({debug})")
    text = " ".join(str(err).split())
    detail = f"{name}: {clip(text)}" if text else name
    return f"{command}: unexpected problem ({detail}){shown}; {_REPORT} ({debug})"


def guarded(fn: F) -> F:
    """Turn user-fixable errors into one line each on stderr and exit code 2; anything else into one
    line naming the command and its inputs and exit code 1 (the last-resort handler)."""

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except EvcalError as err:
            for line in err.problems:
                typer.echo(f"error: {line}", err=True)
            raise typer.Exit(code=err.exit_code) from None
        except (click.exceptions.Exit, click.exceptions.ClickException, click.exceptions.Abort):
            raise  # typer's own exits and usage errors keep their codes
        except KeyboardInterrupt:
            typer.echo("interrupted; no output written", err=True)
            raise typer.Exit(code=130) from None
        except Exception as err:  # noqa: BLE001 - the last resort: a bug or an input we did not foresee
            if _debug():
                typer.echo(traceback.format_exc(), err=True, nl=False)
            inputs = [str(kwargs[k]) for k in _INPUT_PARAMS if isinstance(kwargs.get(k), str) and kwargs[k]]
            typer.echo(f"error: {last_resort_line(err, _command_name(wrapper), inputs)}", err=True)
            raise typer.Exit(code=1) from None

    return wrapper  # type: ignore[return-value]


def main() -> None:
    """The ``evcal`` console command: run it, then end the process at once.

    By the time a command returns, every output file is written, closed and
    renamed into place. Tearing down the interpreter after that (clearing the
    ~850 loaded modules of pandas, pyarrow, pydantic, ...) takes about 0.2 s
    and has nothing left to do, so the process ends with ``os._exit`` once
    stdout and stderr are flushed (common practice for command-line tools, no
    source). An exception outside a command (the commands have their own
    handler, :func:`guarded`) still ends in one line and exit code 1; with
    ``--debug`` or ``EVCAL_DEBUG=1`` its traceback is shown first.
    """
    try:
        app()
        code: Any = 0
    except SystemExit as done:
        code = done.code
    except KeyboardInterrupt:
        print("interrupted; no output written", file=sys.stderr)
        code = 130
    except Exception as err:  # noqa: BLE001 - the last resort, outside any command
        if _debug() or "--debug" in sys.argv[1:]:
            traceback.print_exc()
        print(f"error: {last_resort_line(err, 'evcal', [])}", file=sys.stderr)
        code = 1
    if code is None:
        code = 0
    elif not isinstance(code, int):  # SystemExit("message"): Python prints it and exits with 1
        print(code, file=sys.stderr)
        code = 1
    for stream in (sys.stdout, sys.stderr):
        # a reader that stopped early (| head), or a stream already closed
        with contextlib.suppress(BrokenPipeError, ValueError):
            stream.flush()
    os._exit(code)


# ---------------------------------------------------------------- calendar
# (calendar check, calendar dates)


@calendar_app.command("check")
@guarded
def calendar_check(
    file: str = typer.Argument(..., help="Calendar file (YAML)."),
    from_year: int | None = typer.Option(
        None, "--from", help="First year to check (default: the first year the file names)."
    ),
    to_year: int | None = typer.Option(
        None, "--to", help="Last year to check (default: the last year the file names)."
    ),
) -> None:
    """Validate a calendar file and print a short summary and warnings."""
    from pathlib import Path

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


@calendar_app.command("dates")
@guarded
def calendar_dates(
    file: str = typer.Argument(..., help="Calendar file (YAML)."),
    from_year: int = typer.Option(..., "--from", help="First year (inclusive)."),
    to_year: int = typer.Option(..., "--to", help="Last year (inclusive)."),
    out: str | None = typer.Option(
        None, "--out", help="CSV file to write (default: print to stdout)."
    ),
    force: Force = False,
) -> None:
    """List every occurrence (event, start, end, strength) between two years, as CSV."""
    from pathlib import Path

    from evcal._files import atomic_path
    from evcal.calendar import load_calendar
    from evcal.formula_safe import formula_safe_frame
    from evcal.outputs import check_output

    if out is not None:
        check_output(out, "dates", inputs=[file], force=force)
    _check_year_range(from_year, to_year)
    cal = load_calendar(Path(file))
    table = cal.occurrences(from_year, to_year)
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
    from evcal.errors import CalendarError

    problems = year_span_problems(first, last)
    if problems:
        raise CalendarError(problems)

# ---------------------------------------------------------------- fit, show


def _parse_order(text: str | None) -> tuple[int, int, int] | None:
    if text is None:
        return None
    try:
        parts = tuple(int(v) for v in text.split(","))
    except ValueError:
        parts = ()
    if len(parts) != 3:
        raise EvcalError(f"option --arima-order: {text!r} is not three integers p,d,q (e.g. 1,0,0)")
    return parts  # type: ignore[return-value]


# Options shared by every command that reads a history or fits a model: one
# definition each, so their names, defaults and help never drift apart.
DateCol = Annotated[str, typer.Option("--date-col", help="Column with the period dates.")]
ValueCol = Annotated[str, typer.Option("--value-col", help="Column with the values.")]
Freq = Annotated[str | None, typer.Option("--freq", help="daily, weekly, W-SAT, monthly, quarterly.")]
Transform = Annotated[str, typer.Option("--transform", help="auto | log | none | count")]
Errors = Annotated[str, typer.Option("--errors", help="auto | ols | arima")]
ArimaOrder = Annotated[str | None, typer.Option("--arima-order", help="p,d,q for errors arima, e.g. 0,1,1")]
Seasonal = Annotated[str, typer.Option("--seasonal", help="auto | dummies | fourier")]
FourierOrder = Annotated[int, typer.Option("--fourier-order", help="Harmonics of annual Fourier terms.")]
TrendOrder = Annotated[int, typer.Option("--trend-order", help="0 flat, 1 linear, 2 quadratic.")]
TradingDays = Annotated[bool, typer.Option("--trading-days", help="Weekday-composition terms (monthly).")]
AllowNegative = Annotated[bool, typer.Option("--allow-negative", help="Accept negative values.")]
Force = Annotated[bool, typer.Option(
    "--force", help="Replace evcal's own output of another kind or version at --out (never a file or "
    "folder evcal did not write, never an input).")]


def _fit_options(transform: str, errors: str, arima_order: str | None, seasonal: str, fourier_order: int,
                 trend_order: int, trading_days: bool, allow_negative: bool) -> dict[str, Any]:
    """The fit options of a command line, as keyword arguments of :func:`evcal.fit`."""
    return {"transform": transform, "errors": errors, "arima_order": _parse_order(arima_order),
            "seasonal": seasonal, "fourier_order": fourier_order, "trend_order": trend_order,
            "trading_days": trading_days, "allow_negative": allow_negative}



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
    options = _fit_options(transform, errors, arima_order, seasonal, fourier_order, trend_order,
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


# ---------------------------------------------------------------- plan, backtest


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
                  **_fit_options(transform, errors, arima_order, seasonal, fourier_order, trend_order,
                                 trading_days, allow_negative))
    with atomic_path(out) as tmp:
        write_csv(bt, tmp, index=False, float_format="%.6f")
    typer.echo(format_table(bt))
    typer.echo("spread: scaled to each year's actual total (compares the profile); unspread: as planned.")
    typer.echo("Periods excluded in the calendar, and periods without a value, are not scored.")
    for note in bt.attrs.get("notes", []):
        typer.echo(f"note: {note}")
    typer.echo(f"\nwrote {out} ({len(bt)} rows)")


# ---------------------------------------------------------------- report, demo


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
    model_dir: str = typer.Argument(..., help="Model folder written by `evcal fit`."),
    out: str = typer.Option(..., "--out", help="HTML file to write (one self-contained file)."),
    plan: str | None = typer.Option(None, "--plan", help="plan.csv written by `evcal plan`."),
    backtest: str | None = typer.Option(
        None, "--backtest", help="backtest.csv written by `evcal backtest`."
    ),
    calendar: str | None = typer.Option(
        None, "--calendar", help="Calendar file for the day-by-day calendar view of the plan."
    ),
    title: str | None = typer.Option(None, "--title", help="Heading of the report."),
    force: Force = False,
) -> None:
    """Write one HTML report: history, seasonal index, lifts, plan, calendar, backtest."""
    from evcal.outputs import check_output

    check_output(out, "report", inputs=[model_dir, plan, backtest, calendar], force=force)
    from evcal.report import write_report

    path = write_report(
        model_dir, out, plan_csv=plan, backtest_csv=backtest, calendar=calendar, title=title
    )
    typer.echo(f"report written: {path}")


# ---------------------------------------------------------------- discover


@app.command("discover")
@guarded
def discover_cmd(
    history: str = typer.Argument(..., help="History file: CSV, Parquet or .xlsx."),
    calendar: str = typer.Option(None, "--calendar", "-c", help="Event calendar (YAML), if any."),
    out: str = typer.Option(..., "--out", "-o", help="Output folder for the suggestions."),
    stockouts: str = typer.Option(None, "--stockouts", help="CSV of stock-outs: start,end[,reason]."),
    date_col: DateCol = "date",
    value_col: ValueCol = "value",
    freq: Freq = None,
    transform: Transform = "auto",
    errors: Errors = "auto",
    critical: float = typer.Option(None, "--critical", help="Chen-Liu critical |tau| (default by length)."),
    force: Force = False,
) -> None:
    """Find cycles, unexplained peaks, dips and breaks, abnormal years and lost demand."""
    from evcal.outputs import check_output

    check_output(out, "findings", inputs=[history, calendar, stockouts], force=force)
    if critical is not None and not 2.0 <= critical <= 10.0:
        raise EvcalError(f"option --critical: {critical:g} must be between 2 and 10 (3 to 4 is usual)")
    from evcal.discovery import discover

    found = discover(history, calendar, stockouts=stockouts, date_col=date_col, value_col=value_col,
                     freq=freq, cval=critical, transform=transform, errors=errors)
    found.save(out)
    typer.echo(found.summary())
    extra = [n for n, keep in (("index_effects.csv", not found.index_effects.empty),
                               ("lost_demand.csv", bool(found.lost))) if keep]
    typer.echo(f"\nwrote {out}/ (suggestions.csv, suggestions.yaml, findings.png"
               f"{''.join(', ' + e for e in extra)})")


if __name__ == "__main__":  # pragma: no cover
    main()
