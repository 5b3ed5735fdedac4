"""The Easter test of ``discover`` in monthly data: one family of four windows, not a search over every date.

Its bar was the Chen-Liu critical value of the one-period search, which rises with the length of the
series (3.4 at 200 months, 4.0 from 450): a real Easter effect was missed on long histories, and on
fpp2::a10 once the data-chosen trading-day and leap-year columns came in (t -3.06 against 3.385).
Now: two-sided at discover's alpha (1 %), Bonferroni over the four windows (about 3.05), net of the
effects the outlier search found outside the Easter months.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

import evcal
from evcal.discovery.moving import WINDOWS, easter_cluster, easter_shares


def _invented(size: float, seed: int, first: str = "1984-01", last: str = "2023-12") -> pd.Series:
    """Invented monthly sales: trend, annual sine, 3 % noise, ``size`` over the 8 days before Easter."""
    idx = pd.period_range(first, last, freq="M")
    t = np.arange(len(idx))
    rng = np.random.default_rng(seed)
    log_sales = 7 + 0.002 * t + 0.15 * np.sin(2 * np.pi * t / 12) + np.log1p(size) * easter_shares(idx, 8)
    return pd.Series(np.exp(log_sales + rng.normal(0, 0.03, len(t))), index=idx)


def test_easter_found_on_a_long_monthly_history() -> None:
    # Invented: 40 years (480 months) with -2.5 % over the 8 days before Easter. On main the bar is
    # Chen-Liu's 4.0 and Easter is found in 3 of 6 seeds (|t| 3.5-3.7 missed); now in 6 of 6.
    found = [evcal.discover(_invented(-0.025, seed), errors="ols", index_effects=False).easter
             for seed in range(6)]
    assert all(e is not None for e in found), found
    sizes = [e.size_pct for e in found]
    assert all(-4.5 < s < -1.5 for s in sizes), sizes  # truth -2.5 % (the share of a window in a month)


def test_no_easter_in_noise_at_the_stated_rate() -> None:
    # Invented: 17 years of trend, month dummies and white noise, no Easter effect, 400 seeds. The test is
    # 1 % over the four windows (Bonferroni, so at most 1 %); allow sampling error (sd 0.5 % at 400).
    idx = pd.period_range("1991-07", periods=204, freq="M")
    t = np.arange(len(idx))
    months = pd.get_dummies(idx.month, drop_first=True).to_numpy(dtype=float)
    exog = np.column_stack([t, months])
    rng = np.random.default_rng(11)
    hits = sum(easter_cluster(rng.normal(0, 0.05, len(t)), exog, idx, alpha=0.01) is not None
               for _ in range(400))
    assert hits <= 8, hits  # measured: see docs/fit-disc.md
    assert len(WINDOWS) == 4
