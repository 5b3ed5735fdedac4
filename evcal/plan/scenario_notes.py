"""What each scenario's plan assumes, once per assumption: the assumed and borrowed lifts, the events
planned at zero, the date files that stop inside the horizon, the future changes at an assumed size,
the events left in the seasonal index and the plan's other notes.

A planner comparing "promotion moved" with "new promotion at an assumed +15 %" must see that the
+15 % is an assumption, and in which scenarios it holds. Each assumption is one line, written once
with the scenarios it holds in (``every scenario``, ``every scenario but moved``, ``only new-promo``):
the reference's own first, then those of the other scenarios in their order.

Examples
--------
>>> lines = assumption_lines(sc.plans)                       # doctest: +SKIP
>>> lines[0].text, lines[0].scenarios                        # doctest: +SKIP
('centenary-weekend: assumed +20%', 'every scenario but no-centenary')
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd

__all__ = ["ASSUMPTIONS", "NOTE_ROW", "Assumption", "assumption_lines", "held_in", "plan_assumptions",
           "summary_lines", "with_assumptions"]

#: the by-event table's text column: each row's assumptions, one ``text (scenarios)`` per line
ASSUMPTIONS = "assumptions"
#: the by-event table's row of a note about no event of the table (its text in ``assumptions``); an
#: event's name cannot hold square brackets, so no event is named like it
NOTE_ROW = "[note]"
#: how several lines of one row are joined in the ``assumptions`` cell
JOIN = " | "

#: how a plan's summary words an event the fit left in the seasonal index (evcal.plan.summary)
IN_SEASON = ("in the seasonal index, no lift of its own (always in the same period, so not separable from "
             "the season)")


@dataclass(frozen=True)
class Assumption:
    """One assumption or note: the event it is about (None: the whole plan), its text, where it holds.

    ``scenarios`` is the phrase naming the scenarios (:func:`held_in`); ``names`` the scenarios.
    """

    event: str | None
    text: str
    scenarios: str
    names: tuple[str, ...]

    @property
    def line(self) -> str:
        """``text (scenarios)``: how the summary, the tables and the report show it."""
        return f"{self.text} ({self.scenarios})"


def plan_assumptions(plan: Any) -> list[tuple[str | None, str]]:
    """One plan's assumptions and notes as ``(event or None, text)``, in the plan summary's order.

    ``plan.assumptions`` (assumed or borrowed lifts, events at zero under ``new_events="zero"``,
    future changes at an assumed size), ``plan.in_season`` and ``plan.notes`` (date files that stop
    inside the horizon, and the rest); a note that starts with an event's name is about that event.

    Examples
    --------
    >>> from types import SimpleNamespace as P
    >>> plan_assumptions(P(assumptions={"promo": "promo: assumed +15%"}, in_season=[], events=["promo"],
    ...                    notes=["the base includes the forecast of the ARIMA error"]))
    [('promo', 'promo: assumed +15%'), (None, 'the base includes the forecast of the ARIMA error')]
    """
    out: list[tuple[str | None, str]] = list(plan.assumptions.items())
    out += [(ev, f"{ev}: {IN_SEASON}") for ev in plan.in_season]
    events = sorted(plan.events, key=len, reverse=True)  # "sale-2" before "sale" when both could prefix
    for note in plan.notes:
        about = next((ev for ev in events if note.startswith(f"{ev}: ")), None)
        out.append((about, note))
    return out


def held_in(names: Sequence[str], holders: Sequence[str]) -> str:
    """The shortest true phrase for the scenarios in ``holders`` among ``names`` (all of them, in order).

    Examples
    --------
    >>> held_in(["now", "later", "none"], ["now", "later", "none"])
    'every scenario'
    >>> held_in(["now", "later", "none"], ["now", "later"])
    'every scenario but none'
    >>> held_in(["now", "later", "none"], ["later"])
    'only later'
    """
    missing = [n for n in names if n not in holders]
    if not missing:
        return "every scenario"
    if len(missing) < len(holders):
        return "every scenario but " + ", ".join(missing)
    return "only " + ", ".join(n for n in names if n in holders)


def assumption_lines(plans: Mapping[str, Any]) -> list[Assumption]:
    """Every scenario's assumptions, each once with the scenarios it holds in; the first plan's first.

    Two scenarios share an assumption when they state it in the same words (same event, same text).
    """
    names = list(plans)
    holders: dict[tuple[str | None, str], list[str]] = {}
    for name, plan in plans.items():
        for item in plan_assumptions(plan):
            holders.setdefault(item, [])
            if name not in holders[item]:
                holders[item].append(name)
    return [Assumption(event, text, held_in(names, who), tuple(who))
            for (event, text), who in holders.items()]


def summary_lines(plans: Mapping[str, Any]) -> list[str]:
    """The summary's block: a heading and one indented line per assumption (one line when none)."""
    items = assumption_lines(plans)
    if not items:
        return ["No scenario assumes or borrows a lift, and no plan has a note."]
    return ["What the plans assume (one line each, with the scenarios it holds in):",
            *(f"  {a.line}" for a in items)]


def with_assumptions(events: pd.DataFrame, plans: Mapping[str, Any]) -> pd.DataFrame:
    """The by-event table with its ``assumptions`` column (each row's lines, joined by `` | ``) and a
    ``[note]`` row for each line about no event of the table (its amounts left empty).

    Examples
    --------
    >>> from types import SimpleNamespace as P
    >>> a = P(assumptions={"promo": "promo: assumed +15%"}, in_season=[], events=["promo"], notes=[])
    >>> b = P(assumptions={}, in_season=[], events=[], notes=["a note"])
    >>> t = with_assumptions(pd.DataFrame({"event": ["promo"]}), {"a": a, "b": b})
    >>> t.to_dict("list")
    {'event': ['promo', '[note]'], 'assumptions': ['promo: assumed +15% (only a)', 'a note (only b)']}
    """
    items = assumption_lines(plans)
    rows = set(events["event"])
    cell = {ev: JOIN.join(a.line for a in items if a.event == ev) for ev in rows}
    out = events.assign(**{ASSUMPTIONS: [cell[ev] for ev in events["event"]]})
    notes = [a.line for a in items if a.event not in rows]
    if not notes:
        return out
    return pd.concat([out, pd.DataFrame({"event": NOTE_ROW, ASSUMPTIONS: notes})], ignore_index=True)
