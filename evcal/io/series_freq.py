"""One frequency for every series of a long table, or one clear line naming two series that differ."""

from __future__ import annotations

import numpy as np
import pandas as pd

from evcal.errors import HistoryError
from evcal.io.cells import key_text
from evcal.io.frequency import describe_freq, detect_freq, parse_freq_option, resolve_freq, weekly_freq

__all__ = ["series_frequency", "series_frequencies"]


def series_frequency(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray, n_series: int,
                     keys: pd.DataFrame, name: str, option: str | None, u_rows: list[int] | None) -> str:
    """One frequency for every series (or a clear error naming two series that differ).

    Series by series first where the frequency comes from the dates (a panel of
    monthly series may date some on the 1st and some on the last day: together
    their dates are no regular grid, each series alone is monthly); then the
    rule of a single history (:func:`~evcal.io.frequency.resolve_freq`) on the
    distinct dates.
    """
    if option is None or (parse_freq_option(option) is None and u_stamps.day_of_week.nunique() > 1):
        agreed = _mixed_error(u_stamps, dcode, sid, n_series, keys, name)
        if agreed and option is None:
            return agreed
    return resolve_freq(u_stamps, u_rows, name, option)


def series_frequencies(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray,
                       n_series: int) -> list[str]:
    """A frequency class per series from its own dates: D, W-XXX, M, Q-DEC or '' (unclear).

    The class is the shortest gap between two of the series' dates (1 day,
    7 to 21 days on one weekday, 28-31 days, 89-92 days): enough to tell series
    apart, computed for all series at once in one pass over the rows, sorted by
    series and date first unless each series' rows already are together and in
    date order (as in most long files). A repeated row (gap 0) is not a gap: the
    duplicate check reports it later.
    """
    if not len(sid):  # no rows at all: no series has a class
        return [""] * n_series
    starts = np.flatnonzero(np.r_[True, sid[1:] != sid[:-1]])
    # days since 1970 whatever pandas' resolution, in 4 bytes (the arrays here hold a value per row)
    day = u_stamps.to_numpy().astype("datetime64[D]").astype(np.int32)[dcode]
    gap = np.empty(len(day), dtype=np.int32)
    gap[0] = big = np.iinfo(np.int32).max  # "no gap" (a series of one row): no frequency class
    np.subtract(day[1:], day[:-1], out=gap[1:])
    new_series = np.zeros(len(sid), dtype=bool)
    new_series[starts] = True
    if len(starts) > n_series or (gap[~new_series] < 0).any():  # rows of a series apart, or out of order
        order = np.lexsort((dcode, sid))
        return series_frequencies(u_stamps, dcode[order], sid[order], n_series)
    del day
    gap[new_series | (gap == 0)] = big
    min_gap = np.full(n_series, big, dtype=np.int64)
    min_gap[sid[starts]] = np.minimum.reduceat(gap, starts)
    wd = u_stamps.day_of_week.to_numpy().astype(np.int64)
    if (wd == wd[0]).all():  # every date on one weekday (weekly data): so is every series
        return _frequency_classes(min_gap, np.ones(n_series, dtype=int), np.full(n_series, wd[0]))
    has = np.zeros((n_series, 7), dtype=bool)
    has.reshape(-1)[sid.astype(np.int64) * 7 + wd[dcode]] = True
    return _frequency_classes(min_gap, has.sum(axis=1), np.argmax(has, axis=1))


def _frequency_classes(min_gap: np.ndarray, n_weekdays: np.ndarray, wd_first: np.ndarray) -> list[str]:
    """The class of each series from its smallest gap in days and the weekdays it falls on."""
    out = np.full(len(min_gap), "", dtype=object)
    weekly = (min_gap % 7 == 0) & (min_gap <= 21) & (n_weekdays == 1)
    out[weekly] = np.array([weekly_freq(w) for w in range(7)], dtype=object)[wd_first[weekly]]
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
    n_dates = np.bincount(sid, minlength=n_series)  # rows per series (no duplicates yet)
    unclear = [j for j, c in enumerate(classes) if not c and n_dates[j] >= 3]
    if unclear:
        j = unclear[0]
        detect_freq(u_stamps[np.unique(dcode[sid == j])], source=f"{name} [{key_text(keys, j)}]")
    return next(iter(seen)) if len(seen) == 1 else ""
