"""The settings a fit may leave open for the data to choose, and their stand-ins while nothing is chosen.

:mod:`evcal.model.choose` makes the choice; the design and the model inputs only
need what was chosen (:class:`Chosen`) or the stand-ins (:func:`given`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from evcal.design.seasonal import base_freq
from evcal.model.options import AUTO, FitOptions

__all__ = ["Chosen", "STAND_IN_FOURIER", "auto_events", "given", "open_settings"]

#: the Fourier order while the other settings are chosen, and when nothing is chosen (the old default)
STAND_IN_FOURIER = 10


@dataclass(frozen=True)
class Chosen:
    """The concrete settings of a design, and the record of how the open ones were chosen."""

    fourier_order: int
    trading_days: bool
    leap_year: bool
    event_windows: dict[str, int] = field(default_factory=dict)
    choices: list[dict[str, Any]] = field(default_factory=list)
    season_drift: bool = False  # the seasonal dummies times the years (evcal.design.seasonal.SeasonDrift)


def auto_events(calendar: Any) -> list[str]:
    """Names of the calendar's events whose run-up the fit chooses (``before: auto``)."""
    return [ev.name for ev in calendar.events if getattr(ev, "before_auto", False)]


def open_settings(options: FitOptions, freq: str, seasonal: str) -> list[str]:
    """The options left open that apply to this frequency.

    Trading days and leap year: monthly and quarterly; a drifting season: monthly and quarterly
    seasonal dummies; Fourier pairs: daily, or as asked.
    """
    b = base_freq(freq)
    out = []
    if b in ("M", "Q"):
        out += [s for s in ("trading_days", "leap_year") if getattr(options, s) == AUTO]
        if seasonal == "dummies" and options.season_drift == AUTO:
            out.append("season_drift")
    if options.fourier_order == AUTO and (b == "D" or seasonal == "fourier"):
        out.append("fourier_order")
    return out


def given(options: FitOptions) -> Chosen:
    """The settings as given, with stand-ins for the open ones (10 Fourier pairs; the rest off).

    Used where nothing is chosen: a setting that does not apply to the
    frequency, or a design built before the data are known.
    """
    return Chosen(
        fourier_order=STAND_IN_FOURIER if options.fourier_order == AUTO else int(options.fourier_order),
        trading_days=options.trading_days is True,
        leap_year=options.leap_year is True,
        season_drift=options.season_drift is True,
    )
