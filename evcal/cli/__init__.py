"""The ``evcal`` command line: thin wrappers over the steps.

:mod:`evcal.cli.console` holds the typer ``app``, the error handling
(:func:`guarded`) and the console entry point (:func:`main`);
:mod:`evcal.cli.commands` the commands and their shared options, registered on the app when imported here.

Examples
--------
>>> from typer.testing import CliRunner
>>> from evcal.cli import app
>>> CliRunner().invoke(app, ["calendar", "--help"]).exit_code
0
"""

from __future__ import annotations

from evcal.cli import commands  # noqa: F401 - registers the commands on the app
from evcal.cli.console import app, calendar_app, guarded, last_resort_line, main

__all__ = ["app", "calendar_app", "guarded", "last_resort_line", "main"]
