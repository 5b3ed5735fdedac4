"""Easter-like moving clusters in monthly and quarterly data.

At monthly resolution an effect tied to Easter falls in March in some years
and in April in others, so a pulse seen in March one year and in April the
next is not a fixed-date event and, found one period at a time, rarely hits
"most years" of any single rule. The test here is the regression one
(Bell & Hillmer 1983, "Modeling time series with calendar variation", JASA
78:526–534): the share of a ``w``-day window before Easter Sunday that falls
in each period, added to the model's own regressors, for ``w`` in
:data:`WINDOWS` (the lengths published regression practice tries; from
memory of the X-13ARIMA-SEATS ``easter[w]`` regressor). The window with the
largest ``|t|`` is taken; it is reported when ``|t|`` reaches the critical
value of a two-sided test at significance ``alpha`` (discover's, 1 % by
default) made over the :data:`WINDOWS` tried (Bonferroni: ``alpha / 4``; 3.07
at 200 months, 3.03 on a long series). That is one family of four tests, whatever the length of
the series; the Chen–Liu critical value of the one-period search is a bar for
the largest of about 3 n statistics (every type at every date) and rises with
``n`` (3.4 at 200 months, 4.0 from 450), so it would miss a real Easter effect
on a long history. The regressors are the model's, the level shifts found and
every one-period effect found outside the months an Easter window can touch
(the found effects inside them may be the Easter effect itself), so the test
is net of what the outlier search already explained, as Chen and Liu estimate
their effects jointly.

A calendar that already has an Easter event leaves nothing for the window
to explain (it is spanned by the model's regressors) and nothing is found.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np
import pandas as pd
from dateutil.easter import easter
from scipy import stats
from statsmodels.regression.linear_model import OLS  # not statsmodels.api: half a second to import

__all__ = ["EasterCluster", "WINDOWS", "easter_cluster", "easter_critical", "easter_months", "easter_shares"]

#: days before Easter Sunday tried as the window (1: Holy Saturday only)
WINDOWS = (1, 8, 10, 15)


@dataclass(frozen=True)
class EasterCluster:
    """An effect over the ``window`` days before Easter Sunday, on the model scale."""

    window: int
    effect: float  # the whole window inside one period
    t: float
    #: months (1-12) whose periods held part of the window in the history
    months: tuple[int, ...]
    #: the effect in % of the base (set once the base is known)
    size_pct: float = float("nan")


def easter_shares(periods: pd.PeriodIndex, window: int) -> np.ndarray:
    """Share of the ``window`` days before each year's Easter Sunday that falls in each period.

    Examples
    --------
    >>> idx = pd.period_range("2024-01", "2024-12", freq="M")   # Easter 2024: March 31
    >>> easter_shares(idx, 1)[2:4].tolist()
    [1.0, 0.0]
    >>> idx = pd.period_range("2016-01", "2016-12", freq="M")   # Easter 2016: March 27
    >>> float(easter_shares(idx, 8)[2])
    1.0
    """
    share = np.zeros(len(periods))
    position = {p: i for i, p in enumerate(periods)}
    for year in range(periods[0].start_time.year, periods[-1].end_time.year + 1):
        sunday = easter(year)
        for k in range(1, window + 1):
            i = position.get(pd.Period(sunday - dt.timedelta(days=k), freq=periods.freq))
            if i is not None:
                share[i] += 1.0 / window
    return share


def easter_critical(alpha: float, df: float) -> float:
    """Critical ``|t|`` of the Easter test: two-sided at ``alpha``, Bonferroni over the windows tried.

    Examples
    --------
    >>> round(easter_critical(0.01, 180), 2)
    3.07
    """
    return float(stats.t.ppf(1.0 - alpha / (2 * len(WINDOWS)), df))


def easter_months(periods: pd.PeriodIndex) -> np.ndarray:
    """Periods that hold part of the longest window in some year (the periods an Easter effect can move)."""
    return easter_shares(periods, max(WINDOWS)) > 0


def easter_cluster(y: pd.Series | np.ndarray, exog: pd.DataFrame | np.ndarray | None,
                   periods: pd.PeriodIndex, alpha: float = 0.01) -> EasterCluster | None:
    """The Easter window that explains most of ``y`` beyond ``exog``, if its ``|t|`` reaches ``cval``.

    Parameters
    ----------
    y : Series or array
        The series on the model scale (NaN where not in the fit).
    exog : DataFrame or array, optional
        The model's regressors (and the effects found outside the Easter
        months: level shifts, one-period effects); a constant is added.
    periods : PeriodIndex
        Monthly or quarterly periods of ``y``; any other frequency gives None
        (a daily or weekly Easter effect lands in its own periods and is
        found by the one-period search).
    alpha : float
        Significance of the test over the windows (:func:`easter_critical`).

    Returns
    -------
    EasterCluster or None
    """
    if not (periods.freqstr.startswith("M") or periods.freqstr.startswith("Q")):
        return None
    yv = np.asarray(y, dtype=float)
    n = len(yv)
    x = np.ones((n, 1)) if exog is None else np.asarray(exog, dtype=float).reshape(n, -1)
    rows = np.isfinite(yv) & np.isfinite(x).all(axis=1)
    if not (np.ptp(x[rows], axis=0) == 0).any():
        x = np.hstack([np.ones((n, 1)), x])
    # the fit's columns may be collinear (dropped there): keep an independent set, so the
    # regression below has a full-rank design
    q, r = np.linalg.qr(x[rows])
    x = x[:, np.abs(np.diag(r)) > 1e-10 * max(1.0, float(np.abs(r).max()))]
    rank = np.linalg.matrix_rank(x[rows])
    best: EasterCluster | None = None
    df = float("nan")
    for window in WINDOWS:
        share = easter_shares(periods, window)
        design = np.column_stack([x, share])[rows]
        # a regressor the model already spans (an Easter event in the calendar) adds no rank
        if np.linalg.matrix_rank(design) <= rank or rows.sum() <= rank + 2:
            continue
        res = OLS(yv[rows], design).fit()
        t = float(np.asarray(res.tvalues)[-1])
        if np.isfinite(t) and (best is None or abs(t) > abs(best.t)):
            months = tuple(sorted({int(p.start_time.month) for p, s in zip(periods, share, strict=True)
                                   if s > 0}))
            best = EasterCluster(window, float(np.asarray(res.params)[-1]), t, months)
            df = float(res.df_resid)
    return best if best is not None and abs(best.t) >= easter_critical(alpha, df) else None
