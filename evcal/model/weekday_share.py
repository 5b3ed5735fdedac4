"""The plain average-share profile a plan is compared with, and its weekday-aware form for daily data.

For weekly, monthly and quarterly data the profile is each position's mean
share of its year (:func:`evcal.model.inputs.average_share_profile`). For daily
data a day-of-year share puts last year's Saturday on this year's Friday, so a
plan beats it (and departs from it most on Sundays) on weekdays alone: a straw
man. The daily profile is weekday-aware instead ("day of week within month"):
each month's mean share of its year, spread over the month's days by that
month's day-of-week pattern in the history. Common practice, no source.

The fit stores the weekday-aware profile in ``model.json`` under
``weekday_share`` (:func:`weekday_share_profile`); the backtest, the plan's
summary and the report's headline spread it with :func:`spread_weekday_share`.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.design.seasonal import base_freq
from evcal.model.inputs import average_share_profile

#: What the average-share profile is, by the history's base frequency (printed with the backtest
#: table, in the plan's summary and in the report).
AVERAGE_SHARE_KIND = {
    "D": "average share, weekday-aware: each month's mean share of its year over the past full years, "
    "spread over the month's days by that month's day-of-week pattern in the history "
    "(day of week within month)",
    "W": "average share: each week's (by its number in the year) mean share of its year over the past "
    "full years",
    "M": "average share: each month's mean share of its year over the past full years",
    "Q": "average share: each quarter's mean share of its year over the past full years",
}
#: The daily profile of model folders fitted before ``weekday_share`` was stored.
DAY_OF_YEAR_KIND = (
    "average share by day of year (this model was fitted before the weekday-aware profile "
    "was stored; fit it again to compare by day of week within month)"
)


def average_share_kind(freq: str) -> str:
    """The one-line description of the average-share profile for a history of frequency ``freq``."""
    return AVERAGE_SHARE_KIND.get(base_freq(freq), AVERAGE_SHARE_KIND["M"])


def average_share_basis(freq: str, weekday_share: dict[str, Any] | None) -> str:
    """Which average-share profile a plan of frequency ``freq`` is compared with (one line).

    Daily: weekday-aware when the model stores ``weekday_share``, else (a
    folder fitted before it was stored) by day of year, with what to do about it.
    """
    if base_freq(freq) == "D" and not weekday_share:
        return DAY_OF_YEAR_KIND
    return average_share_kind(freq)


def average_share_phrase(freq: str, weekday_share: dict[str, Any] | None) -> str:
    """The profile as a short noun phrase for a sentence ("an average-share profile", daily: which one)."""
    if base_freq(freq) != "D":
        return "an average-share profile"
    if weekday_share:
        return "a weekday-aware average-share profile (day of week within month)"
    return (
        "an average-share profile by day of year (the model was fitted before the weekday-aware one was "
        "stored: fit it again to compare by day of week)"
    )


def weekday_share_profile(history: pd.Series, closed: np.ndarray | None = None) -> dict[str, Any]:
    """What the weekday-aware average share needs: month shares and 12 x 7 weekday factors.

    Parameters
    ----------
    history : Series
        Daily sales (daily PeriodIndex); NaN where not known (gaps, exclusions).
    closed : array of bool, optional
        Days known to be closed (a calendar closure). They count as zero sales
        in the month totals (a December with a closed Christmas Day is still a
        whole month) and are left out of the weekday ratios.

    Returns
    -------
    dict
        ``month``: month (1-12) -> its mean share of the year over the history's
        full years (months seen whole in no full year are left out);
        ``weekday``: 12 lists (January first) of 7 factors (Monday first), each
        the mean ratio of that weekday's sales to its month's mean open day in
        that month of the history years; 1.0 where the history has none. Empty
        when the history is not daily or no month share can be computed.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> idx = pd.period_range("2021-01-01", "2022-12-31", freq="D")
    >>> h = pd.Series(np.where(idx.day_of_week == 6, 2.0, 1.0), index=idx)  # invented: Sundays sell double
    >>> prof = weekday_share_profile(h)
    >>> [round(f, 3) for f in prof["weekday"][0]]   # January: a Sunday twice a weekday
    [0.861, 0.861, 0.861, 0.861, 0.861, 0.861, 1.722]
    """
    if len(history) == 0 or base_freq(history.index.freqstr) != "D":
        return {}
    v = history.to_numpy(dtype=float).copy()
    shut = np.zeros(len(v), dtype=bool) if closed is None else np.asarray(closed, dtype=bool)
    idx = history.index
    ym = idx.asfreq("M")
    # month totals: a closed day is a known zero; a month is whole when every day is known
    totals = pd.DataFrame({"v": np.where(shut, 0.0, v), "ym": ym}).groupby("ym")["v"].agg(["sum", "count"])
    whole = totals["count"].to_numpy() == totals.index.days_in_month
    monthly = pd.Series(np.where(whole, totals["sum"].to_numpy(), np.nan), index=totals.index)
    if monthly.empty:
        return {}
    month_share = average_share_profile(
        monthly.reindex(pd.period_range(monthly.index[0], monthly.index[-1], freq="M"))
    )
    if month_share.empty:
        return {}
    # weekday ratios over open days only
    frame = pd.DataFrame(
        {"v": np.where(shut, np.nan, v), "ym": ym, "month": idx.month, "dow": idx.day_of_week}
    )
    ratio = frame["v"] / frame.groupby("ym")["v"].transform("mean")
    factor = ratio.groupby([frame["month"], frame["dow"]]).mean()
    grid = np.ones((12, 7))
    for (m, d), f in factor.items():
        if np.isfinite(f) and f >= 0:
            grid[int(m) - 1, int(d)] = float(f)
    return {"month": {int(k): float(s) for k, s in month_share.items()}, "weekday": grid.round(10).tolist()}


def spread_weekday_share(
    days: pd.PeriodIndex, profile: dict[str, Any], closed_days: np.ndarray | None = None
) -> np.ndarray:
    """Each day's weekday-aware average share of its year, from :func:`weekday_share_profile`.

    A day gets its month's share times its weekday factor, normalised over the
    month's open days of ``days`` (whole months give shares that add up to the
    month's share). Closed days get zero.

    Returns
    -------
    ndarray
        One share per day; 0 where the profile gives no month share.
    """
    out = np.zeros(len(days))
    if not profile:
        return out
    grid = np.asarray(profile["weekday"], dtype=float)
    month_share = {int(k): float(v) for k, v in profile["month"].items()}
    w = grid[np.asarray(days.month) - 1, np.asarray(days.day_of_week)]
    if closed_days is not None:
        w = np.where(np.asarray(closed_days, dtype=bool), 0.0, w)
    months = days.asfreq("M")
    for ym in months.unique():
        m = np.asarray(months == ym)
        total_w = w[m].sum()
        if total_w > 0:
            out[m] = month_share.get(ym.month, 0.0) * w[m] / total_w
    return out


def weekday_share(
    history: pd.Series,
    days: pd.PeriodIndex,
    closed_history: np.ndarray | None = None,
    closed_days: np.ndarray | None = None,
) -> np.ndarray:
    """Each day of ``days``' weekday-aware average share of its year, from the daily ``history``.

    :func:`spread_weekday_share` of :func:`weekday_share_profile` (see both).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> idx = pd.period_range("2021-01-01", "2022-12-31", freq="D")
    >>> h = pd.Series(np.where(idx.day_of_week == 6, 2.0, 1.0), index=idx)  # invented: Sundays sell double
    >>> jan = pd.period_range("2023-01-01", "2023-01-31", freq="D")
    >>> s = weekday_share(h, jan)
    >>> round(float(s[0] / s[1]), 6), round(float(s.sum()), 4)   # 1 January 2023 is a Sunday
    (2.0, 0.0863)
    """
    return spread_weekday_share(days, weekday_share_profile(history, closed_history), closed_days)
