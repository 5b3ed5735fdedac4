"""What several report sections share: labels, colours, closures, assumed events, day weights.

Examples
--------
>>> ctx = ReportContext(read_model_folder("models/garden"))      # doctest: +SKIP
>>> ctx.label("spring-weekend")                                  # doctest: +SKIP
'Spring holiday weekend'
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pandas as pd

from evcal.report import palette as pal
from evcal.report.calendar_view import fold_weights
from evcal.report.event_kinds import event_roles
from evcal.report.formatting import period_days
from evcal.report.model_folder import DRIVER_PREFIX, ModelFolder, driver_columns, lift_columns


class ReportContext:
    """One model's shared state: event labels and colours, closures, assumed lifts, day weights.

    ``calendar`` (a calendar file, a loaded ``Calendar`` or a frame of day weights) draws the
    calendar view day by day, and may name events and closures the model does not know (a newer
    plan calendar).
    """

    def __init__(self, folder: ModelFolder, calendar: Any = None):
        self.folder = folder
        self.model = folder.model
        self.freq = folder.freq
        if isinstance(calendar, str | Path):
            from evcal.calendar import load_calendar  # the calendar step; imported only when used

            calendar = load_calendar(calendar)
        self.plan_calendar = None if isinstance(calendar, pd.DataFrame) else calendar
        self.weights, name, closures, labels = calendar_weights(calendar, folder)
        self.calendar_name = str(name or self.model["calendar_name"])
        events = {str(e["name"]): str(e["label"] or e["name"]) for e in self.model["events"]}
        # what each event is (weekday class, bridge day, dip), from the model's calendar and the plan's
        roles, readable = event_roles(folder.calendar, folder.lifts)
        if self.plan_calendar is not None:
            plan_roles, plan_readable = event_roles(self.plan_calendar)
            roles, readable = plan_roles | roles, plan_readable | readable
        self.roles: dict[str, str] = roles
        self.labels: dict[str, str] = labels | events | folder.labels() | readable
        self.closures = folder.closures() | closures
        self.assumed = folder.assumed()
        names = list(folder.lifts["event"])
        if folder.plan is not None:
            names += lift_columns(folder.plan)
            names += [f"{DRIVER_PREFIX}{d}" for d in driver_columns(folder.plan)]
        if self.weights is not None:
            names += [str(c) for c in self.weights.columns]
        self.colours = pal.event_colours(names)

    def label(self, name: str) -> str:
        return self.labels.get(name, name)


def calendar_weights(
    calendar: Any, folder: ModelFolder
) -> tuple[pd.DataFrame | None, str | None, set[str], dict[str, str]]:
    """Day weights over the view span (one column per event), the calendar's name, closures and labels."""
    if calendar is None or isinstance(calendar, pd.DataFrame):
        return None if calendar is None else fold_weights(calendar), None, set(), {}
    if isinstance(calendar, str | Path):
        from evcal.calendar import load_calendar  # the calendar step; imported only when used

        calendar = load_calendar(calendar)
    weights = calendar.day_weights(*view_span(folder), normalize="none")
    closures = {str(e.name) for e in calendar.closures()}
    labels = {str(e.name): str(e.label or e.name) for e in calendar.events}
    return fold_weights(weights, owners=calendar.event_columns()), calendar.name or None, closures, labels


def view_span(folder: ModelFolder) -> tuple[pd.Timestamp, pd.Timestamp]:
    """The days the calendar view covers: the plan's periods, else the year after the history."""
    if folder.plan is not None and not folder.plan.empty:
        return (
            period_days(folder.plan["date"].iloc[0], folder.freq)[0],
            period_days(folder.plan["date"].iloc[-1], folder.freq)[1],
        )
    year = (
        int(folder.fitted["date"].iloc[-1].year) + 1 if not folder.fitted.empty else pd.Timestamp.today().year
    )
    return pd.Timestamp(year, 1, 1), pd.Timestamp(year, 12, 31)
