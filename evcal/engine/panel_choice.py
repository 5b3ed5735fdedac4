"""A panel's open settings, chosen once for every series on the panel's summed series.

:func:`evcal.model.choose.choose` makes the choice; this step picks what it is made on.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.calendar.event_builder import AUTO_RUN_UP
from evcal.design.matrix import with_windows
from evcal.errors import CalendarError, HistoryError
from evcal.model.choose import chosen_settings
from evcal.model.inputs import seasonal_kind
from evcal.model.options import FitOptions
from evcal.model.settings import Chosen, auto_events, given, open_settings


def panel_settings(options: FitOptions, calendar: Any, panel: Any = None) -> tuple[FitOptions, Any, Chosen]:
    """A panel's options and calendar with the settings left open chosen once, for every series.

    The series of a panel are solved in blocks that share one design, and its
    lifts are compared and pooled across series: an event must mean the same
    window, and the seasonal terms the same columns, in every series. So the
    open settings are chosen **once**, by :func:`evcal.model.choose.choose` on the summed series
    of the panel's largest set of series with the same periods observed (the
    largest fit-row pattern: a sum with no step where a series starts, stops or
    has a gap). The sum carries the calendar pattern the series share, with
    less noise than any one of them (so it can afford as many columns as the
    richest series, never fewer); the cost is one choice (at most 11 fits plus
    4 per ``before: auto`` event, on one series) whatever the panel's size.

    Without ``panel``, or when the sum cannot be fitted (too short, not
    positive where the log is needed...), the stand-ins of :func:`given` are
    kept (10 Fourier pairs, no trading-day or leap-year columns, the 8-day
    run-up of ``before: auto``) and the record says why.

    Returns
    -------
    options : FitOptions
        With every open setting made concrete (what the series are fitted with).
    calendar
        With the chosen run-ups in place of ``auto``.
    Chosen
        What was chosen, with one record per choice (``panel.json``'s ``design.choices``).
    """
    chosen = given(options)
    open_now = open_settings(options, panel.freq, seasonal_kind(options, panel.freq)) if panel else []
    if panel is not None and (open_now or auto_events(calendar)):
        total, members = _largest_pattern_total(panel)
        note = f"the panel's {members} series with the same periods observed, summed"
        try:
            found = chosen_settings(panel.history(0), calendar, options, values=total)
        except (HistoryError, CalendarError, ValueError, np.linalg.LinAlgError) as err:
            chosen = replace(chosen, choices=[{
                "setting": "panel", "chosen": "stand-ins", "candidates": [],
                "reason": f"the stand-ins were kept: the sum of {note} could not be fitted ({err})"}])
        else:
            chosen = replace(found, choices=[{**c, "reason": f"{c['reason']}; chosen once on {note}"}
                                             for c in found.choices])
    windows = {ev: chosen.event_windows.get(ev, AUTO_RUN_UP) for ev in auto_events(calendar)}
    concrete = replace(options, fourier_order=chosen.fourier_order, trading_days=chosen.trading_days,
                       leap_year=chosen.leap_year, season_drift=chosen.season_drift)
    return concrete, with_windows(calendar, windows), replace(chosen, event_windows=windows)


def _largest_pattern_total(panel: Any) -> tuple[pd.Series, int]:
    """The sum over the panel's largest set of series with the same periods observed, and its size."""
    obs = ~np.isnan(panel.values)
    packed = np.packbits(obs, axis=0).T  # one row of bytes per series
    keys = pd.Series([row.tobytes() for row in packed])
    counts = keys.value_counts(sort=True)
    pattern = counts.index[0]
    if not obs[:, int(np.flatnonzero(keys.to_numpy() == pattern)[0])].any() and len(counts) > 1:
        pattern = counts.index[1]  # (series with no value at all are not a pattern)
    members = np.flatnonzero(keys.to_numpy() == pattern)
    seen = obs[:, members[0]]
    first, last = int(np.argmax(seen)), len(seen) - 1 - int(np.argmax(seen[::-1]))
    total = panel.values[first:last + 1, members].sum(axis=1)
    total[~seen[first:last + 1]] = np.nan
    index = panel.periods[first:last + 1]
    index.name = "period"
    return pd.Series(total, index=index, name="value"), len(members)
