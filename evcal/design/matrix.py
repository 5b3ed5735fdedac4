"""Assemble the blocks into one design: regressors, roles and the open-share offset.

:class:`DesignSpec` is the design's *settings* (plain data, saved in
``model.json``); :func:`build_design` turns settings plus a calendar into the
columns for any periods, past or future, with the same code.
"""

from __future__ import annotations

import re
from dataclasses import asdict, dataclass, field, replace
from typing import Any

import pandas as pd

from evcal.design.base import Block
from evcal.design.drivers import Drivers, DriverTerm, check_driver_names
from evcal.design.events import EventColumns, OpenShare
from evcal.design.interventions import Interventions, InterventionTerm
from evcal.design.seasonal import (
    AnnualFourier,
    LeapYear,
    SeasonalDummies,
    SeasonDrift,
    TradingDays,
    WeekdayDummies,
    base_freq,
)
from evcal.design.trend import Trend
from evcal.design.weekdays import weighted


@dataclass
class DesignSpec:
    """Everything needed to rebuild the regressors (JSON-able, saved in ``model.json``)."""

    freq: str  # pandas period frequency of the series ("D", "W-SUN", "M", "Q-DEC")
    trend_origin: float  # fractional year where trend time is zero
    trend_order: int = 1  # polynomial order of the trend (1 = linear)
    constant: bool = True  # False for differenced errors
    seasonal: str = "dummies"  # "dummies" (one per period of the year) or "fourier"
    fourier_order: int = 10  # harmonics when seasonal == "fourier" (and for daily data)
    trading_days: bool = False  # weekday-composition columns (monthly/quarterly data only)
    event_columns: list[str] = field(default_factory=list)  # as the calendar names them
    interventions: list[dict[str, Any]] = field(default_factory=list)  # InterventionTerm.to_dict()s
    # fitted log-lift per event column, for the exact aggregation of daily lifts (evcal.design.curved)
    event_theta: dict[str, float] = field(default_factory=dict)
    leap_year: bool = False  # the leap-year column (monthly/quarterly data only)
    # run-up days chosen for events whose calendar says `before: auto` (event name -> days)
    event_windows: dict[str, int] = field(default_factory=dict)
    # what the data chose and why (evcal.model.choose): one record per setting left open
    choices: list[dict[str, Any]] = field(default_factory=list)
    # the weekday weights of the event columns and the open share (evcal.design.weekdays.weights_record):
    # {"source": "calendar" | "trading_days" | "flat", "levels": [Monday..Sunday]}; {} for daily data
    weekday_weights: dict[str, Any] = field(default_factory=dict)
    # a season that drifts (evcal.design.seasonal.SeasonDrift): the year its lines start from; None: fixed
    season_drift_origin: float | None = None
    # outside drivers (evcal.design.drivers.DriverTerm.to_dict()): name, scale, centre and known values
    drivers: list[dict[str, Any]] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        # settings at their old values are left out, as folders written before they existed have them
        olds = (("leap_year", False), ("event_windows", {}), ("choices", []), ("weekday_weights", {}),
                ("season_drift_origin", None), ("drivers", []))
        for key, old in olds:
            if d[key] == old:
                del d[key]
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> DesignSpec:
        return cls(**d)

    def calendar(self, calendar: Any) -> Any:
        """``calendar`` with the run-up windows this design chose and the weekday weights its fit used
        (itself when it chose none)."""
        return weighted(with_windows(calendar, self.event_windows), self.weekday_weights)

    def intervention_terms(self) -> tuple[InterventionTerm, ...]:
        return tuple(InterventionTerm.from_dict(t) for t in self.interventions)

    def driver_terms(self) -> tuple[DriverTerm, ...]:
        return tuple(DriverTerm.from_dict(d, self.freq) for d in self.drivers)

    def annual_block(self) -> AnnualFourier | SeasonalDummies:
        """The annual cycle's block: Fourier terms for daily data or when asked, else period dummies."""
        if base_freq(self.freq) == "D" or self.seasonal == "fourier":
            return AnnualFourier(self.fourier_order)
        return SeasonalDummies(self.freq)

    def seasonal_blocks(self) -> list[Block]:
        b = base_freq(self.freq)
        blocks: list[Block] = [WeekdayDummies(), self.annual_block()] if b == "D" else [self.annual_block()]
        if self.trading_days and b in ("M", "Q"):
            blocks.append(TradingDays())
        if self.leap_year and b in ("M", "Q"):
            blocks.append(LeapYear())
        if self.season_drift_origin is not None and isinstance(self.annual_block(), SeasonalDummies):
            blocks.append(SeasonDrift(self.freq, float(self.season_drift_origin)))
        return blocks


@dataclass
class Design:
    """Regressors for a set of periods, with each column's role."""

    X: pd.DataFrame
    open_share: pd.Series
    roles: dict[str, str]  # column -> "trend" | "seasonal" | "event" | "intervention" | "driver"


def build_design(spec: DesignSpec, calendar: Any, periods: pd.PeriodIndex) -> Design:
    """Build the design for ``periods`` from settings and a calendar.

    Examples
    --------
    >>> import pandas as pd
    >>> from evcal.calendar import load_calendar
    >>> cal = load_calendar("name: x\\nevents:\\n  - {name: e, when: {fixed: '03-10'}}\\n")
    >>> spec = DesignSpec(freq="M", trend_origin=2024.0, event_columns=["e"])
    >>> d = build_design(spec, cal, pd.period_range("2024-01", periods=4, freq="M"))
    >>> round(float(d.X.loc[pd.Period("2024-03", "M"), "e"]), 4)  # 1 day of 31
    0.0323
    """
    calendar = spec.calendar(calendar)
    drivers = Drivers(spec.driver_terms())
    blocks: list[tuple[str, Block]] = [
        ("trend", Trend(spec.trend_origin, spec.trend_order, spec.constant)),
        *[("seasonal", block) for block in spec.seasonal_blocks()],
        ("event", EventColumns(calendar, list(spec.event_columns), dict(spec.event_theta))),
        ("intervention", Interventions(spec.intervention_terms())),
        ("driver", drivers),
    ]
    parts = [(role, block.columns(periods)) for role, block in blocks]
    roles = {c: role for role, frame in parts for c in frame.columns}
    if drivers.terms:  # a driver named like another term would share its column
        check_driver_names(drivers, {c: r for r, f in parts[:-1] for c in f.columns}, calendar)
    X = pd.concat([frame for _, frame in parts], axis=1).astype(float)
    return Design(X=X, open_share=OpenShare(calendar).values(periods), roles=roles)


def with_windows(calendar: Any, windows: dict[str, int]) -> Any:
    """``calendar`` with the ``before`` days of the named events set (events with ``before: auto``).

    A new calendar (the given one is not changed); the same one when no named
    event is left open. Its text says the chosen days in place of ``auto``, so a
    calendar loaded again from it (a model folder's ``calendar_text``, a
    per-series unit) has the same windows.

    Examples
    --------
    >>> from evcal.calendar import load_calendar
    >>> cal = load_calendar("name: x\\nevents:\\n  - {name: easter, when: {easter: 0}, before: auto}\\n")
    >>> chosen = with_windows(cal, {"easter": 10})
    >>> chosen.event("easter").before, load_calendar(chosen.text).event("easter").before
    (10, 10)
    """
    open_events = {ev.name for ev in calendar.events if getattr(ev, "before_auto", False)}
    windows = {k: int(v) for k, v in windows.items() if k in open_events}
    if not windows:
        return calendar
    events = [replace(ev, before=windows[ev.name], before_auto=False) if ev.name in windows else ev
              for ev in calendar.events]
    return replace(calendar, events=events, text=_text_with_windows(calendar, windows))


_AUTO_RUN_UP = re.compile(r"(\bbefore\s*:\s*)([\"']?)auto\2", re.IGNORECASE)


def _text_with_windows(calendar: Any, windows: dict[str, int]) -> str:
    """The calendar's YAML with ``before: auto`` of each named event replaced by its days.

    The first ``before: auto`` at or after an event's line (outside comments)
    is its own: the key belongs to the event's mapping and ``auto`` is valid
    nowhere else.
    """
    lines = calendar.text.splitlines(keepends=True)
    for ev in calendar.events:
        if ev.name not in windows or not ev.line:
            continue
        for i in range(ev.line - 1, len(lines)):
            code, hash_, comment = lines[i].partition("#")
            found = _AUTO_RUN_UP.search(code)
            if found is None:
                continue
            days = windows[ev.name]
            new = code[:found.start()] + f"{found.group(1)}{days}" + code[found.end():]
            if not new.strip().endswith(("}", ",", "]")) and not hash_:
                new = new.rstrip("\n") + "  # before: auto, chosen by the fit (AICc)\n"
            lines[i] = new + hash_ + comment
            break
    return "".join(lines)
