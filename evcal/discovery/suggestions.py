"""Findings as a table (``suggestions.csv``) and a calendar fragment (``suggestions.yaml``).

Each kind of finding (cycle, Chen–Liu effect, recurring pattern, abnormal
year, lost demand) gets its row of the table, one per finding with columns
exactly :data:`COLUMNS`, saying in words what a planner can do, and, where
there is one, the entry to paste: the fragment uses the calendar contract's
vocabulary (``events``, ``interventions``, ``exclude``), each entry under a
comment that says what was seen.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field, replace
from typing import Any, NamedTuple

import pandas as pd
import yaml

from evcal.amounts import amount
from evcal.calendar.rules import WEEKDAY_ABBR
from evcal.discovery.abnormal import AbnormalYear
from evcal.discovery.cycles import Cycle
from evcal.discovery.detection import TC_DELTA
from evcal.discovery.lost_demand import LostDemand
from evcal.discovery.moving import EasterCluster
from evcal.discovery.outliers import Outlier
from evcal.discovery.recurring import Recurring, Rule

__all__ = [
    "COLUMNS",
    "KINDS",
    "OUTLIER_KINDS",
    "Entry",
    "Row",
    "abnormal_suggestion",
    "cycle_rows",
    "describe_pattern",
    "easter_suggestion",
    "flow_yaml",
    "lost_row",
    "outlier_suggestion",
    "period_day",
    "recurring_suggestion",
    "render_yaml",
    "table",
]

KINDS = ("cycle", "outlier", "level_shift", "temporary", "recurring", "neighbour_day", "abnormal_year",
         "lost_demand")
#: the kind of finding each Chen–Liu outlier type is reported as
OUTLIER_KINDS = {"AO": "outlier", "LS": "level_shift", "TC": "temporary"}


class Row(NamedTuple):
    """One line of ``suggestions.csv``."""

    kind: str
    start: dt.date | None
    end: dt.date | None
    size_pct: float | None
    score: float
    period: float | None
    suggestion: str


COLUMNS = list(Row._fields)


@dataclass
class Entry:
    """One entry of the YAML fragment: its section, mapping and comment lines."""

    section: str  # "events" | "interventions" | "exclude"
    mapping: dict[str, Any]
    comment: list[str] = field(default_factory=list)
    active: bool = True  # False: written commented out (an alternative to choose)


def table(rows: list[Row]) -> pd.DataFrame:
    """The suggestions table, columns in contract order."""
    frame = pd.DataFrame(rows, columns=COLUMNS)
    if unknown := set(frame["kind"]) - set(KINDS):  # a programming slip, not a user's input
        raise ValueError(f"unknown finding kind(s) {sorted(unknown)}; one of {', '.join(KINDS)}")
    return frame.astype({"period": "Float64", "size_pct": "Float64"})


def flow_yaml(mapping: dict[str, Any]) -> str:
    """A one-line YAML flow mapping (dates unquoted, month-days quoted).

    Examples
    --------
    >>> flow_yaml({"when": {"fixed": "12-24"}})
    '{when: {fixed: 12-24}}'
    """
    text = yaml.safe_dump(mapping, default_flow_style=True, sort_keys=False, width=10_000,
                          allow_unicode=True)
    return text.strip()


def render_yaml(entries: list[Entry], header: list[str]) -> str:
    """The calendar fragment: a header comment, then one section per kind of entry."""
    lines = [f"# {h}" for h in header]
    for section in ("events", "interventions", "exclude"):
        chosen = [e for e in entries if e.section == section]
        if not chosen:
            continue
        # a section of only commented-out entries would read as `null`
        lines.append(f"{section}:" if any(e.active for e in chosen) else f"# {section}:")
        for e in chosen:
            lines += [f"  # {c}" for c in e.comment]
            prefix = "  - " if e.active else "  # - "
            lines.append(prefix + flow_yaml(e.mapping))
    if not entries:
        lines.append("# nothing to suggest: no finding beyond what the calendar explains")
    return "\n".join(lines) + "\n"


def period_day(p: pd.Period, end: bool = False) -> dt.date:
    """The first (or, with ``end``, the last) day of period ``p``.

    Examples
    --------
    >>> period_day(pd.Period("2024-02", "M"), end=True)
    datetime.date(2024, 2, 29)
    """
    return (p.end_time if end else p.start_time).normalize().date()


def cycle_rows(cycles: list[Cycle], freq: str, weekdays: bool = False) -> list[Row]:
    """A row per cycle found, compared with the cycle the fit assumes for ``freq``, or one saying none.

    In daily data a 7-day cycle is the week: with ``weekdays`` (the model has
    weekday terms) it is modelled, not a doubt about the frequency.
    """
    from evcal.design.seasonal import cycle_length

    if not cycles:
        return [Row("cycle", None, None, None, 0.0, None,
                    "no clear cycle: no periodogram peak passed Fisher's g test and the ACF check; "
                    "the seasonal index may be mostly noise")]
    assumed = cycle_length(freq)
    rows = []
    for c in cycles:
        note = (f"seasonal cycle of {c.period:.1f} periods (ACF {c.acf:.2f} at lag {c.lag}, "
                f"Fisher p {c.p_value:.1g}); explains {100 * c.strength:.0f}% of the detrended variance")
        if abs(c.period - assumed) <= 0.05 * assumed:
            note += f"; the fit's seasonal terms use {assumed}"
        elif freq == "D" and abs(c.period - 7) <= 0.05 * 7:
            note += ("; the weekly cycle, which the fit's weekday terms model" if weekdays else
                     "; the weekly cycle, which this fit has no weekday terms for")
        elif any(abs(c.period * h - assumed) <= 0.05 * assumed for h in range(2, 8)):
            note += f"; a sub-cycle of the {assumed}-period year the fit uses"
        else:
            note += f"; the fit assumes {assumed} periods a year: check the frequency or the data"
        rows.append(Row("cycle", None, None, None, round(c.strength, 4), round(c.period, 2), note))
    return rows


def _rule_slug(rule: Rule) -> str:
    if rule.kind == "easter":
        k = rule.value[0]
        return "easter" if k == 0 else f"easter-{'plus' if k > 0 else 'minus'}-{abs(k)}"
    if rule.kind == "fixed":
        return f"{rule.value[0]:02d}-{rule.value[1]:02d}"
    if rule.kind == "weekday":
        m, w, n, offset = rule.value
        slug = (f"{dt.date(2000, m, 1).strftime('%b').lower()}-"
                f"{WEEKDAY_ABBR[w]}-{'last' if n == -1 else n}")
        return slug + (f"-{'plus' if offset > 0 else 'minus'}-{abs(offset)}" if offset else "")
    return f"week-{rule.value[0]}"


def describe_pattern(r: Recurring) -> str:
    """A recurring pattern's date rule in words (``every Dec 24``, ``from ..., 3 days``)."""
    if r.length > 1:
        return f"from {r.rule.describe()}, {r.length} days"
    return r.rule.describe()


def recurring_suggestion(r: Recurring, middle_year: int) -> tuple[Row, Entry]:
    """The row of a recurring pattern and the event to paste (its rule dated as in ``middle_year``)."""
    what = "peak" if r.sign > 0 else "dip"
    years = f"{len(r.years_seen)} of {len(r.years_available)} years"
    seen = ", ".join(map(str, r.years_seen))
    when = r.rule.when(middle_year)
    row = Row(
        "recurring", period_day(min(f.period for f in r.findings)),
        period_day(max(f.period for f in r.findings), end=True), round(r.mean_size_pct, 2),
        round(r.share, 3), None,
        f"unexplained {what} {describe_pattern(r)} in {years} ({seen}): add an event "
        f"with when: {flow_yaml(when)}" + (f", length: {r.length}" if r.length > 1 else ""))
    mapping: dict[str, Any] = {"name": f"unexplained-{what}-{_rule_slug(r.rule)}", "when": when}
    if r.length > 1:
        mapping["length"] = r.length
    return row, Entry("events", mapping, [f"{what} of {r.mean_size_pct:+.0f}% on average, "
                                          f"{describe_pattern(r)}, seen in {years}: {seen}"])


def easter_suggestion(cluster: EasterCluster, periods: pd.PeriodIndex, shares: Any, transform: str,
                      mean_base: float, explained: list[Outlier]) -> tuple[Row, Entry]:
    """The Easter-relative effect found in monthly or quarterly data: its row and the event to paste.

    ``explained`` are the one-period findings of a search without it that a
    search with it no longer makes; they are named in the row instead of
    being suggested as pulses. ``shares`` is the window's share in each period.
    """
    w = cluster.window
    size = 100.0 * math.expm1(cluster.effect) if transform != "none" else \
        100.0 * cluster.effect / mean_base if mean_base else float("nan")
    what = "peak" if cluster.effect > 0 else "dip"
    months = "/".join(dt.date(2000, m, 1).strftime("%b") for m in cluster.months)
    named = ", ".join(str(periods[o.position]) for o in explained)
    seen = f"; it accounts for the one-period findings of {named}" if explained else ""
    held = [p for p, sh in zip(periods, shares, strict=True) if sh > 0]
    days = "the day" if w == 1 else f"the {w} days"
    # sums over a month or quarter cannot place an effect within the days around Easter: the window
    # is the best of four lengths, not a finding about which days (a Good Friday closure fits as well)
    which = ("monthly" if periods.freqstr.startswith("M") else "quarterly") + " sums cannot tell which " \
        "days around Easter: name the ones you know (e.g. closed on Good Friday: easter: -2)"
    row = Row("recurring", period_day(held[0]), period_day(held[-1], end=True), round(size, 2),
              round(abs(cluster.t), 2), None,
              f"unexplained {what} of {size:+.1f}% over {days} before Easter, which fall in "
              f"{months} as Easter moves (t {cluster.t:+.1f}){seen}: add an event with when: "
              f"{{easter: {-w}}}, length: {w}; {which}")
    entry = Entry("events", {"name": f"unexplained-{what}-before-easter", "when": {"easter": -w},
                             "length": w},
                  [f"{what} of {size:+.1f}% over {days} before Easter Sunday (Bell-Hillmer "
                   f"regressor, t {cluster.t:+.1f}), in {months} as Easter moves; {which}"])
    return row, entry


def outlier_suggestion(o: Outlier, periods: pd.PeriodIndex, pct: float, pattern: Recurring | None,
                       abnormal: set[int]) -> tuple[Row, Entry | None]:
    """The row of one Chen–Liu effect of ``pct`` percent, and the intervention to paste.

    No intervention when a recurring ``pattern`` or an ``abnormal`` year
    explains the effect: the row then points there.
    """
    p = periods[o.position]
    score = abs(o.tau)
    start, end = period_day(p), period_day(p, end=True)
    tau = f"Chen-Liu |tau| {score:.1f}"
    if o.type == "LS":
        end = None
        text = (f"level shift of {pct:+.1f}% from {start}: add intervention type level_shift "
                "(a refit, a new competitor, a price change?)")
        entry = Entry("interventions", {"name": f"shift-{start}", "type": "level_shift", "start": start},
                      [f"level shift of {pct:+.1f}% from {start} ({tau})"])
    elif o.type == "TC":
        # the period by which the change has faded below 10 % (0.7^7 < 0.1)
        end = period_day(periods[min(o.position + 6, len(periods) - 1)], end=True)
        text = (f"temporary change of {pct:+.1f}% at {start}, fading 30% a period: "
                "add intervention type temporary, decay 0.7")
        entry = Entry("interventions", {"name": f"change-{start}", "type": "temporary", "start": start,
                                        "decay": TC_DELTA},
                      [f"temporary change of {pct:+.1f}% at {start}, fading 30% a period ({tau})"])
    else:
        what = "peak" if pct > 0 else "dip"
        text = (f"one-period {what} of {pct:+.1f}%: if it was a known one-off (promotion, "
                "closure, data error), add it to the calendar; otherwise a pulse intervention")
        entry = Entry("interventions", {"name": f"{what}-{start}", "type": "pulse", "start": start,
                                        "end": end},
                      [f"one-period {what} of {pct:+.1f}% ({tau}); if it was an "
                       "event (a promotion, a closure, a storm), put it under events instead"])
    if o.position == len(periods) - 1 and entry is not None:
        # the latest period is often not complete yet, and a part period reads as a dip
        latest = "the latest period of the history: check that it holds all its days before adding this"
        text = f"{text}; {latest}"
        entry = replace(entry, comment=[*entry.comment, latest])
    year = int(p.start_time.year)
    if pattern is not None:
        text, entry = f"part of the recurring pattern {describe_pattern(pattern)}", None
    elif year in abnormal:
        # one abnormal year shows up as a run of breaks; the year row says what to do
        text, entry = f"within abnormal year {year}: see that row", None
    return Row(OUTLIER_KINDS[o.type], start, end, round(pct, 2), round(score, 2), None, text), entry


def abnormal_suggestion(flagged: list[AbnormalYear], transform: str, effects: pd.DataFrame,
                        advice: str = "", share_pct: float | None = None) -> tuple[Row, list[Entry]]:
    """The row of one abnormal year (flagged on level, spread or both) and its exclusion.

    Excluding a year removes data, so the exclusion is always written
    commented out, with the evidence beside it; ``advice`` (from
    :func:`~evcal.discovery.abnormal.exclusion_advice`) is empty when the
    exclusion is suggested, else the reason it is not. A level departure also
    gets a pulse over the year, commented out as the alternative.
    ``share_pct`` is the share of the history's periods the year holds.
    """
    a = flagged[0]
    level = next((x for x in flagged if x.kind == "level"), None)
    spread = next((x for x in flagged if x.kind == "spread"), None)
    parts = []
    size = None
    if level is not None and transform != "none":
        size = round(100.0 * math.expm1(level.value), 2)
        parts.append(f"sits {size:+.1f}% off the other years (z {level.z:+.1f}, "
                     f"between-year p {level.p_value:.1g})")
    elif level is not None:
        parts.append(f"sits {level.value:+.3g} units off the other years (z {level.z:+.1f}, "
                     f"between-year p {level.p_value:.1g})")
    if spread is not None:
        parts.append(f"is erratic (residual sd {spread.value:.1f} times the other years', "
                     f"z {spread.z:+.1f})")
    evidence = f"{a.year} " + " and ".join(parts)
    share = f" ({share_pct:.0f}% of the history)" if share_pct is not None else ""
    if advice:
        text = f"{evidence}; not suggested for exclusion: {advice}"
    else:
        text = f"{evidence}: exclude the year{share}"
        if level is not None:
            text += " or add a pulse over it"
        text += " (written commented out in suggestions.yaml: uncomment after checking what happened)"
    shifts = {f"excluded {a.year}": "; excluding it moves the seasonal index by up to {:.1f} points",
              f"pulse {a.year}": ", a pulse by up to {:.1f}"}
    for label, words in shifts.items():
        if label in effects.columns:
            text += words.format((effects[label] - effects["index"]).abs().max())
    score = max(abs(x.z) for x in flagged)
    row = Row("abnormal_year", a.start.date(), a.end.date(), size, round(score, 2), None, text)

    span = {"start": a.start.date(), "end": a.end.date()}
    verdict = (f"suggested: uncomment to exclude it{share}; it removes data" if not advice
               else f"not suggested: {advice}")
    entries = [Entry("exclude", {**span, "reason": f"abnormal year {a.year}"},
                     [evidence, verdict]
                     + (["choose one: this exclusion or the pulse under interventions"]
                        if level is not None and not advice else []), active=False)]
    if level is not None:
        entries.append(Entry("interventions", {"name": f"year-{a.year}", "type": "pulse", **span},
                             [f"{evidence}; alternative to excluding it"], active=False))
    return row, entries


def lost_row(lo: LostDemand) -> Row:
    """The row of the demand lost in one stock-out window."""
    return Row(
        "lost_demand", lo.start.date(), lo.end.date(), round(-lo.lost_pct, 2),
        round(lo.lost / max((lo.expected_high - lo.expected_low) / 3.92, 1e-9), 2), None,
        f"{lo.reason}: expected {amount(lo.expected)} units (95% {amount(lo.expected_low)} to "
        f"{amount(lo.expected_high)}) over {lo.periods} periods, sold {amount(lo.actual)}: about "
        f"{amount(lo.lost)} units lost ({amount(lo.lost_low)} to {amount(lo.lost_high)})")
