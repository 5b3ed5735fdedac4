"""One validated ``events:`` item -> an :class:`~evcal.calendar.spec.EventSpec` with its date rule.

The pydantic pass has checked each key on its own; here the keys are checked against each
other (a span sets its own length, a ``dates`` rule lists its own years, a ``daily`` shape
needs occurrences of one length, a ``moved`` year must be a year the event occurs in).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from typing import Any

import pandas as pd

from evcal.calendar import rules as R
from evcal.calendar.holidays_source import HolidaySource, HolidaySourceError
from evcal.calendar.problem_log import ProblemLog
from evcal.calendar.schema import EventModel, WhenModel
from evcal.calendar.spec import EventSpec, MovedSpec
from evcal.calendar.weekday_classes import SPLIT_RULES, class_event_name

__all__ = ["DEFAULT_HOLIDAY_YEARS", "DIP_SIDES", "build_event", "build_rule", "dip_event_name",
           "derived_events"]

#: the keys that give an event a dip period with its own coefficient, and the side of its window
DIP_SIDES = {"dip_after": "after", "dip_before": "before"}
#: rules whose events cannot have a dip: a day every week has no "after", a bridge day is found later
_NO_DIP_RULES = ("every_weekday", "bridge")

# Years whose holiday names make up the public-holiday events when the block gives no
# `years` bounds. Wide enough for any history or plan we expect; a choice, documented.
DEFAULT_HOLIDAY_YEARS = (2000, 2035)

#: the run-up an event with `before: auto` has until a fit chooses one (the 8 days of the usual
#: Easter regressor of regression practice, as recalled from memory); evcal.model.choose picks among
#: several lengths
AUTO_RUN_UP = 8
#: rules whose events may leave their run-up to the fit
AUTO_RULES = ("easter", "orthodox_easter")

# Each `when:` key's validated value -> its date rule (`holiday` and `dates` need more).
_RULES = {
    "easter": R.EasterRule,
    "orthodox_easter": R.OrthodoxEasterRule,
    "fixed": lambda month_day: R.FixedRule(*month_day),
    "weekday": lambda w: R.WeekdayRule(month=w.month, weekday=w.day, nth=w.nth),
    "span": lambda s: R.SpanRule(*s.start, *s.end),
    "every_weekday": R.EveryWeekdayRule,
    "dates": lambda dates: R.DatesRule(tuple(R.Hit(d.start, d.end, d.strength) for d in dates)),
    "file": lambda rule: rule,  # the loader has read the CSV into its rule (evcal.calendar.datefile)
}


def build_event(log: ProblemLog, ev: EventModel, i: int, source: HolidaySource | None) -> EventSpec | None:
    """The spec of event number ``i`` (0-based), or None when its rule cannot be built.

    Problems go to ``log``; ``source`` is the file's public-holiday source, if any.

    Examples
    --------
    >>> log = ProblemLog({})
    >>> ev = EventModel.model_validate({"name": "sale", "when": {"fixed": "05-01"}, "length": 3})
    >>> spec = build_event(log, ev, 0, None)
    >>> spec.rule, spec.length, log.problems
    ('fixed', 3, [])
    """
    loc: tuple[Any, ...] = ("events", i)
    name = ev.name.strip()
    if not name or any(c in name for c in "[]\n"):
        log.add(
            (*loc, "name"),
            f"'{ev.name}' cannot be an event name; use letters, digits, spaces or dashes "
            "(no square brackets)",
        )
    rule = build_rule(log, ev.when, (*loc, "when"), source)
    if rule is None:
        return None
    kind = ev.when.kind
    length = ev.length or 1
    if isinstance(rule, R.SpanRule):
        if ev.length is not None:
            log.add((*loc, "length"), "a span sets its own length from start to end; remove `length`")
        length = rule.max_length()
    if kind == "bridge" and ev.length is not None:
        log.add((*loc, "length"), "a bridge day is one day; remove `length`")
        length = 1
    if ev.by_weekday is not None and (kind not in SPLIT_RULES or ev.effect.kind != "estimate"):
        log.add((*loc, "by_weekday"), "by_weekday is for estimated lifts of rules whose weekday changes "
                f"from year to year ({', '.join(SPLIT_RULES)}), not a `{kind}` rule with effect "
                f"{ev.effect.describe()}; remove it")
    for key in DIP_SIDES:
        if getattr(ev, key) and (why := _no_dip(ev, kind)):
            log.add((*loc, key), f"{key} is for an estimated lift with one column, not {why}; remove it")
    if kind == "every_weekday" and ev.moved:
        log.add(
            (*loc, "moved"),
            "every_weekday occurs on many days a year, so it cannot be moved; use skip and a `dates` "
            "event instead",
        )
    if kind in ("dates", "file") and ev.years.kind != "all":
        log.add((*loc, "years"), f"a `{kind}` rule lists its own years; remove `years`")
    if ev.shape == "daily":
        _check_daily(log, ev, loc, rule, length)
    auto = ev.before == "auto"
    if auto and (kind not in AUTO_RULES or ev.shape == "daily" or ev.effect.kind != "estimate"):
        log.add((*loc, "before"), "before: auto is for Easter-relative events with an estimated lift and "
                "one column (when: {easter: ...}; not shape daily, not effect zero, assume or like); give "
                "the days, e.g. before: 7")
    spec = EventSpec(
        name=name,
        rule=kind,
        when=rule,
        label=(ev.label or name).strip(),
        group=ev.group,
        length=length,
        before=AUTO_RUN_UP if auto else int(ev.before),
        before_auto=auto,
        after=ev.after,
        shape=ev.shape,
        effect=ev.effect,
        years=ev.years,
        skip=tuple(sorted(set(ev.skip))),
        offset=ev.when.offset,
        line=log.line(loc),
    )
    for year, item in ev.moved.items():
        where = (*loc, "moved", year)
        if year in spec.skip:
            log.add(where, f"{year} is both skipped and moved; keep one of them")
        elif kind != "every_weekday" and not spec.occurs_in(year):
            log.add(
                where,
                f"{year} is not a year this event occurs in ({_years_text(spec)}); move one of its "
                "years, or add the year to `years`",
            )
        else:
            end = item.end or item.start + dt.timedelta(days=length - 1)
            spec.moved[year] = MovedSpec(pd.Timestamp(item.start), pd.Timestamp(end), item.strength)
    return spec


def _no_dip(ev: EventModel, kind: str) -> str:
    """Why this event cannot have a dip period ("" when it can)."""
    if ev.effect.kind != "estimate":
        return f"effect {ev.effect.describe()} (there is no fitted lift to net the dip against)"
    if ev.shape == "daily":
        return "shape daily (it has a coefficient per day already: lengthen `after` or `before` instead)"
    if ev.by_weekday is not None:
        return "an event split by_weekday (give each class its own event to add a dip)"
    if kind in _NO_DIP_RULES:
        return f"a `{kind}` rule (its days are not single occurrences with a day after)"
    return ""


def _check_daily(log: ProblemLog, ev: EventModel, loc: tuple[Any, ...], rule: R.Rule, length: int) -> None:
    items = [((*loc, "when", "dates", j), h) for j, h in enumerate(getattr(rule, "items", ()))]
    items += [((*loc, "moved", y), m) for y, m in ev.moved.items()]
    for where, item in items:
        days = (item.end - item.start).days + 1 if item.end is not None else length
        if days != length:
            log.add(
                where,
                f"lasts {days} days but shape daily needs every occurrence to last `length` = {length} "
                "days; make them the same length",
            )


def build_rule(
    log: ProblemLog, when: WhenModel, loc: tuple[Any, ...], source: HolidaySource | None
) -> R.Rule | None:
    """The date rule of a ``when`` block at ``loc``, or None (with the problem in ``log``).

    Examples
    --------
    >>> build_rule(ProblemLog({}), WhenModel.model_validate({"easter": -2}), ("when",), None)
    EasterRule(days=-2, kind='easter', method=3)
    """
    kind = when.kind
    if kind == "dates" and not when.dates:
        log.add((*loc, "dates"), "the list of dates is empty; list at least one date")
        return None
    if kind == "bridge":  # its target events are found once every event is built (loader.resolve_bridges)
        return R.BridgeRule(str(when.bridge), source=source)
    if kind != "holiday":
        return _RULES[kind](getattr(when, kind))
    name = (when.holiday or "").strip()
    if source is None:
        log.add(
            (*loc, "holiday"),
            f"there is no public_holidays block to look '{name}' up in; add one, e.g. public_holidays: "
            "{country: GB, subdivision: ENG}",
        )
        return None
    try:
        source.check_name(name, range(DEFAULT_HOLIDAY_YEARS[0], DEFAULT_HOLIDAY_YEARS[1] + 1))
    except HolidaySourceError as err:
        log.add((*loc, "holiday"), str(err))
        return None
    return R.HolidayRule(name, source)


def _years_text(spec: EventSpec) -> str:
    if isinstance(spec.when, R.DatesRule):
        return "its dates are in " + ", ".join(str(y) for y in spec.when.years())
    years = spec.years
    if years.kind == "all":
        return "every year"
    if years.kind == "every" and years.start is not None and years.every:
        steps = ", ".join(str(years.start + k * years.every) for k in range(3))
        return f"{years.describe()}: {steps}, ..."
    return years.describe()


def dip_event_name(event: str, side: str) -> str:
    """The name of an event's dip period: ``promo (dip after)``, ``promo (dip before)``."""
    return f"{event} (dip {side})"


def derived_events(spec: EventSpec, ev: EventModel) -> list[EventSpec]:
    """The events one calendar entry becomes: one per ``by_weekday`` class (``xmas (weekend)``, ...),
    or ``[spec]`` without a split; then its dip periods (``dip_after``, ``dip_before``), each an event
    of its own.

    Examples
    --------
    >>> ev = EventModel.model_validate(
    ...     {"name": "xmas", "when": {"fixed": "12-25"}, "by_weekday": ["weekend", "workday"]})
    >>> [(e.name, e.weekday_class, e.on_weekdays)
    ...  for e in derived_events(build_event(ProblemLog({}), ev, 0, None), ev)]
    [('xmas (weekend)', 'weekend', (5, 6)), ('xmas (workday)', 'workday', (0, 1, 2, 3, 4))]
    """
    if ev.by_weekday is None:
        dips = [dataclasses.replace(spec, name=dip_event_name(spec.name, side),
                                    label=dip_event_name(spec.label, side), length=getattr(ev, key), before=0,
                                    after=0, shape="flat", before_auto=False, moved={}, dip_of=spec,
                                    dip_side=side)
                for key, side in DIP_SIDES.items() if getattr(ev, key)]
        return [spec, *dips]
    return [
        dataclasses.replace(spec, name=class_event_name(spec.name, cls), moved=dict(spec.moved),
                            label=class_event_name(spec.label, cls), on_weekdays=days, split_of=spec.name,
                            weekday_class=cls)
        for cls, days in ev.by_weekday
    ]
