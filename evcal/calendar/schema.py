"""The calendar file's keys and value types, as pydantic models.

Each section of the file is one model with ``extra="forbid"`` (so a typo in
a key is caught and the nearest valid key suggested). Values that a person
writes in several forms (``years``, ``effect``, ``15%``, dates, weekday
names) are parsed by small functions that raise ``ValueError`` with a message
of the form "what is wrong; what would be right"; the loader adds the file,
line and key path in front.
"""

from __future__ import annotations

import calendar as _stdcal
import datetime as dt
import re
from typing import Annotated, Any, Literal

from pydantic import AfterValidator, BaseModel, BeforeValidator, ConfigDict, Field, model_validator

from evcal.calendar.holidays_source import suggest
from evcal.calendar.rules import WEEKDAYS
from evcal.calendar.spec import EffectSpec, YearsSpec

RULE_KEYS = (
    "easter",
    "orthodox_easter",
    "fixed",
    "weekday",
    "holiday",
    "span",
    "every_weekday",
    "dates",
)
MAX_DAYS = 366  # longest occurrence, run-up, run-down or offset, in days
MONTHS = tuple(_stdcal.month_name)[1:]

# ------------------------------------------------------------------ value parsers

_ISO = re.compile(r"^(\d{4})-(\d{1,2})-(\d{1,2})$")
_MD = re.compile(r"^(\d{1,2})-(\d{1,2})$")


def _days_in_month_text(year: int | None, month: int) -> str:
    if year is None:
        n = 29 if month == 2 else _stdcal.monthrange(2023, month)[1]
        return f"{MONTHS[month - 1]} has at most {n} days" if month == 2 else (
            f"{MONTHS[month - 1]} has {n} days"
        )
    n = _stdcal.monthrange(year, month)[1]
    return f"{MONTHS[month - 1]} {year} has {n} days"


def parse_date(value: Any) -> dt.date:
    """An ISO date (``2024-03-02``); impossible dates say why.

    Examples
    --------
    >>> parse_date("2024-02-29")
    datetime.date(2024, 2, 29)
    >>> parse_date("2023-02-30")
    Traceback (most recent call last):
    ...
    ValueError: 2023-02-30 is not a date (February 2023 has 28 days); write a real date as YYYY-MM-DD
    """
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    text = str(value).strip()
    m = _ISO.match(text)
    if not m or isinstance(value, bool):
        raise ValueError(f"{value!r} is not a date; write it as YYYY-MM-DD, e.g. 2024-03-02")
    year, month, day = (int(g) for g in m.groups())
    if not 1 <= month <= 12:
        raise ValueError(f"{text} is not a date (there is no month {month}); write YYYY-MM-DD")
    if not 1 <= day <= _stdcal.monthrange(year, month)[1]:
        raise ValueError(
            f"{text} is not a date ({_days_in_month_text(year, month)}); "
            "write a real date as YYYY-MM-DD"
        )
    return dt.date(year, month, day)


def parse_month_day(value: Any, allow_feb29: bool = True) -> tuple[int, int]:
    """A month-day ``"MM-DD"`` as (month, day)."""
    text = str(value).strip()
    m = _MD.match(text)
    if not m or isinstance(value, bool | int | float):
        raise ValueError(f"{value!r} is not a month-day; write it as \"MM-DD\", e.g. \"12-24\"")
    month, day = int(m.group(1)), int(m.group(2))
    if not 1 <= month <= 12:
        raise ValueError(f"\"{text}\" has no month {month}; write \"MM-DD\" with MM from 01 to 12")
    top = 29 if month == 2 else _stdcal.monthrange(2023, month)[1]
    if not 1 <= day <= top:
        raise ValueError(
            f"\"{text}\" is not a day of the year ({_days_in_month_text(None, month)}); "
            "write a real \"MM-DD\""
        )
    if month == 2 and day == 29 and not allow_feb29:
        raise ValueError("\"02-29\" exists in leap years only; use \"02-28\" or \"03-01\" here")
    return month, day


def parse_weekday(value: Any) -> int:
    """``mon``..``sun`` or ``monday``..``sunday`` (any case) as 0..6."""
    text = str(value).strip().lower()
    if text in WEEKDAYS and not isinstance(value, bool | int | float):
        return WEEKDAYS[text]
    near = suggest(text, list(WEEKDAYS))
    hint = f"did you mean '{near[0]}'? " if near else ""
    raise ValueError(
        f"'{value}' is not a weekday; {hint}use mon, tue, wed, thu, fri, sat, sun "
        "(or the full names)"
    )


def parse_percent(value: Any) -> float:
    """``"15%"``, ``15`` or ``"15"`` (all meaning 15 %) as the fraction 0.15."""
    if isinstance(value, bool):
        raise ValueError(f"{value!r} is not a percentage; write it like 15% or -20%")
    text = str(value).strip()
    number = text[:-1].strip() if text.endswith("%") else text
    try:
        pct = float(number)
    except ValueError:
        raise ValueError(f"{value!r} is not a percentage; write it like 15% or -20%") from None
    if pct <= -100:
        raise ValueError(f"{text} would take sales below zero; use a change above -100%")
    return pct / 100.0


def _int(value: Any, what: str) -> int:
    if isinstance(value, bool) or not (
        isinstance(value, int) or (isinstance(value, str) and value.strip().lstrip("-").isdigit())
    ):
        raise ValueError(f"{value!r} is not a year; write {what} as a four-digit year, e.g. 2024")
    return int(value)


def parse_years(value: Any) -> YearsSpec:
    """``all`` | ``[2019, 2023]`` | ``{every: 4, start: 2018}`` | ``{from: 2015, to: 2030}``."""
    if value is None or (isinstance(value, str) and value.strip().lower() == "all"):
        return YearsSpec()
    if isinstance(value, int | str) and not isinstance(value, bool):
        return YearsSpec("list", (_int(value, "the year"),))
    if isinstance(value, list):
        if not value:
            raise ValueError("the list of years is empty; list at least one year or write `all`")
        return YearsSpec("list", tuple(sorted({_int(v, "each year") for v in value})))
    if isinstance(value, dict):
        keys = set(map(str, value))
        if keys == {"every", "start"}:
            every, start = value["every"], value["start"]
            if isinstance(every, bool) or not isinstance(every, int) or every < 1:
                raise ValueError(f"every: {every!r} is not a whole number of years; e.g. every: 4")
            return YearsSpec("every", every=every, start=_int(start, "start"))
        if keys and keys <= {"from", "to"}:
            first = _int(value["from"], "from") if "from" in value else None
            last = _int(value["to"], "to") if "to" in value else None
            if first is not None and last is not None and last < first:
                raise ValueError(
                    f"to: {last} is before from: {first}; `to` must be the same year or later"
                )
            return YearsSpec("range", first=first, last=last)
        unknown = sorted(keys - {"every", "start", "from", "to"})
        if unknown:
            near = suggest(unknown[0], ["every", "start", "from", "to"])
            hint = f"did you mean `{near[0]}`? " if near else ""
            raise ValueError(
                f"unknown key `{unknown[0]}` in years; {hint}"
                "use {every: 4, start: 2018} or {from: 2015, to: 2030}"
            )
        raise ValueError(
            "years needs both `every` and `start`, or `from` and/or `to`; "
            "write {every: 4, start: 2018} or {from: 2015, to: 2030}"
        )
    raise ValueError(
        f"{value!r} is not a years value; use all, a list [2019, 2023], "
        "{every: 4, start: 2018} or {from: 2015, to: 2030}"
    )


EFFECT_FORMS = "estimate, zero, {assume: 15%} or {like: other-event}"


def parse_effect(value: Any) -> EffectSpec:
    """``estimate`` | ``zero`` | ``{assume: 15%}`` | ``{like: other-event}``."""
    if value is None:
        return EffectSpec()
    if isinstance(value, str):
        text = value.strip().lower()
        if text in ("estimate", "zero"):
            return EffectSpec(text)  # type: ignore[arg-type]
        near = suggest(text, ["estimate", "zero", "assume", "like"])
        hint = f"did you mean '{near[0]}'? " if near else ""
        raise ValueError(f"'{value}' is not an effect; {hint}use {EFFECT_FORMS}")
    if isinstance(value, dict) and len(value) == 1:
        key, inner = next(iter(value.items()))
        if key == "assume":
            return EffectSpec("assume", assume=parse_percent(inner))
        if key == "like":
            if not isinstance(inner, str) or not inner.strip():
                raise ValueError("like: needs the name of another event, e.g. {like: spring-weekend}")
            return EffectSpec("like", like=inner.strip())
        near = suggest(str(key), ["assume", "like"])
        hint = f"did you mean `{near[0]}`? " if near else ""
        raise ValueError(f"unknown key `{key}` in effect; {hint}use {EFFECT_FORMS}")
    raise ValueError(f"{value!r} is not an effect; use one of {EFFECT_FORMS}")


def _weekday_list(value: Any) -> tuple[int, ...]:
    items = value if isinstance(value, list) else [value]
    if not items:
        raise ValueError("the list of weekdays is empty; e.g. every_weekday: [sun]")
    return tuple(sorted({parse_weekday(v) for v in items}))


Date = Annotated[dt.date, BeforeValidator(parse_date)]
MonthDay = Annotated[tuple[int, int], BeforeValidator(parse_month_day)]
SpanDay = Annotated[tuple[int, int], BeforeValidator(lambda v: parse_month_day(v, False))]
Weekday = Annotated[int, BeforeValidator(parse_weekday)]
Years = Annotated[YearsSpec, BeforeValidator(parse_years)]
Effect = Annotated[EffectSpec, BeforeValidator(parse_effect)]
Days = Annotated[int, Field(ge=0, le=MAX_DAYS)]
Offset = Annotated[int, Field(ge=-MAX_DAYS, le=MAX_DAYS)]
Shape = Literal["flat", "ramp", "decay", "daily"]

# ------------------------------------------------------------------ models


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", arbitrary_types_allowed=True, frozen=True)


class _Span(_Section):
    start: Date
    end: Date | None = None
    strength: Annotated[float, Field(gt=0)] = 1.0

    @model_validator(mode="after")
    def _order(self) -> _Span:
        if self.end is not None and self.end < self.start:
            raise ValueError(
                f"end {self.end} is before start {self.start}; end must be on or after start"
            )
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
        raise ValueError(
            f"{nth} is not a position in a month; use 1..5 (1 = first) or -1..-5 (-1 = last)"
        )
    return nth


class WeekdayModel(_Section):
    month: Annotated[int, Field(ge=1, le=12)]
    day: Weekday
    nth: Annotated[int, AfterValidator(_check_nth)]


class SpanModel(_Section):
    start: SpanDay
    end: SpanDay


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
    offset: Offset = 0

    @model_validator(mode="before")
    @classmethod
    def _one_rule(cls, value: Any) -> Any:
        if not isinstance(value, dict):
            raise ValueError(
                f"{value!r} is not a rule; write a mapping such as {{easter: -2}} or "
                "{fixed: \"12-24\"}"
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

    @property
    def kind(self) -> str:
        return next(k for k in RULE_KEYS if getattr(self, k) is not None)


class EventModel(_Section):
    name: str
    label: str | None = None
    group: str | None = None
    when: WhenModel
    length: Annotated[int, Field(ge=1, le=MAX_DAYS)] | None = None
    before: Days = 0
    after: Days = 0
    shape: Shape = "flat"
    years: Years = YearsSpec()
    skip: list[int] = []
    moved: dict[int, MovedItem] = {}
    effect: Effect = EffectSpec()


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
    type: Literal["pulse", "level_shift", "temporary", "ramp"]
    start: Date
    end: Date | None = None
    decay: float | None = None
    label: str | None = None

    @model_validator(mode="after")
    def _consistent(self) -> InterventionModel:
        if self.end is not None and self.end < self.start:
            raise ValueError(
                f"end {self.end} is before start {self.start}; end must be on or after start"
            )
        if self.type == "ramp" and self.end is None:
            raise ValueError("a ramp needs `end` (the day the ramp is complete); add end: YYYY-MM-DD")
        if self.type == "level_shift" and self.end is not None:
            raise ValueError(
                "a level_shift has no end (it lasts); remove `end`, or use type: temporary "
                "for a change that fades"
            )
        if self.decay is not None and self.type != "temporary":
            raise ValueError(f"decay is only for type: temporary; remove it from this {self.type}")
        if self.decay is not None and not 0 < self.decay < 1:
            raise ValueError(
                f"decay: {self.decay} must be between 0 and 1 (the share kept each day); e.g. 0.7"
            )
        return self


class ExclusionModel(_Section):
    start: Date
    end: Date
    reason: str

    @model_validator(mode="after")
    def _order(self) -> ExclusionModel:
        if self.end < self.start:
            raise ValueError(
                f"end {self.end} is before start {self.start}; end must be on or after start"
            )
        return self


class CalendarModel(_Section):
    """The top level; the lists are validated item by item by the loader."""

    name: str
    public_holidays: Any = None
    events: list[Any] | None = None
    interventions: list[Any] | None = None
    exclude: list[Any] | None = None
