"""Daily weights: each occurrence's window laid out day by day, with its shape.

For an occurrence lasting ``L`` days with ``b`` days before and ``a`` after,
the window has ``b + L + a`` days. The shape factor of each window day is

======  =====================  ==================  ==========================
shape   before day i (1..b)    occurrence days     after day j (1..a)
======  =====================  ==================  ==========================
flat    1                      1                   1
ramp    i / (b + 1)            1                   (a + 1 - j) / (a + 1)
decay   1                      1                   0.5 ** j
daily   1 (own column)         1 (own column)      1 (own column)
======  =====================  ==================  ==========================

Before day ``i = 1`` is the earliest day of the run-up. The weight is
``strength × factor``; with ``normalize="window"`` it is further divided by
the sum of the factors over the whole window, so the weights of one
occurrence add up to its strength and the share of it falling in a month or
week is the Bell–Hillmer share of window. ``daily`` gives one column per day
offset, each a one-day window.

Everything is computed on flat numpy arrays (one entry per window day of
every occurrence) and summed into a day × column array with ``np.bincount``;
no Python loop over occurrences.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from evcal.calendar.occurrences import Occurrences
from evcal.calendar.spec import EventSpec

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


def covered_days(occ: Occurrences, events: Sequence[EventSpec], first_day: int,
                 n_days: int) -> np.ndarray:
    """Boolean per day: inside the window of any of the given occurrences."""
    mask = np.zeros(n_days, dtype=bool)
    if len(occ):
        _, day, _, _ = window_days(events, occ)
        day = day[(day >= first_day) & (day < first_day + n_days)]
        mask[day - first_day] = True
    return mask
