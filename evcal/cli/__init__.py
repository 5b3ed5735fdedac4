"""The ``evcal`` command line: thin wrappers over the steps.

Each command parses options, checks its output location
(:func:`evcal.outputs.check_output`) before reading anything, calls one step's
API and writes its outputs atomically. Any :class:`~evcal.errors.EvcalError`
becomes one line per problem on stderr and exit code 2; any other exception
one line naming the command and its inputs, exit code 1. No traceback reaches
the user unless asked for (``evcal --debug ...`` or ``EVCAL_DEBUG=1``).

Layout: :mod:`evcal.cli.console` holds the typer ``app``, the error handling
(:func:`guarded`) and the console entry point (:func:`main`);
:mod:`evcal.cli.options` the options several commands share; one module per
group of commands registers them on the app when imported here.

Examples
--------
>>> from typer.testing import CliRunner
>>> from evcal.cli import app
>>> CliRunner().invoke(app, ["calendar", "--help"]).exit_code
0
"""

from __future__ import annotations

from evcal.cli.console import app, calendar_app, guarded, last_resort_line, main

# each module registers its commands on the app when imported, in the order ``evcal --help`` lists them
# isort: off
from evcal.cli import fit_commands, plan_commands, report_commands, discover_commands  # noqa: F401
from evcal.cli import calendar_commands  # noqa: F401
# isort: on

__all__ = ["app", "calendar_app", "guarded", "last_resort_line", "main"]
