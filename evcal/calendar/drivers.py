"""The calendar's ``drivers:`` key: each outside driver's name and scale, and the names it may not take.

A driver is a numeric column of the history (:mod:`evcal.design.drivers` builds
its design column); here the key is read with one line per problem, and the
names of the calendar's events and interventions are listed once for both
name checks (the file's ``drivers:`` and the command line's ``--driver``).
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from evcal.calendar.value_parsers import show

__all__ = ["DRIVER_KEY", "DRIVER_SCALES", "driver_name_problems", "read_drivers", "taken_names"]

#: ``drivers:``: each outside driver (a numeric column of the history) and the scale it enters on
DRIVER_SCALES = ("level", "log")
DRIVER_EXAMPLE = "drivers: {price: {scale: log}, temperature: {scale: level}}"
DRIVER_KEY = "drivers"
#: a key path of the file and what is wrong there
Located = tuple[tuple[str, ...], str]


def read_drivers(value: Any) -> tuple[list[tuple[str, str]], list[Located]]:
    """``drivers:`` as (name, scale) pairs, and its problems as (key path, message), one per driver.

    Examples
    --------
    >>> read_drivers({"price": {"scale": "log"}, "temperature": None})
    ([('price', 'log'), ('temperature', 'level')], [])
    >>> read_drivers({"price": "log"})[1][0][1][:40]
    "'log' is not a mapping; write each drive"
    """
    if value is None:
        return [], []
    if not isinstance(value, dict):
        return [], [((DRIVER_KEY,), f"{show(value)} is not a mapping of driver names; write e.g. "
                                    f"{DRIVER_EXAMPLE}")]
    out, problems = [], []
    for name, entry in value.items():
        where = (DRIVER_KEY, str(name))
        if not isinstance(name, str) or not name.strip():
            problems.append((where, f"{show(name)} is not a column name; name a column of the history"))
            continue
        entry = {} if entry is None else entry
        if not isinstance(entry, dict):
            problems.append((where, f"{show(entry)} is not a mapping; write each driver as a mapping, "
                                    f"e.g. {DRIVER_EXAMPLE}"))
            continue
        unknown = [str(k) for k in entry if k != "scale"]
        scale = str(entry.get("scale", "level")).strip().lower()
        if unknown:
            problems.append((where + (unknown[0],),
                             f"unknown key {unknown[0]!r}; a driver takes only scale (log or level)"))
        elif scale not in DRIVER_SCALES:
            problems.append((where + ("scale",),
                             f"{show(entry.get('scale'))} is not a scale; write scale: log (enters "
                             "log(value): an elasticity) or scale: level (the value as it is)"))
        else:
            out.append((name.strip(), scale))
    return out, problems


def taken_names(events: Iterable[Any], interventions: Iterable[Any], source: str) -> dict[str, str]:
    """Each event and intervention name of a calendar, and what it is (with ``source``'s line): no driver's.

    The one list both checks read: the calendar's ``drivers:`` key when the file is
    loaded (:func:`driver_name_problems`) and every driver of a design, from the
    command line too (:func:`evcal.design.drivers.check_driver_names`).

    Examples
    --------
    >>> from types import SimpleNamespace as NS
    >>> taken = taken_names([NS(name="promo", line=5)], [NS(name="relaunch", line=None)], "cal.yaml")
    >>> taken["promo"], taken["relaunch"]
    ('an event of the calendar (cal.yaml, line 5)', 'an intervention of the calendar (cal.yaml)')
    """

    def where(item: Any) -> str:
        return f"{source}, line {item.line}" if getattr(item, "line", None) else source

    return {**{e.name: f"an event of the calendar ({where(e)})" for e in events},
            **{iv.name: f"an intervention of the calendar ({where(iv)})" for iv in interventions}}


def driver_name_problems(drivers: list[tuple[str, str]], taken: dict[str, str]) -> list[Located]:
    """A driver of ``drivers:`` named like an event or intervention (``taken``: :func:`taken_names`)."""
    return [((DRIVER_KEY, name), f"{name!r} is already the name of {taken[name]}; a driver needs a name of "
                                 "its own (rename the history's column and the driver)")
            for name, _ in drivers if name in taken]
