"""The validated calendar: plain frozen records that the later steps read.

These are what :func:`evcal.calendar.load_calendar` returns inside a
:class:`~evcal.calendar.Calendar`. The file-level checking (keys, types, line
numbers) lives in :mod:`evcal.calendar.schema` and
:mod:`evcal.calendar.loader`; by the time one of these exists it is valid.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from typing import Literal

import pandas as pd

from evcal.calendar.rules import Hit, Rule

Shape = Literal["flat", "ramp", "decay", "daily"]
EffectKind = Literal["estimate", "zero", "assume", "like"]
InterventionType = Literal["pulse", "level_shift", "temporary", "ramp"]

#: The years a calendar may name (dates, ``years``, ``skip``, ``moved``) and that
#: ``evcal calendar dates --from/--to`` may list. A choice, not a source: every later
#: step stamps days as pandas nanosecond Timestamps (1677-09-21 to 2262-04-11), and a
#: window of up to a year before or after an occurrence must stay inside them; no sales
#: history this tool reads starts before 1900, and plans do not reach 2200.
FIRST_YEAR = 1900
LAST_YEAR = 2200
YEAR_RANGE = (FIRST_YEAR, LAST_YEAR)


@dataclass(frozen=True)
class EffectSpec:
    """How an event's lift is obtained.

    ``estimate`` (from history), ``zero`` (a closure: the days are known to be
    zero), ``assume`` (a given lift, as a fraction: 0.15 is +15 %) or ``like``
    (borrow another event's lift).
    """

    kind: EffectKind = "estimate"
    assume: float | None = None
    like: str | None = None

    def describe(self) -> str:
        if self.kind == "assume" and self.assume is not None:
            return f"assume {self.assume * 100:+g}%"
        if self.kind == "like":
            return f"like {self.like}"
        return self.kind


@dataclass(frozen=True)
class YearsSpec:
    """Which years an event occurs in: all, a list, every n-th from a start, or a range."""

    kind: Literal["all", "list", "every", "range"] = "all"
    values: tuple[int, ...] = ()
    every: int | None = None
    start: int | None = None
    first: int | None = None
    last: int | None = None

    def contains(self, year: int) -> bool:
        if self.kind == "list":
            return year in self.values
        if self.kind == "every":
            assert self.every is not None and self.start is not None
            return year >= self.start and (year - self.start) % self.every == 0
        if self.kind == "range":
            return (self.first is None or year >= self.first) and (
                self.last is None or year <= self.last
            )
        return True

    def bounds(self) -> tuple[int | None, int | None]:
        """First and last possible year (``None`` = open-ended)."""
        if self.kind == "list":
            return (min(self.values), max(self.values)) if self.values else (None, None)
        if self.kind == "every":
            return self.start, None
        if self.kind == "range":
            return self.first, self.last
        return None, None

    def describe(self) -> str:
        if self.kind == "list":
            return ", ".join(str(v) for v in self.values)
        if self.kind == "every":
            return f"every {self.every} years from {self.start}"
        if self.kind == "range":
            return f"{self.first or '...'} to {self.last or '...'}"
        return "all"


@dataclass(frozen=True)
class MovedSpec:
    """One year's occurrence on other dates (inclusive)."""

    start: pd.Timestamp
    end: pd.Timestamp
    strength: float = 1.0


@dataclass(frozen=True, eq=False)
class EventSpec:
    """One event of the calendar, validated.

    ``rule`` is the ``when:`` kind ("easter", "weekday", ...); ``when`` is the rule object that
    dates it; ``label`` is the name unless the file gives one (the loader fills it in).
    ``length`` is the occurrence length in days for rules that give single days; ``span`` and
    ``dates`` carry their own ends.
    """

    name: str
    rule: str
    when: Rule
    label: str = ""
    group: str | None = None
    length: int = 1
    before: int = 0
    after: int = 0
    shape: Shape = "flat"
    effect: EffectSpec = field(default_factory=EffectSpec)
    years: YearsSpec = field(default_factory=YearsSpec)
    skip: tuple[int, ...] = ()
    moved: dict[int, MovedSpec] = field(default_factory=dict)
    offset: int = 0
    line: int | None = None
    before_auto: bool = False  # `before: auto`: the fit chooses the run-up (``before`` is a stand-in)
    #: ``by_weekday``: this event is one weekday class (``weekday_class``, e.g. ``weekend``) of the event
    #: ``split_of`` and keeps only the occurrences that start on ``on_weekdays`` (Monday = 0)
    on_weekdays: tuple[int, ...] | None = None
    split_of: str | None = None
    weekday_class: str | None = None
    #: ``dip_after`` / ``dip_before``: this event is the dip period of the event ``dip_of`` (its own
    #: coefficient, one occurrence per occurrence of that event): ``length`` days right after its
    #: window (``dip_side`` "after") or right before it ("before")
    dip_of: EventSpec | None = None
    dip_side: Literal["after", "before"] | None = None

    @property
    def window_offsets(self) -> list[int]:
        """Day offsets from the occurrence start that the window covers."""
        return list(range(-self.before, self.length + self.after))

    @property
    def is_closure(self) -> bool:
        return self.effect.kind == "zero"

    def columns(self) -> list[str]:
        """Column names in day weights: the name, or one per day offset for ``daily``."""
        if self.shape == "daily":
            return [f"{self.name}[{k:+d}]" for k in self.window_offsets]
        return [self.name]

    def occurs_in(self, year: int) -> bool:
        """Whether the rule, ``years`` and ``skip`` give this event an occurrence in ``year``."""
        return bool(self._rule_hits(year))

    def _rule_hits(self, year: int) -> list[Hit]:
        if year in self.skip or not self.years.contains(year):
            return []
        return self.when.hits(year)

    def dated(self, year: int) -> list[tuple[dt.date, dt.date, float]]:
        """The occurrences of ``year`` as (start, end, strength), inclusive, without window.

        A dip period's are its event's occurrences of ``year`` moved next to their windows (so a dip
        may fall in the next or the previous year).
        """
        if self.dip_of is not None:
            parent, days = self.dip_of, dt.timedelta(days=self.length)
            if self.dip_side == "after":
                gap = dt.timedelta(days=parent.after + 1)
                return [(e + gap, e + gap + days - dt.timedelta(days=1), w) for _, e, w in parent.dated(year)]
            gap = dt.timedelta(days=parent.before)
            return [(s - gap - days, s - gap - dt.timedelta(days=1), w) for s, _, w in parent.dated(year)]
        if year in self.moved:
            m = self.moved[year]
            out = [(m.start.date(), m.end.date(), m.strength)]
            return out if self.on_weekdays is None or out[0][0].weekday() in self.on_weekdays else []
        shift = dt.timedelta(days=self.offset)
        span = dt.timedelta(days=self.length - 1)
        out = []
        for h in self._rule_hits(year):
            start = h.start + shift
            end = (h.end + shift) if h.end is not None else start + span
            if self.on_weekdays is None or start.weekday() in self.on_weekdays:
                out.append((start, end, h.strength))
        return out


@dataclass(frozen=True)
class InterventionSpec:
    """A known change in the history (Box–Tiao intervention)."""

    name: str
    type: InterventionType
    start: pd.Timestamp
    end: pd.Timestamp | None = None
    decay: float | None = None
    label: str = ""
    line: int | None = None
    effect: EffectSpec = field(default_factory=EffectSpec)  # estimate, or {assume: x}: its size in a plan


@dataclass(frozen=True)
class ExclusionSpec:
    """A period kept out of the fit (inclusive), with the reason."""

    start: pd.Timestamp
    end: pd.Timestamp
    reason: str
    line: int | None = None
