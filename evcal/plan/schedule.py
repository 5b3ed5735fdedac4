"""Which lift each event in the plan calendar gets, and which of them are assumptions.

The plan calendar may be newer than the fitted one (next year's events
added). An event the model fitted keeps its coefficient. An event with
``effect: {assume: x}`` gets that lift; ``{like: other}`` borrows the other
event's lift (and its uncertainty). An event the model never saw and that
says neither is an error, unless the user asks for such events to be planned
with no lift (``--new-events zero``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import PlanError
from evcal.model.identify import ColumnStatus

NEW_EVENTS = ("error", "zero")


@dataclass
class Schedule:
    """How every event column of the plan calendar is planned.

    Attributes
    ----------
    columns : list of str
        Event columns of the plan calendar (closures excluded: they act through the open share).
    event_of : dict
        Column -> event name.
    status : dict
        Column -> :class:`ColumnStatus` in the vocabulary of the fit
        (``fitted``, ``like``, ``assumed``; anything else plans no lift).
    like_map : dict
        Borrowing column -> fitted column whose coefficient it uses.
    assumed : dict
        Column -> assumed lift as a fraction (0.2 = +20 %).
    notes : dict
        Event -> assumption text shown in the plan's ``assumptions`` column.
    """

    columns: list[str]
    event_of: dict[str, str]
    status: dict[str, ColumnStatus]
    like_map: dict[str, str]
    assumed: dict[str, float]
    notes: dict[str, str] = field(default_factory=dict)


def _pct(a: float) -> str:
    return f"{a * 100:+.4g}%"


def _target_column(col: str, source_cols: list[str]) -> str:
    """The column of the borrowed event matching ``col`` (same day offset for ``daily`` shapes)."""
    if "[" in col:
        suffix = col[col.index("["):]
        for c in source_cols:
            if c.endswith(suffix):
                return c
    return source_cols[0] if source_cols else ""


def resolve_schedule(result: Any, calendar: Any, X_events: pd.DataFrame,
                     new_events: str = "error") -> Schedule:
    """Decide each plan-calendar event column's lift.

    Parameters
    ----------
    result : FitResult
        The fitted model (its ``status``, ``params``, ``like_map``, ``assumed``).
    calendar : Calendar
        The plan calendar.
    X_events : DataFrame
        The plan calendar's event columns over the horizon (to know which events touch it).
    new_events : {"error", "zero"}
        What to do with an event the model never saw and that has no assumed or borrowed lift.

    Raises
    ------
    PlanError
        One line per event that touches the horizon but has no lift to plan with.
    """
    if new_events not in NEW_EVENTS:
        raise PlanError(f"--new-events {new_events!r}: must be one of {', '.join(NEW_EVENTS)}")
    colmap = calendar.event_columns()
    cols = [c for c, ev in colmap.items() if calendar.event(ev).effect.kind != "zero"]
    cols_of: dict[str, list[str]] = {}
    for c in cols:
        cols_of.setdefault(colmap[c], []).append(c)
    touches = {c: bool(np.any(np.abs(X_events[c].to_numpy()) > 0)) if c in X_events.columns else False
               for c in cols}
    event_touches = {ev: any(touches[c] for c in cs) for ev, cs in cols_of.items()}

    status: dict[str, ColumnStatus] = {}
    like_map: dict[str, str] = {}
    assumed: dict[str, float] = {}
    notes: dict[str, str] = {}
    unseen: dict[str, str] = {}

    def known(c: str) -> bool:
        st = result.status.get(c)
        return st is not None and st.status == "fitted" and c in result.params.index

    # first pass: everything but borrowed lifts
    for c in cols:
        ev = colmap[c]
        eff = calendar.event(ev).effect
        if eff.kind == "assume":
            assumed[c] = float(eff.assume or 0.0)
            status[c] = ColumnStatus("assumed", f"lift assumed at {_pct(assumed[c])}")
            notes[ev] = f"{ev}: assumed {_pct(assumed[c])}"
        elif eff.kind == "like":
            continue
        elif known(c):
            status[c] = result.status[c]
        else:
            st = result.status.get(c)
            if st is not None and st.status in ("unidentifiable", "duplicate"):
                # the model saw it but its effect lives in the season or in its twin's estimate
                status[c] = st
            elif st is not None and st.status == "like" and known(result.like_map.get(c, "")):
                like_map[c] = result.like_map[c]
                status[c] = st
                src_event = result.event_info.get(like_map[c], {}).get("event", like_map[c])
                notes[ev] = f"{ev}: borrows the lift of {src_event}"
            elif st is not None and st.status == "assumed":
                assumed[c] = float(result.assumed[c])
                status[c] = ColumnStatus("assumed", st.note)
                notes[ev] = f"{ev}: assumed {_pct(assumed[c])} (as fitted)"
            elif not event_touches[ev]:
                status[c] = ColumnStatus("no_history", "not in the horizon")
            elif new_events == "zero":
                status[c] = ColumnStatus("new_zero", "new event planned with no lift (--new-events zero)")
                notes[ev] = f"{ev}: new event, no lift (--new-events zero)"
            else:
                why = "is new in the plan calendar" if st is None else \
                    "has no occurrence in the fitted history"
                unseen[ev] = why

    # second pass: borrowed lifts follow whatever their source event got
    for c in cols:
        ev = colmap[c]
        eff = calendar.event(ev).effect
        if eff.kind != "like":
            continue
        src_event = eff.like or ""
        src = _target_column(c, cols_of.get(src_event, []))
        src_status = status.get(src)
        if src_status is not None and src_status.status == "fitted":
            like_map[c] = src
            status[c] = ColumnStatus("like", f"borrows the lift of {src_event}")
            notes[ev] = f"{ev}: borrows the lift of {src_event}"
        elif src_status is not None and src_status.status == "like" and src in like_map:
            like_map[c] = like_map[src]
            status[c] = ColumnStatus("like", f"borrows the lift of {src_event}")
            notes[ev] = f"{ev}: borrows the lift of {src_event}"
        elif src in assumed:
            assumed[c] = assumed[src]
            status[c] = ColumnStatus("assumed", f"borrows the assumed lift of {src_event}")
            notes[ev] = f"{ev}: borrows the assumed lift of {src_event} ({_pct(assumed[c])})"
        elif not event_touches[ev]:
            status[c] = ColumnStatus("no_history", "not in the horizon")
        elif new_events == "zero":
            status[c] = ColumnStatus("new_zero", f"{src_event} has no fitted lift to borrow")
            notes[ev] = f"{ev}: {src_event} has no fitted lift to borrow; no lift (--new-events zero)"
        else:
            unseen[ev] = f"borrows from {src_event}, which the model has no lift for"

    if unseen:
        raise PlanError([
            f"event {ev} {why}, so the model has no lift for it; add `effect: {{assume: N%}}` or "
            f"`effect: {{like: other-event}}` to it in the calendar, or pass --new-events zero to "
            "plan it with no lift"
            for ev, why in unseen.items()
        ])
    return Schedule(columns=cols, event_of={c: colmap[c] for c in cols}, status=status,
                    like_map=like_map, assumed=assumed, notes=notes)
