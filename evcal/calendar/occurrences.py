"""Events as dated occurrences (flat numpy arrays), and each occurrence's window laid out day by day.

Days are integers (days since 1970-01-01) so that a day-by-column array is indexed directly.
For an occurrence lasting ``L`` days with ``b`` days before and ``a`` after, the window has
``b + L + a`` days. The shape factor of each window day is

======  =====================  ==================  ==========================
shape   before day i (1..b)    occurrence days     after day j (1..a)
======  =====================  ==================  ==========================
flat    1                      1                   1
ramp    i / (b + 1)            1                   (a + 1 - j) / (a + 1)
decay   1                      1                   0.5 ** j
daily   1 (own column)         1 (own column)      1 (own column)
======  =====================  ==================  ==========================

Before day ``i = 1`` is the earliest day of the run-up. The weight is ``strength × factor``;
with ``normalize="window"`` it is further divided by the sum of the factors over the whole
window, so the weights of one occurrence add up to its strength and the share of it falling in
a month or week is the Bell–Hillmer share of window. ``daily`` gives one column per day offset,
each a one-day window. Everything is computed on flat arrays (one entry per window day of every
occurrence) and summed into a day × column array with ``np.bincount``; no Python loop over
occurrences.
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
    if ev.dip_of is not None:  # a dip period sits next to its event's window, whose rule dates it
        parent = ev.dip_of
        return _max_length(parent) + parent.before + parent.after + abs(parent.offset) + ev.length
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


def expand(events: Sequence[EventSpec], first: pd.Timestamp, last: pd.Timestamp) -> Occurrences:
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


SHAPE_CODES = {"flat": 0, "ramp": 1, "decay": 2, "daily": 3}


def column_layout(events: Sequence[EventSpec]) -> tuple[list[str], list[str], np.ndarray]:
    """Column names, the event of each column, and each event's first column."""
    names: list[str] = []
    owners: list[str] = []
    first = np.zeros(len(events), dtype=np.int64)
    for i, ev in enumerate(events):
        first[i] = len(names)
        cols = ev.columns()
        names += cols
        owners += [ev.name] * len(cols)
    return names, owners, first


def window_days(
    events: Sequence[EventSpec], occ: Occurrences
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """One entry per window day: (occurrence row, day number, position k, factor).

    ``k`` is the offset from the occurrence start (negative in the run-up).
    """
    before = np.array([e.before for e in events], dtype=np.int64)[occ.event]
    after = np.array([e.after for e in events], dtype=np.int64)[occ.event]
    shape = np.array([SHAPE_CODES[e.shape] for e in events], dtype=np.int64)[occ.event]
    length = occ.end - occ.start + 1
    width = before + length + after
    row = np.repeat(np.arange(len(occ)), width)
    pos = np.arange(int(width.sum())) - np.repeat(np.cumsum(width) - width, width)
    b, a, n, sh = before[row], after[row], length[row], shape[row]
    k = pos - b
    day = occ.start[row] + k
    factor = np.ones(len(row))
    run_up = k < 0
    run_down = k >= n
    j = (k - n + 1).astype(float)  # after-day number, 1..a
    ramp = sh == 1
    factor = np.where(ramp & run_up, (pos + 1) / (b + 1), factor)
    factor = np.where(ramp & run_down, (a + 1 - j) / (a + 1), factor)
    factor = np.where((sh == 2) & run_down, 0.5**j, factor)
    return row, day, k, factor


def window_totals(events: Sequence[EventSpec], occ: Occurrences) -> np.ndarray:
    """Sum of the shape factors over each occurrence's whole window (closed forms)."""
    b = np.array([e.before for e in events], dtype=float)[occ.event]
    a = np.array([e.after for e in events], dtype=float)[occ.event]
    sh = np.array([SHAPE_CODES[e.shape] for e in events], dtype=np.int64)[occ.event]
    n = (occ.end - occ.start + 1).astype(float)
    total = b + n + a  # flat
    total = np.where(sh == 1, b / 2 + n + a / 2, total)  # sum i/(b+1), i=1..b is b/2
    total = np.where(sh == 2, b + n + (1 - 0.5**a), total)  # sum 0.5**j, j=1..a
    return np.where(sh == 3, 1.0, total)  # daily: each column is a one-day window


def weight_matrix(
    events: Sequence[EventSpec],
    occ: Occurrences,
    first_day: int,
    n_days: int,
    normalize: str = "window",
) -> tuple[np.ndarray, list[str], list[str]]:
    """The (n_days × columns) array of day weights, with column names and owners."""
    if normalize not in ("window", "none"):
        raise ValueError(f"normalize must be 'window' or 'none', not {normalize!r}")
    names, owners, first_col = column_layout(events)
    out_cols = len(names)
    if len(occ) == 0 or out_cols == 0:
        return np.zeros((n_days, out_cols)), names, owners
    row, day, k, factor = window_days(events, occ)
    value = occ.strength[row] * factor
    if normalize == "window":
        value = value / window_totals(events, occ)[row]
    ev = occ.event[row]
    col = first_col[ev].copy()
    daily = np.array([e.shape == "daily" for e in events])[ev]
    width = np.array([len(e.columns()) for e in events], dtype=np.int64)[ev]
    before = np.array([e.before for e in events], dtype=np.int64)[ev]
    slot = k + before  # daily: column index inside the event's block
    keep = (day >= first_day) & (day < first_day + n_days)
    # A daily event's occurrence that is longer than `length` (possible only for
    # public holidays that run several days) has no column for its extra days.
    keep &= ~daily | ((slot >= 0) & (slot < width))
    col = np.where(daily, col + slot, col)
    flat_index = (day[keep] - first_day) * out_cols + col[keep]
    grid = np.bincount(flat_index, weights=value[keep], minlength=n_days * out_cols)
    return grid.reshape(n_days, out_cols), names, owners


def coverage(
    events: Sequence[EventSpec], occ: Occurrences, first_day: int, n_days: int, window: bool = True
) -> np.ndarray:
    """Boolean day × event: the day is inside an occurrence (with ``window``: or its run-up or run-down)."""
    grid = np.zeros((n_days, len(events)), dtype=bool)
    if len(occ) == 0:
        return grid
    row, day, k, _ = window_days(events, occ)
    if not window:
        inside = (k >= 0) & (k < (occ.end - occ.start + 1)[row])
        row, day = row[inside], day[inside]
    ok = (day >= first_day) & (day < first_day + n_days)
    grid[day[ok] - first_day, occ.event[row[ok]]] = True
    return grid
