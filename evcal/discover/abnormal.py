"""Years whose residuals depart strongly from the other years.

For each calendar year with at least half its periods in the fit, two
summaries of the model's residuals (on the model scale, e.g. log):

* ``level``: the mean residual (a year sitting above or below the model);
* ``spread``: the mean absolute deviation of the residuals from that year's
  own mean (a year that is erratic, whatever its level).

Each summary is compared across years by the **modified z-score** of
Iglewicz & Hoaglin (1993, *How to Detect and Handle Outliers*, ASQC):
``M = 0.6745 (x - median) / MAD``, with their threshold ``|M| > 3.5``. Median
and MAD are not pulled by the abnormal year itself, which is why a mean and
standard deviation are not used. At least four years are needed.

A year flagged on ``level`` suggests either an exclusion or a ``pulse``
intervention over the year; a year flagged on ``spread`` only suggests an
exclusion (a level term cannot absorb erratic periods).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

__all__ = ["AbnormalYear", "abnormal_years", "modified_z", "Z_THRESHOLD", "MIN_YEARS"]

#: Iglewicz & Hoaglin (1993) recommend flagging |M| > 3.5
Z_THRESHOLD = 3.5
MIN_YEARS = 4


@dataclass(frozen=True)
class AbnormalYear:
    """One flagged year: which summary departs, its value and modified z."""

    year: int
    kind: str  # "level" or "spread"
    value: float
    z: float
    start: pd.Timestamp
    end: pd.Timestamp


def modified_z(x: pd.Series) -> pd.Series:
    """Iglewicz–Hoaglin modified z-scores; 0 where the MAD is 0.

    Examples
    --------
    >>> modified_z(pd.Series([1.0, 2.0, 3.0, 4.0, 100.0])).round(2).tolist()
    [-1.35, -0.67, 0.0, 0.67, 65.43]
    """
    med = float(np.median(x))
    mad = float(np.median(np.abs(x - med)))
    if mad <= 0:
        return pd.Series(0.0, index=x.index)
    return 0.6745 * (x - med) / mad


def abnormal_years(
    residuals: pd.Series,
    *,
    threshold: float = Z_THRESHOLD,
    min_share: float = 0.5,
) -> list[AbnormalYear]:
    """Flag years whose residual level or spread departs from the other years.

    Parameters
    ----------
    residuals : Series
        Model-scale residuals on a PeriodIndex; NaN for periods not in the fit.
    threshold : float
        Flag ``|modified z| > threshold`` (default 3.5, Iglewicz & Hoaglin).
    min_share : float
        A year counts when at least this share of its periods are in the fit.

    Returns
    -------
    list of AbnormalYear
        Sorted by year; a year can appear twice (level and spread).
    """
    if not isinstance(residuals.index, pd.PeriodIndex):
        raise TypeError("residuals need a PeriodIndex")
    periods = residuals.index
    years = periods.start_time.year
    frame = pd.DataFrame({"r": residuals.to_numpy(dtype=float), "year": years})
    per_year = frame.groupby("year")["r"]
    expected = pd.Series(periods.start_time.year).value_counts()
    # a year's full length: the most common count among the years present
    full = int(expected.max()) if len(expected) else 0
    counts = per_year.count()
    ok = counts[counts >= min_share * full].index
    if len(ok) < MIN_YEARS:
        return []
    level = per_year.mean().loc[ok]
    own_mean = per_year.transform("mean")
    spread = frame.assign(a=(frame["r"] - own_mean).abs()).groupby("year")["a"].mean().loc[ok]
    found: list[AbnormalYear] = []
    for kind, values in (("level", level), ("spread", spread)):
        z = modified_z(values)
        for year, zz in z.items():
            if abs(zz) > threshold and (kind == "level" or zz > 0):
                y = int(year)
                in_year = periods[years == y]
                found.append(AbnormalYear(
                    year=y, kind=kind, value=float(values[year]), z=float(zz),
                    start=in_year[0].start_time.normalize(),
                    end=in_year[-1].end_time.normalize(),
                ))
    found.sort(key=lambda a: (a.year, a.kind))
    return found
