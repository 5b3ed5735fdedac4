"""What each finding says: its row of ``suggestions.csv`` and its entry of ``suggestions.yaml``.

One function per kind of finding (cycle, one-period outlier, level shift,
temporary change, recurring pattern, abnormal year, lost demand) writes the
suggestion in words a planner can act on, and the calendar entry to paste;
:mod:`evcal.discovery.suggestions` lays them out as the table and the fragment.
"""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

import pandas as pd

from evcal.discovery.abnormal import AbnormalYear
from evcal.discovery.cycles import Cycle
from evcal.discovery.lost_demand import LostDemand
from evcal.discovery.outlier_detection import TC_DELTA
from evcal.discovery.recurring import DAY_NAMES, Recurring, Rule
from evcal.discovery.suggestions import Entry, Row, flow_yaml

__all__ = [
    "abnormal_entries",
    "abnormal_row",
    "cycle_row",
    "describe_pattern",
    "lost_row",
    "no_cycle_row",
    "outlier_entry",
    "outlier_row",
    "period_day",
    "recurring_entry",
    "recurring_row",
]


def period_day(p: pd.Period, end: bool = False) -> dt.date:
    """The first (or, with ``end``, the last) day of period ``p``.

    Examples
    --------
    >>> period_day(pd.Period("2024-02", "M"), end=True)
    datetime.date(2024, 2, 29)
    """
    return (p.end_time if end else p.start_time).normalize().date()


def cycle_row(c: Cycle, freq: str) -> Row:
    """The row of a cycle found, compared with the cycle the fit assumes for ``freq``."""
    from evcal.design.seasonal import cycle_length

    assumed = cycle_length(freq)
    note = (f"seasonal cycle of {c.period:.1f} periods (ACF {c.acf:.2f} at lag {c.lag}, "
            f"Fisher p {c.p_value:.1g}); explains {100 * c.strength:.0f}% of the detrended variance")
    if abs(c.period - assumed) <= 0.05 * assumed:
        note += f"; the fit's seasonal terms use {assumed}"
    elif any(abs(c.period * h - assumed) <= 0.05 * assumed for h in range(2, 8)):
        note += f"; a sub-cycle of the {assumed}-period year the fit uses"
    else:
        note += f"; the fit assumes {assumed} periods a year: check the frequency or the data"
    return Row("cycle", None, None, None, round(c.strength, 4), round(c.period, 2), note)


def no_cycle_row(freq: str) -> Row:
    """The row saying no cycle passed the tests."""
    return Row("cycle", None, None, None, 0.0, None,
               "no clear cycle: no periodogram peak passed Fisher's g test and the ACF check; "
               "the seasonal index may be mostly noise")


def _rule_slug(rule: Rule) -> str:
    if rule.kind == "easter":
        k = rule.value[0]
        return "easter" if k == 0 else f"easter-{'plus' if k > 0 else 'minus'}-{abs(k)}"
    if rule.kind == "fixed":
        return f"{rule.value[0]:02d}-{rule.value[1]:02d}"
    if rule.kind == "weekday":
        m, w, n, offset = rule.value
        slug = (f"{dt.date(2000, m, 1).strftime('%b').lower()}-"
                f"{DAY_NAMES[w]}-{'last' if n == -1 else n}")
        return slug + (f"-{'plus' if offset > 0 else 'minus'}-{abs(offset)}" if offset else "")
    return f"week-{rule.value[0]}"


def recurring_row(r: Recurring, middle_year: int) -> Row:
    """The row of a recurring pattern, with the ``when:`` rule to add."""
    first = min(f.period for f in r.findings)
    last = max(f.period for f in r.findings)
    what = "peak" if r.sign > 0 else "dip"
    return Row(
        "recurring", period_day(first), period_day(last, end=True), round(r.mean_size_pct, 2),
        round(r.share, 3), None,
        f"unexplained {what} {describe_pattern(r)} in {len(r.years_seen)} of "
        f"{len(r.years_available)} years ({', '.join(map(str, r.years_seen))}): add an event "
        f"with when: {flow_yaml(r.rule.when(middle_year))}"
        + (f", length: {r.length}" if r.length > 1 else ""))


def recurring_entry(r: Recurring, middle_year: int) -> Entry:
    """The event to paste for a recurring pattern (its rule dated as in ``middle_year``)."""
    what = "peak" if r.sign > 0 else "dip"
    mapping: dict[str, Any] = {"name": f"unexplained-{what}-{_rule_slug(r.rule)}",
                               "when": r.rule.when(middle_year)}
    if r.length > 1:
        mapping["length"] = r.length
    return Entry("events", mapping,
                 [f"{what} of {r.mean_size_pct:+.0f}% on average, {describe_pattern(r)}, seen in "
                  f"{len(r.years_seen)} of {len(r.years_available)} years: "
                  f"{', '.join(map(str, r.years_seen))}"])


def describe_pattern(r: Recurring) -> str:
    """A recurring pattern's date rule in words (``every Dec 24``, ``from ..., 3 days``)."""
    if r.length > 1:
        return f"from {r.rule.describe()}, {r.length} days"
    return r.rule.describe()


def outlier_row(kind: str, p: pd.Period, periods: pd.PeriodIndex, pct: float, score: float,
                 pattern: Recurring | None) -> Row:
    """The row of one Chen–Liu effect (``AO``, ``LS`` or ``TC``) of ``pct`` percent at period ``p``."""
    if kind == "LS":
        return Row("level_shift", period_day(p), None, round(pct, 2), round(score, 2), None,
                   f"level shift of {pct:+.1f}% from {period_day(p)}: add intervention type level_shift "
                   "(a refit, a new competitor, a price change?)")
    if kind == "TC":
        # the period by which the change has faded below 10 % (0.7^7 < 0.1)
        fade = min(periods.get_loc(p) + 6, len(periods) - 1)
        suggestion = (f"temporary change of {pct:+.1f}% at {period_day(p)}, fading 30% a period: "
                      "add intervention type temporary, decay 0.7")
        if pattern is not None:
            suggestion = f"part of the recurring pattern {describe_pattern(pattern)}"
        return Row("temporary", period_day(p), period_day(periods[fade], end=True), round(pct, 2),
                   round(score, 2), None, suggestion)
    what = "peak" if pct > 0 else "dip"
    suggestion = (f"one-period {what} of {pct:+.1f}%: if it was a known one-off (promotion, "
                  "closure, data error), add it to the calendar; otherwise a pulse intervention")
    if pattern is not None:
        suggestion = f"part of the recurring pattern {describe_pattern(pattern)}"
    return Row("outlier", period_day(p), period_day(p, end=True), round(pct, 2), round(score, 2), None,
               suggestion)


def outlier_entry(kind: str, p: pd.Period, pct: float, score: float) -> Entry:
    """The intervention to paste for one Chen–Liu effect that no pattern or abnormal year explains."""
    start = period_day(p)
    if kind == "LS":
        return Entry("interventions", {"name": f"shift-{start}", "type": "level_shift", "start": start},
                     [f"level shift of {pct:+.1f}% from {start} (Chen-Liu |tau| {score:.1f})"])
    if kind == "TC":
        return Entry("interventions", {"name": f"change-{start}", "type": "temporary", "start": start,
                                       "decay": TC_DELTA},
                     [f"temporary change of {pct:+.1f}% at {start}, fading 30% a period "
                      f"(Chen-Liu |tau| {score:.1f})"])
    what = "peak" if pct > 0 else "dip"
    return Entry("interventions", {"name": f"{what}-{start}", "type": "pulse", "start": start,
                                   "end": period_day(p, end=True)},
                 [f"one-period {what} of {pct:+.1f}% (Chen-Liu |tau| {score:.1f}); if it was an "
                  "event (a promotion, a closure), put it under events instead"])


def abnormal_row(flagged: list[AbnormalYear], transform: str, effects: pd.DataFrame) -> Row:
    """One row per abnormal year (flagged on level, spread or both)."""
    year = flagged[0].year
    level = next((a for a in flagged if a.kind == "level"), None)
    parts = []
    size = None
    if level is not None and transform != "none":
        size = round(100.0 * math.expm1(level.value), 2)
        parts.append(f"sits {size:+.1f}% off the other years (z {level.z:+.1f})")
    elif level is not None:
        parts.append(f"sits {level.value:+.3g} units off the other years (z {level.z:+.1f})")
    spread = next((a for a in flagged if a.kind == "spread"), None)
    if spread is not None:
        parts.append(f"is erratic (residual sd {spread.value:.1f} times the other years', "
                     f"z {spread.z:+.1f})")
    text = f"{year} " + " and ".join(parts) + ": exclude the year"
    if level is not None:
        text += " or add a pulse over it"
    excl, pulse = f"excluded {year}", f"pulse {year}"
    if excl in effects.columns:
        shift = (effects[excl] - effects["index"]).abs().max()
        text += f"; excluding it moves the seasonal index by up to {shift:.1f} points"
    if pulse in effects.columns:
        shift = (effects[pulse] - effects["index"]).abs().max()
        text += f", a pulse by up to {shift:.1f}"
    score = max(abs(a.z) for a in flagged)
    return Row("abnormal_year", flagged[0].start.date(), flagged[0].end.date(), size,
               round(score, 2), None, text)


def abnormal_entries(flagged: list[AbnormalYear]) -> list[Entry]:
    """The exclusion to paste for an abnormal year (and, for a level departure, a pulse instead)."""
    a = flagged[0]
    seen = (f"{a.year}: residual {' and '.join(x.kind for x in flagged)} departs from the other "
            f"years (z {', '.join(f'{x.z:+.1f}' for x in flagged)})")
    level = any(x.kind == "level" for x in flagged)
    out = [Entry("exclude", {"start": a.start.date(), "end": a.end.date(),
                             "reason": f"abnormal year {a.year}"},
                 [seen] + (["choose one: this exclusion or the pulse under interventions"]
                           if level else []))]
    if level:
        out.append(Entry("interventions", {"name": f"year-{a.year}", "type": "pulse",
                                           "start": a.start.date(), "end": a.end.date()},
                         [f"{seen}; alternative to excluding it"], active=False))
    return out


def lost_row(lo: LostDemand) -> Row:
    """The row of the demand lost in one stock-out window."""
    return Row(
        "lost_demand", lo.start.date(), lo.end.date(), round(-lo.lost_pct, 2),
        round(lo.lost / max((lo.expected_high - lo.expected_low) / 3.92, 1e-9), 2), None,
        f"{lo.reason}: expected {lo.expected:,.0f} units (95% {lo.expected_low:,.0f} to "
        f"{lo.expected_high:,.0f}) over {lo.periods} periods, sold {lo.actual:,.0f}: about "
        f"{lo.lost:,.0f} units lost ({lo.lost_low:,.0f} to {lo.lost_high:,.0f})")
