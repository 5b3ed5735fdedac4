"""How a message names a setting: ``--value-col`` on the command line, ``value_col=`` from Python.

The same check (a missing column, a frequency the dates contradict) runs whether ``evcal fit`` or
:func:`evcal.fit` asked for it, and its advice must name what the user can change where they are.
Messages name a setting through :func:`option`; the command line switches the flag spelling on for
the command it runs (:func:`use_flags`, from the root callback) and back off when the command ends,
so a Python session that also runs the command line in-process keeps the argument spelling.

Examples
--------
>>> option("value_col"), option("freq", "D"), option("allow_negative", True)
('value_col=', "freq='D'", 'allow_negative=True')
>>> with flags():
...     option("value_col"), option("freq", "D"), option("allow_negative", True)
('--value-col', '--freq D', '--allow-negative')
>>> with flags():
...     option("series_cols", flag="--series-col"), option("date_col", "month", quote=True)
('--series-col', "--date-col 'month'")

Several settings to pass at once:

>>> options(option("date_col", "day"), option("value_col", "units"))
"date_col='day', value_col='units'"

A line that starts with the setting it is about names it bare:

>>> subject("freq"), subject("start", flag="--from")
('freq', 'start')
>>> with flags():
...     subject("freq"), subject("start", flag="--from")
('--freq', '--from')
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from typing import Any

__all__ = ["flags", "flags_on", "option", "options", "subject", "use_arguments", "use_flags"]

#: whether messages are being written for the command line (set for the command being run)
_STATE = {"flags": False}
_NO_VALUE: Any = object()


def use_flags(ctx: Any = None) -> None:
    """Name settings by their command-line flags from now on; back to arguments when ``ctx`` closes.

    Parameters
    ----------
    ctx : click.Context, optional
        The command line's root context: its close (the end of the command, error or not) restores
        the argument spelling.
    """
    _STATE["flags"] = True
    if ctx is not None:
        ctx.call_on_close(use_arguments)


def use_arguments() -> None:
    """Name settings by their Python arguments (the default)."""
    _STATE["flags"] = False


def flags_on() -> bool:
    """Whether messages name command-line flags (a command is running) rather than arguments."""
    return bool(_STATE["flags"])


@contextlib.contextmanager
def flags() -> Iterator[None]:
    """The flag spelling inside the block, the previous one after it."""
    before = _STATE["flags"]
    _STATE["flags"] = True
    try:
        yield
    finally:
        _STATE["flags"] = before


def option(arg: str, value: Any = _NO_VALUE, *, flag: str | None = None, quote: bool = False,
           cli_value: Any = _NO_VALUE) -> str:
    """A setting as a message names it: ``--value-col`` / ``value_col=``, with a value when given.

    Parameters
    ----------
    arg : str
        The Python argument (``value_col``).
    value : optional
        The value to show: ``--freq D`` on the command line, ``freq='D'`` in Python. A switch's
        True shows the flag alone (``--allow-negative``).
    flag : str, optional
        The command-line flag when it is not ``arg`` with dashes (``--series-col`` for
        ``series_cols``, ``--from`` for ``start``).
    quote : bool
        Quote the value on the command line as Python would (``--date-col 'month'``).
    cli_value : optional
        The value as the command line takes it, when it differs from the Python one
        (``--driver price:level`` for ``drivers=['price:level']``).

    Returns
    -------
    str
        The setting, spelled for the command line when a command is running, else for Python.
    """
    if not _STATE["flags"]:
        return f"{arg}=" if value is _NO_VALUE else f"{arg}={value!r}"
    name = flag or "--" + arg.replace("_", "-")
    shown = value if cli_value is _NO_VALUE else cli_value
    if shown is _NO_VALUE or shown is True:
        return name
    return f"{name} {shown!r}" if quote else f"{name} {shown}"


def subject(arg: str, *, flag: str | None = None) -> str:
    """A setting as the subject a line starts with: ``--total: ...`` / ``total: ...``.

    Parameters
    ----------
    arg : str
        The Python argument.
    flag : str, optional
        The command-line flag when it is not ``arg`` with dashes.
    """
    if not _STATE["flags"]:
        return arg
    return flag or "--" + arg.replace("_", "-")


def options(*spelled: str) -> str:
    """Settings given together: ``--a x --b y`` on the command line, ``a='x', b='y'`` in Python."""
    return (" " if _STATE["flags"] else ", ").join(spelled)
