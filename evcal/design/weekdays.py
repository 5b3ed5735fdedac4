"""The weight of each day inside a week, month or quarter: the series' weekday pattern, or flat.

A one-day event in weekly data moves the week by its day's share of the
week's sales, not by 1/7: a holiday on a commuter Thursday removes more of the
week than one on a Sunday. With a weekday profile ω (seven relative levels,
Monday..Sunday) a period's event column averages its days' intensities
weighted by ω, and the open share of a period with closed days is the share
of ω that is open (:mod:`evcal.design.curved`, :mod:`evcal.design.events`).
Without a profile every day weighs the same (the Bell–Hillmer share of window).

The profile comes from the calendar's ``weekday_profile:`` key (see
docs/calendar.md); ``evcal show`` of a daily model prints its fitted weekday
pattern in that form.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

__all__ = ["day_levels", "calendar_profile", "weekday_note", "profile_line"]


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


def weekday_note(calendar: Any, freq: str) -> str:
    """What weighs each day of a longer period: the note a fit keeps in ``model.json``."""
    if str(freq).upper().startswith("D"):
        return "daily data: each period is one day (no weekday weighting needed)"
    profile = calendar_profile(calendar)
    if profile is None:
        return ("flat: each day counts equally within its period (no weekday_profile in the calendar); "
                "if weekdays sell differently, an event that covers part of a period is read with a bias: "
                "give the calendar a weekday_profile (evcal show of a daily model prints one)")
    levels = ", ".join(f"{v:.3g}" for v in profile)
    return f"the calendar's weekday_profile (Monday..Sunday: {levels})"


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
    names = [f"weekday[{d.lower()}]" for d in ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")]
    if not any(n in params for n in names):
        return None
    return [round(float(np.exp(float(params[n]))), 12) if n in params else 1.0 for n in names]
