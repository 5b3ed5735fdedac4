"""Date rules: each ``when:`` kind as one small class that dates one year.

Every rule answers one question, "which occurrences does this rule give in
year *y*?", as a list of :class:`Hit` (start, optional end, strength). The
event around it applies ``length`` (when the rule gives no end), ``offset``,
``years``, ``skip`` and ``moved``; the rules know nothing about those.

Easter dates come from :func:`dateutil.easter.easter`, weekday arithmetic from
the standard :mod:`calendar` module, public holidays from the ``holidays``
library (through :class:`~evcal.calendar.holidays_source.HolidaySource`).

Examples
--------
>>> EasterRule(-2).hits(2024)
[Hit(start=datetime.date(2024, 3, 29), end=None, strength=1.0)]
>>> WeekdayRule(month=11, weekday=3, nth=4).hits(2024)   # 4th Thursday of November
[Hit(start=datetime.date(2024, 11, 28), end=None, strength=1.0)]
"""

from __future__ import annotations

import calendar as _stdcal
import datetime as dt
import functools
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, NamedTuple, Protocol

from dateutil.easter import EASTER_ORTHODOX, EASTER_WESTERN, easter

if TYPE_CHECKING:  # pragma: no cover
    from evcal.calendar.holidays_source import HolidaySource

WEEKDAYS: dict[str, int] = {
    "mon": 0, "tue": 1, "wed": 2, "thu": 3, "fri": 4, "sat": 5, "sun": 6,
    "monday": 0, "tuesday": 1, "wednesday": 2, "thursday": 3, "friday": 4,
    "saturday": 5, "sunday": 6,
}  # fmt: skip
WEEKDAY_ABBR = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")


class Hit(NamedTuple):
    """One dated occurrence a rule gives: ``end=None`` means "use the event's length"."""

    start: dt.date
    end: dt.date | None = None
    strength: float = 1.0


class Rule(Protocol):
    """What every ``when:`` rule provides."""

    kind: str

    def hits(self, year: int) -> list[Hit]:
        """Occurrences of this rule that start in ``year`` (before ``offset``)."""
        ...

    def describe(self) -> str:
        """One short human line, for ``evcal calendar check``."""
        ...


@functools.lru_cache(maxsize=4096)
def _easter(year: int, method: int) -> dt.date:
    return easter(year, method)


@dataclass(frozen=True)
class EasterRule:
    """Days from Western (Gregorian) Easter Sunday."""

    days: int
    kind: str = "easter"
    method: int = EASTER_WESTERN

    def hits(self, year: int) -> list[Hit]:
        return [Hit(_easter(year, self.method) + dt.timedelta(days=self.days))]

    def describe(self) -> str:
        return f"{self.kind} {self.days:+d} days"


def OrthodoxEasterRule(days: int) -> EasterRule:  # noqa: N802 - reads like a rule class
    """Days from Orthodox Easter Sunday (Julian computus, Gregorian date)."""
    return EasterRule(days, kind="orthodox_easter", method=EASTER_ORTHODOX)


@dataclass(frozen=True)
class FixedRule:
    """The same month-day every year; 02-29 occurs in leap years only."""

    month: int
    day: int
    kind: str = "fixed"

    def hits(self, year: int) -> list[Hit]:
        if self.month == 2 and self.day == 29 and not _stdcal.isleap(year):
            return []
        return [Hit(dt.date(year, self.month, self.day))]

    def describe(self) -> str:
        return f"fixed {self.month:02d}-{self.day:02d}"


@dataclass(frozen=True)
class WeekdayRule:
    """The nth weekday of a month (``nth: -1`` is the last one)."""

    month: int
    weekday: int
    nth: int
    kind: str = "weekday"

    def hits(self, year: int) -> list[Hit]:
        weeks = _stdcal.Calendar().monthdayscalendar(year, self.month)  # Monday first; 0 = not this month
        days = [week[self.weekday] for week in weeks if week[self.weekday]]
        index = self.nth - 1 if self.nth > 0 else self.nth
        return [Hit(dt.date(year, self.month, days[index]))] if -len(days) <= index < len(days) else []

    def describe(self) -> str:
        return f"weekday nth {self.nth} {WEEKDAY_ABBR[self.weekday]} of month {self.month}"


@dataclass(frozen=True)
class SpanRule:
    """The same month-day range every year; an end before the start runs into next year."""

    start_month: int
    start_day: int
    end_month: int
    end_day: int
    kind: str = "span"

    @property
    def wraps(self) -> bool:
        return (self.end_month, self.end_day) < (self.start_month, self.start_day)

    def hits(self, year: int) -> list[Hit]:
        start = dt.date(year, self.start_month, self.start_day)
        end = dt.date(year + int(self.wraps), self.end_month, self.end_day)
        return [Hit(start, end)]

    def max_length(self) -> int:
        """Days in the longest occurrence (a leap year's, if the span covers 29 February)."""
        return max((h.end - h.start).days + 1 for y in (2023, 2024) for h in self.hits(y) if h.end)

    def describe(self) -> str:
        return f"span {self.start_month:02d}-{self.start_day:02d} to {self.end_month:02d}-{self.end_day:02d}"


@dataclass(frozen=True)
class EveryWeekdayRule:
    """Every such weekday of the year (Sunday closures)."""

    weekdays: tuple[int, ...]
    kind: str = "every_weekday"

    def hits(self, year: int) -> list[Hit]:
        first = dt.date(year, 1, 1)
        n_days = 366 if _stdcal.isleap(year) else 365
        wanted = set(self.weekdays)
        return [
            Hit(first + dt.timedelta(days=i)) for i in range(n_days) if (first.weekday() + i) % 7 in wanted
        ]

    def describe(self) -> str:
        return "every " + ", ".join(WEEKDAY_ABBR[w] for w in self.weekdays)


@dataclass(frozen=True)
class DatesRule:
    """Explicit occurrences (promotions): each with its own start, end and strength."""

    items: tuple[Hit, ...]
    kind: str = "dates"

    def hits(self, year: int) -> list[Hit]:
        return [h for h in self.items if h.start.year == year]

    def years(self) -> list[int]:
        return sorted({h.start.year for h in self.items})

    def describe(self) -> str:
        ys = self.years()
        span = f"{ys[0]}-{ys[-1]}" if ys else "none"
        return f"dates ({len(self.items)} listed, {span})"


@dataclass(frozen=True)
class HolidayRule:
    """A day (or run of days) named by the calendar's ``public_holidays`` source."""

    name: str
    source: HolidaySource
    kind: str = "holiday"

    def hits(self, year: int) -> list[Hit]:
        return [Hit(s, e) for s, e in self.source.runs(self.name, year)]

    def describe(self) -> str:
        return f"holiday '{self.name}' ({self.source.describe()})"


#: Saturday and Sunday: the weekend when no public-holiday source says otherwise
SAT_SUN = frozenset({5, 6})


@dataclass(frozen=True, eq=False)
class BridgeRule:
    """The lone working day between a holiday and a weekend (or another holiday): a bridge day.

    A day is a bridge day when it is a working day (not a weekend day, not a holiday), both its
    neighbours are days off, and at least one neighbour is a day of ``target``: the Friday
    after a Thursday holiday, the Monday before a Tuesday holiday. ``target`` is the name of an
    event of the calendar (``targets`` are its specs, filled in once every event is built) or
    ``public_holidays`` (every holiday of ``source``, substitute days included). Holidays of
    ``source`` are days off whichever the target; its ``weekend`` is the weekend (Saturday and
    Sunday without a source).
    """

    target: str
    targets: tuple[Any, ...] = ()
    source: HolidaySource | None = None
    kind: str = "bridge"
    _cache: dict[int, tuple[frozenset[dt.date], frozenset[dt.date]]] = field(
        default_factory=dict, repr=False
    )

    @property
    def everything(self) -> bool:
        """Whether the target is every public holiday of the source."""
        return self.target == PUBLIC_HOLIDAYS

    def _days(self, year: int) -> tuple[frozenset[dt.date], frozenset[dt.date]]:
        """(target days, every day off that is not a weekend) in ``year``."""
        got = self._cache.get(year)
        if got is None:
            public = frozenset(self.source.days(year)) if self.source is not None else frozenset()
            target: set[dt.date] = set(public) if self.everything else set()
            for spec in self.targets:
                for y in (year - 1, year, year + 1):  # occurrences that start in a neighbouring year
                    for s, e, _ in spec.dated(y):
                        target.update(s + dt.timedelta(days=k) for k in range((e - s).days + 1))
            got = (frozenset(d for d in target if d.year == year), public)
            self._cache[year] = got
        return got

    def weekend(self) -> frozenset[int]:
        return self.source.weekend() if self.source is not None else SAT_SUN

    def hits(self, year: int) -> list[Hit]:
        weekend = self.weekend()
        target: set[dt.date] = set()
        off: set[dt.date] = set()
        for y in (year - 1, year, year + 1):
            t, p = self._days(y)
            target |= t
            off |= t | p
        one = dt.timedelta(days=1)

        def is_off(day: dt.date) -> bool:
            return day.weekday() in weekend or day in off

        found = {
            day + step
            for day in target
            for step in (one, -one)
            if (day + step).year == year and not is_off(day + step) and is_off(day + 2 * step)
        }
        return [Hit(day, day) for day in sorted(found)]

    def describe(self) -> str:
        what = f"public holidays ({self.source.describe()})" if self.everything and self.source else (
            f"'{self.target}'")
        return f"bridge days of {what}"


#: the ``bridge:`` value that means every public holiday of the calendar's source
PUBLIC_HOLIDAYS = "public_holidays"
