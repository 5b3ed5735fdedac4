"""Options shared by several commands: one definition each, so names, defaults and help never drift apart.

Every command that reads a history or fits a model takes these; ``fit`` and
``backtest`` turn them into keyword arguments of :func:`evcal.fit` with
:func:`fit_options`.
"""

from __future__ import annotations

from typing import Annotated, Any

import typer

from evcal.errors import EvcalError

__all__ = ["AllowNegative", "ArimaOrder", "DateCol", "Errors", "Force", "FourierOrder", "Freq", "Seasonal",
           "TradingDays", "Transform", "TrendOrder", "ValueCol", "fit_options", "parse_order"]

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


def fit_options(transform: str, errors: str, arima_order: str | None, seasonal: str, fourier_order: int,
                trend_order: int, trading_days: bool, allow_negative: bool) -> dict[str, Any]:
    """The fit options of a command line, as keyword arguments of :func:`evcal.fit`.

    Examples
    --------
    >>> fit_options("auto", "ols", None, "auto", 10, 1, False, False)["errors"]
    'ols'
    """
    return {"transform": transform, "errors": errors, "arima_order": parse_order(arima_order),
            "seasonal": seasonal, "fourier_order": fourier_order, "trend_order": trend_order,
            "trading_days": trading_days, "allow_negative": allow_negative}
