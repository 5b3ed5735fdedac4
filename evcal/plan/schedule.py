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

import pandas as pd

from evcal.errors import PlanError
from evcal.model.identify import ColumnStatus
from evcal.spelling import option

NEW_EVENTS = ("error", "zero")
#: the plan's ``assumptions`` text for an event whose fitted lift is weakly identified (lifts.csv says why)
WEAK_NOTE = "lift weakly identified (identifiable: weak in lifts.csv; its note says why and what to do)"


@dataclass
class Schedule:
    """How every event column of the plan calendar is planned.

    Attributes
    ----------
    columns : list of str
        Event columns of the plan calendar (closures excluded: they act through the open share).
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
    status: dict[str, ColumnStatus] = field(default_factory=dict)
    like_map: dict[str, str] = field(default_factory=dict)
    assumed: dict[str, float] = field(default_factory=dict)
    notes: dict[str, str] = field(default_factory=dict)

    def plan_as(self, col: str, event: str, status: ColumnStatus, note: str = "") -> None:
        """Plan ``col`` of ``event`` with ``status``; ``note`` goes into the assumptions column."""
        self.status[col] = status
        if note:
            self.notes[event] = f"{event}: {note}"


def _zero() -> str:
    """The setting that plans new events with no lift: ``--new-events zero`` / ``new_events='zero'``."""
    return option("new_events", "zero")


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
    """Decide the lift of each event column of the plan calendar (the columns of ``X_events``).

    ``X_events`` holds the columns over the horizon (to know which events touch
    it); ``new_events`` says what to do with an event the model never saw and
    that has no assumed or borrowed lift: ``"error"`` or ``"zero"``.

    Raises
    ------
    PlanError
        One line per event that touches the horizon but has no lift to plan with.
    """
    if new_events not in NEW_EVENTS:
        raise PlanError(f"{option('new_events', new_events, quote=True)}: must be one of "
                        f"{', '.join(NEW_EVENTS)}")
    colmap = calendar.event_columns()
    cols = list(X_events.columns)
    cols_of: dict[str, list[str]] = {}
    for c in cols:
        cols_of.setdefault(colmap[c], []).append(c)
    event_touches = X_events.abs().gt(0).any().groupby(colmap).any()
    plan = Schedule(columns=cols)
    unseen: dict[str, str] = {}

    def known(c: str) -> bool:
        st = result.status.get(c)
        return st is not None and st.status == "fitted" and c in result.params.index

    def no_lift(c: str, ev: str, why: str, zero_status: str, zero_note: str) -> None:
        """An event with nothing to plan with: out of the horizon, planned at zero, or an error."""
        if not event_touches[ev]:
            plan.plan_as(c, ev, ColumnStatus("no_history", "not in the horizon"))
        elif new_events == "zero":
            plan.plan_as(c, ev, ColumnStatus("new_zero", zero_status), zero_note)
        else:
            unseen[ev] = why

    # first pass: everything but borrowed lifts
    for c in cols:
        ev = colmap[c]
        eff = calendar.event(ev).effect
        st = result.status.get(c)
        if eff.kind == "assume":
            plan.assumed[c] = float(eff.assume or 0.0)
            plan.plan_as(c, ev, ColumnStatus("assumed", f"lift assumed at {_pct(plan.assumed[c])}"),
                         f"assumed {_pct(plan.assumed[c])}")
        elif eff.kind == "like":
            continue
        elif known(c) or (st is not None and st.status in ("unidentifiable", "duplicate")):
            # an unidentifiable or duplicate effect lives in the season or in its twin's estimate;
            # a weakly identified lift is planned, and marked so (never silently)
            plan.plan_as(c, ev, st, WEAK_NOTE if known(c) and st.weak else "")
        elif st is not None and st.status == "like" and known(result.like_map.get(c, "")):
            plan.like_map[c] = result.like_map[c]
            src_event = result.event_info.get(plan.like_map[c], {}).get("event", plan.like_map[c])
            weak = getattr(result.status.get(plan.like_map[c]), "weak", False)
            plan.plan_as(c, ev, st, f"borrows the {'weakly identified ' if weak else ''}lift of {src_event}")
        elif st is not None and st.status == "assumed":
            plan.assumed[c] = float(result.assumed[c])
            plan.plan_as(c, ev, ColumnStatus("assumed", st.note),
                         f"assumed {_pct(plan.assumed[c])} (as fitted)")
        else:
            why = "is new in the plan calendar" if st is None else "has no occurrence in the fitted history"
            no_lift(c, ev, why, f"new event planned with no lift ({_zero()})",
                    f"new event, no lift ({_zero()})")

    # second pass: borrowed lifts follow whatever their source event got
    for c in cols:
        ev = colmap[c]
        eff = calendar.event(ev).effect
        if eff.kind != "like":
            continue
        src_event = eff.like or ""
        src = _target_column(c, cols_of.get(src_event, []))
        src_status = plan.status[src].status if src in plan.status else ""
        if src_status == "fitted" or (src_status == "like" and src in plan.like_map):
            plan.like_map[c] = plan.like_map.get(src, src)
            weak = "weakly identified " if getattr(result.status.get(plan.like_map[c]), "weak", False) else ""
            plan.plan_as(c, ev, ColumnStatus("like", f"borrows the lift of {src_event}"),
                         f"borrows the {weak}lift of {src_event}")
        elif src in plan.assumed:
            plan.assumed[c] = plan.assumed[src]
            plan.plan_as(c, ev, ColumnStatus("assumed", f"borrows the assumed lift of {src_event}"),
                         f"borrows the assumed lift of {src_event} ({_pct(plan.assumed[c])})")
        elif getattr(result.status.get(c), "status", "") == "unidentifiable":
            # its source could not be estimated from the history, so neither could it: its effect
            # lives in the season, as any unidentifiable event's does
            plan.plan_as(c, ev, result.status[c], "")
        else:
            no_lift(c, ev, f"borrows from {src_event}, which the model has no lift for",
                    f"{src_event} has no fitted lift to borrow",
                    f"{src_event} has no fitted lift to borrow; no lift ({_zero()})")

    if unseen:
        raise PlanError([
            f"event {ev} {why}, so the model has no lift for it; add `effect: {{assume: N%}}` or "
            f"`effect: {{like: other-event}}` to it in the calendar, or pass {_zero()} to "
            "plan it with no lift"
            for ev, why in unseen.items()
        ])
    return plan
