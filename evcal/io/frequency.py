"""Series frequency: detect it from the dates, or read the user's ``--freq``.

evcal reads one frequency per file: daily, weekly (any week-ending day),
monthly or quarterly. Frequencies are pandas period strings (``"D"``,
``"W-SUN"`` .. ``"W-SAT"``, ``"M"``, ``"Q-DEC"``) because every later step
indexes by :class:`pandas.PeriodIndex`.

Detection picks the coarsest frequency at which no two dates share a
period, then checks the spacing is regular at that frequency: one period
apart most of the time, and no long run of rows that are all the same larger
step apart (that run is a second frequency mixed into the file).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from evcal import spelling
from evcal.errors import HistoryError

WEEKDAYS: tuple[str, ...] = ("MON", "TUE", "WED", "THU", "FRI", "SAT", "SUN")
_WEEKDAY_NAMES = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")

# What the user may type for --freq -> the period string (None: week end from the data).
_FREQ_WORDS: dict[str, str | None] = {
    **dict.fromkeys(("D", "DAILY", "DAY"), "D"),
    **dict.fromkeys(("W", "WEEKLY", "WEEK"), None),
    **dict.fromkeys(("M", "MS", "ME", "MONTHLY", "MONTH"), "M"),
    **dict.fromkeys(("Q", "QS", "QE", "Q-DEC", "QUARTERLY", "QUARTER"), "Q-DEC"),
    **{f"W-{day}": f"W-{day}" for day in WEEKDAYS},
}

# A run of this many equal steps larger than one period is read as a second
# frequency inside the file (common practice, no source: 5 evenly spaced rows
# at a coarser rate are not a few scattered gaps).
_MIXED_RUN = 4

_MAX_QUOTED = 5


def periods_per_year(freq: str) -> int:
    """Periods in one seasonal cycle: 365 (daily), 52 (weekly), 12, 4.

    Examples
    --------
    >>> periods_per_year("W-WED"), periods_per_year("M")
    (52, 12)
    """
    if freq in ("D", "M") or freq[:2] in ("W-", "Q-"):
        return {"D": 365, "W": 52, "M": 12, "Q": 4}[freq[0]]
    raise ValueError(f"unsupported frequency {freq!r}")


def describe_freq(freq: str) -> str:
    """A planner's name for a frequency: ``"weekly (week ending Sunday)"``."""
    if freq.startswith("W-"):
        return f"weekly (week ending {_WEEKDAY_NAMES[WEEKDAYS.index(freq[2:])]})"
    return {"D": "daily", "M": "monthly"}.get(freq, "quarterly")


def weekly_freq(weekday: int) -> str:
    """The weekly period string whose weeks end on ``weekday`` (Monday = 0)."""
    return f"W-{WEEKDAYS[weekday]}"


def parse_freq_option(text: str) -> str | None:
    """Turn a ``--freq`` value into a period string.

    Returns ``None`` for plain weekly (``"W"``, ``"weekly"``): the week-ending
    day is then taken from the data.

    Examples
    --------
    >>> parse_freq_option("monthly"), parse_freq_option("W-sat"), parse_freq_option("W")
    ('M', 'W-SAT', None)
    """
    key = text.strip().upper()
    if key not in _FREQ_WORDS:
        raise HistoryError(
            f"{spelling.subject('freq')}: unknown frequency {text!r}; use D (daily), W (weekly, week end "
            "taken from the dates) or W-MON .. W-SUN, M (monthly) or Q (quarterly)"
        )
    return _FREQ_WORDS[key]


def _label_rows(rows: Sequence[int] | None, positions: np.ndarray) -> list[str]:
    if rows is None:
        return [f"date #{p + 1}" for p in positions]
    return [f"row {rows[p]}" for p in positions]


def _span(rows: Sequence[int] | None, first: int, last: int) -> str:
    a, b = _label_rows(rows, np.array([first, last]))
    if first == last:
        return a
    return f"{a.replace('row ', 'rows ').replace('date ', 'dates ')} to {b.split()[-1]}"


def weekday_problem(dates: pd.DatetimeIndex, rows: Sequence[int] | None, source: str, weekday: int) -> str:
    """One line naming the dates that are not on the week-ending ``weekday``."""
    off = np.flatnonzero(dates.day_of_week != weekday)
    shown = ", ".join(
        f"{label} ({dates[p].date()}, a {_WEEKDAY_NAMES[dates[p].day_of_week]})"
        for label, p in zip(_label_rows(rows, off[:_MAX_QUOTED]), off[:_MAX_QUOTED], strict=True)
    )
    more = f" and {len(off) - _MAX_QUOTED} more" if len(off) > _MAX_QUOTED else ""
    return (
        f"{source}: dates look weekly with weeks ending on {_WEEKDAY_NAMES[weekday]}, but "
        f"{shown}{more} {'falls' if len(off) == 1 else 'fall'} on another day; weekly dates "
        f"must all be the same week-ending day (or give {spelling.option('freq', 'D')} if the data are daily)"
    )


def detect_freq(
    dates: pd.DatetimeIndex | Sequence[object],
    *,
    source: str = "<dates>",
    rows: Sequence[int] | None = None,
) -> str:
    """Detect the period frequency of a set of distinct dates.

    Parameters
    ----------
    dates : DatetimeIndex
        One date per row, distinct, any order.
    source : str, optional
        Name used in error messages (the file name).
    rows : sequence of int, optional
        Spreadsheet row number of each date, for error messages.

    Returns
    -------
    str
        ``"D"``, ``"W-MON"`` .. ``"W-SUN"``, ``"M"`` or ``"Q-DEC"``.

    Raises
    ------
    HistoryError
        Fewer than two dates, duplicates, mixed or undetectable frequency.

    Examples
    --------
    >>> import pandas as pd
    >>> detect_freq(pd.to_datetime(["2024-01-31", "2024-02-29", "2024-03-31"]))
    'M'
    >>> detect_freq(pd.date_range("2024-01-03", periods=5, freq="7D"))
    'W-WED'
    """
    idx = pd.DatetimeIndex(pd.to_datetime(dates)).normalize()
    order = np.argsort(idx.asi8, kind="stable")
    idx = idx[order]
    row_list = None if rows is None else list(np.asarray(rows)[order])
    if len(idx) < 2:
        raise HistoryError(
            f"{source}: only {len(idx)} date; the frequency cannot be detected from fewer "
            f"than two dates (give {spelling.option('freq')}, and note a fit needs two full seasonal cycles)"
        )
    if not idx.is_unique:
        dup = idx[idx.duplicated()][0]
        raise HistoryError(f"{source}: date {dup.date()} appears more than once")

    weekdays = idx.day_of_week
    candidates = ["Q-DEC", "M"]
    if (weekdays == weekdays[0]).all():
        candidates.append(weekly_freq(int(weekdays[0])))
    candidates.append("D")
    freq = next(f for f in candidates if idx.to_period(f).is_unique)

    steps = np.diff(idx.to_period(freq).asi8)
    values, counts = np.unique(steps, return_counts=True)
    modal = int(values[np.argmax(counts)])
    if modal != 1:
        typical = int(np.median((idx[1:] - idx[:-1]).days))
        modal_weekday = int(np.bincount(weekdays, minlength=7).argmax())
        if freq == "D" and typical % 7 == 0:
            raise HistoryError(weekday_problem(idx, row_list, source, modal_weekday))
        raise HistoryError(
            f"{source}: cannot tell the frequency: consecutive dates are typically "
            f"{typical} days apart; evcal reads daily, weekly (every row on the same "
            f"week-ending day), monthly or quarterly data; give {spelling.option('freq')} to choose one"
        )
    run = _longest_run_above_one(steps)
    if run is not None:
        first, last, step = run
        raise HistoryError(
            f"{source}: mixed frequency: {_span(row_list, first, last + 1)} are {step} "
            f"periods apart at the {describe_freq(freq)} rate the other rows follow; "
            "evcal reads one frequency per file: split or aggregate the rows, or give "
            f"{spelling.option('freq')} to force one (the skipped periods then count as missing)"
        )
    return freq


def _longest_run_above_one(steps: np.ndarray) -> tuple[int, int, int] | None:
    """(first, last, step) of the first run of >= _MIXED_RUN equal steps > 1, by position."""
    start = 0
    for i in range(1, len(steps) + 1):
        if i == len(steps) or steps[i] != steps[start]:
            if steps[start] > 1 and i - start >= _MIXED_RUN:
                return start, i - 1, int(steps[start])
            start = i
    return None


def resolve_freq(stamps: pd.DatetimeIndex, rows: Sequence[int] | None, name: str, option: str | None) -> str:
    """The frequency of ``stamps``: detected (``option`` None), or the user's ``--freq`` checked against them.

    Plain weekly (``--freq W``) takes the week end from the day every date falls on.
    """
    if option is None:
        return detect_freq(stamps, source=name, rows=rows)
    forced = parse_freq_option(option)
    if forced is not None:
        check_forced_freq(stamps, rows, name, option, forced)  # never a silent misread
        return forced
    weekdays = stamps.day_of_week
    modal = int(np.bincount(weekdays, minlength=7).argmax())
    if not (weekdays == modal).all():
        raise HistoryError(weekday_problem(stamps, rows, name, modal))
    return weekly_freq(modal)


_UNITS = {"D": "days", "W": "weeks", "M": "months", "Q": "quarters"}


def check_forced_freq(
    stamps: pd.DatetimeIndex, rows: Sequence[int] | None, name: str, option: str, forced: str
) -> None:
    """Raise :class:`HistoryError` when the dates contradict a ``--freq`` (``forced``, a period string).

    Refuses instead of reading the dates wrongly:

    * weekly ``W-XXX``: weekly dates name the week's last day, so every date
      must fall on that day (Sunday dates under ``W-SAT`` would each be read as
      the week ending six days later, and the event lifts would land in the
      wrong weeks);
    * any frequency: consecutive dates must mostly be one period apart (weekly
      dates read as daily would leave six days in seven missing).

    The frequency detected from the dates, when there is one, is named as the
    choice to pass instead. ``rows`` (spreadsheet rows of the dates) may be None.

    Examples
    --------
    >>> sundays = pd.date_range("2024-01-07", periods=5, freq="7D")
    >>> check_forced_freq(sundays, None, "f.csv", "W-SUN", "W-SUN")
    >>> check_forced_freq(sundays, None, "f.csv", "D", "D")
    Traceback (most recent call last):
    ...
    evcal.errors.HistoryError: f.csv: freq='D' reads the dates as daily, but consecutive dates are \
typically 7 days apart, so most periods would be missing: the dates are weekly (week ending Sunday): \
pass freq='W-SUN', or leave freq= out to detect it
    """
    option = option.strip()
    given = spelling.option("freq", option)
    if forced.startswith("W-"):
        want = WEEKDAYS.index(forced[2:])
        weekdays = np.asarray(stamps.day_of_week)
        off = np.flatnonzero(weekdays != want)
        if len(off):
            first = off[:3]
            labels = _label_rows(rows, first)
            shown = ", ".join(f"{label} ({stamps[i].date()})" for label, i in zip(labels, first, strict=True))
            if len(off) > 3:
                shown += f" and {len(off) - 3:,} more"
            if len(set(weekdays.tolist())) == 1:
                day = int(weekdays[0])
                raise HistoryError(
                    f"{name}: {given} reads weeks ending {_WEEKDAY_NAMES[want]}, but the dates "
                    f"fall on {_WEEKDAY_NAMES[day]}s ({shown}); weekly dates name the last day of each "
                    f"week: pass {spelling.option('freq', weekly_freq(day))}, or leave "
                    f"{spelling.option('freq')} out to detect it"
                )
            raise HistoryError(
                f"{name}: {given} reads weeks ending {_WEEKDAY_NAMES[want]}, but {shown} "
                f"fall on other days; weekly dates name the last day of each week: "
                f"{_instead(stamps, rows, name)}"
            )
    if len(stamps) < 3:
        return
    steps = np.diff(np.sort(stamps.to_period(forced).asi8))
    steps = steps[steps > 0]  # rows sharing a period are reported later, with their rows
    if len(steps) == 0:
        return
    typical = int(np.median(steps))
    if typical > 1:
        raise HistoryError(
            f"{name}: {given} reads the dates as {describe_freq(forced)}, but consecutive "
            f"dates are typically {typical} {_UNITS[forced[0]]} apart, so most periods would be "
            f"missing: {_instead(stamps, rows, name)}"
        )


def _instead(stamps: pd.DatetimeIndex, rows: Sequence[int] | None, name: str) -> str:
    try:
        found = detect_freq(stamps, source=name, rows=rows)
    except HistoryError:
        return f"give the frequency the dates have, or leave {spelling.option('freq')} out to detect it"
    code = "Q" if found.startswith("Q") else found  # what to type after --freq
    return (f"the dates are {describe_freq(found)}: pass {spelling.option('freq', code)}, or leave "
            f"{spelling.option('freq')} out to detect it")


def detect_label(dates: pd.DatetimeIndex, freq: str) -> str:
    """How dates are written for ``freq``: ``"start"`` or ``"end"`` of each period.

    Monthly and quarterly: ``"end"`` only if every date is its period's last
    day, else ``"start"``. Weekly dates are week-ending days (``"end"``); daily
    dates are the day itself (``"start"``).
    """
    if freq.startswith("W-"):
        return "end"
    if freq == "D":
        return "start"
    ends = dates.to_period(freq).end_time.normalize()
    return "end" if len(dates) and (dates.normalize() == ends).all() else "start"
