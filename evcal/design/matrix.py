"""Assemble the blocks into one design: regressors, roles and the open-share offset.

:class:`DesignSpec` is the design's *settings* (plain data, saved in
``model.json``); :func:`build_design` turns settings plus a calendar into the
columns for any periods, past or future, with the same code.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any

import pandas as pd

from evcal.design.base import Block
from evcal.design.events import EventColumns, OpenShare
from evcal.design.interventions import Interventions, InterventionTerm
from evcal.design.seasonal import AnnualFourier, SeasonalDummies, TradingDays, WeekdayDummies, base_freq
from evcal.design.trend import Trend


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

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> DesignSpec:
        return cls(**d)

    def intervention_terms(self) -> tuple[InterventionTerm, ...]:
        return tuple(InterventionTerm.from_dict(t) for t in self.interventions)

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
        return blocks


@dataclass
class Design:
    """Regressors for a set of periods, with each column's role."""

    X: pd.DataFrame
    open_share: pd.Series
    roles: dict[str, str]  # column -> "trend" | "seasonal" | "event" | "intervention"


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
    blocks: list[tuple[str, Block]] = [
        ("trend", Trend(spec.trend_origin, spec.trend_order, spec.constant)),
        *[("seasonal", block) for block in spec.seasonal_blocks()],
        ("event", EventColumns(calendar, list(spec.event_columns), dict(spec.event_theta))),
        ("intervention", Interventions(spec.intervention_terms())),
    ]
    parts = [(role, block.columns(periods)) for role, block in blocks]
    roles = {c: role for role, frame in parts for c in frame.columns}
    X = pd.concat([frame for _, frame in parts], axis=1).astype(float)
    return Design(X=X, open_share=OpenShare(calendar).values(periods), roles=roles)
