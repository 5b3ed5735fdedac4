"""Trend block: a constant and a polynomial in calendar years."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from evcal.design.base import period_mid_years


@dataclass(frozen=True)
class Trend:
    """Constant plus ``order`` powers of time, time measured in years from ``origin``.

    Measuring time in years (not in periods) keeps the trend coefficient
    readable ("+3 % a year" on the log scale) and identical across frequencies.

    Parameters
    ----------
    origin : float
        Fractional year at which time is zero (the history's first period).
    order : int
        0 = constant only, 1 = linear (default), 2 = quadratic.
    constant : bool
        Include the constant (dropped for differenced errors, where it is not identified).

    Examples
    --------
    >>> import pandas as pd
    >>> t = Trend(origin=2020.0)
    >>> t.columns(pd.period_range("2020-01", periods=2, freq="M")).round(3).to_dict("list")
    {'const': [1.0, 1.0], 'trend': [0.041, 0.123]}
    """

    origin: float
    order: int = 1
    constant: bool = True

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        t = period_mid_years(periods) - self.origin
        cols: dict[str, np.ndarray] = {}
        if self.constant:
            cols["const"] = np.ones(len(periods))
        for k in range(1, self.order + 1):
            cols["trend" if k == 1 else f"trend^{k}"] = t**k
        return pd.DataFrame(cols, index=periods)
