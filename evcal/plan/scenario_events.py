"""The by-event table of ``plan --scenario``: what each event adds in each scenario, in the model's own
units before the spread to a target, and the spread on a row of its own.

Under a target every amount of a plan is scaled by its year's factor, and the factor differs between
scenarios (a dropped promotion leaves more volume to spread over the rest), so every event's scaled
units shift a little from the scaling alone. What a planner reads from this table ("what dropping the
promotion costs") is the model's answer, before the spread: each event's ``lift:`` column divided by
its period's factor, summed over the horizon. The rows that are not events:

* ``[base]``: the base (trend, season, persistent changes) before the spread;
* ``[outside drivers]``: what the drivers' planned values add, before the spread (a model with drivers);
* ``[spread to the target]``: the plan less the model's plan, ``Σ plan · (1 − 1/factor)`` (a target);
* ``[whole units]``: the whole-unit plan less the plan before the rounding (``--round``), as
  ``evcal explain`` has its "whole units" part.

So each ``units_before_spread:<name>`` column adds up to that scenario's total, and each
``difference_before_spread:<name>`` column to its total difference from the reference, exactly: the
plan is base plus lifts plus drivers in every period (:mod:`evcal.plan.build`), before and after the
spread. With ``--round`` the parts are taken from the plan before the rounding: the rounding apportions
each period's parts to its whole plan, so the whole-unit parts divided by the factor would move an event
or the base by a unit here and there (a moved event reading 13.78 units instead of 13.97, the base
differing between scenarios that share it); the rounding is its own row instead. Square brackets cannot
be in an event's name, so no event is named like these rows.

Examples
--------
>>> by_event(sc.plans).columns.tolist()  # doctest: +SKIP
['event', 'units_before_spread:now', 'units_before_spread:moved', 'difference_before_spread:moved']
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import day_span
from evcal.plan.horizon import period_years
from evcal.plan.spread import DRIVER_PREFIX

__all__ = ["BASE_ROW", "DIFF_PREFIX", "DRIVERS_ROW", "PART_ROWS", "SPREAD_ROW", "UNITS_PREFIX", "WHOLE_ROW",
           "by_event", "model_parts", "why_no_lift"]

#: the by-event table's columns: each scenario's units and each one's difference, before the spread
UNITS_PREFIX, DIFF_PREFIX = "units_before_spread:", "difference_before_spread:"
#: the columns of a by-event table written before the spread had its own row (amounts after it)
OLD_UNITS_PREFIX, OLD_DIFF_PREFIX = "units:", "difference:"
BASE_ROW, DRIVERS_ROW, SPREAD_ROW = "[base]", "[outside drivers]", "[spread to the target]"
#: the rounding to whole units (``--round``), named as ``evcal explain`` names that part
WHOLE_ROW = "[whole units]"
#: why a scenario's plan has no lift for an event another scenario plans (:func:`why_no_lift`)
NOT_IN_CALENDAR = "not in its calendar"
NOT_IN_HORIZON = "in its calendar, no occurrence in the horizon"
CLOSED = "in its calendar, no lift there: {} its days"
NO_LIFT = "in its calendar, no lift in the horizon"
#: the rows that are not events, and how the report names them
PART_ROWS = {BASE_ROW: "base (without the events)", DRIVERS_ROW: "outside drivers",
             SPREAD_ROW: "spread to the target", WHOLE_ROW: "whole units"}


def model_parts(plan: Any) -> dict[str, float]:
    """A plan's total split into its parts over the horizon: each event, the base and the drivers in the
    model's units before the spread, and the spread (each a key of :data:`PART_ROWS` or an event).

    Examples
    --------
    >>> from types import SimpleNamespace as P
    >>> periods = pd.period_range("2030-01", periods=2, freq="M")
    >>> t = pd.DataFrame({"base": [90.0, 110.0], "lift:sale": [10.0, 0.0], "plan": [100.0, 110.0]})
    >>> plan = P(table=t * 2, periods=periods, label="end", events=["sale"], factors={2030: 2.0})
    >>> parts = model_parts(plan)
    >>> parts
    {'sale': 10.0, '[base]': 200.0, '[outside drivers]': 0.0, '[spread to the target]': 210.0}
    >>> sum(parts.values()) == float((t["plan"] * 2).sum())
    True
    """
    t = plan.table
    years = period_years(plan.periods, plan.label)
    factor = np.array([(plan.factors or {}).get(int(y), 1.0) for y in years], dtype=float)

    def before(col: str) -> float:  # a column's sum over the horizon, each period unscaled
        return float((t[col].fillna(0.0).to_numpy(dtype=float) / factor).sum())

    parts = {ev: before(f"lift:{ev}") for ev in plan.events}
    parts[BASE_ROW] = before("base")
    parts[DRIVERS_ROW] = sum((before(c) for c in t.columns if str(c).startswith(DRIVER_PREFIX)), 0.0)
    values = t["plan"].to_numpy(dtype=float)
    parts[SPREAD_ROW] = float(values.sum() - (values / factor).sum())
    return parts


def by_event(plans: Mapping[str, Any], unrounded: Mapping[str, Any] | None = None) -> pd.DataFrame:
    """``event``, ``units_before_spread:<name>`` each (0 where a scenario has no such event),
    ``difference_before_spread:<name>`` each but the first; events first (first seen first), then
    ``[base]``, ``[outside drivers]`` (when a plan has drivers), ``[spread to the target]`` (when a
    plan has a target) and ``[whole units]`` (when ``unrounded`` is given and a plan is in whole units).

    ``unrounded``: each scenario's plan before the rounding to whole units (``plans`` holding the
    rounded ones); the parts are taken from it, and ``[whole units]`` is the rounded total less its total.

    Examples
    --------
    >>> from types import SimpleNamespace as P
    >>> periods = pd.period_range("2030-01", periods=2, freq="M")
    >>> def plan(base, lift, whole=False):
    ...     t = pd.DataFrame({"base": base, "lift:sale": lift})
    ...     return P(table=t.assign(plan=t.sum(axis=1)), periods=periods, label="end", events=["sale"],
    ...               factors={}, whole_units=whole)
    >>> now, moved = plan([90.4, 110.0], [10.4, 0.0]), plan([90.4, 110.0], [0.0, 10.4])
    >>> rounded = {"now": plan([91, 110], [10, 0], True), "moved": plan([90, 111], [0, 10], True)}
    >>> by_event(rounded, {"now": now, "moved": moved}).round(6).values.tolist()
    [['sale', 10.4, 10.4, 0.0], ['[base]', 200.4, 200.4, 0.0], ['[whole units]', 0.2, 0.2, 0.0]]
    """
    names = list(plans)
    before = plans if unrounded is None else unrounded
    parts = {n: model_parts(before[n]) for n in names}
    rows = list(dict.fromkeys(e for p in plans.values() for e in p.events)) + [BASE_ROW]
    if any(any(str(c).startswith(DRIVER_PREFIX) for c in p.table.columns) for p in plans.values()):
        rows.append(DRIVERS_ROW)
    if any(p.factors for p in plans.values()):
        rows.append(SPREAD_ROW)
    if unrounded is not None and any(getattr(p, "whole_units", False) for p in plans.values()):
        rows.append(WHOLE_ROW)  # the rounding: the whole-unit plan less the one it was rounded from
        for n in names:
            parts[n][WHOLE_ROW] = float(plans[n].table["plan"].sum() - before[n].table["plan"].sum())
    units = {n: np.array([parts[n].get(r, 0.0) for r in rows]) for n in names}
    cols = {UNITS_PREFIX + n: units[n] for n in names}
    cols |= {DIFF_PREFIX + n: units[n] - units[names[0]] for n in names[1:]}
    return pd.DataFrame({"event": rows, **cols})


def why_no_lift(plan: Any, event: str) -> str:
    """Why ``plan`` has no ``lift:`` column for ``event``, from its calendar and horizon.

    ``not in its calendar``; ``in its calendar, no occurrence in the horizon``; ``in its calendar, no lift
    there: NAME closes its days`` when every day of its occurrences in the horizon is closed
    (closed days carry no lift: :mod:`evcal.design.events`), naming the closures that cover them; else
    ``in its calendar, no lift in the horizon``. A plan built without its calendar: ``not in its calendar``.

    Examples
    --------
    >>> from types import SimpleNamespace as P
    >>> from evcal.calendar import load_calendar
    >>> cal = load_calendar('''
    ... name: invented
    ... events:
    ...   - {name: sale, when: {dates: [2030-03-04]}}
    ...   - {name: fair, when: {dates: [2031-06-01]}}
    ...   - {name: stocktake, when: {dates: [2030-03-04]}, effect: zero}
    ... ''')
    >>> plan = P(calendar=cal, periods=pd.period_range("2030-01", periods=12, freq="M"))
    >>> [why_no_lift(plan, e) for e in ("sale", "fair", "promo")]  # doctest: +NORMALIZE_WHITESPACE
    ['in its calendar, no lift there: stocktake closes its days',
     'in its calendar, no occurrence in the horizon', 'not in its calendar']
    """
    cal = getattr(plan, "calendar", None)
    names = [] if cal is None else [e.name for e in cal.events]
    if event not in names:
        return NO_LIFT if cal is not None and event in {iv.name for iv in cal.interventions} \
            else NOT_IN_CALENDAR
    first, last = day_span(plan.periods)
    days = cal.day_weights(first, last, normalize="none", events=[event]).ne(0).any(axis=1)
    if not days.any():
        return NOT_IN_HORIZON
    closed = cal.closed_days(first, last).reindex(days.index, fill_value=False)
    if (days & ~closed).any():
        return NO_LIFT

    def closes(closure: Any) -> bool:  # the days one closure closes, as the design closes them
        own = replace(cal, events=[closure]).closed_days(first, last).reindex(days.index, fill_value=False)
        return bool((days & own).any())

    # every day it touches is closed, so none carries its lift: name the closures that close them
    by = [c.name for c in cal.closures() if c.name != event and closes(c)]
    return CLOSED.format(f"{', '.join(by)} close{'s' if len(by) == 1 else ''}" if by else "closures close")
