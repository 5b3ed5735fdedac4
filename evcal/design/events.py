"""Event and closure blocks, built from the calendar's daily weights.

An event's column in a period is the *mean daily intensity* over the
period's open days: the calendar's per-day intensity (strength × shape factor)
summed over the days that fall in the period (the Bell–Hillmer share-of-window
aggregation, :func:`evcal.design.dayweights.aggregate_day_weights`) and
divided by the period's length. With that scaling one coefficient means the
same thing at every frequency: on the log scale, the lift on the event's
window days. A 10-day run-up to Easter that puts 3 days in March and 7 in
April puts 3/31 of a full-intensity month into March and 7/30 into April.

That linear form is exact for daily data, but for a period only partly
covered it treats the lift as additive in logs, while a lift multiplies each
window day: a period's mean multiplier is 1 + mean over its days of
(exp(theta w_d) - 1), for day intensity w_d and log-lift theta. Given theta
(``theta`` below, set by the fit after a first pass and saved with the model),
the column is log(that mean) / theta, so column x theta is the exact log-effect
and theta keeps its meaning "log-lift on the window days" at every frequency
(without it, a +60 % Easter window in monthly data reads as about +77 %).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import day_span, period_days
from evcal.design.curved import CurvedEvents
from evcal.design.dayweights import aggregate_day_weights


@dataclass
class EventColumns:
    """One column per event column of the calendar (``daily`` shapes give one per offset).

    Parameters
    ----------
    calendar : evcal.calendar.Calendar
        Source of the daily weights (the fitted calendar, or a newer plan calendar).
    names : list of str
        The event columns to build, as named by ``calendar.event_columns()``.
        Columns a calendar does not have (an event dropped from a newer file)
        come back as zeros, so a plan always has every fitted column.
    """

    calendar: Any
    names: list[str]
    theta: dict[str, float] = field(default_factory=dict)
    kind: str = "events"

    def theta_of(self, name: str) -> float:
        """Log-lift used to aggregate ``name`` (0 = the linear share of days)."""
        if name in self.theta:
            return float(self.theta[name])
        colmap = self.calendar.event_columns()
        if name not in colmap:
            return 0.0
        effect = self.calendar.event(colmap[name]).effect
        if effect.kind == "assume" and effect.assume is not None:
            return float(np.log1p(effect.assume))
        if effect.kind == "like" and effect.like:
            target = next((c for c, ev in colmap.items() if ev == effect.like), None)
            return float(self.theta.get(target, 0.0)) if target else 0.0
        return 0.0

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        if not self.names:
            return pd.DataFrame(index=periods)
        # closed days carry no lift and the mean is over the period's open days (the closure
        # itself enters as the open-share offset): CurvedEvents counts open days only
        curve = CurvedEvents(self.calendar, self.names, periods)
        out = {n: curve.column(n, np.array([self.theta_of(n)]))[0] for n in self.names}
        return pd.DataFrame(out, index=periods, columns=self.names)

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "names": list(self.names)}


@dataclass
class OpenShare:
    """Share of each period's days that are open (not inside an ``effect: zero`` window).

    Not a regressor: it enters the model as an offset (``log`` of it on the
    log scale), so a week with three closed days is not read as a dip in demand.
    """

    calendar: Any
    kind: str = "open_share"
    _cache: dict[str, pd.Series] = field(default_factory=dict, repr=False)

    def values(self, periods: pd.PeriodIndex) -> pd.Series:
        start, end = day_span(periods)
        closed = self.calendar.closed_days(start, end).astype(float).to_frame("closed")
        agg = aggregate_day_weights(closed, periods)["closed"].to_numpy(dtype=float)
        share = 1.0 - agg / period_days(periods)
        return pd.Series(np.clip(share, 0.0, 1.0), index=periods, name="open_share")
