"""A calendar of the plan year (template ``calendar_view.html``): which days each event touches.

The view is a set of month cards. Each day is a small tile; every event whose window touches that
day adds a coloured stripe along the tile's foot (stronger where the day weight is higher: the run-up
of a ``ramp`` shows as a fade-in). Closure days (``effect: zero``) are hatched; the days of the plan's
highest period get a dark frame. Hovering a day lists its events (a ``title`` attribute, so no script
is needed). Everything is HTML and CSS, so it prints.

It takes a frame of day weights (a DatetimeIndex, one column per event), as
``Calendar.day_weights(start, end, normalize="none")`` returns; :func:`weights_from_plan` builds a
coarser one from a plan's ``lift:<event>`` columns when no calendar file is given.
"""

from __future__ import annotations

import calendar as _stdcal
import re
from collections.abc import Iterable, Mapping
from typing import Any

import pandas as pd

from evcal.report import palette as pal
from evcal.report.formatting import period_days
from evcal.report.model_folder import LIFT_PREFIX, lift_columns

MAX_MONTHS = 24
MAX_STRIPES = 4
_WEEKDAYS = ("Mo", "Tu", "We", "Th", "Fr", "Sa", "Su")
_OFFSET = re.compile(r"^(?P<event>.+)\[[+-]\d+\]$")


def event_of_column(column: str, events: Iterable[str] = ()) -> str:
    """The event a day-weight column belongs to.

    A ``daily``-shaped event gives one column per day offset, named
    ``name[+k]`` by the calendar; those fold back into the event.

    Examples
    --------
    >>> event_of_column("easter[+2]")
    'easter'
    >>> event_of_column("promo", ["easter"])
    'promo'
    """
    column = str(column)
    if column in set(events):
        return column
    match = _OFFSET.match(column)
    return match.group("event") if match else column


def fold_weights(weights: pd.DataFrame, owners: Mapping[str, str] | None = None) -> pd.DataFrame:
    """Daily weights with one column per event (offset columns folded by their maximum).

    ``owners`` (column -> event, as ``Calendar.event_columns()`` gives) wins over reading the column names.
    """
    frame = weights.abs()
    frame.index = pd.DatetimeIndex(frame.index).normalize()
    events = [(owners or {}).get(col) or event_of_column(col) for col in frame.columns]
    return frame.T.groupby(events, sort=False).max().T.fillna(0.0)


def weights_from_plan(plan: pd.DataFrame, freq: str) -> pd.DataFrame:
    """Day weights at period resolution from a plan's ``lift:<event>`` columns.

    A day gets weight 1 for an event when the period it lies in has a non-zero
    contribution from that event. Coarser than the calendar's own weights (a
    whole week lights up for one holiday), and said so in the report.
    """
    if plan.empty:
        return pd.DataFrame()
    first, last = period_days(plan["date"].iloc[0], freq)[0], period_days(plan["date"].iloc[-1], freq)[1]
    events = lift_columns(plan)
    out = pd.DataFrame(0.0, index=pd.date_range(first, last), columns=events)
    touched = plan[[LIFT_PREFIX + e for e in events]].fillna(0.0).to_numpy() != 0
    for date, on in zip(plan["date"], touched, strict=True):
        start, end = period_days(date, freq)
        out.loc[start:end, on] = 1.0
    return out


def calendar_data(
    weights: pd.DataFrame,
    start: pd.Timestamp,
    end: pd.Timestamp,
    labels: Mapping[str, str],
    colours: Mapping[str, str],
    closures: Iterable[str] = (),
    highlight: tuple[pd.Timestamp, pd.Timestamp] | None = None,
) -> dict[str, Any]:
    """The month cards and the legend as plain data for ``calendar_view.html``.

    Parameters
    ----------
    weights : DataFrame
        Day weights, DatetimeIndex, one column per event (already folded).
    start, end : Timestamp
        First and last day to show (whole months are drawn).
    labels, colours : mapping
        Event name -> display label / CSS colour.
    closures : iterable of str
        Events whose days are known zeros (``effect: zero``); drawn hatched.
    highlight : (Timestamp, Timestamp), optional
        A span of days to frame (the plan's highest period).

    Returns
    -------
    dict
        ``weekdays``, ``months`` (name, leading blanks, days with their classes, hatch
        colour, title and stripes) and ``legend`` (one item per event shown).
    """
    start = pd.Timestamp(start).normalize()
    end = pd.Timestamp(end).normalize()
    months = pd.period_range(start, end, freq="M")[:MAX_MONTHS]
    w = weights.copy()
    w.index = pd.DatetimeIndex(w.index).normalize()
    w = w[~w.index.duplicated()]
    shown_days = pd.date_range(months[0].start_time, months[-1].end_time.normalize(), freq="D")
    w = w.reindex(shown_days, fill_value=0.0).fillna(0.0)
    touched = [c for c in w.columns if (w[c] != 0).any()]
    peak = {c: float(w[c].abs().max()) or 1.0 for c in touched}
    closures = set(closures)
    colour = {c: colours.get(c, pal.INK) for c in touched}
    cards = []
    for month in months:
        days = []
        for day, row in w.loc[month.start_time : month.end_time].iterrows():
            on = [c for c in touched if row[c] != 0]
            closed = [c for c in on if c in closures]
            open_events = [c for c in on if c not in closures]
            flags = {
                "cal-we": day.weekday() >= 5,
                "cal-out": day < start or day > end,
                "cal-closed": bool(closed),
                "cal-peak": highlight is not None and highlight[0] <= day <= highlight[1],
            }
            names = ", ".join(labels.get(c, c) for c in on)
            weight = {c: min(abs(float(row[c])) / peak[c], 1.0) for c in open_events[:MAX_STRIPES]}
            stripes = [{"colour": colour[c], "opacity": f"{0.35 + 0.65 * x:.2f}"} for c, x in weight.items()]
            days.append(
                {
                    "classes": " ".join(["cal-day", *(cls for cls, is_set in flags.items() if is_set)]),
                    "hatch": colour[closed[0]] if closed else "",
                    "title": f"{day:%a %d %b %Y}" + (f": {names}" if names else ""),
                    "num": day.day,
                    "stripes": stripes,
                    "more": max(len(open_events) - MAX_STRIPES, 0),
                }
            )
        name = f"{_stdcal.month_name[month.month]} {month.year}"
        cards.append({"name": name, "pad": month.start_time.weekday(), "days": days})
    days_on = (w.loc[start:end, touched] != 0).sum()
    legend = [
        {"label": labels.get(c, c), "colour": colour[c], "closed": c in closures, "days": int(days_on[c])}
        for c in touched
    ]
    return {"weekdays": _WEEKDAYS, "months": cards, "legend": legend, "highlight": highlight is not None}
