"""The typer app, its error handling and the console entry point.

Every command is registered with :func:`command`, which wraps it in :func:`guarded`: an
:class:`~evcal.errors.EvcalError` becomes one line per problem on stderr and exit code 2; any
other exception one line naming the command and its inputs, exit code 1. No traceback reaches
the user unless asked for (``evcal --debug ...`` or ``EVCAL_DEBUG=1``).
"""

from __future__ import annotations

import contextlib
import functools
import os
import sys
import traceback
from collections.abc import Callable
from typing import Any, TypeVar

import click
import typer
import typer.core

from evcal import spelling
from evcal.errors import EvcalError, clip

__all__ = ["app", "calendar_app", "command", "guarded", "last_resort_line", "main"]

F = TypeVar("F", bound=Callable[..., Any])

#: ``-h`` as well as ``--help`` on every command (click hands a group's context settings to its commands)
HELP_OPTIONS = {"help_option_names": ["-h", "--help"]}


def _plain_switches(params: list[Any]) -> None:
    """Show an on/off switch without a value in the help (the rich help would print ``<bool>`` beside
    ``--round``, as if it took one); a repeatable option as its one value, repeated."""
    for param in params:
        # typer builds its parameters with its own copy of click: known by their kind, not their class
        if getattr(param, "param_type_name", "") == "option" and param.metavar is None:
            if param.is_flag:
                param.metavar = ""
            elif param.multiple:
                param.metavar = "<str> ..."


class _PlainSwitches:
    """Help that shows switches as switches (:func:`_plain_switches`), ``--help`` itself too."""

    params: list[Any]

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        _plain_switches(self.params)

    def get_help_option(self, ctx: Any) -> Any:
        option = super().get_help_option(ctx)  # type: ignore[misc]  # made when the help is asked for
        if option is not None:
            _plain_switches([option])
        return option


class _Command(_PlainSwitches, typer.core.TyperCommand):
    """A command of evcal."""


class _Group(_PlainSwitches, typer.core.TyperGroup):
    """The root and ``calendar`` groups."""


app = typer.Typer(
    name="evcal",
    help="Calendar-effect models: event lifts, a clean seasonal base, forward plans.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    context_settings=HELP_OPTIONS,
    cls=_Group,
)
calendar_app = typer.Typer(help="Check an event calendar and list its dates.", no_args_is_help=True,
                           context_settings=HELP_OPTIONS, cls=_Group)
app.add_typer(calendar_app, name="calendar")

#: set by the global ``--debug`` flag for the command being run
_DEBUG = {"on": False}
#: parameters of the commands that name an input (file or folder), for the last-resort message
_INPUT_PARAMS = ("history", "file", "model_dir", "calendar", "plan", "backtest", "totals", "compare_cal",
                 "stockouts", "allocate", "data")
_REPORT = "please report this with the command line and the input files"


def _print_version(asked: bool) -> None:
    if asked:
        from evcal import installed_version

        typer.echo(f"evcal {installed_version()}")
        raise typer.Exit()


@app.callback()
def _root(
    ctx: typer.Context,
    version: bool = typer.Option(
        False, "--version", "-V", callback=_print_version, is_eager=True,
        help="Print the installed version of evcal and stop."),
    quiet: bool = typer.Option(
        False, "--quiet", "-q", help="Print only errors and warnings (no summaries, no progress)."),
    verbose: bool = typer.Option(
        False, "--verbose", "-v", help="Also print each stage on stderr as it starts."),
    debug: bool = typer.Option(
        False, "--debug", help="Show the traceback of an unexpected problem (as EVCAL_DEBUG=1 does)."),
) -> None:
    from evcal.cli import talk

    if quiet and verbose:
        typer.echo("error: --quiet and --verbose ask for opposite things; give one of them", err=True)
        raise typer.Exit(code=2)
    talk.configure(quiet=quiet, verbose=verbose)
    spelling.use_flags(ctx)  # messages name flags until the command ends
    _DEBUG["on"] = debug


def _debug() -> bool:
    return _DEBUG["on"] or bool(os.environ.get("EVCAL_DEBUG"))


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


def guarded(fn: F, name: str = "evcal") -> F:
    """Turn user-fixable errors into one line each on stderr and exit code 2; anything else into one
    line naming the command ``name`` and its inputs and exit code 1 (the last-resort handler)."""

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        from evcal.cli import talk

        succeeded = False
        try:
            done = fn(*args, **kwargs)
            succeeded = True
            return done
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
            typer.echo(f"error: {last_resort_line(err, name, inputs)}", err=True)
            raise typer.Exit(code=1) from None
        finally:
            talk.finish(succeeded)  # the table of --out - on stdout, only when the command succeeded

    return wrapper  # type: ignore[return-value]


def command(name: str, group: typer.Typer = app) -> Callable[[F], F]:
    """Register a command ``evcal NAME`` (or ``evcal calendar NAME``), :func:`guarded`.

    Examples
    --------
    >>> @command("hello")                                       # doctest: +SKIP
    ... def hello_cmd(name: str) -> None:
    ...     typer.echo(f"hello {name}")
    """
    prefix = "evcal calendar" if group is calendar_app else "evcal"
    return lambda fn: group.command(name, cls=_Command)(guarded(fn, f"{prefix} {name}"))


def main() -> None:
    """The ``evcal`` console command: run it and exit with the command's exit code.

    An exception outside a command (the commands have their own handler,
    :func:`guarded`) still ends in one line and exit code 1; with ``--debug``
    or ``EVCAL_DEBUG=1`` its traceback is shown first. A reader that stops
    early (``evcal calendar dates ... | head``) ends the output quietly.
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
        _flush_or_silence(stream)
    # the ordinary teardown: skipping it with os._exit saved about 5 % of the whole-process time of
    # benchmarks/panel.py's 10,000-series fit (median of 15 alternating pairs), under the 10 % bar
    sys.exit(code)


def _flush_or_silence(stream: Any) -> None:
    """Flush ``stream``; if its reader has gone (``| head``), send what is left to the null device.

    Without that, the interpreter's own flush at exit would print a
    BrokenPipeError and change the exit code to 120 (the recipe of Python's
    ``signal`` documentation, "Note on SIGPIPE").
    """
    try:
        stream.flush()
    except BrokenPipeError:
        with contextlib.suppress(OSError, ValueError):
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, stream.fileno())
    except ValueError:  # a stream already closed
        pass
