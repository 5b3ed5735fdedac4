"""Two scenarios compared (``evcal plan --compare`` / ``--compare-drivers``): the two-scenario case of
:func:`evcal.plan.scenarios.plan_scenarios`, written as ``date, plan_a, plan_b, difference`` (B - A)
with a last ``total`` row, and a summary in the A/B words of ``--compare``.

Examples
--------
>>> cmp = compare(res, "2027-01-01", "2027-12-31", "calendar-no-tournament.yaml")  # doctest: +SKIP
>>> print(cmp.summary()); cmp.save("compare.csv")                                  # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from evcal._files import atomic_path
from evcal.amounts import amount
from evcal.errors import PlanError
from evcal.formula_safe import formula_safe_sheet
from evcal.plan.result import Plan, output_path
from evcal.plan.scenarios import Scenario, excel_dates, largest_moves, plan_scenarios, write_table_csv
from evcal.spelling import option, subject

__all__ = ["Comparison", "compare"]


@dataclass
class Comparison:
    """Two plans of one horizon under two calendars (or driver values): :func:`compare`.

    Attributes
    ----------
    table : DataFrame
        ``date, plan_a, plan_b, difference`` (``b - a``) per period, then a ``total`` row.
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
        moves = largest_moves(rows["difference"].to_numpy(dtype=float), rows["date"], self.plan_a, top)
        lines.append(f"Periods that differ most: {moves}." if moves
                     else "The two scenarios give the same plan in every period.")
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
        if path.suffix.lower() == ".csv":
            with atomic_path(path) as tmp:
                write_table_csv(self.table, tmp)
            return path
        # dates stay Excel dates; the totals row is labelled in the same column
        with atomic_path(path) as tmp, pd.ExcelWriter(tmp, engine="openpyxl") as writer:
            writer.book.properties.creator = "evcal"  # how `--out` recognises evcal's own workbook
            excel_dates(self.table).to_excel(writer, index=False, sheet_name="Scenarios")
            formula_safe_sheet(writer.sheets["Scenarios"].iter_rows())
        return path



def _label(calendar_name: str | None, drivers: Any, differ: bool) -> str | None:
    """A scenario's name: its calendar's, and its drivers' file when the scenarios' drivers differ."""
    if not differ or drivers is None:
        return calendar_name
    what = Path(drivers).name if isinstance(drivers, (str, Path)) else "drivers given"
    return f"{calendar_name}, {what}" if calendar_name else what


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

    The two-scenario case of :func:`plan_scenarios`, written as ``date, plan_a, plan_b, difference``.

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
    pair = [Scenario("A", calendar_a, drivers_a, subject("drivers_a", flag="--drivers") if differ else None),
            Scenario("B", calendar_b, drivers_b,
                     subject("drivers_b", flag="--compare-drivers") if differ else None)]
    both = plan_scenarios(result, start, end, pair, name_problems=False, **plan_options)
    table = both.table.rename(columns={"plan:A": "plan_a", "plan:B": "plan_b", "difference:B": "difference"})
    plan_a, plan_b = both.plans["A"], both.plans["B"]
    return Comparison(table=table, plan_a=plan_a, plan_b=plan_b,
                      name_a=name_a or _label(plan_a.calendar_name, drivers_a, differ) or "A",
                      name_b=name_b or _label(plan_b.calendar_name, drivers_b, differ) or "B")
