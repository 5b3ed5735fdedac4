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

Where two events' days fall in one period (a promotion's last days and its dip's first days in one
week) the period's log-effect is ``log(1 + U)``, ``U = mean over its open days of (exp(A_d) − 1)``,
``A_d = Σ_e θ_e w_ed`` the day's summed log-lift: the mean of the days' *combined* factors, not the
product of each event's period mean. :meth:`CurvedEvents.columns` splits it between the events by
each day's share of its log-lift, ``x_e = mean(w_ed · (exp(A_d) − 1) / A_d) · log(1 + U) / U``,
so ``Σ_e θ_e x_e = log(1 + U)`` exactly, with no division by a θ (both ratios are 1 at 0); an
event alone in a period gets the one-event column above, computed as before.
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
        #: the distinct day intensities of the periods that hold days of two or more of the events (one
        #: row per period and intensity vector, its events in ``names`` order), each row's period and
        #: its weekday-weighted share of that period's open days (:meth:`columns`)
        self.shared_days: tuple[list[str], np.ndarray, np.ndarray, np.ndarray] = (
            [],
            np.zeros((0, 0)),
            np.zeros(0, dtype=int),
            np.zeros(0),
        )
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
        self._shared_basis(daily, codes, inside, omega, days)

    def _shared_basis(
        self, daily: pd.DataFrame, codes: np.ndarray, inside: np.ndarray, omega: np.ndarray, days: np.ndarray
    ) -> None:
        """The distinct day intensities of the periods two or more events share (``self.shared_days``)."""
        names = list(self.basis)
        hits = np.zeros(len(self.periods), dtype=int)
        for n in names:
            hits[self.touched[n]] += 1
        shared = np.flatnonzero(hits >= 2)  # columns() finds those of the events it bends together
        if not len(shared):
            return
        W = daily[names].to_numpy(dtype=float)
        in_shared = np.zeros(len(self.periods), dtype=bool)
        in_shared[shared] = True
        pick = inside & in_shared[np.where(inside, codes, 0)] & (W != 0).any(axis=1)
        keys, inv = np.unique(np.column_stack([codes[pick], W[pick]]), axis=0, return_inverse=True)
        weight = np.zeros(len(keys))
        np.add.at(weight, inv.ravel(), omega[pick])
        period = keys[:, 0].astype(int)
        self.shared_days = (names, keys[:, 1:], period, weight / days[period])

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

    def columns(self, theta: dict[str, np.ndarray], at: np.ndarray | None = None) -> dict[str, np.ndarray]:
        """Columns of the events ``theta`` names, each for its own θ (m,): name -> (m, periods).

        The events are bent together: in a period two of them share (both with a lift, |θ| > 1e-9)
        each gets its part of the mean of the days' combined factors (module note), so the columns
        times their θ add up to the period's exact log-effect. Elsewhere each is :meth:`column`'s,
        value for value. ``at`` restricts the result to those period positions (each once).
        """
        out = {n: self.column(n, np.asarray(t, dtype=float), at) for n, t in theta.items()}
        names, W, period, weight = self.shared_days
        own = [j for j, n in enumerate(names) if n in theta]
        if len(own) < 2:
            return out
        # the shared periods of these events (in ``at`` when given), and their place in the output
        touch = np.zeros((len(own), len(self.periods)), dtype=bool)
        for i, j in enumerate(own):
            touch[i, self.touched[names[j]]] = True
        place = np.arange(len(self.periods)) if at is None else np.full(len(self.periods), -1)
        if at is not None:
            place[np.asarray(at)] = np.arange(len(at))
        periods = np.flatnonzero((touch.sum(axis=0) >= 2) & (place >= 0))
        if not len(periods):
            return out
        local = np.full(len(self.periods), -1)
        local[periods] = np.arange(len(periods))
        rows = np.flatnonzero(local[period] >= 0)
        share = np.zeros((len(rows), len(periods)))  # day-intensity row -> its period's share
        share[np.arange(len(rows)), local[period[rows]]] = weight[rows]
        w = W[np.ix_(rows, own)]  # (rows, events)
        th = np.stack([np.asarray(theta[names[j]], dtype=float) for j in own], axis=1)  # (m, events)
        bent = np.abs(th) > 1e-9  # as in column(): a smaller θ keeps the linear share
        A = np.where(bent, th, 0.0) @ w.T  # (m, rows): each day's summed log-lift
        grow = np.expm1(A)
        with np.errstate(invalid="ignore", divide="ignore"):
            per_log = np.where(A != 0, grow / np.where(A != 0, A, 1.0), 1.0)  # (exp(A) − 1) / A
            U = np.clip(grow @ share, -0.999999, None)
            per_mean = np.where(U != 0, np.log1p(U) / np.where(U != 0, U, 1.0), 1.0)  # log(1 + U) / U
        sub = touch[:, periods]
        joint = (bent.astype(int) @ sub.astype(int)) >= 2  # (m, periods): two lifts share the period
        for i, j in enumerate(own):
            x = ((per_log * w[:, i]) @ share) * per_mean
            use = joint & bent[:, i : i + 1] & sub[i]
            col = out[names[j]][:, place[periods]]
            out[names[j]][:, place[periods]] = np.where(use, x, col)
        return out
