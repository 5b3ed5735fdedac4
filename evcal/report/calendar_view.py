"""A calendar of the plan year in HTML: which days each event touches.

The view is a set of month cards. Each day is a small tile; every event whose
window touches that day adds a coloured stripe along the tile's foot (stronger
colour where the day weight is higher: the run-up of a ``ramp`` shows as a
fade-in). Closure days (``effect: zero``) are hatched; the days of the plan's
highest period get a dark frame. Hovering a day lists its events (a ``title``
attribute, so no script is needed). Everything is HTML and CSS, so it prints.

It takes a plain frame of day weights (a DatetimeIndex, one column per
event), which is what ``Calendar.day_weights(start, end, normalize="none")``
returns; :func:`weights_from_plan` builds a coarser one from a plan's
``lift:<event>`` columns when no calendar file is given.
"""

from __future__ import annotations

import calendar as _stdcal
import re
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np
import pandas as pd

from evcal.report import palette as pal
from evcal.report.periods import period_days

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


def fold_weights(
    weights: pd.DataFrame, events: Iterable[str] = (), owners: Mapping[str, str] | None = None
) -> pd.DataFrame:
    """Daily weights with one column per event (offset columns folded by their maximum).

    ``owners`` (column -> event, as ``Calendar.event_columns()`` gives) wins
    over reading the column names.
    """
    events = list(events)
    frame = weights.copy()
    frame.index = pd.DatetimeIndex(frame.index).normalize()
    groups: dict[str, list[str]] = {}
    for col in frame.columns:
        owner = (owners or {}).get(col) or event_of_column(col, events)
        groups.setdefault(owner, []).append(col)
    out = pd.DataFrame(index=frame.index)
    for event, cols in groups.items():
        out[event] = frame[cols].abs().max(axis=1)
    return out.fillna(0.0)


def weights_from_plan(plan: pd.DataFrame, freq: str | None) -> pd.DataFrame:
    """Day weights at period resolution from a plan's ``lift:<event>`` columns.

    A day gets weight 1 for an event when the period it lies in has a non-zero
    contribution from that event. Coarser than the calendar's own weights (a
    whole week lights up for one holiday), and said so in the report.
    """
    cols = [c for c in plan.columns if str(c).startswith("lift:")]
    if plan.empty:
        return pd.DataFrame()
    first = period_days(plan["date"].iloc[0], freq)[0]
    last = period_days(plan["date"].iloc[-1], freq)[1]
    days = pd.date_range(first, last, freq="D")
    out = pd.DataFrame(0.0, index=days, columns=[c[len("lift:") :] for c in cols])
    for _, row in plan.iterrows():
        start, end = period_days(row["date"], freq)
        for col in cols:
            value = row[col]
            if pd.notna(value) and value != 0:
                out.loc[start:end, col[len("lift:") :]] = 1.0
    return out


def calendar_view(
    weights: pd.DataFrame,
    start: pd.Timestamp,
    end: pd.Timestamp,
    labels: Mapping[str, str],
    colours: Mapping[str, str],
    closures: Iterable[str] = (),
    highlight: tuple[pd.Timestamp, pd.Timestamp] | None = None,
) -> str:
    """HTML for the month cards from ``start`` to ``end`` and a legend (template ``calendar_view.html``).

    Parameters are those of :func:`calendar_data`; every label is escaped by the template.
    """
    from evcal.report.templating import render

    return render("calendar_view.html", view=calendar_data(weights, start, end, labels, colours, closures,
                                                           highlight))


def calendar_data(
    weights: pd.DataFrame,
    start: pd.Timestamp,
    end: pd.Timestamp,
    labels: Mapping[str, str],
    colours: Mapping[str, str],
    closures: Iterable[str] = (),
    highlight: tuple[pd.Timestamp, pd.Timestamp] | None = None,
) -> dict[str, Any]:
    """The month cards and the legend as plain data.

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
    closure_set = set(closures)
    colour = {c: colours.get(c, pal.INK) for c in touched}
    cards = [_month_card(month, w, touched, peak, labels, colour, closure_set, highlight, start, end)
             for month in months]
    legend = _legend(w, touched, labels, colour, closure_set, start, end)
    return {"weekdays": _WEEKDAYS, "months": cards, "legend": legend, "highlight": highlight is not None}


def _month_card(
    month: pd.Period,
    w: pd.DataFrame,
    touched: list[str],
    peak: Mapping[str, float],
    labels: Mapping[str, str],
    colour: Mapping[str, str],
    closures: set[str],
    highlight: tuple[pd.Timestamp, pd.Timestamp] | None,
    start: pd.Timestamp,
    end: pd.Timestamp,
) -> dict[str, Any]:
    first = month.start_time.normalize()
    days = []
    for d in range(month.days_in_month):
        day = first + pd.Timedelta(days=d)
        row = w.loc[day]
        on = [c for c in touched if row[c] != 0]
        classes = ["cal-day"]
        if day.weekday() >= 5:
            classes.append("cal-we")
        if day < start or day > end:
            classes.append("cal-out")
        closed = [c for c in on if c in closures]
        if closed:
            classes.append("cal-closed")
        if highlight is not None and highlight[0] <= day <= highlight[1]:
            classes.append("cal-peak")
        open_events = [c for c in on if c not in closures]
        stripes = [
            {"colour": colour[c], "opacity": f"{0.35 + 0.65 * min(abs(float(row[c])) / peak[c], 1.0):.2f}"}
            for c in open_events[:MAX_STRIPES]
        ]
        names = ", ".join(labels.get(c, c) for c in on)
        days.append({
            "classes": " ".join(classes),
            "hatch": colour[closed[0]] if closed else "",
            "title": f"{day:%a %d %b %Y}" + (f": {names}" if names else ""),
            "num": d + 1,
            "stripes": stripes,
            "more": max(len(open_events) - MAX_STRIPES, 0),
        })
    return {"name": f"{_stdcal.month_name[month.month]} {month.year}", "pad": first.weekday(), "days": days}


def _legend(
    w: pd.DataFrame,
    touched: list[str],
    labels: Mapping[str, str],
    colour: Mapping[str, str],
    closures: set[str],
    start: pd.Timestamp,
    end: pd.Timestamp,
) -> list[dict[str, Any]]:
    inside = w.loc[start:end]
    return [
        {"label": labels.get(c, c), "colour": colour[c], "closed": c in closures,
         "days": int(np.count_nonzero(inside[c].to_numpy()))}
        for c in touched
    ]
