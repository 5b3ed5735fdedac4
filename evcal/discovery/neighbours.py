"""Days next to a calendar event that move with it, found in daily data.

A holiday rarely moves alone: the Friday after Thanksgiving, the days between
Christmas and New Year, the Sunday before a Monday holiday. A daily fit with a
one-day window leaves those days in its residuals; a weekly or monthly sum puts
them into the period that holds the holiday, and the holiday's window then
takes the whole period's dip. A lift compares across frequencies only for a
window whose days move together (``docs/aggregation.md``), so the neighbour
days that move get their own event.

**The contrast.** Each day's value on the model scale (log sales for a
multiplicative fit) against the mean of the same weekday one and two weeks
before and after (:data:`REFERENCE_LAGS`), leaving out reference days inside
or within :data:`REACH` days of any event's window. The same weekday removes
the weekday pattern; references on both sides remove a locally linear season
and trend. The fit's residuals were tried first and dropped: near a holiday
season the smooth seasonal terms bend towards the dip of the days the model
lacks, so on Chicago ridership the days just before Thanksgiving, and every
day of the fortnight before Martin Luther King Jr. Day, read as 5-15 % rises.

**The test.** For each event and each day ``k`` = 1..:data:`REACH` days before
its window's first day and after its last day: the contrast on that day in
each year the event occurs, their mean ``m`` and standard error ``s / sqrt(n)``
over the ``n`` years, ``t = m / (s / sqrt(n))`` against Student's t with
``n - 1`` degrees of freedom (the years are independent draws, a year apart).
A day is found when its two-sided p-value is below ``alpha / N``, ``N`` the
number of days examined (Bonferroni: the chance of any false finding over the
whole search is at most ``alpha``). A year in which the day belongs to another
event's window, or has no value, is left out; a day needs :data:`MIN_YEARS`
years.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
import yaml
from scipy import stats

__all__ = ["MIN_YEARS", "REACH", "REFERENCE_LAGS", "Neighbour", "neighbour_dates", "neighbour_days",
           "neighbour_entry", "neighbour_suggestion", "with_neighbours"]

#: days examined on each side of an event's window (a long weekend and its bridge days;
#: common practice, no source)
REACH = 3
#: fewest years a neighbour day must be seen in
MIN_YEARS = 4
#: the reference days of a day: the same weekday one and two weeks before and after
REFERENCE_LAGS = (-14, -7, 7, 14)


@dataclass(frozen=True)
class Neighbour:
    """A day ``offset`` days from an event's occurrence that moves with it, every year.

    ``offset`` counts from the occurrence's first day, as the calendar's ``offset`` does
    (``-1``: the day before; ``length`` of a one-day event ``+ 0``: the day after is ``1``).
    """

    event: str
    offset: int
    mean: float  # mean contrast over the years, model scale
    se: float
    t: float
    p_value: float
    years: int
    same_sign: float  # share of the years whose contrast has the mean's sign

    @property
    def size_pct(self) -> float:
        """The mean contrast as a percentage change (log model scale)."""
        return float(100.0 * np.expm1(self.mean))

    @property
    def name(self) -> str:
        """The suggested event's name: the event and the day, e.g. ``Thanksgiving Day +1``."""
        return f"{self.event} {self.offset:+d}"


def _day_offsets(ev: Any) -> tuple[list[int], list[int]]:
    """Offsets from an occurrence's start of the days before and after its window."""
    before = [-ev.before - k for k in range(1, REACH + 1)]
    after = [ev.length - 1 + ev.after + k for k in range(1, REACH + 1)]
    return before, after


def _covered(index: pd.DatetimeIndex, first: np.ndarray, last: np.ndarray) -> pd.Series:
    """Whether each day of ``index`` lies in some span ``first[i]..last[i]`` (inclusive), by day."""
    day0 = index[0]
    n = len(pd.date_range(day0, index[-1]))
    a = np.clip((pd.DatetimeIndex(first) - day0).days, 0, n)
    b = np.clip((pd.DatetimeIndex(last) - day0).days + 1, 0, n)
    count = np.zeros(n + 1, dtype=int)
    np.add.at(count, a[a < b], 1)
    np.add.at(count, b[a < b], -1)
    days = pd.date_range(day0, periods=n)
    return pd.Series(np.cumsum(count[:-1]) > 0, index=days).reindex(index, fill_value=False)


def neighbour_days(values: pd.Series, calendar: Any, alpha: float = 0.01) -> list[Neighbour]:
    """The days next to each event that move, the same way, across the years.

    Parameters
    ----------
    values : Series
        Daily sales on the model scale (log sales for a multiplicative fit), indexed by day
        (NaN where not fitted).
    calendar : Calendar
        The calendar the fit used; its events (except ``dates`` and ``every_weekday``
        rules, which have no yearly neighbours) are examined.
    alpha : float
        Chance of any false finding among the days examined (Bonferroni).

    Returns
    -------
    list of Neighbour
        Every day whose test passes, strongest first.

    Examples
    --------
    >>> from evcal.calendar import load_calendar
    >>> cal = load_calendar("name: x\\nevents:\\n  - {name: xmas, when: {fixed: '12-25'}}")
    >>> days = pd.date_range("2010-01-01", "2019-12-31")
    >>> r = pd.Series(np.random.default_rng(0).normal(0, 0.05, len(days)), index=days)  # invented
    >>> r[(days.month == 12) & (days.day == 26)] -= 0.5
    >>> [(n.event, n.offset) for n in neighbour_days(r, cal)]
    [('xmas', 1)]
    """
    index = pd.DatetimeIndex(values.index.to_timestamp() if isinstance(values.index, pd.PeriodIndex)
                             else values.index).normalize()
    r = pd.Series(np.asarray(values, dtype=float), index=index)
    events = [e for e in calendar.events if e.rule not in ("dates", "every_weekday")]
    if not events or r.dropna().empty:
        return []
    occ = calendar.occurrences(index[0], index[-1])
    # every day some event's window covers: not a neighbour of another event that year; and, for the
    # reference days (the same weekday one and two weeks away), every day within REACH of a window
    spec = {e.name: e for e in calendar.events}
    first = (occ["start"] - pd.to_timedelta([spec[e].before for e in occ["event"]], unit="D")).to_numpy()
    last = (occ["end"] + pd.to_timedelta([spec[e].after for e in occ["event"]], unit="D")).to_numpy()
    taken = _covered(index, first, last)
    near = _covered(index, first - np.timedelta64(REACH, "D"), last + np.timedelta64(REACH, "D"))
    free = r.where(~near.to_numpy())
    shifted = [free.shift(freq=pd.Timedelta(days=lag)).reindex(r.index) for lag in REFERENCE_LAGS]
    reference = pd.concat(shifted, axis=1).mean(axis=1)
    contrast = r - reference
    tests: list[tuple[str, int, np.ndarray]] = []
    for ev in events:
        starts = pd.DatetimeIndex(occ.loc[occ["event"] == ev.name, "start"])
        if len(starts) < MIN_YEARS:
            continue
        for k in (o for side in _day_offsets(ev) for o in side):
            days = starts + pd.Timedelta(days=k)
            values = contrast.reindex(days).to_numpy()
            keep = np.isfinite(values) & ~taken.reindex(days, fill_value=False).to_numpy()
            if keep.sum() >= MIN_YEARS:
                tests.append((ev.name, k, values[keep]))
    found = []
    for name, k, v in tests:
        n = len(v)
        mean, sd = float(v.mean()), float(v.std(ddof=1))
        se = sd / np.sqrt(n)
        t = mean / se if se > 0 else 0.0
        p = float(2 * stats.t.sf(abs(t), n - 1))
        if p < alpha / len(tests):
            found.append(Neighbour(name, k, mean, se, t, p, n, float(np.mean(np.sign(v) == np.sign(mean)))))
    return sorted(found, key=lambda f: -abs(f.t))


def neighbour_dates(found: list[Neighbour], calendar: Any, periods: pd.PeriodIndex) -> set[Any]:
    """Every date (``datetime.date``) a neighbour day found falls on within ``periods``."""
    if not found:
        return set()
    occ = calendar.occurrences(periods[0].start_time, periods[-1].end_time)
    return {(start + pd.Timedelta(days=n.offset)).date() for n in found
            for start in pd.DatetimeIndex(occ.loc[occ["event"] == n.event, "start"])}


def neighbour_entry(n: Neighbour, calendar_text: str) -> dict[str, Any]:
    """The calendar event for a neighbour day: the event's own rule moved by ``n.offset`` days.

    A public holiday becomes ``{holiday: NAME, offset: k}``; a file event keeps its
    ``when`` with its ``offset`` moved.
    """
    data = yaml.safe_load(calendar_text) or {}
    mine = next((e for e in data.get("events") or [] if e.get("name") == n.event), None)
    if mine is None:  # a public holiday of the file's public_holidays block
        return {"name": n.name, "when": {"holiday": n.event, "offset": n.offset}}
    when = dict(mine["when"])
    when["offset"] = int(when.get("offset", 0)) + n.offset
    # the neighbour lives in the same years as its event
    return {"name": n.name, "when": when, **{key: mine[key] for key in ("years", "skip") if key in mine}}


def with_neighbours(calendar_text: str, found: list[Neighbour]) -> str:
    """The calendar text with an event for each neighbour day found.

    Examples
    --------
    >>> day = Neighbour("Thanksgiving Day", 1, -0.9, 0.02, -36.9, 1e-15, 15, 1.0)
    >>> print(with_neighbours("name: US\\npublic_holidays: {country: US}\\n", [day]).splitlines()[-4:])
    ['- name: Thanksgiving Day +1', '  when:', '    holiday: Thanksgiving Day', '    offset: 1']
    """
    from evcal.discovery.inputs import with_entries

    return with_entries(calendar_text, events=[neighbour_entry(d, calendar_text) for d in found])


def neighbour_suggestion(n: Neighbour, calendar_text: str, transform: str) -> tuple[Any, Any]:
    """The ``suggestions.csv`` row of a neighbour day and the event to paste, with its evidence."""
    from evcal.discovery.suggestions import Entry, Row, flow_yaml

    side = f"{abs(n.offset)} day{'s' if abs(n.offset) > 1 else ''} {'after' if n.offset > 0 else 'before'}"
    size = n.size_pct if transform != "none" else n.mean
    unit = "%" if transform != "none" else " units"
    evidence = (f"{side} {n.event} (offset {n.offset:+d}) moves {size:+.1f}{unit} against the same weekday "
                f"one and two weeks away, {100 * n.same_sign:.0f}% of {n.years} years the same way "
                f"(t {n.t:+.1f}, p {n.p_value:.1g}, Bonferroni over the days examined)")
    entry = neighbour_entry(n, calendar_text)
    text = (f"{evidence}: add an event with when: {flow_yaml(entry['when'])}, so that {n.event}'s "
            "window holds only days that move together (its lift then means the same in weekly and "
            "monthly sums)")
    row = Row("neighbour_day", None, None, round(size, 2), round(abs(n.t), 2), None, text)
    return row, Entry("events", entry, [evidence])
