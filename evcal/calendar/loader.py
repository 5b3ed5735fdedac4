"""Read a calendar file into a :class:`~evcal.calendar.Calendar`, or list every problem.

Checking happens in three passes, each collecting problems instead of stopping at the first:

1. YAML (syntax, tags, duplicate keys, bounds) in :mod:`evcal.calendar.yamlread`;
2. keys and value types, section by section and event by event, with the pydantic models of
   :mod:`evcal.calendar.schema`; events become specs in :mod:`evcal.calendar.event_builder`;
3. what only the whole file can tell: duplicate names and ``like:`` targets (read from the raw
   ``events:`` list, so an event with another problem still takes part), ``moved`` years,
   public-holiday countries and names.

Every problem becomes one line ``<file>:<line>: <key path>: <what is wrong>; <what would be
right>`` in a :class:`~evcal.errors.CalendarError`.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Any

from evcal.calendar import rules as R
from evcal.calendar.core import Calendar, PublicHolidays
from evcal.calendar.datefile import SAVED_KEY, read_rule, saved_text
from evcal.calendar.drivers import driver_name_problems, read_drivers, taken_names
from evcal.calendar.event_builder import DEFAULT_HOLIDAY_YEARS, build_event, derived_events
from evcal.calendar.holidays_source import HolidaySource, HolidaySourceError, suggest
from evcal.calendar.problem_log import ProblemLog
from evcal.calendar.schema import (
    CalendarModel,
    EventModel,
    ExclusionModel,
    InterventionModel,
    PublicHolidaysModel,
    check_weekday_profile,
)
from evcal.calendar.spec import EventSpec, ExclusionSpec, InterventionSpec
from evcal.calendar.value_parsers import parse_effect, show
from evcal.calendar.weekday_classes import class_event_name
from evcal.calendar.yamlread import Problem, read_yaml
from evcal.errors import CalendarError

__all__ = ["load_calendar"]


def load_calendar(path_or_text: str | Path) -> Calendar:
    """Read and validate a calendar file (or YAML text).

    Parameters
    ----------
    path_or_text
        A path (a :class:`~pathlib.Path`, or a string naming an existing file or
        ending in ``.yaml``/``.yml``), or the YAML text itself.

    Returns
    -------
    Calendar

    Raises
    ------
    evcal.errors.CalendarError
        Listing every problem, one line each.

    Examples
    --------
    >>> cal = load_calendar('''
    ... name: Demo
    ... events:
    ...   - {name: spring-weekend, when: {easter: -2}, length: 4}
    ... ''')
    >>> cal.occurrences(2024, 2024)[["event", "start", "end"]].to_string(index=False)
    '         event      start        end\\nspring-weekend 2024-03-29 2024-04-01'
    """
    text, source = _read_source(path_or_text)
    data, lines, problems = read_yaml(text)
    log = ProblemLog(lines)
    folder = Path(source).resolve().parent if source != "<text>" else None
    files: dict[str, str] = {}  # date files read from disk (evcal.calendar.datefile), kept with the text
    cal = None if problems else _read_calendar(data, source, log, folder, files)
    problems = problems or log.problems
    if problems:
        raise CalendarError([p.format(source) for p in sorted(problems, key=lambda p: (p.line or 0, p.path))])
    assert cal is not None
    cal.text = text + saved_text(files) if files else text
    return cal


def _read_source(path_or_text: str | Path) -> tuple[str, str]:
    if isinstance(path_or_text, Path):
        path = path_or_text
    else:
        text = str(path_or_text)
        if "\n" in text or not text.strip():
            return text, "<text>"
        try:
            is_file = Path(text).is_file()
        except OSError:
            is_file = False
        if not (is_file or text.lower().endswith((".yaml", ".yml"))):
            return text, "<text>"
        path = Path(text)
    source = str(path)
    if not path.exists():
        raise CalendarError(f"{source}: no such file; check the path")
    if path.is_dir():
        raise CalendarError(f"{source}: is a folder, not a calendar file; name the .yaml file")
    try:
        return path.read_bytes().decode("utf-8-sig"), source
    except UnicodeDecodeError as err:
        raise CalendarError(f"{source}: not UTF-8 text (byte {err.start}); save the file as UTF-8") from None
    except OSError as err:
        raise CalendarError(f"{source}: cannot be read ({err.strerror}); check permissions") from None


def _read_calendar(data: Any, source: str, log: ProblemLog, folder: Path | None = None,
                   files: dict[str, str] | None = None) -> Calendar | None:
    """The calendar that ``data`` (the file's YAML, parsed) describes, or None when ``log`` has problems.

    ``folder`` is the calendar file's folder (date files are read relative to it); ``files``
    collects the date files read from disk.
    """
    if data is None:
        log.problems.append(
            Problem(1, "(top level)", "the file is empty; write at least `name:` and `events:`")
        )
        return None
    if not isinstance(data, dict):
        kind = "a list" if isinstance(data, list) else f"{type(data).__name__} {show(data)}"
        log.add((), f"the top level is {kind}, not a block of keys; start with `name:` and `events:`")
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

    profile: tuple[float, ...] | None = None
    if data.get("weekday_profile") is not None:
        try:
            profile = check_weekday_profile(data["weekday_profile"])
        except ValueError as err:
            log.add(("weekday_profile",), str(err))

    raw_events = _items(data, "events")
    holiday_names = [e.name for e in public.events] if public is not None else []
    _check_names(log, raw_events, holiday_names)
    events: list[EventSpec] = []
    item_of: dict[str, int] = {}  # event name -> its item in `events:` (for the key of a problem)
    saved = _saved_files(log, data)
    for i, raw in enumerate(raw_events):
        ev = log.validate(EventModel, raw, ("events", i), partial=True)
        if ev is not None and ev.when.kind == "file":
            ev = _with_file_rule(log, ev, i, folder, saved, files if files is not None else {})
        spec = build_event(log, ev, i, holidays) if ev is not None else None
        if spec is not None and ev is not None:
            for part in derived_events(spec, ev):
                _check_class_name(log, part, i, raw_events, holiday_names, item_of)
                events.append(part)
                item_of[part.name] = i
    if public is not None:
        events += [e for e in public.events if e.name not in {x.name for x in events}]
    events = resolve_bridges(log, events, item_of, holidays)
    _check_like(log, raw_events, holiday_names, {e.split_of for e in events if e.split_of})

    interventions: list[InterventionSpec] = []
    for i, raw in enumerate(_items(data, "interventions")):
        iv = log.validate(InterventionModel, raw, ("interventions", i))
        if iv is None:
            continue
        if any(x.name == iv.name for x in [*events, *interventions]):
            log.add(
                ("interventions", i, "name"),
                f"name '{iv.name}' is already used by an event or intervention; give each its own name",
            )
            continue
        decay = (0.7 if iv.decay is None else iv.decay) if iv.type == "temporary" else None
        fields = iv.model_dump(exclude={"decay", "label", "effect"})
        line = log.line(("interventions", i))
        interventions.append(InterventionSpec(**fields, decay=decay, label=iv.label or iv.name, line=line,
                                              effect=iv.effect))
    exclusions = [
        ExclusionSpec(**ex.model_dump(), line=log.line(("exclude", i)))
        for i, raw in enumerate(_items(data, "exclude"))
        if (ex := log.validate(ExclusionModel, raw, ("exclude", i))) is not None
    ]
    drivers, driver_problems = read_drivers(data.get("drivers"))  # outside drivers (evcal.design.drivers)
    taken = taken_names(events, interventions, source)
    for loc, message in driver_problems + driver_name_problems(drivers, taken):
        log.add(loc, message)
    if log.problems:
        return None
    return Calendar(name, source, events, interventions, exclusions, public, weekday_profile=profile,
                    drivers=tuple(drivers))


def _saved_files(log: ProblemLog, data: dict[str, Any]) -> dict[str, str]:
    """The ``saved_files:`` block evcal appends to a calendar's text (path -> the CSV's text)."""
    saved = data.get(SAVED_KEY)
    if saved is None:
        return {}
    if not isinstance(saved, dict) or not all(isinstance(k, str) and isinstance(v, str)
                                              for k, v in saved.items()):
        log.add((SAVED_KEY,), "is not a block of file paths and their text; remove it (evcal writes it into "
                "the calendar a model folder keeps)")
        return {}
    return saved


def _with_file_rule(log: ProblemLog, ev: EventModel, i: int, folder: Path | None, saved: dict[str, str],
                    files: dict[str, str]) -> EventModel | None:
    """``ev`` with its ``file:`` read into a rule (evcal.calendar.datefile), or None (problems in ``log``)."""
    assert ev.when.file is not None
    loc = ("events", i, "when", "file")
    rule = read_rule(log, loc, ev.when.file.path, ev.when.file.where, ev.length or 1, folder, saved, files)
    if rule is None:
        return None
    return ev.model_copy(update={"when": ev.when.model_copy(update={"file": rule})})


def _items(data: dict[str, Any], section: str) -> list[Any]:
    """The items of a list section (not a list: reported by the top-level model)."""
    items = data.get(section)
    return items if isinstance(items, list) else []


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
    names = source.names(name_years) if block.only is None else []
    for j, wanted in enumerate(block.only or []):
        try:
            source.check_name(wanted, name_years)
        except HolidaySourceError as err:
            log.add((*loc, "only", j), str(err))
            continue
        if wanted not in names:
            names.append(wanted)
    line = log.line(loc)
    events = tuple(
        EventSpec(
            n,
            "holiday",
            R.HolidayRule(n, source),
            label=n,
            group="public_holiday",
            before=block.before,
            after=block.after,
            shape=block.shape,
            years=block.years,
            line=line,
        )
        for n in names
    )
    return source, PublicHolidays(source, tuple(name_years), events)


def _check_class_name(log: ProblemLog, part: EventSpec, i: int, raw_events: list[Any],
                      holiday_names: list[str], item_of: dict[str, int]) -> None:
    """A weekday class's event name (``xmas (weekend)``) must not be another event's name."""
    if part.split_of is None:
        return
    others = {raw.get("name", "").strip() for raw in raw_events if isinstance(raw, dict)
              and isinstance(raw.get("name"), str)} | set(holiday_names) | set(item_of)
    if part.name in others:
        log.add(("events", i, "by_weekday"), f"its class event '{part.name}' has the name of another event; "
                "rename one of them")


def resolve_bridges(log: ProblemLog, events: list[EventSpec], item_of: dict[str, int],
                    source: HolidaySource | None) -> list[EventSpec]:
    """``events`` with each ``bridge:`` rule pointed at its target events (problems go to ``log``).

    The target is an event of the calendar (a file event, a public holiday, or an event split
    ``by_weekday``: all its classes) or ``public_holidays``; not the bridge itself, not another bridge.
    """
    by_name: dict[str, list[EventSpec]] = {}
    for e in events:
        by_name.setdefault(e.name, []).append(e)
        if e.split_of is not None:
            by_name.setdefault(e.split_of, []).append(e)
    out: list[EventSpec] = []
    for spec in events:
        rule = spec.when
        if not isinstance(rule, R.BridgeRule):
            out.append(spec)
            continue
        where = ("events", item_of.get(spec.name, 0), "when", "bridge")
        target = rule.target
        targets = by_name.get(target, [])
        if target == R.PUBLIC_HOLIDAYS:
            if source is None:
                log.add(where, "there is no public_holidays block to take the holidays from; add one, e.g. "
                        "public_holidays: {country: US}, or name an event of this calendar")
                continue
        elif target == spec.name:
            log.add(where, "a bridge cannot point at itself; name the holiday it bridges, or public_holidays")
            continue
        elif not targets:
            near = suggest(target, [*by_name, R.PUBLIC_HOLIDAYS], n=1)
            hint = f"did you mean '{near[0]}'?" if near else "name an event of this file, or public_holidays"
            log.add(where, f"'{target}' is not an event of this calendar; {hint}")
            continue
        elif any(isinstance(t.when, R.BridgeRule) for t in targets):
            log.add(where, f"'{target}' is itself a bridge; point at the holiday it bridges, or at "
                    "public_holidays")
            continue
        out.append(dataclasses.replace(spec, when=R.BridgeRule(target, tuple(targets), source)))
    return out


def _check_names(log: ProblemLog, raw_events: list[Any], holiday_names: list[str]) -> None:
    """Duplicate event names, also against the public-holiday events."""
    first: dict[str, int | None] = {}
    for i, raw in enumerate(raw_events):
        name = raw.get("name") if isinstance(raw, dict) else None
        if not isinstance(name, str) or not name.strip():
            continue
        name = name.strip()
        where = ("events", i, "name")
        if name in first:
            log.add(
                where,
                f"event name '{name}' is used twice (first at line "
                f"{first[name]}); give each event its own name",
            )
        elif name in holiday_names:
            log.add(
                where,
                f"'{name}' is also a public holiday from public_holidays; "
                "rename this event, or leave the holiday out with `only`",
            )
        first.setdefault(name, log.line(where))


def _check_like(log: ProblemLog, raw_events: list[Any], holiday_names: list[str], split: set[str]) -> None:
    """``like:`` must name another event, and must not go round in a circle."""
    likes: dict[str, tuple[int, str | None]] = {}
    names = list(holiday_names)
    for i, raw in enumerate(raw_events):
        if not isinstance(raw, dict) or not isinstance(raw.get("name"), str):
            continue
        name = raw["name"].strip()
        names.append(name)
        try:
            effect = parse_effect(raw.get("effect"))
        except ValueError:
            continue  # already reported by the schema pass
        likes.setdefault(name, (i, effect.like))
    for name, (i, target) in likes.items():
        where = ("events", i, "effect", "like")
        if target is None:
            continue
        if target == name:
            log.add(where, "an event cannot borrow its own lift; name another event")
        elif target in split:
            log.add(where, f"'{target}' is split by_weekday, so it has one lift per weekday class; name one "
                    f"of them, e.g. '{class_event_name(target, 'weekend')}'")
        elif target not in names:
            near = suggest(target, names, n=1)
            hint = f"did you mean '{near[0]}'?" if near else "name an event of this calendar"
            log.add(where, f"'{target}' is not an event of this calendar; {hint}")
        else:
            chain = [name]
            cur: str | None = target
            while cur is not None and cur not in chain:
                chain.append(cur)
                cur = likes.get(cur, (0, None))[1]
            if cur == name:
                log.add(
                    where,
                    f"`like` goes round in a circle ({' -> '.join(chain)} -> "
                    f"{name}); one of them needs its own effect",
                )
