"""Known future changes: interventions of the plan calendar that the fit has no coefficient for.

A planner knows of changes the history has not seen yet: a new store opens in
March, a range is cut, prices go up. Written in the plan calendar as an
intervention that starts after the history, with its size assumed::

    interventions:
      - {name: price-rise, type: level_shift, start: 2016-03-01, effect: {assume: -10%}}

the plan applies that change from its start, as an assumption, the same way it
applies an event's assumed lift: on the log scale the level is multiplied by
``(1 + a) ** x`` (``x`` the intervention's column: the share of the period after
a level shift's start, the ramp's progress, the temporary change's decay), in
the additive model the base gains ``a x`` of itself. It gets its own ``lift:``
column (units; base plus every ``lift:`` is the plan) and an assumption note;
like every assumed lift it carries no uncertainty of its own.

Every intervention of the plan calendar is accounted for, never silently:

* fitted from the history: planned as the fit says (persistent ones in the base,
  pulses and temporary changes over); an ``assume`` on it is not used (the
  history measured it), and a note says so;
* not fitted (it starts after the history, or the fit could not estimate it), with
  ``effect: {assume: N%}``: planned at that size, marked as an assumption;
* not fitted, without a size, and its column touches the horizon: a note saying it
  is not in the plan and how to add it;
* starts inside the history but the model was fitted without it (a newer plan
  calendar): a note asking for a refit with that calendar.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.interventions import InterventionTerm

#: how a note names each intervention type
TYPE_WORDS = {"level_shift": "level shift", "ramp": "ramp", "temporary": "temporary change", "pulse": "pulse"}


@dataclass
class FutureChanges:
    """The plan calendar's interventions the fit has no coefficient for, and what the plan does with them.

    Attributes
    ----------
    columns : dict
        Name -> the intervention's column over the horizon, for those planned at an assumed size.
    assumed : dict
        Name -> assumed change as a fraction (-0.1 = -10 %).
    texts : dict
        Name -> the plan's ``assumptions`` text for it.
    notes : list of str
        Lines for the plan's notes: interventions not in the plan (and how to add them), assumptions
        not used.
    handled : set of str
        Names the plan takes out of the fitted design (it has no coefficient for them).
    """

    columns: dict[str, np.ndarray] = field(default_factory=dict)
    assumed: dict[str, float] = field(default_factory=dict)
    texts: dict[str, str] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    handled: set[str] = field(default_factory=set)


def history_last_day(result: Any) -> pd.Timestamp | None:
    """The last day of the fitted history's last period (None when the model does not say: a panel group)."""
    end = getattr(result, "history_end", None)
    freq = getattr(result, "freq", None)
    if end is None or freq is None:
        return None
    return pd.Period(end, freq=freq).end_time.normalize()


def _fitted(result: Any, name: str) -> bool:
    st = result.status.get(name)
    return st is not None and st.status == "fitted" and name in result.params.index


def _pct(a: float) -> str:
    return f"{a * 100:+.4g}%"


def future_changes(
    result: Any, cal: Any, periods: pd.PeriodIndex, last_day: pd.Timestamp | None = None
) -> FutureChanges:
    """Sort the plan calendar's interventions into fitted, planned at an assumed size, and noted.

    ``last_day`` is the history's last day; None counts every intervention the fit has no
    coefficient for as not seen by the history (a panel's design group, whose series end apart).
    """
    out = FutureChanges()
    in_fit = {d["name"] for d in result.spec.interventions}
    for iv in getattr(cal, "interventions", []):
        assume = iv.effect.kind == "assume"
        start = f"{iv.start:%Y-%m-%d}"
        if _fitted(result, iv.name):
            if assume:
                size = _pct(iv.effect.assume or 0.0)
                out.notes.append(
                    f"intervention {iv.name}: effect {{assume: {size}}} is not used: "
                    "it starts inside the history, so the fit estimated it (its lift "
                    "and interval are in lifts.csv)"
                )
            continue
        after = last_day is None or iv.start > last_day
        if not after and iv.name not in in_fit:
            out.notes.append(
                f"intervention {iv.name} starts inside the history ({start}) but the model was "
                "fitted without it, so it is not in the plan; fit again with this calendar"
            )
            continue
        column = InterventionTerm.from_spec(iv).column(periods)
        out.handled.add(iv.name)
        if not np.any(column != 0):
            continue  # over before the horizon, or starts after it: nothing to plan here
        where = "starts after the history" if after else "could not be estimated from the history"
        if assume:
            a = float(iv.effect.assume or 0.0)
            out.columns[iv.name] = column
            out.assumed[iv.name] = a
            out.texts[iv.name] = f"{iv.name}: assumed {TYPE_WORDS[iv.type]} {_pct(a)} from {start} ({where})"
        else:
            out.notes.append(
                f"intervention {iv.name} {where} ({start}) and has no assumed size, so it is "
                "not in the plan; add `effect: {assume: N%}` to it in the calendar to plan it "
                "(e.g. {assume: -10%})"
            )
    return out
