"""Scenarios: the same plan under a second calendar, or second driver values, side by side.

A promotion moved, a tournament cancelled, a closure added, a price cut in
week 20: plan the same horizon as scenario A and scenario B (same model, same
target, same simulation seed; B's calendar or outside drivers' future values
differ) and write ``date, plan_a, plan_b, difference`` per period, with a last
row of totals. With a target both plans add up to it, so the difference shows
where the volume moves rather than how much there is.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal._files import atomic_path
from evcal.amounts import amount
from evcal.errors import PlanError
from evcal.formula_safe import formula_safe_sheet, write_csv
from evcal.plan.build import make_plan
from evcal.plan.result import Plan, output_path
from evcal.plan.summary import period_name
from evcal.spelling import option, subject


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
        lines = [f"Scenario A ({self.name_a}): total {amount(a)}; scenario B ({self.name_b}): total "
                 f"{amount(b)}; difference B - A {amount(b - a, sign=True)} ({pct:+.1f}%)."]
        if self.plan_a.target is not None:
            lines.append("Both plans are spread to the same target, so the difference shows where the "
                         "volume moves between periods.")
        rows = self.table.iloc[:-1]
        diff = rows["difference"].to_numpy(dtype=float)
        order = [k for k in np.argsort(-np.abs(diff))[:top] if abs(diff[k]) > 1e-9]
        if order:
            dates = pd.DatetimeIndex(rows["date"])
            parts = [f"{period_name(self.plan_a.periods[k], dates[k], self.plan_a.label)} "
                     f"{amount(diff[k], sign=True)}" for k in order]
            lines.append("Periods that differ most: " + "; ".join(parts) + ".")
        else:
            lines.append("The two scenarios give the same plan in every period.")
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


def _label(calendar_name: str | None, drivers: Any, differ: bool) -> str | None:
    """A scenario's name: its calendar's, and its drivers' file when the scenarios' drivers differ."""
    if not differ or drivers is None:
        return calendar_name
    what = Path(drivers).name if isinstance(drivers, (str, Path)) else "drivers given"
    return f"{calendar_name}, {what}" if calendar_name else what


def _plan(result: Any, start: Any, end: Any, calendar: Any, drivers: Any, setting: str | None,
          **plan_options: Any) -> Plan:
    """One scenario's plan; a problem with its driver values or file (a missing driver or date column,
    an unreadable file) names the setting and file that gave them."""
    from evcal.errors import HistoryError
    from evcal.io.drivers import DriverError

    try:
        return make_plan(result, start, end, calendar=calendar, drivers=drivers, **plan_options)
    except HistoryError as err:  # DriverError is one
        if setting is None or not isinstance(drivers, (str, Path)):
            raise
        raise DriverError(f"{setting} {Path(drivers).name}: {err.problems[0]}") from None


def compare(
    result: Any,
    start: Any,
    end: Any,
    calendar_b: Any = None,
    calendar_a: Any = None,
    name_a: str | None = None,
    name_b: str | None = None,
    drivers_a: Any = None,
    drivers_b: Any = None,
    **plan_options: Any,
) -> Comparison:
    """Plan ``[start, end]`` as scenario A and scenario B: calendars, or outside drivers' values, differ.

    Parameters
    ----------
    result : FitResult
    start, end
        The horizon, as for :func:`evcal.plan.make_plan`.
    calendar_b : path, YAML text, Calendar or None
        The second scenario's calendar (``calendar_a`` when None).
    calendar_a : path, YAML text, Calendar or None
        The first scenario's calendar (the fitted one when None).
    drivers_a, drivers_b : path or DataFrame, optional
        The outside drivers' future values of each scenario (as ``--drivers`` of
        :func:`evcal.plan.make_plan`); ``drivers_b`` defaults to ``drivers_a``.
        A price cut in week 20: the same file with that week's price 10 % lower.
    name_a, name_b : str, optional
        Labels for the summary (default: the calendars' ``name``).
    **plan_options
        ``total``, ``totals``, ``new_events``, ``n_sims``, ``seed``: the same for both plans.

    Examples
    --------
    >>> cmp = compare(res, "2027-01-01", "2027-12-31", "calendar-no-tournament.yaml")  # doctest: +SKIP
    >>> print(cmp.summary())                                                         # doctest: +SKIP
    """
    if calendar_b is None and drivers_b is None:
        raise PlanError(f"a comparison needs a second scenario: a second calendar "
                        f"({option('calendar_b', flag='--compare')}) or second driver values "
                        f"({option('drivers_b', flag='--compare-drivers')})")
    differ = drivers_b is not None
    calendar_b = calendar_a if calendar_b is None else calendar_b
    drivers_b = drivers_a if drivers_b is None else drivers_b
    plan_a = _plan(result, start, end, calendar_a, drivers_a,
                   subject("drivers_a", flag="--drivers") if differ else None, **plan_options)
    plan_b = _plan(result, start, end, calendar_b, drivers_b,
                   subject("drivers_b", flag="--compare-drivers") if differ else None, **plan_options)
    a = plan_a.table["plan"].to_numpy()  # whole units (plan --round) stay integers, differences too
    b = plan_b.table["plan"].to_numpy()
    table = pd.DataFrame({"date": list(plan_a.table["date"]), "plan_a": a, "plan_b": b,
                          "difference": b - a})
    totals = pd.DataFrame({"date": ["total"], "plan_a": [a.sum()], "plan_b": [b.sum()],
                           "difference": [b.sum() - a.sum()]})
    table = pd.concat([table, totals], ignore_index=True)
    return Comparison(table=table, plan_a=plan_a, plan_b=plan_b,
                      name_a=name_a or _label(plan_a.calendar_name, drivers_a, differ) or "A",
                      name_b=name_b or _label(plan_b.calendar_name, drivers_b, differ) or "B")
