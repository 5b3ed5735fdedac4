"""One frequency for every series of a long table, or one clear line naming two series that differ."""

from __future__ import annotations

import numpy as np
import pandas as pd

from evcal.errors import HistoryError
from evcal.io.cells import quote
from evcal.io.frequency import (
    check_forced_freq,
    describe_freq,
    detect_freq,
    parse_freq_option,
    weekly_freq,
)

__all__ = ["series_frequency", "series_frequencies", "key_text"]

SERIES_CHUNK = 2000  # series per frequency check (a dates x series matrix each)

# ---------------------------------------------------------------- frequency


def series_frequency(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray, n_series: int,
               keys: pd.DataFrame, name: str, option: str | None, u_rows: list[int] | None) -> str:
    """One frequency for every series (or a clear error naming two series that differ)."""
    if option is not None:
        forced = parse_freq_option(option)
        if forced is not None:
            check_forced_freq(u_stamps, u_rows, name, option, forced)  # never a silent misread
            return forced
        weekdays = u_stamps.day_of_week
        if len(set(weekdays.tolist())) > 1:
            _mixed_error(u_stamps, dcode, sid, n_series, keys, name)
        return weekly_freq(int(weekdays[0]))
    # series by series (a panel of monthly series may date some on the 1st and some on the
    # last day: together their dates are no regular grid, each series alone is monthly)
    agreed = _mixed_error(u_stamps, dcode, sid, n_series, keys, name)
    if agreed:
        return agreed
    return detect_freq(u_stamps, source=name, rows=u_rows)


def series_frequencies(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray,
                       n_series: int) -> list[str]:
    """A frequency class per series from its own dates: D, W-XXX, M, Q-DEC or '' (unclear).

    The class is the shortest gap between two of the series' dates (1 day,
    7 days on one weekday, 28-31 days, 89-92 days): enough to tell series apart,
    computed for all series at once on the ``dates × series`` presence matrix.
    """
    n_u = len(u_stamps)
    fast = _frequencies_of_sorted_rows(u_stamps, dcode, sid, n_series)
    if fast is not None:
        return fast
    if n_series > SERIES_CHUNK:  # bound the dates x series matrices
        order = np.argsort(sid, kind="stable")
        bounds = np.searchsorted(sid[order], np.arange(0, n_series + SERIES_CHUNK, SERIES_CHUNK))
        out: list[str] = []
        for a in range(0, n_series, SERIES_CHUNK):
            rows = order[bounds[a // SERIES_CHUNK]:bounds[a // SERIES_CHUNK + 1]]
            out += series_frequencies(u_stamps, dcode[rows], sid[rows] - a, min(SERIES_CHUNK, n_series - a))
        return out
    present = np.zeros((n_u, n_series), dtype=bool)
    present[dcode, sid] = True
    day = _day_numbers(u_stamps)
    prev = np.where(present, day[:, None], np.iinfo(np.int64).min // 2)
    prev = np.maximum.accumulate(prev, axis=0)
    gap = np.full((n_u, n_series), np.iinfo(np.int64).max)
    if n_u > 1:
        g = day[1:, None] - prev[:-1]
        gap[1:] = np.where(present[1:] & (prev[:-1] > np.iinfo(np.int64).min // 4), g, gap[1:])
    min_gap = gap.min(axis=0)
    wd = u_stamps.day_of_week.to_numpy()
    n_weekdays = np.zeros(n_series, dtype=int)
    wd_first = np.zeros(n_series, dtype=int)
    for w in range(7):
        has = present[wd == w].any(axis=0)
        wd_first = np.where(has & (n_weekdays == 0), w, wd_first)
        n_weekdays += has
    return _frequency_classes(min_gap, n_weekdays, wd_first)


def _frequencies_of_sorted_rows(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray,
                                n_series: int) -> list[str] | None:
    """:func:`series_frequencies` when each series' rows are together and in date order (as in most
    long files); None otherwise.

    One pass over the rows: each row's gap to the row before it in the same
    series, the smallest per series (a repeated row, gap 0, is not a gap: the
    duplicate check reports it later).
    """
    if len(sid) < 2:
        return None
    new_series = sid[1:] != sid[:-1]
    starts = np.flatnonzero(np.r_[True, new_series])
    if len(starts) != n_series:  # some series' rows are not together
        return None
    big = np.iinfo(np.int32).max  # "no gap" (one row): no frequency class, as in the matrix path
    day = _day_numbers(u_stamps).astype(np.int32)[dcode]  # days since 1970 fit in 4 bytes
    gap = np.empty(len(day), dtype=np.int32)
    gap[0] = big
    np.subtract(day[1:], day[:-1], out=gap[1:])
    del day
    if (gap[1:][~new_series] < 0).any():  # dates out of order inside a series
        return None
    gap[1:][new_series | (gap[1:] == 0)] = big
    min_gap = np.full(n_series, big, dtype=np.int64)
    min_gap[sid[starts]] = np.minimum.reduceat(gap, starts)
    wd = u_stamps.day_of_week.to_numpy().astype(np.int64)
    if (wd == wd[0]).all():  # every date on one weekday (weekly data): so is every series
        return _frequency_classes(min_gap, np.ones(n_series, dtype=int), np.full(n_series, wd[0]))
    has = np.zeros((n_series, 7), dtype=bool)
    has.reshape(-1)[sid.astype(np.int64) * 7 + wd[dcode]] = True
    return _frequency_classes(min_gap, has.sum(axis=1), np.argmax(has, axis=1))


def _day_numbers(stamps: pd.DatetimeIndex) -> np.ndarray:
    """Days since 1970 whatever the index's resolution (pandas may hold dates in s, ms, us or ns)."""
    return stamps.to_numpy().astype("datetime64[D]").astype(np.int64)


def _frequency_classes(min_gap: np.ndarray, n_weekdays: np.ndarray, wd_first: np.ndarray) -> list[str]:
    """The class of each series from its smallest gap in days and the weekdays it falls on."""
    n_series = len(min_gap)
    weekly = np.array([weekly_freq(w) for w in range(7)], dtype=object)
    out = np.full(n_series, "", dtype=object)
    out[(min_gap % 7 == 0) & (min_gap <= 21) & (n_weekdays == 1)] = \
        weekly[wd_first[(min_gap % 7 == 0) & (min_gap <= 21) & (n_weekdays == 1)]]
    out[min_gap == 1] = "D"
    out[(min_gap >= 28) & (min_gap <= 31)] = "M"
    out[(min_gap >= 89) & (min_gap <= 92)] = "Q-DEC"
    return list(out)


def _mixed_error(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray, n_series: int,
                 keys: pd.DataFrame, name: str) -> str:
    """Raise naming two series at different frequencies; return the one frequency if they agree."""
    classes = series_frequencies(u_stamps, dcode, sid, n_series)
    seen: dict[str, int] = {}
    for j, c in enumerate(classes):
        if c and c not in seen:
            seen[c] = j
    if len(seen) >= 2:
        (fa, ja), (fb, jb) = list(seen.items())[:2]
        raise HistoryError(
            f"{name}: mixed frequencies between series: {key_text(keys, ja)} is {describe_freq(fa)} "
            f"and {key_text(keys, jb)} is {describe_freq(fb)}; evcal fits one frequency per run: "
            "split the file by frequency, or aggregate the finer series to the coarser frequency")
    # a series with one or two dates is skipped as too short later; it cannot be read here
    unclear = [j for j, c in enumerate(classes) if not c]
    if unclear:
        n_dates = np.bincount(sid, minlength=n_series)  # rows per series (no duplicates yet)
        unclear = [j for j in unclear if n_dates[j] >= 3]
    if unclear:
        j = unclear[0]
        mine = u_stamps[np.unique(dcode[sid == j])]
        detect_freq(mine, source=f"{name} [{key_text(keys, j)}]")
    return next(iter(seen)) if len(seen) == 1 else ""

def key_text(keys: pd.DataFrame, j: int) -> str:
    row = keys.iloc[int(j)]
    return ", ".join(f"{c}={quote(row[c])}" for c in keys.columns)
