"""The few lines printed after a plan: total, peak, event shares, what moved, assumptions.

"What moved" compares the plan with the same total spread by the plain
average-share profile (each position's mean share of its year over the
history's full years; for daily models weekday-aware, each month's share spread
by its day-of-week pattern: :mod:`evcal.model.weekday_share`; common practice,
no source): the periods where the two differ most are where the events, and the
base cleaned of them, change the plan. The summary says which profile it used.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.amounts import amount
from evcal.design.seasonal import base_freq, season_position
from evcal.model.weekday_share import average_share_basis, spread_weekday_share
from evcal.plan.actuals import actual_by_year, year_table, year_to_date_periods


def period_name(period: pd.Period, date: pd.Timestamp, label: str) -> str:
    """A period as a planner reads it: ``2025-04``, ``2025Q2``, ``week ending 2025-04-20``, a day."""
    b = base_freq(period.freqstr)
    if b in ("M", "Q"):
        return str(period)
    if b == "W":
        return f"week {'ending' if label == 'end' else 'starting'} {date.date()}"
    return f"{date.date()} ({date.strftime('%a')})"


def average_share_plan(periods: pd.PeriodIndex, years: np.ndarray, plan: np.ndarray,
                       average_share: dict[int, float],
                       weekday_share: dict[str, Any] | None = None) -> np.ndarray:
    """The plan's own yearly totals spread by the average-share profile.

    Each year's periods get ``total_year * share[pos] / sum(share over that year's periods)``.
    Daily periods with ``weekday_share`` (the model's weekday-aware profile,
    :mod:`evcal.model.weekday_share`) get their month's share spread by the
    month's weekday factors instead, and a day the plan puts at exactly zero (a
    calendar closure) gets no share. Returns NaN everywhere when the history
    gave no profile.
    """
    if base_freq(periods.freqstr) == "D" and weekday_share:
        s = spread_weekday_share(periods, weekday_share, closed_days=np.asarray(plan) == 0)
    elif average_share:
        pos = season_position(periods)
        s = np.array([average_share.get(int(p), np.nan) for p in pos], dtype=float)
    else:
        return np.full(len(periods), np.nan)
    out = np.full(len(periods), np.nan)
    for y in np.unique(years):
        m = years == y
        denom = np.nansum(s[m])
        if denom > 0:
            out[m] = plan[m].sum() * s[m] / denom
    return out


def _num(x: float) -> str:
    return amount(float(x))


def _pct(x: float) -> str:
    return "n/a" if not np.isfinite(x) else f"{x:+.1f}%"


def plan_summary(plan: Any, top: int = 3) -> str:
    """The printed summary of a :class:`~evcal.plan.Plan` (see :meth:`Plan.summary`)."""
    t = plan.table
    periods = plan.periods
    dates = pd.DatetimeIndex(t["date"])
    values = t["plan"].to_numpy(dtype=float)
    total = float(values.sum())
    names = [period_name(p, d, plan.label) for p, d in zip(periods, dates, strict=True)]
    lines: list[str] = []
    span = names[0] if len(names) == 1 else f"{names[0]} to {names[-1]}"
    lines.append(f"Plan {span} ({len(t)} periods): total {_num(total)} units.")
    done = actual_by_year(plan)
    if done:
        lines += _year_to_date_lines(plan, done)
    elif plan.target_total is not None:
        model = sum(plan.model_totals.values())
        lines.append(f"Spread to the target {_num(plan.target_total)}, shape kept: the model alone "
                     f"planned {_num(model)} (every period scaled by {plan.target_total / model:.4f}).")
    elif plan.target is not None:
        parts = []
        for y in sorted(plan.target):
            parts.append(f"{y}: target {_num(plan.target[y])}, model alone {_num(plan.model_totals[y])} "
                         f"(spread factor {plan.factors[y]:.4f})")
        lines.append("Spread to the target, shape kept: " + "; ".join(parts) + ".")
    lines += _change_lines(plan)
    if len(values) and np.isfinite(values).any():
        i = int(np.nanargmax(values))
        share = 100.0 * values[i] / total if total else float("nan")
        lines.append(f"Peak: {names[i]} with {_num(values[i])} units ({share:.1f}% of the total).")
    ev_parts = []
    for ev in plan.events:
        if ev in plan.in_season:
            continue
        units = float(t[f"lift:{ev}"].sum())
        ev_parts.append(f"{ev} {_pct(100.0 * units / total if total else float('nan'))} "
                        f"({_num(units)} units)")
    if ev_parts:
        lines.append("Events' share of the total: " + "; ".join(ev_parts) + ".")
    elif not plan.events:
        lines.append("No event touches the horizon: the plan is the base alone.")
    if plan.in_season:
        lines.append("In the seasonal index (always in the same period, so not separable from the "
                     "season; no lift of their own): " + ", ".join(plan.in_season) + ".")
    years = t["date"].dt.year.to_numpy()
    weekday_share = getattr(plan.result, "weekday_share", None) or {}
    avg = average_share_plan(periods, years, values, plan.average_share, weekday_share)
    if np.isfinite(avg).any():
        diff = values - avg
        order = np.argsort(-np.abs(np.nan_to_num(diff)))[:top]
        moved = [f"{names[k]} {'+' if diff[k] >= 0 else '-'}{_num(abs(diff[k]))} "
                 f"({_pct(100.0 * diff[k] / avg[k] if avg[k] else float('nan'))})" for k in order
                 if np.isfinite(diff[k])]
        lines.append("Against the average-share profile spread to the same total, the periods that "
                     "change most: " + "; ".join(moved) + f". Average-share profile here: "
                     f"{average_share_basis(plan.freq, weekday_share)}.")
    if plan.assumptions:
        lines.append("Assumptions: " + "; ".join(plan.assumptions.values()) + ".")
    lines.append(plan.interval_note)
    lines += [f"Note: {n}" for n in plan.notes]
    lines.append("This plan is an estimate from past sales and the calendar; targets and decisions "
                 "stay with the people who own them.")
    return "\n".join(lines)


def _change_lines(plan: Any) -> list[str]:
    last = plan.last_year or {}
    if not last.get("total"):
        return []
    base_total = float(last["total"])
    out = []
    done = actual_by_year(plan)
    for y in sorted(plan.full_years):
        amount = plan.target[y] if plan.target is not None else plan.model_totals[y] + done.get(y, 0.0)
        what = "target" if plan.target is not None else "plan"
        out.append(f"The {y} {what} {_num(amount)} is {_pct(100.0 * (amount / base_total - 1.0))} on "
                   f"{last['year']} ({_num(base_total)}), the last full year of history.")
    if not plan.full_years:
        out.append("The horizon holds no full year, so no change against the last full year of "
                   f"history ({last['year']}, {_num(base_total)}) is given.")
    return out


def _year_to_date_lines(plan: Any, done: dict[int, float]) -> list[str]:
    """The re-plan's lines: actuals so far + the plan = the year, and the year side by side by month."""
    actual = sum(done.values())
    year = min(done)
    # one target for the horizon counts all of it; per-year targets (--totals) only the actuals' year's
    per_year = plan.target_total is None and plan.target is not None
    in_year = year_to_date_periods(plan) if per_year else np.ones(len(plan.table), dtype=bool)
    planned = float(plan.table["plan"][in_year].sum())
    model = plan.model_totals.get(year, 0.0) if per_year else sum(plan.model_totals.values())
    dates = pd.DatetimeIndex(plan.actuals["date"])
    so_far = (f"{_num(actual)} actual so far ({len(dates)} periods, {dates[0].date()} to {dates[-1].date()})")
    if plan.target_total is not None or plan.target is not None:
        goal = plan.target_total if plan.target_total is not None else plan.target[year]
        factor = planned / model if model else float("nan")
        out = [f"Year to date: the target {_num(goal)} = {so_far} + {_num(planned)} planned for the rest, "
               f"spread with the shape kept (the model alone planned {_num(model)} for the rest; every "
               f"period scaled by {factor:.4f}).",
               f"The actuals plus the model's own plan would make {_num(actual + model)}, "
               f"{_pct(100.0 * ((actual + model) / goal - 1.0))} against the target."]
    else:
        out = [f"Year to date: {so_far} + {_num(planned)} planned = {_num(actual + planned)} "
               "(no target given)."]
    side = year_table(plan)
    month = pd.DatetimeIndex(side["date"]).to_period("M")
    by_month = side.groupby(month)[["actual", "plan"]].sum(min_count=1)
    out.append(f"{year} side by side, by month of the period's date (actual | plan):")
    for m, row in by_month.iterrows():
        cells = [f"{_num(row[c])} {c}" for c in ("actual", "plan") if np.isfinite(row[c])]
        out.append(f"  {m}: " + " + ".join(cells))
    return out
