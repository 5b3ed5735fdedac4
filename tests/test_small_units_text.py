"""Small units in the terminal lines: a series counted in thousands must not read '0 units'.

Seen on real data (modeldata::Chicago, Addison station, ridership in thousands a day):
every event's units per occurrence printed 0, a driver "moves sales 0 units a period",
and a warmer-weather scenario's periods "+0". The series here is invented (a known
+20 % promotion on about 3 units a week).
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

import evcal
from evcal.model.summary import describe

CAL = """name: small
events:
  - {name: promo, when: {dates: [2021-03-01, 2022-02-28, 2023-02-27, 2021-09-06, 2022-09-05, 2023-09-04]},
     length: 7}
"""


def test_units_per_occurrence_of_a_small_series_keep_three_digits():
    rng = np.random.default_rng(3)
    idx = pd.date_range("2020-01-05", periods=4 * 52, freq="W-SUN")
    week = idx.isocalendar().week.to_numpy()
    mondays = pd.to_datetime(["2021-03-01", "2022-02-28", "2023-02-27",
                              "2021-09-06", "2022-09-05", "2023-09-04"])
    promo = np.isin(idx, mondays + pd.Timedelta(days=6))  # each promotion fills one week, Monday to Sunday
    noise = rng.normal(0, 0.03, len(idx))
    y = 3.0 * np.exp(0.2 * np.sin(2 * np.pi * week / 52) + np.log(1.2) * promo + noise)
    fit = evcal.fit(pd.DataFrame({"date": idx, "value": y}), CAL, errors="ols")
    line = next(ln for ln in describe(fit).splitlines() if ln.startswith("promo "))
    units = float(fit.lifts.set_index("event").loc["promo", "units_per_occurrence"])
    assert 0.3 < units < 0.9  # about a fifth of three units a week
    # the line shows it to three significant digits (before: "1" or "0")
    assert re.search(rf"\s{units:.3g}\s", line), line
