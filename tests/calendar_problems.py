"""One check shared by the calendar tests: a bad calendar is one problem line with its file, line and key."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from typer.testing import CliRunner

from evcal.calendar import load_calendar
from evcal.cli import app
from evcal.errors import CalendarError


def assert_one_problem(path: Path, line: int, key: str, words: str, *, cli: bool = True) -> None:
    """Loading ``path`` gives exactly one problem, ``FILE:LINE: KEY: ...`` holding ``words``.

    With ``cli``, ``evcal calendar check`` also exits 2 with that line and no traceback.
    """
    with pytest.raises(CalendarError) as err:
        load_calendar(path)
    assert len(err.value.problems) == 1, err.value.problems
    assert err.value.problems[0].startswith(f"{path}:{line}: {key}: ")
    assert words in err.value.problems[0]
    if cli:
        result = CliRunner().invoke(app, ["calendar", "check", str(path)])
        assert result.exit_code == 2 and "Traceback" not in result.output
        assert re.search(rf"{re.escape(str(path))}:{line}: {re.escape(key)}: ", result.output)
