"""Event and closure blocks, built from the calendar's daily weights.

An event's column in a period is the *mean daily intensity* (strength × shape
factor) over the period's open days, so one coefficient means the same thing at
every frequency: on the log scale, the lift on the event's window days. A
10-day run-up to Easter with 3 days in March and 7 in April puts 3/31 of a
full-intensity month into March and 7/30 into April. Given the fitted log-lift
θ the columns aggregate the daily lifts exactly (:mod:`evcal.design.curved`;
without it, a +60 % Easter window in monthly data reads as about +77 %).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import day_span
from evcal.design.curved import CurvedEvents
from evcal.design.dayweights import aggregate_day_weights
from evcal.design.weekdays import calendar_profile, day_levels


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

    def theta_source(self, name: str) -> tuple[str, float]:
        """Where the log-lift aggregating ``name`` comes from: ``(column of theta, value if it has none)``.

        The column is "" when the value is fixed (an assumed lift, or 0 = the linear share of days).
        """
        colmap = self.calendar.event_columns()
        if name in self.theta or name not in colmap:
            return name, 0.0
        effect = self.calendar.event(colmap[name]).effect
        if effect.kind == "assume" and effect.assume is not None:
            return "", float(np.log1p(effect.assume))
        if effect.kind == "like":
            return next((c for c, ev in colmap.items() if ev == effect.like), ""), 0.0
        return "", 0.0

    def theta_of(self, name: str) -> float:
        """Log-lift used to aggregate ``name`` (0 = the linear share of days)."""
        source, fixed = self.theta_source(name)
        return float(self.theta.get(source, fixed)) if source else fixed

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        # closed days carry no lift and the mean is over the period's open days (the closure
        # itself enters as the open-share offset): CurvedEvents counts open days only
        curve = CurvedEvents(self.calendar, self.names, periods)
        bent = curve.columns({n: np.array([self.theta_of(n)]) for n in self.names})
        return pd.DataFrame({n: v[0] for n, v in bent.items()}, index=periods, columns=self.names)


@dataclass
class OpenShare:
    """Share of each period's days that are open (not inside an ``effect: zero`` window).

    Not a regressor: it enters the model as an offset (``log`` of it on the
    log scale), so a week with three closed days is not read as a dip in demand.
    With a weekday profile (:mod:`evcal.design.weekdays`) each day counts by its
    weekday level: a closed Saturday of a shop that sells mostly at weekends
    removes more of the week than 1/7.
    """

    calendar: Any

    def values(self, periods: pd.PeriodIndex) -> pd.Series:
        closed = self.calendar.closed_days(*day_span(periods))
        omega = day_levels(calendar_profile(self.calendar), closed.index)
        levels = pd.DataFrame({"closed": closed.to_numpy(dtype=float) * omega, "all": omega},
                              index=closed.index)
        sums = aggregate_day_weights(levels, periods)
        with np.errstate(invalid="ignore", divide="ignore"):
            share = 1.0 - sums["closed"].to_numpy() / sums["all"].to_numpy()
        return pd.Series(np.clip(np.nan_to_num(share, nan=1.0), 0.0, 1.0), index=periods, name="open_share")
