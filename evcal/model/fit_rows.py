"""Which periods a fit has, and whether they are enough: the calendar's exclusions, the minimum history.

Too little history stops the fit with one line naming what took the periods
away (the calendar's exclusions with their file lines, the closures); enough to
run but fewer than two full seasonal cycles gives a warning line.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from evcal.design.seasonal import base_freq, cycle_length, season_position
from evcal.errors import CalendarError, HistoryError

if TYPE_CHECKING:
    from evcal.model.inputs import ModelInputs


def excluded_periods(calendar: Any, periods: pd.PeriodIndex) -> np.ndarray:
    """Mask of the periods with a day inside one of the calendar's ``exclude`` entries."""
    excluded = np.zeros(len(periods), dtype=bool)
    for ex in calendar.exclusions:
        excluded |= _overlaps(periods, ex)
    return excluded


def _overlaps(periods: pd.PeriodIndex, ex: Any) -> np.ndarray:
    """Periods with a day inside the exclusion ``ex``."""
    return np.asarray((periods.start_time.normalize() <= pd.Timestamp(ex.end))
                      & (periods.end_time.normalize() >= pd.Timestamp(ex.start)))


def min_periods(freq: str) -> int:
    """Periods with values a fit needs: two seasonal cycles."""
    return 2 * cycle_length(freq)


#: exclusions named in a line about the history they leave (the rest are counted)
EXCLUSIONS_SHOWN = 3


def full_cycles(periods: pd.PeriodIndex, held: np.ndarray) -> tuple[int, np.ndarray]:
    """Full seasonal cycles among the ``held`` periods: the fewest times any position of the cycle is held.

    Also the positions (1-based: month, quarter, week or day of the year) held fewer than two times.

    Examples
    --------
    >>> idx = pd.period_range("2020-01", "2022-12", freq="M")
    >>> held = np.ones(36, dtype=bool); held[2:14] = False   # March 2020 to February 2021 left out
    >>> full_cycles(idx, held)
    (2, array([], dtype=int64))
    >>> held[26] = False                                      # and March 2022
    >>> full_cycles(idx, held)
    (1, array([3]))
    """
    p = cycle_length(periods.freqstr)
    counts = np.bincount(season_position(periods)[held], minlength=p + 1)[1:p + 1]
    return int(counts.min()), np.flatnonzero(counts < 2) + 1


def _position_name(freq: str, position: int) -> str:
    b = base_freq(freq)
    if b == "M":
        return pd.Timestamp(2001, position, 1).strftime("%B")
    if b == "Q":
        return f"Q{position}"
    if b == "W":
        return f"week {position}"
    return (pd.Timestamp(2001, 1, 1) + pd.Timedelta(days=position - 1)).strftime("%d %B")


def _exclusion_causes(calendar: Any, periods: pd.PeriodIndex, shown: int | None = None) -> list[str]:
    """Each exclusion that takes periods away, in words (file line, dates, reason, periods covered)."""
    causes = []
    for ex in calendar.exclusions:
        hit = int(np.sum(_overlaps(periods, ex)))
        if hit:
            where = f"line {ex.line}: " if ex.line else ""
            causes.append(f"{where}exclude {pd.Timestamp(ex.start).date()} .. {pd.Timestamp(ex.end).date()} "
                          f"({ex.reason}) covers {hit}")
    if shown is not None and len(causes) > shown:
        causes = causes[:shown] + [f"{len(causes) - shown} more exclusions"]
    return causes


def exclusion_warning(inp: ModelInputs, calendar: Any, history: Any) -> str | None:
    """One line when the calendar's exclusions leave fewer than two full seasonal cycles to fit.

    Two full cycles: every month (quarter, week, day) of the year fitted in two
    years at least (closed periods count, as they are known). The fit still runs
    on what is left, but the seasonal index of the positions seen once rests on
    one value, and the lifts and level on little history. None when the history
    itself is that short (not the exclusions' doing) or nothing is excluded.
    """
    closed = inp.design.open_share.to_numpy() <= 1e-9
    excluded = excluded_periods(calendar, inp.periods)
    held = inp.rows | closed
    left, short = full_cycles(inp.periods, held)
    if left >= 2 or full_cycles(inp.periods, held | (excluded & inp.actual.notna().to_numpy()))[0] < 2:
        return None
    freq = history.freq
    fitted = int(inp.rows.sum())
    years = fitted / cycle_length(freq)
    names = ", ".join(_position_name(freq, int(k)) for k in short[:3]) + (
        f" and {len(short) - 3} more" if len(short) > 3 else "")
    causes = "; ".join(_exclusion_causes(calendar, inp.periods, EXCLUSIONS_SHOWN))
    return (f"{calendar.source}: the exclusions ({causes}) "
            f"leave {fitted} of {len(inp.periods)} periods to fit (about {years:.1f} years of history), "
            f"fewer than two full seasonal cycles ({names} fitted in under two years: the seasonal index "
            "there rests on one value at most); shorten the exclusions or give a longer history")


def check_fit_rows(inp: ModelInputs, calendar: Any, history: Any) -> str | None:
    """Stop with one line (:class:`CalendarError` or :class:`HistoryError`) when too few periods are left.

    The fit needs two seasonal cycles and more periods than terms; the line names
    the calendar's exclusions (file, line, dates, reason) and closures that took
    periods away, and the count of periods left and needed. When the fit can run
    but the exclusions leave fewer than two full seasonal cycles, the warning line
    of :func:`exclusion_warning` is returned (None otherwise).
    """
    n = int(inp.rows.sum())
    p = cycle_length(history.freq)
    closed_periods = inp.design.open_share.to_numpy() <= 1e-9
    # A closed period is known (planned as zero), so it counts towards covering two cycles;
    # only fitted periods count towards the number of terms.
    covered = int(np.sum(inp.rows | closed_periods))
    if covered >= min_periods(history.freq) and n >= len(inp.fitted_cols) + 1:
        return exclusion_warning(inp, calendar, history)
    total = len(inp.periods)
    if covered < min_periods(history.freq):
        n, need, why = covered, min_periods(history.freq), f"two seasonal cycles of {p} periods"
    else:
        need = len(inp.fitted_cols) + 1
        why = f"one more than the {need - 1} terms"
    causes = _exclusion_causes(calendar, inp.periods, EXCLUSIONS_SHOWN)
    closed = int(np.sum(closed_periods))
    if closed and covered >= min_periods(history.freq):  # closures count as covered for the cycles
        causes.append(f"closures (effect: zero) close all the days of {closed}")
    message = f"leaves {n} of {total} periods to fit; at least {need} are needed ({why})"
    if not causes:
        raise HistoryError(f"{history.source}: the history {message}; give a longer history")
    fix = "shorten the exclusion" if any(c.startswith(("line", "exclude")) for c in causes) \
        else "check the closures' dates"
    raise CalendarError(f"{calendar.source}: {'; '.join(causes)} of the history's periods: that "
                        f"{message}; {fix} or give a longer history")


def check_history_length(history: Any) -> None:
    n = int(history.values.notna().sum())
    need = min_periods(history.freq)
    if n < need:
        raise HistoryError(
            f"{history.source}: history has {n} periods with values; at least {need} "
            f"(two full seasonal cycles of {cycle_length(history.freq)} periods) are needed")
