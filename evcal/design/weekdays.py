"""The weight of each day inside a week, month or quarter: the series' weekday pattern, or flat.

A one-day event in weekly data moves the week by its day's share of the
week's sales, not by 1/7: a holiday on a commuter Thursday removes more of the
week than one on a Sunday. With a weekday profile ω (seven relative levels,
Monday..Sunday) a period's event column averages its days' intensities
weighted by ω, and the open share of a period with closed days is the share
of ω that is open (:mod:`evcal.design.curved`, :mod:`evcal.design.events`).
Without a profile every day weighs the same (the Bell–Hillmer share of window).

Where ω comes from (the first that applies; the fit records which in
``model.json``, ``design.weekday_weights``, and ``evcal show`` says it):

* ``calendar``: the calendar's ``weekday_profile:`` key (docs/calendar.md);
  ``evcal show`` of a daily model prints its fitted weekday pattern in that form;
* ``trading_days``: a monthly or quarterly log-scale fit with trading-day
  columns and no calendar profile: the levels its trading-day coefficients
  imply (:func:`trading_levels`), refitted in the same fixed-point passes as
  the lifts (:func:`evcal.model.passes.estimate_exact`);
* ``flat``: every day the same.

A plan rebuilds its columns with the recorded levels (:func:`weighted`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from typing import Any

import numpy as np
import pandas as pd

__all__ = ["day_levels", "calendar_profile", "weekday_note", "profile_line", "fitted_profile",
           "trading_levels", "weighted", "weights_record", "WEEKDAYS"]

#: weekday names, Monday first (Python's weekday numbers)
WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
#: the lowest level a weekday gets from trading-day coefficients (relative to a mean of 1): a day
#: the coefficients put at or below zero sells (almost) nothing, but its weight must stay positive
MIN_LEVEL = 1e-3


def calendar_profile(calendar: Any) -> tuple[float, ...] | None:
    """The calendar's weekday profile (seven levels, Monday..Sunday), or None (flat)."""
    profile = getattr(calendar, "weekday_profile", None)
    return tuple(float(v) for v in profile) if profile is not None else None


def day_levels(profile: Sequence[float] | None, days: pd.DatetimeIndex) -> np.ndarray:
    """Relative level ω of each of ``days`` (ones when ``profile`` is None).

    Examples
    --------
    >>> days = pd.date_range("2024-01-01", periods=7)  # a Monday
    >>> day_levels([2, 2, 2, 2, 2, 1, 1], days).tolist()
    [2.0, 2.0, 2.0, 2.0, 2.0, 1.0, 1.0]
    """
    if profile is None:
        return np.ones(len(days))
    return np.asarray(profile, dtype=float)[days.day_of_week.to_numpy()]


def weights_record(calendar: Any, freq: str) -> dict[str, Any]:
    """Which weekday weights a design of ``freq`` uses with ``calendar`` (``{}`` for daily data).

    ``{"source": "calendar", "levels": [7 levels]}`` or ``{"source": "flat"}``; a fit whose
    weights come from its trading-day coefficients records ``{"source": "trading_days", ...}``
    (:func:`evcal.model.passes.estimate_exact`).

    Examples
    --------
    >>> weights_record(None, "M")
    {'source': 'flat'}
    """
    if str(freq).upper().startswith("D"):
        return {}
    profile = calendar_profile(calendar)
    if profile is None:
        return {"source": "flat"}
    return {"source": "calendar", "levels": [float(v) for v in profile]}


def weighted(calendar: Any, record: dict[str, Any] | None) -> Any:
    """``calendar`` with the recorded weekday levels as its profile (itself when there are none).

    A plan from a model folder builds its columns with the weights its fit used,
    whichever calendar it is given.
    """
    levels = (record or {}).get("levels")
    if not levels or calendar is None or calendar_profile(calendar) == tuple(float(v) for v in levels):
        return calendar
    return replace(calendar, weekday_profile=tuple(float(v) for v in levels))


def weekday_note(record: dict[str, Any] | None, freq: str) -> str:
    """What weighs each day of a longer period, from the fit's record (:func:`weights_record`).

    Examples
    --------
    >>> weekday_note({"source": "trading_days", "levels": [1.2, 1.2, 1.2, 1.2, 1.1, 0.6, 0.5]}, "M")[:42]
    'the fitted trading-day coefficients (Monda'
    """
    if str(freq).upper().startswith("D"):
        return "daily data: each period is one day (no weekday weighting needed)"
    record = record or {}
    levels = ", ".join(f"{v:.3g}" for v in record.get("levels") or [])
    source = record.get("source")
    if source == "calendar":
        return f"the calendar's weekday_profile (Monday..Sunday: {levels})"
    if source == "trading_days":
        return (f"the fitted trading-day coefficients (Monday..Sunday: {levels}), refitted with the lifts; "
                "a weekday_profile in the calendar would take their place")
    if source == "flat":
        return ("flat: each day counts equally within its period (no weekday_profile in the calendar, no "
                "trading-day columns); if weekdays sell differently, an event that covers part of a period "
                "is read with a bias: give the calendar a weekday_profile (evcal show of a daily model "
                "prints one)")
    return "not recorded (a folder fitted before the weights were recorded): the calendar's, else flat"


def trading_levels(params: Any, mean_days: float) -> list[float] | None:
    """Weekday levels (Monday..Sunday, mean 1) that a log-scale fit's trading-day coefficients imply.

    The columns are the count of each of Monday..Saturday minus the count of
    Sundays (:class:`evcal.design.seasonal.TradingDays`), so Sunday's effect is
    ``β_sun = −Σ β_d`` and the term is ``Σ_d β_d n_d`` over all seven days. A
    period of N days with weekday levels ω sells ``Σ_d n_d ω_d``, whose log is,
    to first order in the counts' departures from N/7,
    ``log(N ω̄) + Σ_d n_d (ω_d/ω̄ − 1)/N``: so ``ω_d/ω̄ = 1 + N β_d``, N the mean
    days of a period (the second-order term is below 0.01 % for a weekend at
    half the weekday level). None when ``params`` has no trading-day terms.

    Examples
    --------
    >>> b = {"trading[mon]": 0.005, "trading[sat]": -0.01}
    >>> [round(v, 3) for v in trading_levels(b, 30.0)]
    [1.15, 1.0, 1.0, 1.0, 1.0, 0.7, 1.15]
    """
    names = [f"trading[{d}]" for d in WEEKDAYS[:6]]
    if not any(n in params for n in names):
        return None
    beta = np.array([float(params[n]) if n in params else 0.0 for n in names])
    beta = np.append(beta, -beta.sum())
    levels = np.maximum(1.0 + float(mean_days) * beta, MIN_LEVEL)
    return [float(v) for v in levels / levels.mean()]


def profile_line(levels: Sequence[float]) -> str:
    """``weekday_profile: [...]`` for a calendar file, the levels scaled to a mean of 1.

    Examples
    --------
    >>> profile_line([2, 2, 2, 2, 2, 0.5, 0.5])
    'weekday_profile: [1.27, 1.27, 1.27, 1.27, 1.27, 0.318, 0.318]'
    """
    v = np.asarray(levels, dtype=float)
    v = v / v.mean()
    return "weekday_profile: [" + ", ".join(f"{x:.3g}" for x in v) + "]"


def fitted_profile(params: Any) -> list[float] | None:
    """The weekday levels a daily log-scale fit found: ``exp`` of its ``weekday[...]`` coefficients.

    Monday is the reference level (1.0); None when ``params`` has no weekday terms.

    Examples
    --------
    >>> fitted_profile({"weekday[sat]": np.log(0.5), "weekday[sun]": np.log(0.4)})
    [1.0, 1.0, 1.0, 1.0, 1.0, 0.5, 0.4]
    """
    names = [f"weekday[{d}]" for d in WEEKDAYS]
    if not any(n in params for n in names):
        return None
    return [round(float(np.exp(float(params[n]))), 12) if n in params else 1.0 for n in names]
