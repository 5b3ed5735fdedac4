"""Expand events into dated occurrences, as flat numpy arrays.

Days are integers (days since 1970-01-01) so that the weights step can index
a day-by-column array directly. :class:`Occurrences` holds one row per
occurrence: which event, first and last day (inclusive, without window),
strength.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from evcal.calendar import rules as R
from evcal.calendar.spec import EventSpec

EPOCH_ORDINAL = dt.date(1970, 1, 1).toordinal()


def day_number(day: dt.date | pd.Timestamp) -> int:
    """Days since 1970-01-01."""
    if isinstance(day, pd.Timestamp):
        day = day.date()
    return day.toordinal() - EPOCH_ORDINAL


def as_day(value: object, *, end: bool = False, what: str = "start") -> pd.Timestamp:
    """A day from a str / date / Timestamp, or an int year (Jan 1, or Dec 31 if ``end``).

    Raises :class:`~evcal.errors.CalendarError` for values that are not a day.
    """
    from evcal.errors import CalendarError

    if isinstance(value, int | np.integer) and not isinstance(value, bool):
        year = int(value)
        if not 1 <= year <= 9999:
            raise CalendarError(f"{what}: {year} is not a year; use a four-digit year")
        return pd.Timestamp(year, 12, 31) if end else pd.Timestamp(year, 1, 1)
    try:
        ts = pd.Timestamp(value)  # type: ignore[arg-type]
    except (ValueError, TypeError):
        ts = pd.NaT
    if ts is pd.NaT or pd.isna(ts):
        raise CalendarError(f"{what}: {value!r} is not a date; write YYYY-MM-DD or a year")
    if ts.tzinfo is not None:
        ts = ts.tz_localize(None)
    return ts.normalize()


def _max_length(ev: EventSpec) -> int:
    lengths = [ev.length]
    if isinstance(ev.when, R.DatesRule):
        lengths += [(h.end - h.start).days + 1 for h in ev.when.items if h.end is not None]
    if isinstance(ev.when, R.HolidayRule):
        lengths.append(31)  # multi-day holidays (e.g. a week of national days)
    lengths += [(m.end - m.start).days + 1 for m in ev.moved.values()]
    return max(lengths)


@dataclass(frozen=True)
class Occurrences:
    """Occurrences as parallel arrays (one row per occurrence)."""

    event: np.ndarray  # int index into the events list
    start: np.ndarray  # int day numbers, inclusive
    end: np.ndarray  # int day numbers, inclusive
    strength: np.ndarray  # float

    def __len__(self) -> int:
        return len(self.event)


def expand(
    events: Sequence[EventSpec], first: pd.Timestamp, last: pd.Timestamp
) -> Occurrences:
    """Every occurrence whose window (before + occurrence + after) touches [first, last]."""
    lo_day, hi_day = day_number(first), day_number(last)
    ev_idx: list[int] = []
    starts: list[int] = []
    ends: list[int] = []
    strengths: list[float] = []
    for i, ev in enumerate(events):
        reach = ev.before + ev.after + _max_length(ev) + abs(ev.offset) + 1
        y0 = (first - pd.Timedelta(days=reach)).year
        y1 = (last + pd.Timedelta(days=reach)).year
        if isinstance(ev.when, R.DatesRule):
            listed = ev.when.years() + list(ev.moved)
            if not listed:
                continue
            y0, y1 = max(y0, min(listed)), min(y1, max(listed))
        for year in range(y0, y1 + 1):
            for s, e, strength in ev.dated(year):
                sn, en = s.toordinal() - EPOCH_ORDINAL, e.toordinal() - EPOCH_ORDINAL
                if sn - ev.before <= hi_day and en + ev.after >= lo_day:
                    ev_idx.append(i)
                    starts.append(sn)
                    ends.append(en)
                    strengths.append(strength)
    return Occurrences(
        np.asarray(ev_idx, dtype=np.int64),
        np.asarray(starts, dtype=np.int64),
        np.asarray(ends, dtype=np.int64),
        np.asarray(strengths, dtype=float),
    )


def to_frame(events: Sequence[EventSpec], occ: Occurrences) -> pd.DataFrame:
    """The contract's table: event, start, end, strength; sorted by start, then event."""
    names = np.array([e.name for e in events], dtype=object)
    epoch = np.datetime64("1970-01-01", "D")
    frame = pd.DataFrame(
        {
            "event": names[occ.event] if len(occ) else np.array([], dtype=object),
            "start": pd.to_datetime(epoch + occ.start.astype("timedelta64[D]")),
            "end": pd.to_datetime(epoch + occ.end.astype("timedelta64[D]")),
            "strength": occ.strength,
        }
    )
    frame["event"] = frame["event"].astype(object)
    return frame.sort_values(["start", "event"], kind="stable").reset_index(drop=True)
