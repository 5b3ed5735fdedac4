"""What each event of a calendar is, in words a reader follows: weekday classes, bridge days, dips.

The calendar keeps these as structure (an event split ``by_weekday`` becomes one event per class with
``split_of`` and ``on_weekdays``; a bridge rule names its target; a dip period points at its event with
``dip_of``), so the report reads them from there, never from the events' names.

Examples
--------
>>> weekday_span((5, 6)), weekday_span((0, 4)), weekday_span((1, 2, 3)), weekday_span((3,))
('Sat–Sun', 'Mon, Fri', 'Tue–Thu', 'Thu')
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

import pandas as pd

from evcal.calendar.schema import PROFILE_DAYS as DAY_NAMES  # the weekdays' short names, Monday first


def weekday_span(days: Iterable[int]) -> str:
    """Weekdays (Monday = 0) as short names, runs of three or more days as a range, runs of two as a pair."""
    ordered = sorted(set(days))
    runs: list[list[int]] = []
    for d in ordered:
        if runs and d == runs[-1][-1] + 1:
            runs[-1].append(d)
        else:
            runs.append([d])
    if len(runs) == 1 and len(runs[0]) >= 2:  # one run of days: a range ("Sat–Sun", "Mon–Fri")
        return f"{DAY_NAMES[runs[0][0]]}–{DAY_NAMES[runs[0][-1]]}"
    parts = [
        f"{DAY_NAMES[r[0]]}–{DAY_NAMES[r[-1]]}" if len(r) >= 3 else ", ".join(DAY_NAMES[d] for d in r)
        for r in runs
    ]
    return ", ".join(parts)


def event_roles(calendar: Any, lifts: pd.DataFrame | None = None) -> tuple[dict[str, str], dict[str, str]]:
    """Event -> what it is (``weekday class of xmas: Sat–Sun``, ``bridge day of xmas``, ``dip after promo``)
    and event -> a readable label for the weekday classes (``Christmas on Sat–Sun``).

    ``lifts`` (a lifts table with ``dip_of``) names the dips of a model whose calendar is not at hand.
    """
    roles: dict[str, str] = {}
    labels: dict[str, str] = {}
    for ev in getattr(calendar, "events", None) or []:
        name = str(ev.name)
        if getattr(ev, "split_of", None) and getattr(ev, "on_weekdays", None) is not None:
            cls = ev.weekday_class
            # the class's label is its entry's label with the class after it ("Christmas (weekend)")
            own = str(getattr(ev, "label", "") or name)
            parent_label = own.removesuffix(f" ({cls})") or ev.split_of
            days = weekday_span(ev.on_weekdays)
            roles[name] = f"weekday class of {ev.split_of}: {cls} ({days})"
            labels[name] = f"{parent_label} on {days}"
        elif getattr(ev, "dip_of", None) is not None:
            roles[name] = f"dip {ev.dip_side} {ev.dip_of.name} ({ev.length} days)"
        elif getattr(ev, "rule", "") == "bridge":
            target = str(getattr(ev.when, "target", ""))
            what = "the public holidays" if target == "public_holidays" else target
            roles[name] = f"bridge day of {what}"
    if lifts is not None and "dip_of" in lifts.columns:
        for event, dip_of in zip(lifts["event"], lifts["dip_of"].fillna(""), strict=True):
            if str(dip_of) and event not in roles:
                roles[str(event)] = f"dip of {dip_of}"
    return roles, labels
