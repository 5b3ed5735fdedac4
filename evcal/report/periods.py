"""Period arithmetic for the report: which days a dated period covers, and its label.

A series' rows are dated by one day (a week's end, a month's first or last
day). Mapping that day to a :class:`pandas.Period` of the series' frequency
gives the days it covers whichever convention the file used, which is what the
calendar view and the axis labels need.

Examples
--------
>>> import pandas as pd
>>> period_days(pd.Timestamp("2027-04-04"), "W-SUN")
(Timestamp('2027-03-29 00:00:00'), Timestamp('2027-04-04 00:00:00'))
>>> period_label(pd.Timestamp("2027-04-30"), "M")
'Apr 2027'
"""

from __future__ import annotations

import pandas as pd
from pandas.tseries.frequencies import to_offset

_MONTH_ABBR = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]


def kind_of(freq: str | None) -> str:
    """One of "day", "week", "month", "quarter", or "" when unknown."""
    if not freq:
        return ""
    text = str(freq).upper()
    if text.startswith("W"):
        return "week"
    if text in ("D", "B", "1D"):
        return "day"
    if text.startswith("Q"):
        return "quarter"
    if text in ("M", "ME", "MS", "BM", "BME", "BMS"):
        return "month"
    try:
        name = type(to_offset(freq)).__name__
    except ValueError:
        return ""
    for key, kind in (("Week", "week"), ("Month", "month"), ("Quarter", "quarter"), ("Day", "day")):
        if key in name:
            return kind
    return ""


def period_freq(freq: str | None) -> str | None:
    """The :class:`pandas.Period` frequency that matches a series frequency."""
    kind = kind_of(freq)
    if kind == "week":
        text = str(freq).upper()
        return text if "-" in text else "W-SUN"
    return {"day": "D", "month": "M", "quarter": "Q-DEC"}.get(kind)


def period_days(date: pd.Timestamp, freq: str | None) -> tuple[pd.Timestamp, pd.Timestamp]:
    """First and last day of the period that ``date`` stands for."""
    pf = period_freq(freq)
    if pf is None or pf == "D":
        day = pd.Timestamp(date).normalize()
        return day, day
    per = pd.Period(pd.Timestamp(date), freq=pf)
    return per.start_time.normalize(), per.end_time.normalize()


def period_label(date: pd.Timestamp, freq: str | None) -> str:
    """A short human label: "week to 4 Apr 2027", "Apr 2027", "Q2 2027", "4 Apr 2027"."""
    date = pd.Timestamp(date)
    kind = kind_of(freq)
    if kind == "month":
        return f"{_MONTH_ABBR[date.month - 1]} {date.year}"
    if kind == "quarter":
        return f"Q{date.quarter} {date.year}"
    if kind == "week":
        end = period_days(date, freq)[1]
        return f"week to {end.day} {_MONTH_ABBR[end.month - 1]} {end.year}"
    return f"{date.day} {_MONTH_ABBR[date.month - 1]} {date.year}"


def cycle_name(freq: str | None) -> str:
    """What one step of the seasonal index is called."""
    return {"week": "week of year", "month": "month", "quarter": "quarter", "day": "day of year"}.get(
        kind_of(freq), "period"
    )


def month_abbr(month: int) -> str:
    return _MONTH_ABBR[(int(month) - 1) % 12]
