"""The options several commands share, and the parsing of their text: one definition each, so names,
defaults and help never drift apart."""

from __future__ import annotations

from typing import Annotated, Any

import typer

from evcal.errors import EvcalError

__all__ = ["ArimaOrder", "Db", "DateCol", "Driver", "Errors", "Force", "FourierOrder", "Freq", "LeapYear",
           "Seasonal", "Sql", "TradingDays", "Transform", "TrendOrder", "ValueCol", "AllowNegative",
           "fit_options", "history_source", "parse_fourier_order", "parse_order", "query_inputs",
           "PlanFrom", "PlanTo", "PlanCalendar", "Total", "Totals", "NewEvents", "PlanDrivers", "RoundUnits"]


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


def query_inputs(history: str | None, db: str | None, sql: str | None) -> list[Any]:
    """The history's inputs for ``check_output`` (a database file too); one line if they clash."""
    from evcal.io.database import check_query_options, database_file

    check_query_options(history, db, sql)
    return [history, database_file(db)]


def history_source(history: str | None, db: str | None, sql: str | None) -> Any:
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


# ---------------------------------------------------------------- the options that shape a plan's number
# (evcal plan, evcal explain: a number explained is the number the plan with the same options writes)

PlanFrom = Annotated[str | None, typer.Option(
    "--from", help="First day (or year) of the plan, e.g. 2027-01-01.")]
PlanTo = Annotated[str | None, typer.Option("--to", help="Last day (or year) of the plan, e.g. 2027-12-31.")]
PlanCalendar = Annotated[str | None, typer.Option(
    "--calendar", "-c", help="Plan calendar (YAML); default: the fitted one.")]
Total = Annotated[str | None, typer.Option("--total", help="Target total for the whole horizon.")]
Totals = Annotated[str | None, typer.Option(
    "--totals", help="CSV of targets: year,total; panels: key columns, total, optional year.")]
NewEvents = Annotated[str, typer.Option("--new-events", help="error | zero: events the model never saw.")]
PlanDrivers = Annotated[str | None, typer.Option(
    "--drivers", help="Outside drivers' future values: a file with a date column and one column per driver.")]
RoundUnits = Annotated[bool, typer.Option(
    "--round", help="Whole units: integers adding up exactly to the target (largest remainder).")]
