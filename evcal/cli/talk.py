"""What the command line says, and where: ``--quiet``, ``--verbose`` and ``--out -``.

Every command writes its messages through this module, so the three root options mean the same in
every command:

* :func:`say`: the steps' summaries and ``wrote ...`` lines; on stdout, or on stderr when stdout holds
  the command's table (``--out -``); under ``--quiet`` only their warning lines are kept (on stderr);
* :func:`warn`: a warning or note, always on stderr;
* :func:`stage`: a stage as it starts (a spinner on a terminal; a line on stderr under ``--verbose``).

Examples
--------
>>> configure(quiet=False, verbose=False)
>>> is_stdout("-"), is_stdout("plan.csv")
(True, False)
"""

from __future__ import annotations

import contextlib
import re
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path

import typer

from evcal import progress

__all__ = ["STDOUT", "configure", "finish", "is_stdout", "named", "quiet", "refuse_stdout", "say", "stage",
           "table_on_stdout", "table_path", "warn"]

#: the ``--out`` value that sends a command's one table to stdout
STDOUT = "-"
_STATE = {"quiet": False, "verbose": False, "table_on_stdout": False}
#: the temporary folders of ``--out -`` tables not yet printed
_PENDING: list[Path] = []
#: a summary line that is a warning (kept under --quiet): "warning", "warnings (2):", "  - ..." under it
_WARNING = re.compile(r"^\s*(warning|caution)(?!s: none)", re.IGNORECASE)


def configure(quiet: bool, verbose: bool) -> None:
    """Set the talk of the command being run (the root options ``--quiet`` and ``--verbose``)."""
    _STATE.update(quiet=quiet, verbose=verbose, table_on_stdout=False)
    progress.configure(show=False if quiet else None, stage_lines=verbose)


def quiet() -> bool:
    """Whether ``--quiet`` was given."""
    return bool(_STATE["quiet"])


def is_stdout(out: str | None) -> bool:
    """Whether ``--out`` names stdout (``-``)."""
    return out == STDOUT


def table_on_stdout() -> None:
    """From now on stdout holds the command's table only: every message goes to stderr."""
    _STATE["table_on_stdout"] = True


def say(text: str = "") -> None:
    """A summary line (or lines): stdout, or stderr when stdout holds the table; under ``--quiet`` only
    its warning lines, on stderr."""
    if _STATE["quiet"]:
        kept = [line for line in text.splitlines() if _WARNING.match(line)]
        if kept:
            typer.echo("\n".join(kept), err=True)
        return
    typer.echo(text, err=_STATE["table_on_stdout"])


def warn(text: str) -> None:
    """A warning or note: always shown, on stderr."""
    typer.echo(text, err=True)


@contextlib.contextmanager
def stage(text: str) -> Iterator[None]:
    """A stage of the command: a spinner on stderr while it runs (a terminal, not ``--quiet``); under
    ``--verbose`` the line ``evcal: TEXT`` on stderr as it starts."""
    with progress.progress_spinner(text):
        yield


def refuse_stdout(out: str | None, writes: str, example: str) -> None:
    """One line when ``--out -`` is given to a command that does not write one table."""
    if is_stdout(out):
        from evcal.errors import EvcalError

        raise EvcalError(f"--out -: this command writes {writes}, not one table, so it cannot go to "
                         f"stdout; name where to write it, e.g. --out {example}")


def table_path(out: str, name: str) -> str:
    """Where a command writes its one table: ``out`` itself, or for ``--out -`` a file ``name`` in a
    temporary folder whose text is printed on stdout when the command has succeeded (:func:`finish`), so
    that the CSV on stdout is byte for byte the file ``--out NAME`` would get; every message then goes
    to stderr."""
    if not is_stdout(out):
        return out
    table_on_stdout()
    folder = tempfile.mkdtemp(prefix="evcal-stdout-")
    _PENDING.append(Path(folder))
    return str(Path(folder) / name)


def finish(succeeded: bool) -> None:
    """End of a command: print the table of ``--out -`` on stdout if it succeeded; remove the temporary
    folder either way (a failed command prints no table)."""
    while _PENDING:
        folder = _PENDING.pop()
        try:
            if succeeded:
                for table in sorted(folder.iterdir()):
                    typer.echo(table.read_text(encoding="utf-8"), nl=False)
        finally:
            shutil.rmtree(folder, ignore_errors=True)


def named(out: str) -> str:
    """``out`` as the messages name it: ``stdout`` for ``-``."""
    return "stdout" if is_stdout(out) else out
