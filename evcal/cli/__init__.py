"""The ``evcal`` command line: thin wrappers over the steps.

:mod:`evcal.cli.console` holds the typer ``app``, the error handling
(:func:`guarded`) and the console entry point (:func:`main`);
:mod:`evcal.cli.options` the options several commands share; the command modules register their commands
on the app when imported here, in the order ``evcal --help`` lists them.

Examples
--------
>>> from typer.testing import CliRunner
>>> from evcal.cli import app
>>> CliRunner().invoke(app, ["calendar", "--help"]).exit_code
0
"""

from __future__ import annotations

import importlib

from evcal.cli.console import app, calendar_app, guarded, last_resort_line, main

# importing a command module registers its commands on the app: in this order, the order of `evcal --help`
for _module in ("commands", "plan_command", "explain_command", "history_commands", "report_command",
                "calendar_commands"):
    importlib.import_module(f"evcal.cli.{_module}")

__all__ = ["app", "calendar_app", "guarded", "last_resort_line", "main"]
