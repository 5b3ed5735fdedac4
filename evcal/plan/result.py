"""The :class:`Plan`: the forward table, how it was spread, and what it assumed."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from evcal._files import atomic_path
from evcal.errors import PlanError
from evcal.formula_safe import write_csv
from evcal.spelling import option


@dataclass
class Plan:
    """A forward plan built by :func:`evcal.plan.make_plan`.

    Attributes
    ----------
    table : DataFrame
        ``date, base, plan, low, high``, then ``lift:<event>`` per event touching
        the horizon (units; closures negative), then ``assumptions``. ``base``
        plus the lifts adds up to ``plan`` in every period.
    periods : PeriodIndex
        The horizon's periods (``table`` rows, in order).
    events : list of str
        Events with a ``lift:`` column.
    assumptions : dict
        Event -> text, for every assumed or borrowed lift in the horizon.
    model_totals : dict
        Year -> what the model alone plans for the horizon's periods of that year.
    target, factors : dict or None
        Year -> target total and the factor the year was scaled by (None when not spread).
    full_years : list of int
        Years whose every period is in the horizon.
    target_total : float or None
        The single target of the whole horizon (``total=``), when one was given.
    in_season : list of str
        Events in the horizon whose effect the fit could not tell apart from the
        season (their ``lift:`` column is zero: the seasonal index holds them).
    future : dict
        Known future changes planned at an assumed size (:mod:`evcal.plan.future`):
        intervention -> assumed change as a fraction; ``assumptions`` holds their texts.
    whole_units : bool
        The amounts are whole units (``make_plan(..., whole_units=True)``, ``plan --round``):
        the plan apportioned by largest remainder to the whole target, ``low`` floored
        and ``high`` ceiled (:func:`evcal.plan.spread.round_table`).
    actuals : DataFrame or None
        ``date, actual``: the periods of the plan's year before its start, as sold (a year-to-date
        re-plan, ``plan --actuals``); the plan is spread so that these plus ``table["plan"]`` meet
        the year's target. None for an ordinary plan.
    calendar : Calendar or None
        The plan calendar the plan was made with, and ``new_events`` what it did with events the
        model never saw: what rebuilds the plan's design to split each period into its parts
        (:func:`evcal.plan.explain.plan_part_frame`, the workbook's Parts sheet). None for a plan
        built by hand.
    floored : tuple of int
        The positions (``table`` rows) of the periods planned at 0, not below (:mod:`evcal.plan.floor`),
        which ``notes`` names; a panel plan names them once for all its series.
    """

    table: pd.DataFrame
    periods: pd.PeriodIndex
    freq: str
    label: str
    events: list[str]
    assumptions: dict[str, str]
    model_totals: dict[int, float]
    target: dict[int, float] | None
    factors: dict[int, float]
    full_years: list[int]
    last_year: dict[str, Any]
    average_share: dict[int, float]
    calendar_name: str
    interval_note: str
    notes: list[str] = field(default_factory=list)
    target_total: float | None = None
    in_season: list[str] = field(default_factory=list)
    result: Any = field(default=None, repr=False)
    future: dict[str, float] = field(default_factory=dict)
    whole_units: bool = False
    actuals: pd.DataFrame | None = None
    calendar: Any = field(default=None, repr=False)
    new_events: str = "error"
    floored: tuple[int, ...] = ()

    @property
    def total(self) -> float:
        """Sum of the plan over the horizon."""
        return float(self.table["plan"].sum())

    def summary(self) -> str:
        """Total, where the peak lands, each event's share, what moved, assumptions used."""
        from evcal.plan.summary import plan_summary

        return plan_summary(self)

    def save(self, path: str | Path) -> Path:
        """Write the plan as ``.csv`` or ``.xlsx`` (atomically: the whole file or nothing).

        Text cells are formula-safe (:mod:`evcal.formula_safe`). The workbook
        adds the model's lifts, seasonal index and past occurrences.
        """
        from evcal.plan.actuals import plan_file_frame
        from evcal.plan.workbook import write_workbook
        from evcal.plan.workbook_plan import plan_layout

        path = output_path(path, "plan")
        if path.suffix.lower() == ".csv":
            with atomic_path(path) as tmp:
                write_csv(plan_file_frame(self), tmp, index=False, date_format="%Y-%m-%d",
                          float_format="%.6f")
            return path
        empty = pd.DataFrame()
        lifts, profile, occurrences = [getattr(self.result, name, empty)
                                       for name in ("lifts", "profile", "occurrences")]
        drivers = None
        if getattr(getattr(self.result, "spec", None), "drivers", None):  # outside drivers: their own sheet
            from evcal.model.drivers import driver_table

            drivers = driver_table(self.result)
        return write_workbook(path, self.table, self._with_future(lifts), profile, occurrences,
                              notes=self.notes, drivers=drivers, layout=plan_layout(self))

    def _with_future(self, lifts: pd.DataFrame) -> pd.DataFrame:
        """The model's lifts plus a row per known future change, marked assumed as assumed lifts are."""
        if not self.future:
            return lifts
        rows = pd.DataFrame([{"event": name, "lift_pct": 100.0 * a, "low_pct": 100.0 * a,
                              "high_pct": 100.0 * a, "identifiable": "yes", "kind": "intervention",
                              "label": name, "note": f"assumed in the plan calendar, not estimated: "
                              f"{self.assumptions.get(name, name).split(': ', 1)[-1]}"}
                             for name, a in self.future.items()])
        return pd.concat([lifts, rows], ignore_index=True) if len(lifts.columns) else rows


def output_path(path: str | Path, stem: str) -> Path:
    """``path`` if it names a ``.csv`` or ``.xlsx`` file, else a one-line :class:`PlanError`."""
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in (".csv", ".xlsx"):
        raise PlanError(f"{option('path', str(path), flag='--out')}: unknown file type {suffix or '(none)'}; "
                        f"write {stem}.csv or {stem}.xlsx")
    return path
