"""Group unexplained peaks and dips across years by the date rule they follow.

A peak the calendar does not explain, seen in the same place in most years,
is an event someone forgot. "The same place" can mean several date rules;
each finding proposes every rule that would put an occurrence in its period:

* ``fixed``: the same month-day (``{fixed: "MM-DD"}``);
* ``easter``: the same offset from Western Easter Sunday (``dateutil.easter``),
  within 70 days (``{easter: k}``);
* ``weekday``: the same nth (or last) weekday of a month
  (``{weekday: {month: M, day: thu, nth: N}}``);
* ``week``: the same ISO week of the year (written in the calendar as the
  ``span`` of that week's days in the middle year of the history, as the
  calendar has no week-number rule).

Each rule is then checked against every year of the history: a *hit* is a
year whose period holding the rule's date has a finding of the same sign, an
*available* year one where that period is in the fit. A rule is suggested
when it hits in at least :data:`MIN_SHARE` (60 %, "most years"; common
practice, no source) of its available years and in at least half the years
of the history (and two at least). The
rule with most hits is taken first and its findings are removed, then the
next (greedy); ties go to the simpler kind (``fixed``, ``weekday``,
``easter``, ``week``) and then to the middle of the tied values, because at
weekly or monthly resolution several days fit equally well.
"""

from __future__ import annotations

import calendar as _stdcal
import datetime as dt
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from dateutil.easter import easter

from evcal.calendar.rules import WEEKDAY_ABBR, WeekdayRule

__all__ = ["Finding", "Rule", "Recurring", "find_recurring", "MIN_SHARE"]

#: share of available years a rule must hit ("most years")
MIN_SHARE = 0.6
#: fewest years a rule must hit (a rule whose date exists in few years, such as
#: a 5th Wednesday, must not pass on two coincidences)
MIN_HITS = 2
EASTER_RANGE = 70
WEEKDAY_OFFSETS = 3
_KIND_ORDER = {"fixed": 0, "weekday": 1, "easter": 2, "week": 3}


@dataclass(frozen=True)
class Finding:
    """An unexplained peak (sign +1) or dip (-1) in one period."""

    period: pd.Period
    sign: int
    size_pct: float = 0.0
    key: Any = None


@dataclass(frozen=True)
class Rule:
    """A yearly date rule in the calendar's vocabulary."""

    kind: str
    value: tuple[int, ...]

    def date(self, year: int) -> dt.date | None:
        """This rule's date in ``year`` (None when it has none)."""
        if self.kind == "easter":
            return easter(year) + dt.timedelta(days=self.value[0])
        if self.kind == "weekday":
            month, weekday, nth, offset = self.value
            hits = WeekdayRule(month, weekday, nth).hits(year)
            return hits[0].start + dt.timedelta(days=offset) if hits else None
        try:  # Feb 29 and ISO week 53 are missing in some years
            if self.kind == "fixed":
                return dt.date(year, *self.value)
            return dt.date.fromisocalendar(year, self.value[0], 1)
        except ValueError:
            return None

    def when(self, middle_year: int) -> dict[str, Any]:
        """The ``when:`` mapping of the calendar contract."""
        if self.kind == "fixed":
            return {"fixed": f"{self.value[0]:02d}-{self.value[1]:02d}"}
        if self.kind == "easter":
            return {"easter": int(self.value[0])}
        if self.kind == "weekday":
            month, weekday, nth, offset = self.value
            when: dict[str, Any] = {"weekday": {"month": month, "day": WEEKDAY_ABBR[weekday], "nth": nth}}
            if offset:
                when["offset"] = offset
            return when
        monday = self.date(middle_year) or dt.date.fromisocalendar(middle_year, 1, 1)
        sunday = monday + dt.timedelta(days=6)
        return {"span": {"start": monday.strftime("%m-%d"), "end": sunday.strftime("%m-%d")}}

    def describe(self) -> str:
        """The rule in words (``every Dec 24``, ``2 days after Easter``)."""
        if self.kind == "fixed":
            return f"every {_stdcal.month_abbr[self.value[0]]} {self.value[1]}"
        if self.kind == "easter":
            k = self.value[0]
            return "Easter Sunday" if k == 0 else f"{abs(k)} days {'after' if k > 0 else 'before'} Easter"
        if self.kind == "weekday":
            month, weekday, nth, offset = self.value
            which = "last" if nth == -1 else {1: "1st", 2: "2nd", 3: "3rd"}.get(nth, f"{nth}th")
            text = f"{which} {_stdcal.day_name[weekday]} of {_stdcal.month_name[month]}"
            if offset:
                text = f"{abs(offset)} day{'s' if abs(offset) > 1 else ''} " \
                       f"{'after' if offset > 0 else 'before'} the {text}"
            return text
        return f"ISO week {self.value[0]}"


@dataclass
class Recurring:
    """A rule that explains findings in most years."""

    rule: Rule
    sign: int
    years_seen: list[int]
    years_available: list[int]
    findings: list[Finding] = field(default_factory=list)
    #: days the occurrence covers: at weekly or monthly resolution every day of
    #: the period fits equally well, so the event spans the run of tied days
    length: int = 1

    @property
    def share(self) -> float:
        return len(self.years_seen) / max(1, len(self.years_available))

    @property
    def mean_size_pct(self) -> float:
        return float(np.mean([f.size_pct for f in self.findings])) if self.findings else 0.0


def _simplicity(rule: Rule) -> int:
    """Tie-break order: kind first, then a weekday rule without an offset."""
    return _KIND_ORDER[rule.kind] * 10 + (abs(rule.value[3]) if rule.kind == "weekday" else 0)


def _tied_run(rule: Rule, tied: list[Rule]) -> tuple[Rule, int]:
    """The first rule of the run of consecutive days around ``rule``, and its length."""

    def day(r: Rule) -> int:  # easter offset, or day number in a non-leap year
        return r.value[0] if r.kind == "easter" else dt.date(2001, *r.value).toordinal()

    days = {day(r) for r in tied}
    lo = hi = day(rule)
    while lo - 1 in days:
        lo -= 1
    while hi + 1 in days:
        hi += 1
    if rule.kind == "easter":
        return Rule("easter", (lo,)), hi - lo + 1
    first = dt.date.fromordinal(lo)
    return Rule("fixed", (first.month, first.day)), hi - lo + 1


def _rules_for_day(day: dt.date) -> list[Rule]:
    rules = [Rule("fixed", (day.month, day.day))]
    k = (day - easter(day.year)).days
    if abs(k) <= EASTER_RANGE:
        rules.append(Rule("easter", (k,)))
    # the nth (or last) weekday of a month, on the day or a few days after or
    # before it (the day after the 4th Thursday of November is not always
    # the 4th Friday)
    for offset in range(-WEEKDAY_OFFSETS, WEEKDAY_OFFSETS + 1):
        anchor = day - dt.timedelta(days=offset)
        nth = (anchor.day - 1) // 7 + 1
        rules.append(Rule("weekday", (anchor.month, anchor.weekday(), nth, offset)))
        if (anchor + dt.timedelta(days=7)).month != anchor.month:
            rules.append(Rule("weekday", (anchor.month, anchor.weekday(), -1, offset)))
    return rules


def _period_days(p: pd.Period) -> list[dt.date]:
    return list(pd.date_range(p.start_time.normalize(), p.end_time.normalize(), freq="D").date)


def find_recurring(
    findings: Sequence[Finding],
    periods: pd.PeriodIndex,
    in_fit: np.ndarray | None = None,
) -> list[Recurring]:
    """Rules that put unexplained findings of one sign in the same place in most years.

    Parameters
    ----------
    findings : sequence of Finding
        Unexplained one-period peaks and dips (additive outliers, the start of
        temporary changes).
    periods : PeriodIndex
        The history's periods.
    in_fit : array of bool, optional
        Periods that were in the fit (others cannot show a finding).

    Returns
    -------
    list of Recurring
        Best first.

    Examples
    --------
    >>> idx = pd.period_range("2018-01-01", "2021-12-31", freq="D")
    >>> days = [pd.Period(f"{y}-12-24", "D") for y in (2018, 2019, 2020, 2021)]
    >>> found = find_recurring([Finding(p, +1) for p in days], idx)
    >>> found[0].rule.when(2019), found[0].years_seen
    ({'fixed': '12-24'}, [2018, 2019, 2020, 2021])
    """
    in_fit = np.ones(len(periods), dtype=bool) if in_fit is None else np.asarray(in_fit, dtype=bool)
    first_day = periods[0].start_time.normalize().date()
    last_day = periods[-1].end_time.normalize().date()
    years = list(range(first_day.year, last_day.year + 1))
    min_hits = max(MIN_HITS, math.ceil(len(years) / 2))
    position = {p: i for i, p in enumerate(periods)}
    # the period of every day of the history (-1: none), so a rule's date finds its period by a subtraction
    day_period = periods.get_indexer(pd.date_range(first_day, last_day, freq="D").to_period(periods.freq))
    weekly_or_longer = len(_period_days(periods[0])) >= 7
    placed: dict[Rule, list[tuple[int, int]]] = {}
    proposed: dict[pd.Period, set[Rule]] = {}

    def places(rule: Rule) -> list[tuple[int, int]]:
        """The (year, period) pairs where ``rule`` falls on a fitted period; once per rule."""
        if rule not in placed:
            pairs = []
            for y in years:
                d = rule.date(y)
                i = -1 if d is None or not (first_day <= d <= last_day) else day_period[(d - first_day).days]
                if i >= 0 and in_fit[i]:
                    pairs.append((y, int(i)))
            placed[rule] = pairs
        return placed[rule]

    results: list[Recurring] = []
    for sign in (+1, -1):
        remaining = [f for f in findings if f.sign == sign and f.period in position]
        while remaining:
            by_position = {position[f.period]: f for f in remaining}
            candidates: set[Rule] = set()
            for f in remaining:
                if f.period not in proposed:
                    days = _period_days(f.period)
                    proposed[f.period] = {rule for day in days for rule in _rules_for_day(day)}
                    if weekly_or_longer:
                        proposed[f.period].add(Rule("week", (days[len(days) // 2].isocalendar()[1],)))
                candidates |= proposed[f.period]
            scored = []
            for rule in candidates:
                pairs = places(rule)
                available = [y for y, _ in pairs]
                seen = [y for y, i in pairs if i in by_position]
                hit = [by_position[i] for _, i in pairs if i in by_position]
                if len(seen) >= min_hits and len(seen) >= MIN_SHARE * len(available):
                    scored.append((rule, seen, available, hit))
            if not scored:
                break
            # most hits, then fewest misses, then the simplest kind
            ranks = [(-len(seen), len(available) - len(seen), _simplicity(rule))
                     for rule, seen, available, _ in scored]
            best = min(ranks)
            top = sorted((s for s, r in zip(scored, ranks, strict=True) if r == best),
                         key=lambda s: s[0].value)
            rule, seen, available, hit = top[(len(top) - 1) // 2]
            length = 1
            if rule.kind in ("easter", "fixed"):
                rule, length = _tied_run(rule, [s[0] for s in top if s[1] == seen])
            results.append(Recurring(rule, sign, seen, available, hit, length))
            used = {f.period for f in hit}
            remaining = [f for f in remaining if f.period not in used]
    results.sort(key=lambda r: (-len(r.years_seen), -r.share))
    return results
