"""Scenarios: the same plan under a second calendar, side by side.

A promotion moved, a tournament cancelled, a closure added: plan the same
horizon with calendar A and with calendar B (same model, same target, same
simulation seed) and write ``date, plan_a, plan_b, difference`` per period,
with a last row of totals. With a target both plans add up to it, so the
difference shows where the volume moves rather than how much there is.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal._files import atomic_path
from evcal.formula_safe import formula_safe_sheet, write_csv
from evcal.plan.build import make_plan
from evcal.plan.result import Plan, output_path
from evcal.plan.summary import period_name


@dataclass
class Comparison:
    """Two plans of one horizon under two calendars.

    Attributes
    ----------
    table : DataFrame
        ``date, plan_a, plan_b, difference`` (``b - a``) per period, then a
        ``total`` row.
    plan_a, plan_b : Plan
    """

    table: pd.DataFrame
    plan_a: Plan
    plan_b: Plan
    name_a: str = "A"
    name_b: str = "B"

    def summary(self, top: int = 3) -> str:
        """Totals of both plans, their difference, and the periods that differ most."""
        a, b = self.plan_a.total, self.plan_b.total
        pct = 100.0 * (b - a) / a if a else float("nan")
        lines = [f"Scenario A ({self.name_a}): total {a:,.0f}; scenario B ({self.name_b}): total {b:,.0f}; "
                 f"difference B - A {b - a:+,.0f} ({pct:+.1f}%)."]
        if self.plan_a.target is not None:
            lines.append("Both plans are spread to the same target, so the difference shows where the "
                         "volume moves between periods.")
        rows = self.table.iloc[:-1]
        diff = rows["difference"].to_numpy(dtype=float)
        order = [k for k in np.argsort(-np.abs(diff))[:top] if abs(diff[k]) > 1e-9]
        if order:
            dates = pd.DatetimeIndex(rows["date"])
            parts = [f"{period_name(self.plan_a.periods[k], dates[k], self.plan_a.label)} {diff[k]:+,.0f}"
                     for k in order]
            lines.append("Periods that differ most: " + "; ".join(parts) + ".")
        else:
            lines.append("The two calendars give the same plan in every period.")
        gained = sorted(set(self.plan_b.events) - set(self.plan_a.events))
        lost = sorted(set(self.plan_a.events) - set(self.plan_b.events))
        if gained:
            lines.append(f"Only in B: {', '.join(gained)}.")
        if lost:
            lines.append(f"Only in A: {', '.join(lost)}.")
        lines.append("Both are estimates; the choice between the scenarios stays with the people who own it.")
        return "\n".join(lines)

    def save(self, path: str | Path) -> Path:
        """Write the side-by-side table as ``.csv`` or ``.xlsx`` (atomically; text formula-safe)."""
        path = output_path(path, "compare")
        out = self.table.copy()
        if path.suffix.lower() == ".csv":
            out["date"] = [d.strftime("%Y-%m-%d") if isinstance(d, pd.Timestamp) else d for d in out["date"]]
            with atomic_path(path) as tmp:
                write_csv(out, tmp, index=False, float_format="%.6f")
            return path
        # dates stay Excel dates; the totals row is labelled in the same column
        out["date"] = [d.date() if isinstance(d, pd.Timestamp) else d for d in out["date"]]
        with atomic_path(path) as tmp, pd.ExcelWriter(tmp, engine="openpyxl") as writer:
            writer.book.properties.creator = "evcal"  # how `--out` recognises evcal's own workbook
            out.to_excel(writer, index=False, sheet_name="Scenarios")
            formula_safe_sheet(writer.sheets["Scenarios"].iter_rows())
        return path


def compare(
    result: Any,
    start: Any,
    end: Any,
    calendar_b: Any,
    calendar_a: Any = None,
    name_a: str | None = None,
    name_b: str | None = None,
    **plan_options: Any,
) -> Comparison:
    """Plan ``[start, end]`` under ``calendar_a`` (the fitted one by default) and ``calendar_b``.

    Parameters
    ----------
    result : FitResult
    start, end
        The horizon, as for :func:`evcal.plan.make_plan`.
    calendar_b : path, YAML text or Calendar
        The second scenario's calendar.
    calendar_a : path, YAML text, Calendar or None
        The first scenario's calendar (the fitted one when None).
    name_a, name_b : str, optional
        Labels for the summary (default: the calendars' ``name``).
    **plan_options
        ``total``, ``totals``, ``new_events``, ``n_sims``, ``seed``: the same for both plans.

    Examples
    --------
    >>> cmp = compare(res, "2027-01-01", "2027-12-31", "calendar-no-tournament.yaml")  # doctest: +SKIP
    >>> print(cmp.summary())                                                         # doctest: +SKIP
    """
    plan_a = make_plan(result, start, end, calendar=calendar_a, **plan_options)
    plan_b = make_plan(result, start, end, calendar=calendar_b, **plan_options)
    a = plan_a.table["plan"].to_numpy(dtype=float)
    b = plan_b.table["plan"].to_numpy(dtype=float)
    table = pd.DataFrame({"date": list(plan_a.table["date"]), "plan_a": a, "plan_b": b,
                          "difference": b - a})
    totals = pd.DataFrame({"date": ["total"], "plan_a": [a.sum()], "plan_b": [b.sum()],
                           "difference": [b.sum() - a.sum()]})
    table = pd.concat([table, totals], ignore_index=True)
    return Comparison(table=table, plan_a=plan_a, plan_b=plan_b,
                      name_a=name_a or plan_a.calendar_name or "A",
                      name_b=name_b or plan_b.calendar_name or "B")
