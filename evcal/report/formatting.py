"""How the report writes numbers and periods: thousands separators, a true minus sign, "–" for no value.

A series' rows are dated by one day (a week's end, a month's first or last day); the
:class:`pandas.Period` of the series' frequency gives the days it covers whichever convention the
file used.

Examples
--------
>>> num(-1234.5)
'−1,234'
>>> pct(12.34)
'+12.3 %'
>>> pct(float("nan"))
'–'
>>> period_days(pd.Timestamp("2027-04-04"), "W-SUN")
(Timestamp('2027-03-29 00:00:00'), Timestamp('2027-04-04 00:00:00'))
>>> period_label(pd.Timestamp("2027-04-30"), "M")
'Apr 2027'
"""

from __future__ import annotations

import math

import pandas as pd
from pandas.tseries.frequencies import get_period_alias

from evcal.amounts import amount
from evcal.design.seasonal import base_freq

NO_VALUE = "–"


def _finite(x: object) -> float | None:
    try:
        v = float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def num(x: object, digits: int | None = None, sign: bool = False) -> str:
    """A number with thousands separators (``sign=True``: ``+1,234``).

    Without ``digits`` it is an amount of units: whole from 100 up, three significant
    digits below (:func:`evcal.amounts.amount`), so a series counted in thousands does not
    read 0; with ``digits``, that many decimals.

    Examples
    --------
    >>> num(94905.4), num(-0.217), num(3.14159, 2)
    ('94,905', '−0.217', '3.14')
    """
    v = _finite(x)
    if v is None:
        return NO_VALUE
    text = amount(v, sign=sign) if digits is None else f"{v:{'+' if sign else ''},.{digits}f}"
    return text.replace("-", "−")


def sig(x: object, digits: int = 4) -> str:
    """A number to ``digits`` significant digits; text that is not a number is kept."""
    try:
        v = float(x)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return NO_VALUE if x is None else str(x)
    return f"{v:.{digits}g}".replace("-", "−") if math.isfinite(v) else NO_VALUE


def pct(x: object, digits: int = 1, sign: bool = True) -> str:
    """A percentage: ``+12.3 %`` (``sign=False``: ``12.3 %``)."""
    v = _finite(x)
    if v is None:
        return NO_VALUE
    text = f"{v:+.{digits}f}" if sign else f"{v:.{digits}f}"
    return text.replace("-", "−") + " %"


def period_freq(freq: str) -> str:
    """The :class:`pandas.Period` frequency of a series frequency ("MS" and "ME" are "M")."""
    return get_period_alias(freq) or freq


def freq_base(freq: str) -> str:
    """ "D", "W", "M" or "Q": the kind of period of a series frequency."""
    return base_freq(period_freq(freq))


def freq_words(freq: str) -> str:
    """ "weekly", "monthly", ... for a series frequency."""
    return {"D": "daily", "W": "weekly", "M": "monthly", "Q": "quarterly"}[freq_base(freq)]


def cycle_name(freq: str) -> str:
    """What one step of the seasonal index is called."""
    return {"D": "day of year", "W": "week of year", "M": "month", "Q": "quarter"}[freq_base(freq)]


def period_days(date: pd.Timestamp, freq: str) -> tuple[pd.Timestamp, pd.Timestamp]:
    """First and last day of the period that ``date`` stands for."""
    period = pd.Period(date, freq=period_freq(freq))
    return period.start_time.normalize(), period.end_time.normalize()


def period_label(date: pd.Timestamp, freq: str) -> str:
    """A short human label: "week to 4 Apr 2027", "Apr 2027", "Q2 2027", "4 Apr 2027"."""
    date = pd.Timestamp(date)
    base = freq_base(freq)
    if base == "M":
        return f"{date:%b %Y}"
    if base == "Q":
        return f"Q{date.quarter} {date.year}"
    if base == "W":
        end = period_days(date, freq)[1]
        return f"week to {end.day} {end:%b %Y}"
    return f"{date.day} {date:%b %Y}"
