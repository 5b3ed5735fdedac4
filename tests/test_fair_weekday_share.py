"""Issue 15, observation 8 (daily): the weekday-aware average share stored in the fit and used by the
plan's summary and the report's headline, not only by the backtest.

Every daily history here is invented for the test (named as such), with a known
weekday pattern. The average-share profile is common practice, no source.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from evcal.backtesting import weekday_share


def test_weekday_share_counts_a_closed_day_as_a_known_zero_in_its_month() -> None:
    # Invented: Sundays sell double, closed every Christmas Day (a calendar closure, no sales).
    # A December with its closed day is still a whole month: its share is about 1/12 of the
    # year, not 0 (the closed day used to make every December "not whole", so the backtest's
    # average share put nothing in December).
    idx = pd.period_range("2021-01-01", "2023-12-31", freq="D")
    closed = np.asarray((idx.month == 12) & (idx.day == 25))
    h = pd.Series(np.where(idx.day_of_week == 6, 2.0, 1.0), index=idx).where(~closed, 0.0)
    dec = pd.period_range("2024-12-01", "2024-12-31", freq="D")
    s = weekday_share(h, dec, closed, np.asarray(dec.day == 25))
    # December's mean share of its year over 2021-2023, computed directly (closed day: zero sales)
    months = h.groupby(h.index.asfreq("M")).sum()
    expected = (months / months.groupby(months.index.year).transform("sum"))[months.index.month == 12].mean()
    assert s.sum() == pytest.approx(expected, rel=1e-9)  # about 0.082: 30 open days of 364
    assert s[24] == 0.0
