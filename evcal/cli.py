"""The ``evcal`` command line: thin wrappers over the steps.

Each command parses options, calls one step's API and writes its outputs
atomically. Any :class:`~evcal.errors.EvcalError` becomes one line per
problem on stderr and exit code 2; no traceback reaches the user.
"""

from __future__ import annotations

import functools
import sys
from collections.abc import Callable
from typing import Any, TypeVar

import typer

from evcal.errors import EvcalError

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


def guarded(fn: F) -> F:
    """Turn user-fixable errors into one line each on stderr and exit code 2."""

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except EvcalError as err:
            for line in err.problems:
                typer.echo(f"error: {line}", err=True)
            raise typer.Exit(code=err.exit_code) from None
        except KeyboardInterrupt:
            typer.echo("interrupted; no output written", err=True)
            raise typer.Exit(code=130) from None

    return wrapper  # type: ignore[return-value]


def main() -> None:  # pragma: no cover - console entry point
    app()


# ---------------------------------------------------------------- calendar
# (calendar check, calendar dates)

# ---------------------------------------------------------------- fit, show

# ---------------------------------------------------------------- plan, backtest

# ---------------------------------------------------------------- report, demo

# ---------------------------------------------------------------- discover


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
