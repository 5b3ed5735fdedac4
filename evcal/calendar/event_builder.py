"""One validated ``events:`` item -> an :class:`~evcal.calendar.spec.EventSpec` with its date rule.

The pydantic pass has checked each key on its own; here the keys are checked
against each other (a span sets its own length, a ``dates`` rule lists its own
years, a ``daily`` shape needs occurrences of one length, a ``moved`` year must
be a year the event occurs in) and the ``when`` block becomes a rule of
:mod:`evcal.calendar.rules`.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

import pandas as pd

from evcal.calendar import rules as R
from evcal.calendar.holidays_source import HolidaySource, HolidaySourceError
from evcal.calendar.problem_log import ProblemLog
from evcal.calendar.schema import EventModel, WhenModel
from evcal.calendar.spec import EventSpec, MovedSpec

__all__ = ["DEFAULT_HOLIDAY_YEARS", "build_event", "build_rule"]

# Years whose holiday names make up the public-holiday events when the block gives no
# `years` bounds. Wide enough for any history or plan we expect; a choice, documented.
DEFAULT_HOLIDAY_YEARS = (2000, 2035)


def build_event(log: ProblemLog, ev: EventModel, i: int, source: HolidaySource | None) -> EventSpec | None:
    """The spec of event number ``i`` (0-based), or None when its rule cannot be built.

    Problems go to ``log``; ``source`` is the file's public-holiday source, if any.

    Examples
    --------
    >>> from evcal.calendar.schema import EventModel
    >>> log = ProblemLog({})
    >>> ev = EventModel.model_validate({"name": "sale", "when": {"fixed": "05-01"}, "length": 3})
    >>> spec = build_event(log, ev, 0, None)
    >>> spec.rule, spec.length, log.problems
    ('fixed', 3, [])
    """
    loc: tuple[Any, ...] = ("events", i)
    name = ev.name.strip()
    if not name or any(c in name for c in "[]\n"):
        log.add((*loc, "name"), f"'{ev.name}' cannot be an event name; use letters, "
                "digits, spaces or dashes (no square brackets)")
    rule = build_rule(log, ev.when, (*loc, "when"), source)
    if rule is None:
        return None
    kind = ev.when.kind
    length = ev.length if ev.length is not None else 1
    if kind == "span":
        if ev.length is not None:
            log.add((*loc, "length"), "a span sets its own length from start to end; "
                    "remove `length`")
        assert isinstance(rule, R.SpanRule)
        length = rule.max_length()
    if kind == "every_weekday" and ev.moved:
        log.add((*loc, "moved"), "every_weekday occurs on many days a year, so it cannot "
                "be moved; use skip and a `dates` event instead")
    if kind == "dates" and ev.years.kind != "all":
        log.add((*loc, "years"), "a `dates` rule lists its own years; remove `years`")
    if ev.shape == "daily":
        _check_daily(log, ev, loc, rule, length)
    spec = EventSpec(
        name=name,
        rule=kind,
        when=rule,
        label=(ev.label or name).strip(),
        group=ev.group,
        length=length,
        before=ev.before,
        after=ev.after,
        shape=ev.shape,
        effect=ev.effect,
        years=ev.years,
        skip=tuple(sorted(set(ev.skip))),
        moved={},
        offset=ev.when.offset,
        line=log.line(loc),
    )
    moved: dict[int, MovedSpec] = {}
    for year, item in ev.moved.items():
        where = (*loc, "moved", year)
        if year in spec.skip:
            log.add(where, f"{year} is both skipped and moved; keep one of them")
            continue
        if kind != "every_weekday" and not spec.occurs_in(year):
            log.add(where, f"{year} is not a year this event occurs in ({_years_text(spec)});"
                    " move one of its years, or add the year to `years`")
            continue
        end = item.end if item.end is not None else item.start + dt.timedelta(days=length - 1)
        moved[year] = MovedSpec(pd.Timestamp(item.start), pd.Timestamp(end), item.strength)
    object.__setattr__(spec, "moved", moved)
    return spec


def _check_daily(log: ProblemLog, ev: EventModel, loc: tuple[Any, ...], rule: R.Rule, length: int) -> None:
    items: list[tuple[tuple[Any, ...], dt.date, dt.date | None]] = []
    if isinstance(rule, R.DatesRule):
        items += [((*loc, "when", "dates", j), h.start, h.end) for j, h in enumerate(rule.items)]
    items += [((*loc, "moved", y), m.start, m.end) for y, m in ev.moved.items()]
    for where, start, end in items:
        days = (end - start).days + 1 if end is not None else length
        if days != length:
            log.add(where, f"lasts {days} days but shape daily needs every occurrence to last"
                    f" `length` = {length} days; make them the same length")


def build_rule(log: ProblemLog, when: WhenModel, loc: tuple[Any, ...], source: HolidaySource | None
               ) -> R.Rule | None:
    """The date rule of a ``when`` block at ``loc``, or None (with the problem in ``log``).

    Examples
    --------
    >>> from evcal.calendar.schema import WhenModel
    >>> build_rule(ProblemLog({}), WhenModel.model_validate({"easter": -2}), ("when",), None)
    EasterRule(days=-2, kind='easter', method=3)
    """
    kind = when.kind
    if kind == "easter":
        return R.EasterRule(when.easter or 0)
    if kind == "orthodox_easter":
        return R.OrthodoxEasterRule(when.orthodox_easter or 0)
    if kind == "fixed":
        assert when.fixed is not None
        return R.FixedRule(*when.fixed)
    if kind == "weekday":
        w = when.weekday
        assert w is not None
        return R.WeekdayRule(month=w.month, weekday=w.day, nth=w.nth)
    if kind == "span":
        s = when.span
        assert s is not None
        return R.SpanRule(*s.start, *s.end)
    if kind == "every_weekday":
        assert when.every_weekday is not None
        return R.EveryWeekdayRule(when.every_weekday)
    if kind == "dates":
        assert when.dates is not None
        if not when.dates:
            log.add((*loc, "dates"), "the list of dates is empty; list at least one date")
            return None
        return R.DatesRule(tuple(R.Hit(d.start, d.end, d.strength) for d in when.dates))
    # holiday
    name = (when.holiday or "").strip()
    if source is None:
        log.add((*loc, "holiday"), f"there is no public_holidays block to look '{name}' up in;"
                " add one, e.g. public_holidays: {country: GB, subdivision: ENG}")
        return None
    try:
        lo, hi = DEFAULT_HOLIDAY_YEARS
        source.check_name(name, range(lo, hi + 1))
    except HolidaySourceError as err:
        log.add((*loc, "holiday"), str(err))
        return None
    return R.HolidayRule(name, source)


def _years_text(spec: EventSpec) -> str:
    if isinstance(spec.when, R.DatesRule):
        return "its dates are in " + ", ".join(str(y) for y in spec.when.years())
    text = spec.years.describe()
    if spec.years.kind == "every" and spec.years.start is not None and spec.years.every:
        first = spec.years.start
        text += ": " + ", ".join(str(first + k * spec.years.every) for k in range(3)) + ", ..."
    elif spec.years.kind == "all":
        text = "every year"
    return text
