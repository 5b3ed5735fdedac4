"""``by_weekday:``: an event's effect split by the weekday its occurrence starts on.

A fixed-date holiday on a Saturday costs no working day, on a Monday or Friday it makes a long
weekend, on a Tuesday or Thursday it invites a bridge day. ``by_weekday: [weekend, monday_friday,
midweek]`` turns one event into one event per class (``xmas (weekend)``, ``xmas (monday_friday)``,
``xmas (midweek)``), each with its own lift, interval and occurrence count. The split happens here,
in the calendar, so every later step (fit, identification, plan, report, workbook) sees ordinary
events and needs no code of its own.

Examples
--------
>>> parse_classes(["weekend", "monday_friday", "midweek"])
(('weekend', (5, 6)), ('monday_friday', (0, 4)), ('midweek', (1, 2, 3)))
"""

from __future__ import annotations

from typing import Any

from evcal.calendar.rules import WEEKDAY_ABBR, WEEKDAYS
from evcal.calendar.value_parsers import show

#: the named classes and their weekdays (Python numbers, Monday = 0); single days (mon..sun) too
CLASSES: dict[str, tuple[int, ...]] = {
    "weekend": (5, 6),
    "monday_friday": (0, 4),
    "midweek": (1, 2, 3),
    "tuesday_thursday": (1, 3),
    "workday": (0, 1, 2, 3, 4),
}
#: the date rules whose occurrences fall on different weekdays from year to year
SPLIT_RULES = ("fixed", "holiday", "dates", "file", "span")
_EXAMPLE = "e.g. by_weekday: [weekend, monday_friday, midweek]"


def class_days(name: str) -> tuple[int, ...]:
    """The weekdays of one class name; ValueError naming the known classes."""
    key = str(name).strip().lower()
    if key in CLASSES:
        return CLASSES[key]
    if key in WEEKDAYS:
        return (WEEKDAYS[key],)
    known = ", ".join([*CLASSES, *WEEKDAY_ABBR])
    raise ValueError(f"{show(name)} is not a weekday class; use {known}")


def parse_classes(value: Any) -> tuple[tuple[str, tuple[int, ...]], ...]:
    """``by_weekday:`` as (class, weekdays) pairs covering each weekday exactly once.

    Raises ValueError (what is wrong; what would be right) for an unknown class, a weekday in two
    classes, or a weekday in none (its occurrences would silently vanish).
    """
    if not isinstance(value, list) or len(value) < 2:
        raise ValueError(f"{show(value)} is not a list of two or more weekday classes; {_EXAMPLE}")
    out: list[tuple[str, tuple[int, ...]]] = []
    seen: dict[int, str] = {}
    for item in value:
        days = class_days(item)
        name = str(item).strip().lower()
        for d in days:
            if d in seen:
                raise ValueError(f"{WEEKDAY_ABBR[d]} is in both {seen[d]} and {name}; put each weekday in "
                                 f"one class, {_EXAMPLE}")
            seen[d] = name
        out.append((name, days))
    missing = [WEEKDAY_ABBR[d] for d in range(7) if d not in seen]
    if missing:
        raise ValueError(f"no class holds {', '.join(missing)} (occurrences on those days would be lost); "
                         f"add a class for them, {_EXAMPLE}")
    return tuple(out)


def class_event_name(event: str, weekday_class: str) -> str:
    """The name of one class's event: ``xmas (weekend)``."""
    return f"{event} ({weekday_class})"
