"""The parsed calendar file, section by section -> a :class:`~evcal.calendar.Calendar`.

Each section (the top level, ``public_holidays``, every item of ``events``,
``interventions`` and ``exclude``) is validated with its pydantic model of
:mod:`evcal.calendar.schema`; events become specs in
:mod:`evcal.calendar.event_builder`, and the whole-file checks of
:mod:`evcal.calendar.cross_checks` run over the raw event list. Every problem
goes to the :class:`~evcal.calendar.problem_log.ProblemLog`; a calendar is
returned only when there is none.
"""

from __future__ import annotations

from typing import Any

import pandas as pd

from evcal.calendar import rules as R
from evcal.calendar.core import Calendar, PublicHolidays
from evcal.calendar.cross_checks import check_like, check_names
from evcal.calendar.event_builder import DEFAULT_HOLIDAY_YEARS, build_event
from evcal.calendar.holidays_source import HolidaySource, HolidaySourceError
from evcal.calendar.problem_log import ProblemLog
from evcal.calendar.schema import (
    CalendarModel,
    EventModel,
    ExclusionModel,
    InterventionModel,
    PublicHolidaysModel,
)
from evcal.calendar.spec import EventSpec, ExclusionSpec, InterventionSpec
from evcal.calendar.value_parsers import show
from evcal.calendar.yamlread import Problem

__all__ = ["read_calendar_spec"]


def read_calendar_spec(data: Any, source: str, log: ProblemLog) -> Calendar | None:
    """The calendar that ``data`` (the file's YAML, parsed) describes, or None when ``log`` has problems.

    Examples
    --------
    >>> log = ProblemLog({})
    >>> cal = read_calendar_spec({"name": "Demo", "events": [{"name": "a", "when": {"easter": 0}}]},
    ...                          "<text>", log)
    >>> [e.name for e in cal.events], log.problems
    (['a'], [])
    """
    if data is None:
        log.problems.append(
            Problem(1, "(top level)", "the file is empty; write at least `name:` and `events:`")
        )
        return None
    if not isinstance(data, dict):
        kind = "a list" if isinstance(data, list) else f"{type(data).__name__} {show(data)}"
        log.problems.append(
            Problem(
                log.lines.get((), 1),
                "(top level)",
                f"the top level is {kind}, not a block of keys; start with `name:` and "
                "`events:`",
            )
        )
        return None
    log.raw = data
    top = log.validate(CalendarModel, data, ())
    name = top.name if top is not None else str(data.get("name", ""))

    holidays: HolidaySource | None = None
    public: PublicHolidays | None = None
    if data.get("public_holidays") is not None:
        block = log.validate(PublicHolidaysModel, data["public_holidays"], ("public_holidays",))
        if block is not None:
            holidays, public = _public_holidays(log, block)

    raw_events = data.get("events")
    raw_events = raw_events if isinstance(raw_events, list) else []
    holiday_names = [e.name for e in public.events] if public is not None else []
    check_names(log, raw_events, holiday_names)
    events: list[EventSpec] = []
    for i, raw in enumerate(raw_events):
        ev = log.validate(EventModel, raw, ("events", i))
        if ev is None:
            ev = log.without_bad_keys(EventModel, raw)
        spec = build_event(log, ev, i, holidays) if ev is not None else None
        if spec is not None:
            events.append(spec)
    if public is not None:
        events += [e for e in public.events if e.name not in {x.name for x in events}]
    check_like(log, raw_events, holiday_names)
    event_lines = {e.name: e.line for e in events}

    interventions = _interventions(log, data.get("interventions"), event_lines)
    exclusions = _exclusions(log, data.get("exclude"))
    if log.problems:
        return None
    return Calendar(
        name=name,
        source=source,
        events=events,
        interventions=interventions,
        exclusions=exclusions,
        public_holidays=public,
    )


def _public_holidays(
    log: ProblemLog, block: PublicHolidaysModel
) -> tuple[HolidaySource | None, PublicHolidays | None]:
    loc = ("public_holidays",)
    try:
        source = HolidaySource.create(block.country, block.subdivision, block.language)
    except HolidaySourceError as err:
        log.add((*loc, err.key), str(err))
        return None, None
    lo, hi = block.years.bounds()
    name_years = range(lo or DEFAULT_HOLIDAY_YEARS[0], (hi or DEFAULT_HOLIDAY_YEARS[1]) + 1)
    if block.only is not None:
        names = []
        for j, wanted in enumerate(block.only):
            try:
                source.check_name(wanted, name_years)
            except HolidaySourceError as err:
                log.add((*loc, "only", j), str(err))
                continue
            if wanted not in names:
                names.append(wanted)
    else:
        names = source.names(name_years)
    line = log.line(loc)
    events = [
        EventSpec(
            name=n,
            rule="holiday",
            when=R.HolidayRule(n, source),
            label=n,
            group="public_holiday",
            before=block.before,
            after=block.after,
            shape=block.shape,
            years=block.years,
            line=line,
        )
        for n in names
    ]
    return source, PublicHolidays(source, tuple(name_years), tuple(events))


def _interventions(log: ProblemLog, raw_iv: Any, event_lines: dict[str, int | None]
                   ) -> list[InterventionSpec]:
    interventions: list[InterventionSpec] = []
    for i, raw in enumerate(raw_iv if isinstance(raw_iv, list) else []):
        iv = log.validate(InterventionModel, raw, ("interventions", i))
        if iv is None:
            continue
        line = log.line(("interventions", i))
        if iv.name in event_lines or any(x.name == iv.name for x in interventions):
            log.add(
                ("interventions", i, "name"),
                f"name '{iv.name}' is already used by an event or intervention; "
                "give each its own name",
            )
            continue
        interventions.append(
            InterventionSpec(
                name=iv.name,
                type=iv.type,
                start=pd.Timestamp(iv.start),
                end=pd.Timestamp(iv.end) if iv.end is not None else None,
                decay=(0.7 if iv.decay is None else iv.decay) if iv.type == "temporary"
                else None,
                label=iv.label or iv.name,
                line=line,
            )
        )
    return interventions


def _exclusions(log: ProblemLog, raw_ex: Any) -> list[ExclusionSpec]:
    exclusions: list[ExclusionSpec] = []
    for i, raw in enumerate(raw_ex if isinstance(raw_ex, list) else []):
        ex = log.validate(ExclusionModel, raw, ("exclude", i))
        if ex is not None:
            exclusions.append(
                ExclusionSpec(
                    pd.Timestamp(ex.start), pd.Timestamp(ex.end), ex.reason,
                    log.line(("exclude", i)),
                )
            )
    return exclusions
