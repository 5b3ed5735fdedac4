"""The calendar file's keys and value types, as pydantic models.

Each section of the file is one model with ``extra="forbid"`` (so a typo in
a key is caught and the nearest valid key suggested). Values that a person
writes in several forms (``years``, ``effect``, ``15%``, dates, weekday
names) are parsed by the functions of :mod:`evcal.calendar.value_parsers`;
the checks here say "what is wrong; what would be right" the same way, and
the loader adds the file, line and key path in front.
"""

from __future__ import annotations

import datetime as dt
import math
from typing import Annotated, Any, Literal

import pandas as pd
from pydantic import (
    AfterValidator,
    BaseModel,
    BeforeValidator,
    ConfigDict,
    ValidationInfo,
    field_validator,
    model_validator,
)

from evcal.calendar.spec import EffectSpec, InterventionType, Shape, YearsSpec
from evcal.calendar.value_parsers import (
    check_year,
    parse_date,
    parse_effect,
    parse_month_day,
    parse_weekday,
    parse_years,
    show,
)
from evcal.calendar.weekday_classes import parse_classes

#: Each rule key of ``when``, and what its value must be (for ``easter:`` left empty or null).
RULE_VALUES = {
    "easter": "the days from Easter Sunday, e.g. easter: -2",
    "orthodox_easter": "the days from Orthodox Easter Sunday, e.g. orthodox_easter: 0",
    "fixed": 'a month-day, e.g. fixed: "12-24"',
    "weekday": "a month, weekday and position, e.g. weekday: {month: 5, day: mon, nth: -1}",
    "holiday": "the name of a public holiday, e.g. holiday: Christmas Day",
    "span": 'the first and last month-day, e.g. span: {start: "12-24", end: "01-01"}',
    "every_weekday": "one or more weekdays, e.g. every_weekday: [sun]",
    "dates": "at least one date, e.g. dates: [2024-03-29]",
    "bridge": "an event name or public_holidays, e.g. bridge: public_holidays",
    "file": "a CSV file of dates, e.g. file: school-holidays.csv, or file: {path: school-holidays.csv, "
            "where: {region: north}}",
}
RULE_KEYS = tuple(RULE_VALUES)
MAX_DAYS = 366  # longest occurrence, run-up, run-down or offset, in days
# The bounds are choices, not sources (see also :mod:`evcal.calendar.value_parsers`):
#: an occurrence's strength (1 = a normal occurrence): above 0, at most 100
MAX_STRENGTH = 100.0


def _check_strength(value: float) -> float:
    if not (math.isfinite(value) and 0 < value <= MAX_STRENGTH):
        raise ValueError(
            f"strength {show(value)} is out of range; write a number above 0 and at most "
            f"{MAX_STRENGTH:g} (1 = a normal occurrence, 1.5 = half as strong again)"
        )
    return value


def _intervention_effect(value: Any) -> EffectSpec:
    """An intervention's ``effect``: ``estimate`` (the default) or ``{assume: N%}`` (its size in a plan)."""
    effect = parse_effect(value)
    if effect.kind not in ("estimate", "assume"):
        raise ValueError(f"effect {effect.describe()} is for events; an intervention takes effect: "
                         "{assume: N%} (its assumed size, e.g. {assume: -10%}) or effect: estimate")
    return effect


def _check_decay(value: float | None) -> float | None:
    if value is not None and not (math.isfinite(value) and 0 < value < 1):
        raise ValueError(
            f"decay {show(value)} is out of range; write a number between 0 and 1, both "
            "excluded (the share of the change kept each day), e.g. 0.7"
        )
    return value


def _bounded(lo: int, hi: int, what: str) -> AfterValidator:
    """An int check that names the whole accepted range (pydantic's names one bound)."""

    def check(value: int) -> int:
        if not lo <= value <= hi:
            raise ValueError(f"{show(value)} is out of range; {what} must be from {lo:g} to {hi:g}")
        return value

    return AfterValidator(check)


def _check_order(start: dt.date, end: dt.date | None) -> None:
    if end is not None and end < start:
        raise ValueError(
            f"end {end:%Y-%m-%d} is before start {start:%Y-%m-%d}; end must be on or after start"
        )


def _weekday_list(value: Any) -> tuple[int, ...]:
    items = value if isinstance(value, list) else [value]
    if not items:
        raise ValueError("the list of weekdays is empty; e.g. every_weekday: [sun]")
    return tuple(sorted({parse_weekday(v) for v in items}))


def _bridge_target(value: str) -> str:
    if not value.strip():
        raise ValueError("`bridge` names no event; write an event name or public_holidays")
    return value.strip()


def _file_path(value: str) -> str:
    if not value.strip():
        raise ValueError("`file` names no file; write the CSV's path, e.g. file: school-holidays.csv")
    return value.strip()


def _file_where(value: Any) -> tuple[tuple[str, str], ...]:
    """``where: {region: north}`` as ((column, value), ...): the rows of the file to keep."""
    if not isinstance(value, dict) or not value:
        raise ValueError(f"{show(value)} is not a filter; write the column and the value of the rows to "
                         "keep, e.g. where: {region: north}")
    out = []
    for key, cell in value.items():
        if isinstance(cell, (dict, list)) or cell is None or isinstance(key, (dict, list)):
            raise ValueError(f"{show(key)}: {show(cell)} is not a column and one value; write e.g. "
                             "where: {region: north}")
        out.append((str(key).strip().lower(), str(cell).strip()))
    return tuple(out)


Date = Annotated[dt.date, BeforeValidator(parse_date)]
#: a date as the specs keep it (interventions, exclusions)
Stamp = Annotated[pd.Timestamp, BeforeValidator(lambda v: pd.Timestamp(parse_date(v)))]
MonthDay = Annotated[tuple[int, int], BeforeValidator(parse_month_day)]
SpanDay = Annotated[tuple[int, int], BeforeValidator(lambda v: parse_month_day(v, False))]
Weekday = Annotated[int, BeforeValidator(parse_weekday)]
Years = Annotated[YearsSpec, BeforeValidator(parse_years)]
Effect = Annotated[EffectSpec, BeforeValidator(parse_effect)]
InterventionEffect = Annotated[EffectSpec, BeforeValidator(_intervention_effect)]
Days = Annotated[int, _bounded(0, MAX_DAYS, "a number of days")]
#: run-up days, or `auto`: chosen by the fit (Easter-relative events; evcal.model.choose)
def _run_up(value: Any) -> int | str:
    if isinstance(value, str) and value.strip().lower() == "auto":
        return "auto"
    if isinstance(value, bool) or not isinstance(value, int):
        raise ValueError(f"{show(value)} is not a number of days; write e.g. before: 10, or before: auto "
                         "for an Easter-relative event (the fit chooses)")
    if not 0 <= value <= MAX_DAYS:
        raise ValueError(f"{show(value)} is out of range; a number of days must be from 0 to {MAX_DAYS:g}")
    return value


#: run-up days, or ``auto`` (Easter-relative events: the fit chooses, see evcal.model.choose)
RunUp = Annotated[int | Literal["auto"], BeforeValidator(_run_up)]
Offset = Annotated[int, _bounded(-MAX_DAYS, MAX_DAYS, "an offset in days")]
Length = Annotated[int, _bounded(1, MAX_DAYS, "a length in days")]
Year = Annotated[int, AfterValidator(check_year)]
Strength = Annotated[float, AfterValidator(_check_strength)]
Decay = Annotated[float | None, AfterValidator(_check_decay)]
#: ``by_weekday:`` as (class, weekdays) pairs (evcal.calendar.weekday_classes)
WeekdayClasses = Annotated[tuple[tuple[str, tuple[int, ...]], ...], BeforeValidator(parse_classes)]

# ------------------------------------------------------------------ models


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", arbitrary_types_allowed=True, frozen=True)


class _Span(_Section):
    start: Date
    end: Date | None = None
    strength: Strength = 1.0

    @model_validator(mode="after")
    def _order(self) -> _Span:
        _check_order(self.start, self.end)
        if self.end is not None and (self.end - self.start).days + 1 > MAX_DAYS:
            raise ValueError(
                f"{self.start} to {self.end} is longer than {MAX_DAYS} days; split it into "
                "several occurrences"
            )
        return self


class DateItem(_Span):
    """One explicit occurrence: ``{start, end?, strength?}`` or a bare ISO date."""

    @model_validator(mode="before")
    @classmethod
    def _bare(cls, value: Any) -> Any:
        return value if isinstance(value, dict) else {"start": value}


class MovedItem(_Span):
    """One year's occurrence moved to other dates."""


def _check_nth(nth: int) -> int:
    if nth == 0 or not -5 <= nth <= 5:
        raise ValueError(f"{nth} is not a position in a month; use 1..5 (1 = first) or -1..-5 (-1 = last)")
    return nth


class WeekdayModel(_Section):
    month: Annotated[int, _bounded(1, 12, "a month")]
    day: Weekday
    nth: Annotated[int, AfterValidator(_check_nth)]


class SpanModel(_Section):
    start: SpanDay
    end: SpanDay


class FileModel(_Section):
    """``file:``: a CSV of dates (evcal.calendar.datefile), relative to the calendar file's folder."""

    path: Annotated[str, AfterValidator(_file_path)]
    where: Annotated[tuple[tuple[str, str], ...], BeforeValidator(_file_where)] = ()

    @model_validator(mode="before")
    @classmethod
    def _bare(cls, value: Any) -> Any:
        return {"path": value} if isinstance(value, str) else value


class WhenModel(_Section):
    """Exactly one rule key, plus an optional ``offset`` in days."""

    easter: Offset | None = None
    orthodox_easter: Offset | None = None
    fixed: MonthDay | None = None
    weekday: WeekdayModel | None = None
    holiday: str | None = None
    span: SpanModel | None = None
    every_weekday: Annotated[tuple[int, ...], BeforeValidator(_weekday_list)] | None = None
    dates: list[DateItem] | None = None
    bridge: Annotated[str, AfterValidator(_bridge_target)] | None = None
    file: FileModel | None = None
    offset: Offset = 0

    @model_validator(mode="before")
    @classmethod
    def _one_rule(cls, value: Any) -> Any:
        if not isinstance(value, dict):
            raise ValueError(
                f'{show(value)} is not a rule; write a mapping such as {{easter: -2}} or {{fixed: "12-24"}}'
            )
        rules = [k for k in value if k in RULE_KEYS]
        unknown = [k for k in value if k not in RULE_KEYS and k != "offset"]
        if len(rules) > 1:
            raise ValueError(
                f"{len(rules)} rules ({', '.join(rules)}) in one `when`; keep exactly one "
                "(make a second event for the other)"
            )
        if not rules and not unknown:
            raise ValueError(f"`when` has no rule; use exactly one of {', '.join(RULE_KEYS)}")
        return value

    @field_validator(*RULE_KEYS, mode="before")
    @classmethod
    def _has_value(cls, value: Any, info: ValidationInfo) -> Any:
        if value is None:
            key = info.field_name
            raise ValueError(f"`{key}` has no value; write {RULE_VALUES[str(key)]}")
        return value

    @property
    def kind(self) -> str:
        return next(k for k in RULE_KEYS if getattr(self, k) is not None)


class EventModel(_Section):
    name: str
    label: str | None = None
    group: str | None = None
    when: WhenModel
    length: Length | None = None
    before: RunUp = 0
    after: Days = 0
    shape: Shape = "flat"
    years: Years = YearsSpec()
    skip: list[Year] = []
    moved: dict[Year, MovedItem] = {}
    effect: Effect = EffectSpec()
    by_weekday: WeekdayClasses | None = None
    # pull-forward: days after (before) the event's window whose effect is estimated on its own
    # (made in evcal.calendar.event_builder.derived_events)
    dip_after: Days = 0
    dip_before: Days = 0


class PublicHolidaysModel(_Section):
    country: str
    subdivision: str | None = None
    only: list[str] | None = None
    before: Days = 0
    after: Days = 0
    shape: Shape = "flat"
    years: Years = YearsSpec()
    language: str | None = None


class InterventionModel(_Section):
    name: str
    type: InterventionType
    start: Stamp
    end: Stamp | None = None
    decay: Decay = None
    label: str | None = None
    effect: InterventionEffect = EffectSpec()  # {assume: N%}: the size a plan gives it (evcal.plan)

    @model_validator(mode="after")
    def _consistent(self) -> InterventionModel:
        _check_order(self.start, self.end)
        if self.type == "ramp" and self.end is None:
            raise ValueError("a ramp needs `end` (the day the ramp is complete); add end: YYYY-MM-DD")
        if self.type == "level_shift" and self.end is not None:
            raise ValueError(
                "a level_shift has no end (it lasts); remove `end`, or use type: temporary "
                "for a change that fades"
            )
        if self.decay is not None and self.type != "temporary":
            raise ValueError(f"decay is only for type: temporary; remove it from this {self.type}")
        return self


class ExclusionModel(_Section):
    start: Stamp
    end: Stamp
    reason: str

    @model_validator(mode="after")
    def _order(self) -> ExclusionModel:
        _check_order(self.start, self.end)
        return self


#: the weekday names of ``weekday_profile:`` in its order (Monday first, as Python's weekday numbers)
PROFILE_DAYS = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")


def check_weekday_profile(value: Any) -> tuple[float, ...]:
    """``weekday_profile:`` as seven relative levels, Monday..Sunday; ValueError saying what would be right.

    Examples
    --------
    >>> check_weekday_profile([1.2, 1.2, 1.2, 1.2, 1.1, 0.5, 0.4])[5]
    0.5
    """
    right = ("write seven relative sales levels, Monday to Sunday, each above 0, "
             "e.g. weekday_profile: [1.2, 1.2, 1.2, 1.2, 1.1, 0.6, 0.5]")
    if not isinstance(value, (list, tuple)):
        raise ValueError(f"{show(value)} is not a list; {right}")
    if len(value) != 7:
        raise ValueError(f"has {len(value)} values, not 7; {right}")
    levels = []
    for day, v in zip(PROFILE_DAYS, value, strict=True):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
            raise ValueError(f"{day} is {show(v)}; {right}")
        levels.append(float(v))
    return tuple(levels)


class CalendarModel(_Section):
    """The top level; the lists are validated item by item by the loader."""

    name: str
    public_holidays: Any = None
    weekday_profile: Any = None  # checked by evcal.design.weekdays.check_profile (one line per problem)
    events: list[Any] | None = None
    interventions: list[Any] | None = None
    exclude: list[Any] | None = None
    drivers: Any = None  # outside drivers: checked by evcal.calendar.drivers.read_drivers
    saved_files: Any = None  # written by evcal: the date files' text (evcal.calendar.datefile)
