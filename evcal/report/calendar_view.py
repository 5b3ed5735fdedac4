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
from html import escape

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
    """HTML for the month cards from ``start`` to ``end`` and a legend.

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
    str
        Safe HTML; every label is escaped here.
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

    cards = []
    for month in months:
        cards.append(_month_card(month, w, touched, peak, labels, colour, closure_set, highlight, start, end))
    legend = _legend(w, touched, labels, colour, closure_set, start, end, highlight)
    return f'<div class="cal-grid">{"".join(cards)}</div>{legend}'


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
) -> str:
    first = month.start_time.normalize()
    n_days = month.days_in_month
    cells = [f'<span class="cal-wd">{d}</span>' for d in _WEEKDAYS]
    cells += ['<span class="cal-pad"></span>'] * first.weekday()
    for d in range(n_days):
        day = first + pd.Timedelta(days=d)
        row = w.loc[day]
        on = [c for c in touched if row[c] != 0]
        classes = ["cal-day"]
        if day.weekday() >= 5:
            classes.append("cal-we")
        if day < start or day > end:
            classes.append("cal-out")
        style = ""
        closed = [c for c in on if c in closures]
        if closed:
            classes.append("cal-closed")
            style = f' style="--hatch:{colour[closed[0]]}"'
        if highlight is not None and highlight[0] <= day <= highlight[1]:
            classes.append("cal-peak")
        stripes = []
        for c in [c for c in on if c not in closures][:MAX_STRIPES]:
            strength = 0.35 + 0.65 * min(abs(float(row[c])) / peak[c], 1.0)
            stripes.append(f'<i style="background:{colour[c]};opacity:{strength:.2f}"></i>')
        extra = len([c for c in on if c not in closures]) - MAX_STRIPES
        if extra > 0:
            stripes.append(f'<b class="cal-more">+{extra}</b>')
        names = ", ".join(labels.get(c, c) for c in on)
        title = f"{day:%a %d %b %Y}" + (f": {names}" if names else "")
        cells.append(
            f'<span class="{" ".join(classes)}"{style} title="{escape(title)}">'
            f'<span class="cal-num">{d + 1}</span>'
            f'<span class="cal-stripes">{"".join(stripes)}</span></span>'
        )
    name = f"{_stdcal.month_name[month.month]} {month.year}"
    return f'<div class="cal-month"><h4>{escape(name)}</h4><div class="cal-days">{"".join(cells)}</div></div>'


def _legend(
    w: pd.DataFrame,
    touched: list[str],
    labels: Mapping[str, str],
    colour: Mapping[str, str],
    closures: set[str],
    start: pd.Timestamp,
    end: pd.Timestamp,
    highlight: tuple[pd.Timestamp, pd.Timestamp] | None,
) -> str:
    inside = w.loc[start:end]
    items = []
    for c in touched:
        n = int(np.count_nonzero(inside[c].to_numpy()))
        swatch_cls = "cal-swatch cal-swatch-closed" if c in closures else "cal-swatch"
        kind = " · closed" if c in closures else ""
        items.append(
            f'<li><span class="{swatch_cls}" style="--hatch:{colour[c]};background-color:{colour[c]}">'
            f"</span>{escape(labels.get(c, c))}"
            f'<span class="muted"> · {n} day{"s" if n != 1 else ""}{kind}</span></li>'
        )
    if highlight is not None:
        items.append('<li><span class="cal-swatch cal-swatch-peak"></span>the plan\'s highest period</li>')
    if not touched:
        items.append('<li class="muted">No event touches a day in this span.</li>')
    return f'<ul class="cal-legend">{"".join(items)}</ul>'
