"""Event and closure blocks, built from the calendar's daily weights.

An event's column in a period is the *mean daily intensity* over the
period's days: the calendar's per-day intensity (strength × shape factor)
summed over the days that fall in the period (the Bell–Hillmer share-of-window
aggregation, :func:`evcal.design.dayweights.aggregate_day_weights`) and
divided by the period's length. With that scaling one coefficient means the
same thing at every frequency: on the log scale, the lift on the event's
window days. A 10-day run-up to Easter that puts 3 days in March and 7 in
April puts 3/31 of a full-intensity month into March and 7/30 into April.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import day_span, period_days
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
    kind: str = "events"

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        if not self.names:
            return pd.DataFrame(index=periods)
        start, end = day_span(periods)
        colmap = self.calendar.event_columns()
        wanted_events = sorted({colmap[c] for c in self.names if c in colmap})
        if wanted_events:
            daily = self.calendar.day_weights(start, end, normalize="none", events=wanted_events)
            agg = aggregate_day_weights(daily, periods)
        else:
            agg = pd.DataFrame(index=periods)
        days = period_days(periods)
        out = pd.DataFrame(0.0, index=periods, columns=self.names)
        for name in self.names:
            if name in agg.columns:
                out[name] = agg[name].to_numpy(dtype=float) / days
        return out

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
