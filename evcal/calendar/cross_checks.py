"""What only the whole calendar file can tell: duplicate event names and ``like:`` targets.

Both checks read the raw ``events:`` list (not the validated specs), so an
event with another problem still takes part and every problem is reported in
one run.
"""

from __future__ import annotations

from typing import Any

from evcal.calendar.holidays_source import suggest
from evcal.calendar.problem_log import ProblemLog
from evcal.calendar.value_parsers import parse_effect

__all__ = ["check_like", "check_names"]


def check_names(log: ProblemLog, raw_events: list[Any], holiday_names: list[str]) -> None:
    """Duplicate event names, also against the public-holiday events.

    Examples
    --------
    >>> log = ProblemLog({})
    >>> check_names(log, [{"name": "sale"}, {"name": "sale"}], [])
    >>> log.problems[0].message
    "event name 'sale' is used twice (first at line None); give each event its own name"
    """
    first: dict[str, int | None] = {}
    for i, raw in enumerate(raw_events):
        name = raw.get("name") if isinstance(raw, dict) else None
        if not isinstance(name, str) or not name.strip():
            continue
        name = name.strip()
        where = ("events", i, "name")
        if name in first:
            log.add(where, f"event name '{name}' is used twice (first at line "
                    f"{first[name]}); give each event its own name")
        elif name in holiday_names:
            log.add(where, f"'{name}' is also a public holiday from public_holidays; "
                    "rename this event, or leave the holiday out with `only`")
        first.setdefault(name, log.line(where))


def check_like(log: ProblemLog, raw_events: list[Any], holiday_names: list[str]) -> None:
    """``like:`` must name another event, and must not go round in a circle.

    Examples
    --------
    >>> log = ProblemLog({})
    >>> check_like(log, [{"name": "a", "effect": {"like": "b"}}, {"name": "b", "effect": {"like": "a"}}], [])
    >>> log.problems[0].message
    '`like` goes round in a circle (a -> b -> a); one of them needs its own effect'
    """
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
        likes.setdefault(name, (i, effect.like if effect.kind == "like" else None))
    for name, (i, target) in likes.items():
        if target is None:
            continue
        where = ("events", i, "effect", "like")
        if target == name:
            log.add(where, "an event cannot borrow its own lift; name another event")
            continue
        if target not in names:
            near = suggest(target, names, n=1)
            hint = f"did you mean '{near[0]}'?" if near else "name an event of this calendar"
            log.add(where, f"'{target}' is not an event of this calendar; {hint}")
            continue
        chain = [name]
        cur: str | None = target
        while cur is not None and cur not in chain:
            chain.append(cur)
            cur = likes.get(cur, (0, None))[1]
        if cur == name:
            log.add(where, f"`like` goes round in a circle ({' -> '.join(chain)} -> "
                    f"{name}); one of them needs its own effect")
