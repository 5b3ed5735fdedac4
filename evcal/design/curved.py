"""Event columns as functions of the fitted log-lift θ: the exact share-of-window aggregation.

The linear column (:mod:`evcal.design.events`) treats a lift as additive in
logs over a partly covered period, while a lift multiplies each window day.
Given θ a period's column is ``log(1 + mean over its open days of (exp(θ w_d) − 1)) / θ``
for day intensities ``w_d``, the mean weighting each day by the series' weekday level ω_d
(``Σ ω_d (exp(θ w_d) − 1) / Σ ω_d``, :mod:`evcal.design.weekdays`; equal weights without a
profile): column × θ is the exact log-effect, θ keeps its
meaning "log-lift on the window days" at every frequency, and θ = 0 gives the
linear column. That depends only on the *distinct* day intensities of a period
and the weekday weight of the open days that carry each, so the columns of a thousand θ values (a
panel's series, or one series' passes) are one small matrix product per event.
This is the only place the aggregation with a lift is computed.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import day_span, period_days
from evcal.design.weekdays import calendar_profile, day_levels

__all__ = ["CurvedEvents"]


class CurvedEvents:
    """Event columns on ``periods`` as functions of θ, from the calendar's daily intensities.

    ``names`` are event columns as ``calendar.event_columns()`` names them.
    """

    def __init__(self, calendar: Any, names: list[str], periods: pd.PeriodIndex) -> None:
        self.periods = periods
        self.basis: dict[str, tuple[np.ndarray, np.ndarray]] = {}
        self.touched: dict[str, np.ndarray] = {}  # periods that hold some of the event's days
        #: whether the calendar weighs the weekdays (else flat, or a fit's trading-day levels do)
        self.profiled = calendar_profile(calendar) is not None
        colmap = calendar.event_columns()
        wanted = sorted({colmap[c] for c in names if c in colmap})
        if not wanted:
            return
        start, end = day_span(periods)
        daily = calendar.day_weights(start, end, normalize="none", events=wanted)
        codes = periods.get_indexer(daily.index.to_period(periods.freq))
        inside = codes >= 0
        omega = day_levels(calendar_profile(calendar), daily.index)
        closed = calendar.closed_days(start, end).reindex(daily.index, fill_value=False).to_numpy()
        # closed days carry no lift; the mean is over the open days, each weighted by its weekday level
        open_level = np.where(closed, 0.0, omega)
        days = np.zeros(len(periods))
        np.add.at(days, codes[inside], open_level[inside])
        if closed.any():
            daily = daily.mul(~closed, axis=0)
        # a wholly closed period is not fitted: any positive divisor keeps its (zero) column finite
        days = np.where(days > 0, days, np.maximum(period_days(periods), 1.0))
        for n in names:
            if n not in daily.columns:
                continue
            w = daily[n].to_numpy(dtype=float)
            nz = inside & (w != 0)
            vals, inv = np.unique(w[nz], return_inverse=True)
            counts = np.zeros((len(periods), len(vals)))
            np.add.at(counts, (codes[nz], inv), omega[nz])
            self.basis[n] = (vals, counts / days[:, None])
            self.touched[n] = np.flatnonzero(counts.any(axis=1))

    def floor(self, name: str) -> np.ndarray:
        """The lowest log-effect ``name`` can have on each period: ``log(1 − s)``, every event day removed.

        ``s`` is the weekday-weighted share of the period's open days that the event's
        window covers (0 where it covers none; −inf where it covers the whole period).
        However far its lift goes towards −100 %, a period cannot fall by more than
        the share of its sales that falls on those days.
        """
        if name not in self.basis:
            return np.zeros(len(self.periods))
        covered = np.clip(self.basis[name][1].sum(axis=1), 0.0, 1.0)
        with np.errstate(divide="ignore"):
            return np.log1p(-covered)

    def column(self, name: str, theta: np.ndarray, at: np.ndarray | None = None) -> np.ndarray:
        """Column ``name`` for each θ: shape (len(theta), periods); zeros if the calendar has none.

        ``at`` restricts the result to those period positions.
        """
        theta = np.asarray(theta, dtype=float)
        n_out = len(self.periods) if at is None else len(at)
        if name not in self.basis:
            return np.zeros((len(theta), n_out))
        vals, share = self.basis[name]
        if at is not None:
            share = share[at]
        # periods with none of the event's days are zero for every θ: compute the others only
        touched = np.flatnonzero(share.any(axis=1)) if at is not None else self.touched[name]
        share = share[touched]
        out = np.zeros((len(theta), n_out))
        sub = np.tile(share @ vals, (len(theta), 1))
        bent = np.abs(theta) > 1e-9
        if bent.any():
            t = theta[bent]
            mean = np.expm1(t[:, None] * vals[None, :]) @ share.T
            sub[bent] = np.log1p(np.clip(mean, -0.999999, None)) / t[:, None]
        out[:, touched] = sub
        return out
