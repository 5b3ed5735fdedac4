"""Three lines a planner would quote, from the model folder and the plan alone.

1. the event that moves the most units each time it happens (up or down), with its lift and interval;
2. where the plan's peak lands, with its low and high;
3. how far the plan differs from the plain average-share profile spread to the
   same total (each position's mean share of its year over the history's full
   years, as ``model.json`` records it under ``average_share``; for daily
   models weekday-aware, from ``weekday_share``: :mod:`evcal.model.weekday_share`;
   common practice, no source).

Examples
--------
>>> for line in headlines(read_model_folder("model", plan_csv="plan.csv")):  # doctest: +SKIP
...     print(line)
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from evcal.model.weekday_share import average_share_phrase
from evcal.plan.summary import average_share_plan
from evcal.report.formatting import num, pct, period_freq, period_label
from evcal.report.model_folder import ModelFolder


def average_share_spread(folder: ModelFolder) -> np.ndarray:
    """The plan's own yearly totals spread by the model's average-share profile (NaN without one)."""
    dates = folder.plan["date"]
    periods = pd.PeriodIndex(dates.dt.to_period(period_freq(folder.freq)))
    shares = {int(k): float(v) for k, v in folder.model["average_share"].items()}
    values = folder.plan["plan"].to_numpy(dtype=float)
    return average_share_plan(periods, dates.dt.year.to_numpy(), values, shares,
                              folder.model.get("weekday_share"))


def departure(plan: pd.DataFrame, avg: np.ndarray) -> tuple[np.ndarray, float, int]:
    """The plan minus its average-share spread, the units in other periods, where the two differ most."""
    diff = plan["plan"].to_numpy(dtype=float) - avg
    return diff, float(np.nansum(np.abs(diff)) / 2.0), int(np.nanargmax(np.abs(np.nan_to_num(diff))))


def biggest_event(folder: ModelFolder, skip: set[str]) -> pd.Series | None:
    """The estimated event (not in ``skip``: closures, assumed) that moves the most units per occurrence.

    The largest in size, up or down: when every event is a dip, the one that adds the most would be the
    smallest dip (about 0 units), no headline. Only a lift whose 95 % interval leaves out zero can be
    one: a headline that an event "adds the most" when the history cannot tell its sign claims too much.
    """
    lifts = folder.lifts
    rows = lifts[
        (lifts["kind"] == "event")
        & (lifts["identifiable"] == "yes")  # a weak lift is no headline
        & lifts["lift_pct"].notna()
        & lifts["units_per_occurrence"].notna()
        & ((lifts["low_pct"] > 0) | (lifts["high_pct"] < 0))  # the sign is known
        & ~lifts["event"].isin(skip)
    ]
    return None if rows.empty else rows.loc[rows["units_per_occurrence"].abs().idxmax()]


def moves_the_most(top: pd.Series) -> str:
    """How the headline says the biggest event's sign: it adds, or it takes away."""
    return "adds the most" if top["units_per_occurrence"] >= 0 else "takes the most away"


def headlines(folder: ModelFolder) -> list[str]:
    """Up to three plain sentences: biggest event, where the peak lands, plan vs average share."""
    lines: list[str] = []
    top = biggest_event(folder, folder.closures() | set(folder.assumed()))
    if top is not None:
        lines.append(
            f"{top['label']} {moves_the_most(top)}: about {num(top['units_per_occurrence'])} units each "
            f"time, {pct(top['lift_pct'])} over base (95 % interval {pct(top['low_pct'])} to "
            f"{pct(top['high_pct'])})."
        )
    plan = folder.plan
    if plan is None or plan.empty:
        return lines
    peak = plan.loc[plan["plan"].idxmax()]
    lines.append(
        f"The plan's peak lands {in_period(peak['date'], folder.freq)}: "
        f"{num(peak['plan'])} units (low {num(peak['low'])}, high {num(peak['high'])})."
    )
    avg = average_share_spread(folder)
    if np.isfinite(avg).any():
        diff, moved, k = departure(plan, avg)
        total = float(np.nansum(plan["plan"].to_numpy(dtype=float)))
        change = 100.0 * diff[k] / avg[k] if avg[k] else float("nan")
        lines.append(
            f"Against {average_share_phrase(folder.freq, folder.model.get('weekday_share'))} spread to "
            f"the same total, "
            f"{num(moved)} units ({moved / total * 100:.1f} % of the total) sit in different "
            f"periods; the biggest change is {in_period(plan['date'].iloc[k], folder.freq, 'the')}: "
            f"{num(diff[k], sign=True)} units ({pct(change)})."
        )
    return lines


def in_period(date: pd.Timestamp, freq: str, word: str = "in") -> str:
    """ "in the week to 9 May 2027", "in May 2027" (``word="the"``: "the week to ...", "May 2027")."""
    label = period_label(date, freq)
    named = f"the {label}" if label.startswith("week") else label
    return f"in {named}" if word == "in" else named
