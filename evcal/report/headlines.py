"""Three lines a planner would quote, from the model folder and the plan alone.

1. the event that adds the most units each time it happens, with its lift and interval;
2. where the plan's peak lands, with its low and high;
3. how far the plan differs from the plain average-share profile spread to the
   same total (each position's mean share of its year over the history's full
   years, as ``model.json`` records it under ``average_share``: common
   practice, no source).

Examples
--------
>>> for line in headlines(read_model_folder("model", plan_csv="plan.csv")):  # doctest: +SKIP
...     print(line)
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.seasonal import season_position
from evcal.report.formatting import num, pct, period_freq, period_label
from evcal.report.model_folder import ModelFolder


def average_share_plan(
    plan: pd.DataFrame, freq: str, average_share: Mapping[Any, float] | None
) -> np.ndarray:
    """The plan's own yearly totals spread by the average-share profile.

    Each calendar year's periods get ``total_year * share[pos] / sum(share over
    that year's periods)``, so both add up to the same total per year. NaN
    everywhere when the model has no average-share profile.

    Examples
    --------
    >>> plan = pd.DataFrame({"date": pd.to_datetime(["2027-01-31", "2027-02-28"]),
    ...                      "plan": [150.0, 50.0]})
    >>> average_share_plan(plan, "M", {"1": 0.5, "2": 0.5}).tolist()
    [100.0, 100.0]
    """
    n = len(plan)
    shares = {int(k): float(v) for k, v in (average_share or {}).items()}
    if not shares or n == 0:
        return np.full(n, np.nan)
    periods = pd.PeriodIndex(plan["date"].dt.to_period(period_freq(freq)))
    share = np.array([shares.get(int(p), np.nan) for p in season_position(periods)], dtype=float)
    values = plan["plan"].to_numpy(dtype=float)
    years = plan["date"].dt.year.to_numpy()
    out = np.full(n, np.nan)
    for year in np.unique(years):
        m = years == year
        denom = np.nansum(share[m])
        if denom > 0:
            out[m] = values[m].sum() * share[m] / denom
    return out


def departure(plan: pd.DataFrame, avg: np.ndarray) -> tuple[np.ndarray, float, int]:
    """The plan minus its average-share spread, the units in other periods, where the two differ most."""
    diff = plan["plan"].to_numpy(dtype=float) - avg
    return diff, float(np.nansum(np.abs(diff)) / 2.0), int(np.nanargmax(np.abs(np.nan_to_num(diff))))


def biggest_event(folder: ModelFolder, skip: set[str]) -> pd.Series | None:
    """The estimated event (not in ``skip``: closures, assumed) that adds the most units per occurrence."""
    lifts = folder.lifts
    rows = lifts[
        (lifts["kind"] == "event")
        & lifts["identifiable"]
        & lifts["lift_pct"].notna()
        & lifts["units_per_occurrence"].notna()
        & ~lifts["event"].isin(skip)
    ]
    return None if rows.empty else rows.loc[rows["units_per_occurrence"].idxmax()]


def headlines(folder: ModelFolder) -> list[str]:
    """Up to three plain sentences: biggest event, where the peak lands, plan vs average share."""
    lines: list[str] = []
    top = biggest_event(folder, folder.closures() | set(folder.assumed()))
    if top is not None:
        lines.append(
            f"{top['label']} adds the most: about {num(top['units_per_occurrence'])} units each "
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
    avg = average_share_plan(plan, folder.freq, folder.model["average_share"])
    if np.isfinite(avg).any():
        diff, moved, k = departure(plan, avg)
        total = float(np.nansum(plan["plan"].to_numpy(dtype=float)))
        change = 100.0 * diff[k] / avg[k] if avg[k] else float("nan")
        lines.append(
            f"Against an average-share profile spread to the same total, "
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
