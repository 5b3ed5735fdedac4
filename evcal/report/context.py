"""What several report sections share: labels, colours, closures, assumed events, day weights.

Examples
--------
>>> from evcal.report.model_folder import read_model_folder      # doctest: +SKIP
>>> ctx = ReportContext(read_model_folder("models/garden"))      # doctest: +SKIP
>>> ctx.label("spring-weekend")                                  # doctest: +SKIP
'Spring holiday weekend'
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from evcal.report import palette as pal
from evcal.report.calendar_view import fold_weights
from evcal.report.model_folder import ModelFolder, lift_columns
from evcal.report.periods import period_days


class ReportContext:
    """One model's shared state: event labels and colours, closures, assumed lifts, day weights."""

    def __init__(self, folder: ModelFolder, weights: pd.DataFrame | None = None, cal_name: str | None = None):
        self.folder = folder
        self.model = folder.model
        self.freq = folder.freq
        self.calendar_name = str(cal_name or self.model.get("calendar_name") or "")
        self.labels: dict[str, str] = folder.labels()
        events_json = [e for e in self.model.get("events", []) or [] if isinstance(e, dict)]
        for item in events_json:
            name = str(item.get("name", ""))
            if name and name not in self.labels:
                self.labels[name] = str(item.get("label") or name)
        self.closures = {
            str(e.get("name")) for e in events_json if str(e.get("effect", "")).lower() == "zero"
        } | {str(n) for n in self.model.get("closure_events", []) or []}
        self.assumed: dict[str, str] = {}
        for e in events_json:
            text = assumption_text(e.get("effect"))
            if text:
                self.assumed[str(e.get("name"))] = text
        names = list(folder.lifts["event"])
        if folder.plan is not None:
            names += lift_columns(folder.plan)
        if weights is not None:
            names += [str(c) for c in weights.columns]
        self.colours = pal.event_colours(names)
        self.weights = weights

    def label(self, name: str) -> str:
        return self.labels.get(name, name)


@dataclass
class CalendarInput:
    """Day weights for the calendar view, folded to one column per event."""

    weights: pd.DataFrame | None = None
    name: str | None = None
    closures: frozenset[str] = frozenset()
    labels: dict[str, str] = field(default_factory=dict)


def assumption_text(effect: object) -> str:
    """How an event's lift was set without history, or "" when it was estimated.

    ``model.json`` may hold the calendar's effect as a mapping (``{"assume": "15%"}``,
    ``{"like": "spring-sale"}``) or as text (``"assume +20%"``, ``"like spring-sale"``).

    Examples
    --------
    >>> assumption_text({"assume": "15%"})
    'lift assumed at 15% in the calendar file'
    >>> assumption_text("like spring-sale")
    'lift borrowed from spring-sale'
    >>> assumption_text("estimate")
    ''
    """
    if isinstance(effect, Mapping):
        if "assume" in effect:
            return f"lift assumed at {effect['assume']} in the calendar file"
        if "like" in effect:
            return f"lift borrowed from {effect['like']}"
        return ""
    words = str(effect or "").strip().split(None, 1)
    if len(words) == 2 and words[0].lower() == "assume":
        return f"lift assumed at {words[1]} in the calendar file"
    if len(words) == 2 and words[0].lower() == "like":
        return f"lift borrowed from {words[1]}"
    return ""


def calendar_weights(calendar: Any, folder: ModelFolder) -> CalendarInput:
    """Day weights over the plan span from a calendar path, calendar object or frame."""
    if calendar is None:
        return CalendarInput()
    if isinstance(calendar, pd.DataFrame):
        return CalendarInput(fold_weights(calendar))
    start, end = view_span(folder)
    cal = calendar
    if isinstance(calendar, str | Path):
        from evcal.calendar import load_calendar  # the calendar step; imported only when used

        cal = load_calendar(calendar)
    try:
        weights = cal.day_weights(start, end, normalize="none")
    except TypeError:
        weights = cal.day_weights(start, end)
    owners = cal.event_columns() if hasattr(cal, "event_columns") else None
    closures = frozenset(str(e.name) for e in cal.closures()) if hasattr(cal, "closures") else frozenset()
    name = getattr(cal, "name", None)
    labels = {str(e.name): str(getattr(e, "label", "") or e.name) for e in getattr(cal, "events", [])}
    return CalendarInput(fold_weights(weights, owners=owners), str(name) if name else None, closures, labels)


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
