"""What ``evcal calendar check`` prints: a short summary and warnings.

Warnings are things that are valid but probably not meant, or that will
limit what the fit can tell apart:

* two events whose occurrences overlap (their lifts share days);
* two events whose windows cover exactly the same days in every year checked
  (their lifts cannot be told apart at all);
* events with no occurrence in the years checked, or with ``nth: 5`` /
  ``02-29`` rules that skip some years;
* ``dates`` events whose listed dates stop before the last year checked;
* ``assume`` lifts below 1 % (``assume: 0.15`` is 0.15 %, not 15 %).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from evcal.calendar import rules as R
from evcal.calendar.core import Calendar
from evcal.calendar.datefile import FileRule, entry_name
from evcal.calendar.occurrences import EPOCH_ORDINAL, as_day, coverage, day_number, expand


@dataclass(frozen=True)
class CheckReport:
    """Summary lines and warning lines for one calendar over a range of years."""

    lines: list[str]
    warnings: list[str]
    first_year: int
    last_year: int


def default_years(cal: Calendar, today: dt.date | None = None) -> tuple[int, int]:
    """The years ``check`` looks at: those the file names, else the last five and the next."""
    lo, hi = cal.years_covered()
    year = (today or dt.date.today()).year
    if lo is None or hi is None:
        return year - 5, year + 1
    return lo, hi


def _years_of(days: np.ndarray) -> list[int]:
    return sorted({dt.date.fromordinal(int(d) + EPOCH_ORDINAL).year for d in days})


def _year_list(years: Sequence[int]) -> str:
    if len(years) > 6:
        return f"{', '.join(map(str, years[:3]))}, ... {years[-1]} ({len(years)} years)"
    return ", ".join(map(str, years))


def check_calendar(cal: Calendar, first_year: int, last_year: int) -> CheckReport:
    """Summarise ``cal`` and collect warnings over ``first_year``..``last_year``."""
    lo, hi = as_day(first_year), as_day(last_year, end=True)
    first, n_days = day_number(lo), (hi - lo).days + 1
    events = cal.events
    occ = cal.occurrences(lo, hi)
    counts = occ["event"].value_counts()
    public_ids = {id(e) for e in cal.public_holidays.events} if cal.public_holidays else set()
    public = [e for e in events if id(e) in public_ids]
    from_file = [e for e in events if id(e) not in public_ids]

    lines = [f"calendar: {cal.name} ({cal.source})"]
    src = cal.public_holidays.source.describe() if cal.public_holidays else None
    lines.append(
        f"events: {len(events)} ({len(from_file)} from the file"
        + (f", {len(public)} public holidays of {src})" if src else ")")
    )
    for e in events:
        n = int(counts.get(e.name, 0))
        listed = isinstance(e.when, R.DatesRule | R.SpanRule | R.HolidayRule)
        window = "days as listed" if isinstance(e.when, R.DatesRule) else (
            f"{e.length} day{'s' if e.length > 1 else ''}" if not listed or e.length > 1
            else "1 day")
        if getattr(e, "before_auto", False):
            window += f" (before: {auto_run_up_text(e)}, {e.after} after)"
        elif e.before or e.after:
            window += f" ({e.before} days before, {e.after} after)"
        years = "" if e.years.kind == "all" else f", years {e.years.describe()}"
        extra = "".join(
            [
                f", skip {', '.join(map(str, e.skip))}" if e.skip else "",
                f", moved {', '.join(map(str, e.moved))}" if e.moved else "",
                f", offset {e.offset:+d}" if e.offset else "",
            ]
        )
        lines.append(
            f"  {e.name}: {e.when.describe()}, {window}, {e.shape}{years}{extra}, "
            f"effect {e.effect.describe()}; {n} occurrence{'' if n == 1 else 's'} in "
            f"{first_year}-{last_year}"
        )
    rules = sorted({e.rule for e in events})
    lines.append(f"rules used: {', '.join(rules) if rules else 'none'}")
    for iv in cal.interventions:
        end = f" to {iv.end.date()}" if iv.end is not None else ""
        decay = f", decay {iv.decay:g}" if iv.decay is not None else ""
        lines.append(f"intervention: {iv.name}: {iv.type} from {iv.start.date()}{end}{decay}")
    for ex in cal.exclusions:
        lines.append(f"excluded: {ex.start.date()} to {ex.end.date()} ({ex.reason})")
    closed = int(cal.closed_days(lo, hi).sum())
    lines.append(f"closed days in {first_year}-{last_year}: {closed}")
    y0, y1 = cal.years_covered()
    named = f"{y0}-{y1}" if y0 is not None else "none (every rule repeats yearly)"
    lines.append(f"years named in the file: {named}; checked {first_year}-{last_year}")

    warnings: list[str] = []
    quiet_public: list[str] = []
    listed: set[str] = set()
    for e in events:
        if int(counts.get(e.name, 0)) == 0:
            if e in public:
                quiet_public.append(e.name)
            else:
                warnings.append(f"{e.name}: no occurrence in {first_year}-{last_year}")
        if isinstance(e.when, R.WeekdayRule) and abs(e.when.nth) == 5:
            missing = [y for y in range(first_year, last_year + 1)
                       if e.years.contains(y) and y not in e.skip and not e.when.hits(y)]
            if missing:
                warnings.append(f"{e.name}: the month has no such 5th weekday in "
                                f"{_year_list(missing)}; no occurrence those years")
        if isinstance(e.when, R.FixedRule) and (e.when.month, e.when.day) == (2, 29):
            warnings.append(f"{e.name}: 02-29 occurs in leap years only")
        if isinstance(e.when, R.DatesRule) and entry_name(e) not in listed:
            # once per calendar entry: its weekday classes and dip periods share its dates
            listed.add(entry_name(e))
            last_listed = max(e.when.years())
            if last_listed < last_year:
                warnings.append(_listed_until(e, last_listed))
        if e.effect.kind == "assume" and e.effect.assume is not None and (
                0 < abs(e.effect.assume) < 0.01):
            warnings.append(f"{e.name}: assume is {e.effect.assume * 100:g} %; write "
                            f"{e.effect.assume * 1e4:g}% if you meant that many percent")
    if quiet_public:
        warnings.append(f"{len(quiet_public)} public holidays have no day in {first_year}-"
                        f"{last_year}: {', '.join(quiet_public)}")

    # Pairs of events: overlapping occurrences, and identical windows in every year.
    pairable = [e for e in events if e.rule != "every_weekday"]
    if len(pairable) > 1:
        pair_occ = expand(pairable, lo, hi)
        days = coverage(pairable, pair_occ, first, n_days, window=False)
        wins = coverage(pairable, pair_occ, first, n_days)
        shared = days.T.astype(np.int64) @ days.astype(np.int64)
        for i in range(len(pairable)):
            for j in range(i + 1, len(pairable)):
                a, b = pairable[i], pairable[j]
                if wins[:, i].any() and np.array_equal(wins[:, i], wins[:, j]):
                    warnings.append(f"{a.name} and {b.name} cover the same days in every year "
                                    "checked; their lifts cannot be told apart (merge them or "
                                    "drop one)")
                elif shared[i, j] > 0:
                    both = np.flatnonzero(days[:, i] & days[:, j]) + first
                    warnings.append(f"{a.name} and {b.name} overlap on {int(shared[i, j])} days"
                                    f" (in {_year_list(_years_of(both))})")
    return CheckReport(lines, warnings, first_year, last_year)


def _listed_until(e: Any, year: int) -> str:
    """The warning for an entry whose listed dates stop in ``year``, before the last year checked
    (a date file: the file, its last day and the row it comes from)."""
    if isinstance(e.when, FileRule):
        item, row = max(zip(e.when.items, e.when.rows, strict=True), key=lambda p: (p[0].end, p[1]))
        return (f"{entry_name(e)}: {e.when.path} lists dates up to {item.end} (row {row}) only; add "
                "the later dates to the file before planning them")
    return (f"{entry_name(e)}: dates are listed up to {year} only; add the dates of later years before "
            "planning them")


def auto_run_up_text(event: Any) -> str:
    """How a ``before: auto`` run-up reads: left to the fit, and the stand-in days used until then."""
    return f"auto (chosen by the fit; {event.before} days until then)"
