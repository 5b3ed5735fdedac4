"""The files of a scenarios run: the ``--scenario`` values read into scenarios, and the written tables
read back (for the report).

``--scenario`` takes ``NAME=calendar.yaml``, a bare ``calendar.yaml`` (named by the file's stem) or a
folder of calendars; the tables are the side-by-side CSV and the by-event CSV beside it
(:func:`evcal.plan.scenarios.events_path`).

Examples
--------
>>> [s.name for s in load_scenarios(scenario_sources(["now=a.yaml", "b.yaml"]))]  # doctest: +SKIP
['now', 'b']
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import pandas as pd

from evcal.errors import EvcalError, ModelError, PlanError
from evcal.formula_safe import unguard_frame
from evcal.outputs import file_columns
from evcal.plan.scenario_events import DIFF_PREFIX as EVENT_DIFF
from evcal.plan.scenario_events import OLD_DIFF_PREFIX, OLD_UNITS_PREFIX, UNITS_PREFIX
from evcal.plan.scenarios import DIFF_PREFIX, PLAN_PREFIX, Scenario, events_path
from evcal.spelling import subject

__all__ = ["is_scenarios_file", "load_scenarios", "read_scenario_tables", "scenario_sources"]

#: the files a folder given to ``--scenario`` holds as calendars
CALENDAR_SUFFIXES = (".yaml", ".yml")


def scenario_sources(values: Sequence[str]) -> list[tuple[str, Path, str]]:
    """Each scenario's name, calendar file and the value that gave it, from ``--scenario`` values.

    A value is ``NAME=calendar.yaml``, a bare ``calendar.yaml`` (named by its file's stem), or a
    folder: every ``*.yaml``/``*.yml`` file in it, in the order of their file names (Python's
    ``sorted``: digits before letters, capitals before small letters), so ``0-current.yaml`` is the
    reference. Nothing is read but the folder's list of files; a problem is one :class:`PlanError`
    line naming the value.

    Examples
    --------
    >>> [name for name, _, _ in scenario_sources(["now=a.yaml", "b.yaml"])]  # doctest: +SKIP
    ['now', 'b']
    """
    flag = subject("scenarios", flag="--scenario")
    out: list[tuple[str, Path, str]] = []
    for value in values:
        name, eq, rest = value.partition("=")
        if not eq or Path(value).exists():  # a path holding "=" is a path
            name, rest = "", value
        path = Path(rest)
        if eq and not name.strip() and not Path(value).exists():
            raise PlanError(f"{flag} {value}: no name before '='; write NAME=calendar.yaml or the path alone")
        if path.is_dir():
            if name:
                raise PlanError(f"{flag} {value}: a folder cannot take one name; give the folder alone "
                                "(each calendar is named by its file) or NAME=calendar.yaml")
            files = sorted(p for p in path.iterdir() if p.suffix.lower() in CALENDAR_SUFFIXES and p.is_file())
            if not files:
                raise PlanError(f"{flag} {value}: the folder holds no calendar (*.yaml); put the scenarios' "
                                "calendars in it, or give each with --scenario NAME=calendar.yaml")
            out += [(p.stem, p, str(p)) for p in files]
        elif not path.is_file():
            raise PlanError(f"{flag} {value}: no such file; check the path (NAME=calendar.yaml, or a folder "
                            "of calendars)")
        else:
            out.append((name or path.stem, path, value))
    return out


def load_scenarios(sources: Sequence[tuple[str, Path, str]]) -> list[Scenario]:
    """Each source's calendar loaded and checked (:func:`scenario_sources`); one line if one is not a
    calendar: its first problem, and where to see the rest."""
    from evcal.calendar import load_calendar  # here: the calendar step is needed only when scenarios are

    flag = subject("scenarios", flag="--scenario")
    out = []
    for name, path, given in sources:
        try:
            calendar = load_calendar(path)
        except EvcalError as err:
            more = len(err.problems) - 1
            rest = f" (and {more} more: evcal calendar check {path} lists them)" if more else ""
            raise PlanError(f"{flag} {given}: not a calendar: {err.problems[0]}{rest}") from None
        out.append(Scenario(name, calendar))
    return out


def is_scenarios_file(path: str | Path) -> bool:
    """Whether ``path`` is a side-by-side scenarios CSV (a ``date`` column, then ``plan:<name>`` columns).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "s.csv"
    >>> _ = p.write_text("date,plan:now,plan:moved,difference:moved\\n")
    >>> is_scenarios_file(p), is_scenarios_file(p.parent / "none.csv")
    (True, False)
    """
    cols = file_columns(path)
    return bool(cols) and cols[0] == "date" and any(c.startswith(PLAN_PREFIX) for c in cols)


def read_scenario_tables(path: str | Path) -> tuple[pd.DataFrame, pd.DataFrame | None]:
    """The side-by-side table of ``path`` (its ``total`` row apart: dates parsed) and the by-event table
    beside it (None when it is not there).

    Raises
    ------
    ModelError
        A column that is not numbers, a date that is not a date, a by-event file without its columns:
        one line each, naming the file.
    """
    path = Path(path)
    table = unguard_frame(pd.read_csv(path, dtype=str, keep_default_na=False))
    problems: list[str] = []
    names = [c[len(PLAN_PREFIX):] for c in table.columns if c.startswith(PLAN_PREFIX)]
    for col in [c for c in table.columns if c.startswith((PLAN_PREFIX, DIFF_PREFIX))]:
        table[col] = _numbers(table[col], path, col, problems)
    body = table["date"] != "total"
    dates = pd.to_datetime(table.loc[body, "date"], format="%Y-%m-%d", errors="coerce")
    if dates.isna().any():
        problems.append(f"{path}: column date: {table.loc[body, 'date'][dates.isna()].iloc[0]!r} is not a "
                        "date (YYYY-MM-DD); write the file again with evcal plan --scenario")
    # the dates as Timestamps and the totals row's label as it is, in one column (as the writer had them)
    table["date"] = pd.Series([dates[k] if b else "total" for k, b in body.items()], index=table.index,
                              dtype=object)
    events = None
    beside = events_path(path)
    if beside.is_file():
        events = unguard_frame(pd.read_csv(beside, dtype=str, keep_default_na=False))
        # a table written before the spread had its own row: amounts after the spread, read as they are
        after = not any(c.startswith(UNITS_PREFIX) for c in events.columns) and \
            any(c.startswith(OLD_UNITS_PREFIX) for c in events.columns)
        events = events.rename(columns={c: c.replace(OLD_UNITS_PREFIX, UNITS_PREFIX, 1)
                                        .replace(OLD_DIFF_PREFIX, EVENT_DIFF, 1) for c in events.columns}) \
            if after else events
        events.attrs["after_spread"] = after
        wanted = ["event", *(UNITS_PREFIX + n for n in names), *(EVENT_DIFF + n for n in names[1:])]
        missing = [c for c in wanted if c not in events.columns]
        if missing:
            problems.append(f"{beside}: missing column(s) {', '.join(missing)}; it is not the by-event table "
                            f"of {path.name} (write both again with evcal plan --scenario)")
        else:
            for col in wanted[1:]:
                events[col] = _numbers(events[col], beside, col, problems)
    if problems:
        raise ModelError(problems)
    return table, events


def _numbers(values: pd.Series, path: Path, col: str, problems: list[str]) -> pd.Series:
    """``values`` as floats; a cell that is not a number is one problem line (its row in the file)."""
    out = pd.to_numeric(values, errors="coerce")
    bad = out.isna() & (values.str.strip() != "")
    if bad.any():
        k = int(bad.to_numpy().nonzero()[0][0])
        problems.append(f"{path}: line {k + 2}, column {col}: {values.iloc[k]!r} is not a number")
    return out

