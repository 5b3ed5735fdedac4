"""The :class:`Calendar`: validated events, interventions and exclusions, and their dates."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import pandas as pd

from evcal.calendar import rules as R
from evcal.calendar.holidays_source import HolidaySource, suggest
from evcal.calendar.occurrences import (
    as_day,
    column_layout,
    coverage,
    day_number,
    expand,
    to_frame,
    weight_matrix,
)
from evcal.calendar.spec import EventSpec, ExclusionSpec, InterventionSpec
from evcal.errors import CalendarError


@dataclass(frozen=True)
class PublicHolidays:
    """The ``public_holidays`` block as loaded: its source and the events it gave."""

    source: HolidaySource
    name_years: tuple[int, ...]
    events: tuple[EventSpec, ...]


@dataclass(eq=False)
class Calendar:
    """A validated event calendar. Build it with :func:`evcal.calendar.load_calendar`.

    Attributes
    ----------
    name : str
        The calendar's ``name:``.
    source : str
        The file it was read from, or ``"<text>"``.
    events : list of EventSpec
        File events in file order, then one event per public holiday name.
    interventions : list of InterventionSpec
    exclusions : list of ExclusionSpec
    text : str
        The YAML text the calendar was read from.

    Examples
    --------
    >>> from evcal.calendar import load_calendar
    >>> cal = load_calendar("name: x\\nevents:\\n  - {name: xmas-eve, when: {fixed: '12-24'}}")
    >>> cal.day_weights("2024-12-23", "2024-12-25")["xmas-eve"].tolist()
    [0.0, 1.0, 0.0]
    """

    name: str
    source: str
    events: list[EventSpec]
    interventions: list[InterventionSpec] = field(default_factory=list)
    exclusions: list[ExclusionSpec] = field(default_factory=list)
    public_holidays: PublicHolidays | None = None
    #: relative sales level of each weekday, Monday..Sunday (``weekday_profile:``), or None (flat)
    weekday_profile: tuple[float, ...] | None = None
    #: outside drivers as (column, scale) pairs (``drivers:``); the fit reads them from the history
    drivers: tuple[tuple[str, str], ...] = ()
    text: str = field(default="", repr=False)  # the YAML as read, e.g. to keep with a model

    # ------------------------------------------------------------ look-up

    def event(self, name: str) -> EventSpec:
        """The event called ``name``; a :class:`CalendarError` (with near names) if none."""
        for ev in self.events:
            if ev.name == name:
                return ev
        near = suggest(name, [e.name for e in self.events])
        hint = (
            f"did you mean {', '.join(repr(n) for n in near)}?"
            if near
            else ("check the event names with `evcal calendar check`")
        )
        raise CalendarError(f"{self.source}: no event called '{name}'; {hint}")

    def _select(self, events: Sequence[str] | None) -> list[EventSpec]:
        if events is None:
            return list(self.events)
        wanted = list(events)
        problems = []
        for n in wanted:
            try:
                self.event(n)
            except CalendarError as err:
                problems += err.problems
        if problems:
            raise CalendarError(problems)
        keep = set(wanted)
        return [e for e in self.events if e.name in keep]

    def event_columns(self) -> dict[str, str]:
        """Day-weight column name -> event name (identity except for ``daily`` shapes)."""
        names, owners, _ = column_layout(self.events)
        return dict(zip(names, owners, strict=True))

    # ------------------------------------------------------------ dates

    @staticmethod
    def _range(start: object, end: object) -> tuple[pd.Timestamp, pd.Timestamp]:
        first = as_day(start, what="start")
        last = as_day(end, end=True, what="end")
        if last < first:
            raise CalendarError(
                f"end {last.date()} is before start {first.date()}; end must be on or after start"
            )
        return first, last

    def occurrences(self, start: object, end: object) -> pd.DataFrame:
        """Occurrences whose window touches [start, end]: ``event, start, end, strength``.

        ``start``/``end`` are the occurrence itself (inclusive), without its
        ``before``/``after`` window; sorted by start, then event. An int is a
        year (Jan 1 for ``start``, Dec 31 for ``end``).
        """
        first, last = self._range(start, end)
        return to_frame(self.events, expand(self.events, first, last))

    def day_weights(
        self,
        start: object,
        end: object,
        normalize: str = "window",
        events: Sequence[str] | None = None,
    ) -> pd.DataFrame:
        """Daily weights of every event over [start, end], one column per event.

        Parameters
        ----------
        start, end
            Inclusive; str, date, Timestamp or int year.
        normalize : {"window", "none"}
            ``"window"``: each occurrence's weights add up to its strength over
            its whole window (Bell–Hillmer share of window). ``"none"``:
            strength × shape factor per day.
        events
            Optional list of event names to restrict the columns to.

        Returns
        -------
        DataFrame
            Daily DatetimeIndex named ``date``; columns in ``events`` order
            (``daily`` shapes give ``name[+k]`` columns per day offset).
        """
        chosen = self._select(events)
        first, last = self._range(start, end)
        occ = expand(chosen, first, last)
        n_days = (last - first).days + 1
        grid, names, _ = weight_matrix(chosen, occ, day_number(first), n_days, normalize)
        index = pd.date_range(first, last, freq="D", name="date")
        return pd.DataFrame(grid, index=index, columns=pd.Index(names, dtype=object))

    def closed_days(self, start: object, end: object) -> pd.Series:
        """True on days inside the window of any ``effect: zero`` event (closures)."""
        first, last = self._range(start, end)
        closures = self.closures()
        n_days = (last - first).days + 1
        mask = coverage(closures, expand(closures, first, last), day_number(first), n_days).any(axis=1)
        index = pd.date_range(first, last, freq="D", name="date")
        return pd.Series(mask, index=index, name="closed")

    # ------------------------------------------------------------ summary

    def years_covered(self) -> tuple[int | None, int | None]:
        """First and last year named explicitly anywhere in the file.

        Explicit dates, year lists and ranges, ``moved``, interventions and
        exclusions count; rules that repeat every year without bounds do not.
        ``(None, None)`` when the file names no year at all.
        """
        years: list[int] = []
        for ev in self.events:
            if isinstance(ev.when, R.DatesRule):
                years += ev.when.years()
            years += [y for y in ev.years.bounds() if y is not None]
            years += list(ev.moved)
        for iv in self.interventions:
            years += [iv.start.year] + ([iv.end.year] if iv.end is not None else [])
        for ex in self.exclusions:
            years += [ex.start.year, ex.end.year]
        if not years:
            return None, None
        return min(years), max(years)

    def closures(self) -> list[EventSpec]:
        return [e for e in self.events if e.is_closure]

    def __repr__(self) -> str:
        return (
            f"Calendar(name={self.name!r}, source={self.source!r}, events={len(self.events)}, "
            f"interventions={len(self.interventions)}, exclusions={len(self.exclusions)})"
        )
