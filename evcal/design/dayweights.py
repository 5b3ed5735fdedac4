"""Aggregate daily event weights to the series' periods (the Bell–Hillmer share of window).

With ``normalize="window"`` day weights (:meth:`evcal.calendar.Calendar.day_weights`)
the sum over a period's days is the fraction of an occurrence's window that
falls in the period, times its strength.
"""

from __future__ import annotations

import numpy as np
import pandas as pd


def aggregate_day_weights(day_weights: pd.DataFrame, periods: pd.PeriodIndex) -> pd.DataFrame:
    """Sum daily weights into ``periods`` (any pandas period frequency).

    Parameters
    ----------
    day_weights : DataFrame
        One float column per regressor on every day (``Calendar.day_weights``).
    periods : PeriodIndex
        Every day of every period must be in ``day_weights``, so that no part of
        a window is silently dropped.

    Returns
    -------
    DataFrame
        Index ``periods``, the same columns: the sums of the day weights in each period.

    Examples
    --------
    >>> full = pd.DataFrame({"x": 0.0}, index=pd.date_range("2024-03-01", "2024-04-30"))
    >>> full.loc["2024-03-30":"2024-04-02", "x"] = 1.0
    >>> aggregate_day_weights(full, pd.period_range("2024-03", "2024-04", freq="M"))["x"].tolist()
    [2.0, 2.0]
    """
    values = day_weights.to_numpy(dtype=float)
    out = np.zeros((len(periods), values.shape[1]))
    if len(periods):
        first = periods.min().start_time.normalize()
        last = periods.max().end_time.normalize()
        index = day_weights.index
        if len(index) == 0 or index.min() > first or index.max() < last:
            have = f"{index.min().date()} to {index.max().date()}" if len(index) else "no days"
            raise ValueError(
                f"day weights cover {have} but the periods need {first.date()} to {last.date()}"
            )
        codes = periods.get_indexer(index.to_period(periods.freq))
        inside = codes >= 0
        # np.add.at: several days map to one period; unbuffered addition sums them all.
        np.add.at(out, codes[inside], values[inside])
    return pd.DataFrame(out, index=periods, columns=day_weights.columns)
