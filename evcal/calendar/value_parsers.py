"""The calendar file's values that a person writes in several forms: ``years``, ``effect``, ``15%``,
dates, month-days, weekday names.

Each parser raises ``ValueError`` with "what is wrong; what would be right"; the pydantic models
of :mod:`evcal.calendar.schema` call them. :func:`show` quotes a user's value in any message.
"""

from __future__ import annotations

import calendar as _stdcal
import datetime as dt
import math
import re
import reprlib
from typing import Any

from evcal.calendar.holidays_source import suggest
from evcal.calendar.rules import WEEKDAYS
from evcal.calendar.spec import FIRST_YEAR, LAST_YEAR, EffectSpec, YearsSpec
from evcal.errors import clip
from evcal.spelling import option

MONTHS = tuple(_stdcal.month_name)[1:]
# Accepted ranges of the numeric settings, checked when the file is read (so `calendar
# check` refuses what `fit` could not use). The bounds are choices, not sources:
#: assumed lift, in percent: above -100 % (log(1 + lift) is what the design uses) and at
#: most +10,000 % (101 times the base), far above any event's lift
ASSUME_PCT = (-100.0, 10_000.0)
#: `every` in `years: {every: n, start: y}`: at most the span of years a calendar holds
MAX_EVERY = LAST_YEAR - FIRST_YEAR

_REPR = reprlib.Repr()
_REPR.maxlevel, _REPR.maxlist, _REPR.maxtuple, _REPR.maxdict = 3, 6, 6, 6
_REPR.maxstring, _REPR.maxother = 80, 80


def show(value: Any) -> str:
    """A user's value quoted for a message: at most ~200 characters, whatever its size.

    Examples
    --------
    >>> show("12-24"), show([1, 2])
    ("'12-24'", '[1, 2]')
    >>> show("x" * 10_000)[-22:]
    "x'… (10000 characters)"
    """
    if isinstance(value, str):
        if len(value) > 200:
            return f"{value[:200]!r}… ({len(value)} characters)"
        return repr(value)
    if isinstance(value, bool | float) or value is None:
        return repr(value)
    if isinstance(value, int):
        if abs(value).bit_length() > 200:  # str() of a 4300-digit int raises; say its size
            return f"a whole number of about {int(abs(value).bit_length() * math.log10(2))} digits"
        return clip(repr(value))
    return clip(_REPR.repr(value))  # lists and blocks: a few items, a few levels


def check_year(year: int, what: str = "the year") -> int:
    """``year`` if it is in the range a calendar holds (:data:`FIRST_YEAR`..:data:`LAST_YEAR`).

    Examples
    --------
    >>> check_year(2024)
    2024
    >>> check_year(9999)
    Traceback (most recent call last):
    ...
    ValueError: 9999 is outside the years a calendar can hold; the year must be from 1900 to 2200
    """
    if not FIRST_YEAR <= year <= LAST_YEAR:
        raise ValueError(
            f"{show(year)} is outside the years a calendar can hold; {what} must be from "
            f"{FIRST_YEAR} to {LAST_YEAR}"
        )
    return year


def year_span_problems(first: int, last: int, names: tuple[str, str] | None = None) -> list[str]:
    """One line per problem with a span of years asked for (``calendar dates --from --to``).

    Both years must be in :data:`~evcal.calendar.spec.YEAR_RANGE` and ``last``
    not before ``first``; ``names`` are how the user wrote the two bounds (by default ``first=``
    and ``last=`` from Python, ``--from`` and ``--to`` on the command line: :mod:`evcal.spelling`).

    Examples
    --------
    >>> year_span_problems(2024, 2026)
    []
    >>> year_span_problems(1, 2026)
    ['first=1: outside the years a calendar can hold; give a year from 1900 to 2200']
    >>> year_span_problems(1, 2026, names=("--from", "--to"))
    ['--from 1: outside the years a calendar can hold; give a year from 1900 to 2200']
    """
    if names is None:
        bounds = (("first", "--from"), ("last", "--to"))
        named = [option(arg, year, flag=flag, cli_value=show(year))
                 for (arg, flag), year in zip(bounds, (first, last), strict=True)]
        later = option("last", flag="--to")
    else:
        named = [f"{name} {show(year)}" for name, year in zip(names, (first, last), strict=True)]
        later = names[1]
    problems = [
        f"{name}: outside the years a calendar can hold; give a year from {FIRST_YEAR} to {LAST_YEAR}"
        for name, year in zip(named, (first, last), strict=True)
        if not FIRST_YEAR <= year <= LAST_YEAR
    ]
    if not problems and last < first:
        problems.append(f"{named[1]} is before {named[0]}; give {later} the same year or later")
    return problems


# ------------------------------------------------------------------ value parsers

_ISO = re.compile(r"^(\d{4})-(\d{1,2})-(\d{1,2})$")
_MD = re.compile(r"^(\d{1,2})-(\d{1,2})$")


def _days_in_month_text(year: int | None, month: int) -> str:
    if year is not None:
        return f"{MONTHS[month - 1]} {year} has {_stdcal.monthrange(year, month)[1]} days"
    at_most = "at most " if month == 2 else ""
    return f"{MONTHS[month - 1]} has {at_most}{_stdcal.monthrange(2024, month)[1]} days"  # a leap year


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
        value = value.date()
    if isinstance(value, dt.date):
        value = value.isoformat()  # same checks (the year range) as for text
    text = str(value).strip()
    m = _ISO.match(text)
    if not m or isinstance(value, bool):
        raise ValueError(f"{show(value)} is not a date; write it as YYYY-MM-DD, e.g. 2024-03-02")
    year, month, day = (int(g) for g in m.groups())
    if not FIRST_YEAR <= year <= LAST_YEAR:
        raise ValueError(
            f"{text} is outside the years a calendar can hold; write a date from "
            f"{FIRST_YEAR}-01-01 to {LAST_YEAR}-12-31"
        )
    if not 1 <= month <= 12:
        raise ValueError(f"{text} is not a date (there is no month {month}); write YYYY-MM-DD")
    if not 1 <= day <= _stdcal.monthrange(year, month)[1]:
        raise ValueError(
            f"{text} is not a date ({_days_in_month_text(year, month)}); write a real date as YYYY-MM-DD"
        )
    return dt.date(year, month, day)


def parse_month_day(value: Any, allow_feb29: bool = True) -> tuple[int, int]:
    """A month-day ``"MM-DD"`` as (month, day)."""
    text = str(value).strip()
    m = _MD.match(text)
    if not m or isinstance(value, bool | int | float):
        raise ValueError(f'{show(value)} is not a month-day; write it as "MM-DD", e.g. "12-24"')
    month, day = int(m.group(1)), int(m.group(2))
    if not 1 <= month <= 12:
        raise ValueError(f'"{text}" has no month {month}; write "MM-DD" with MM from 01 to 12')
    if not 1 <= day <= _stdcal.monthrange(2024, month)[1]:  # a leap year: 02-29 exists
        raise ValueError(
            f'"{text}" is not a day of the year ({_days_in_month_text(None, month)}); write a real "MM-DD"'
        )
    if month == 2 and day == 29 and not allow_feb29:
        raise ValueError('"02-29" exists in leap years only; use "02-28" or "03-01" here')
    return month, day


def parse_weekday(value: Any) -> int:
    """``mon``..``sun`` or ``monday``..``sunday`` (any case) as 0..6."""
    text = str(value).strip().lower()
    if text in WEEKDAYS and not isinstance(value, bool | int | float):
        return WEEKDAYS[text]
    near = suggest(text, list(WEEKDAYS))
    hint = f"did you mean '{near[0]}'? " if near else ""
    raise ValueError(
        f"{show(str(value))} is not a weekday; {hint}use mon, tue, wed, thu, fri, sat, sun "
        "(or the full names)"
    )


def parse_percent(value: Any) -> float:
    """``"15%"``, ``15`` or ``"15"`` (all meaning 15 %) as the fraction 0.15.

    Finite and in :data:`ASSUME_PCT` (above -100 %, at most +10,000 %).

    Examples
    --------
    >>> parse_percent("15%"), parse_percent(-20)
    (0.15, -0.2)
    >>> parse_percent("inf")
    Traceback (most recent call last):
    ...
    ValueError: assume: 'inf' is not a finite percentage; write a change above -100% and at \
most +10000%, e.g. 15% or -20%
    """
    lo, hi = ASSUME_PCT
    allowed = f"write a change above {lo:g}% and at most +{hi:g}%, e.g. 15% or -20%"
    if isinstance(value, bool):
        raise ValueError(f"assume: {show(value)} is not a percentage; {allowed}")
    text = str(value).strip() if not isinstance(value, int) or abs(value) < 10**30 else "1e30"
    number = text[:-1].strip() if text.endswith("%") else text
    try:
        pct = float(number)
    except ValueError:
        raise ValueError(f"assume: {show(value)} is not a percentage; {allowed}") from None
    if not math.isfinite(pct):
        raise ValueError(f"assume: {show(value)} is not a finite percentage; {allowed}")
    if pct <= lo:
        raise ValueError(f"assume: {clip(text)} would take sales to zero or below; {allowed}")
    if pct > hi:
        raise ValueError(f"assume: {clip(text)} is out of range; {allowed}")
    return pct / 100.0


def _int(value: Any, what: str) -> int:
    """A year written as a whole number (or its digits as text), in the calendar's range."""
    if isinstance(value, bool) or not (
        isinstance(value, int)
        or (isinstance(value, str) and value.strip().lstrip("-").isdigit() and len(value.strip()) < 30)
    ):
        raise ValueError(f"{show(value)} is not a year; write {what} as a four-digit year, e.g. 2024")
    return check_year(int(value), what if what.startswith(("the", "each")) else f"`{what}`")


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
            if isinstance(every, bool) or not isinstance(every, int) or not 1 <= every <= MAX_EVERY:
                raise ValueError(
                    f"every: {show(every)} is not a whole number of years from 1 to {MAX_EVERY}; "
                    "e.g. every: 4"
                )
            return YearsSpec("every", every=every, start=_int(start, "start"))
        if keys and keys <= {"from", "to"}:
            first = _int(value["from"], "from") if "from" in value else None
            last = _int(value["to"], "to") if "to" in value else None
            if first is not None and last is not None and last < first:
                raise ValueError(f"to: {last} is before from: {first}; `to` must be the same year or later")
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
        f"{show(value)} is not a years value; use all, a list [2019, 2023], "
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
        raise ValueError(f"{show(value)} is not an effect; {hint}use {EFFECT_FORMS}")
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
        raise ValueError(f"unknown key `{clip(str(key), 60)}` in effect; {hint}use {EFFECT_FORMS}")
    raise ValueError(f"{show(value)} is not an effect; use one of {EFFECT_FORMS}")
