"""Scenarios: the same plan under several calendars (or driver values), side by side.

A promotion moved, a tournament cancelled, a closure added, a price cut in
week 20: plan the same horizon once per scenario (same model, same target, same
simulation seed; only the calendar or the outside drivers' future values
differ). The first scenario is the reference. Two tables come out:

* side by side, per period: ``date``, ``plan:<name>`` for every scenario, then
  ``difference:<name>`` (that scenario less the reference) for every other one,
  with a last row of totals;
* by event (:mod:`evcal.plan.scenario_events`): ``event``, ``units_before_spread:<name>`` (what
  the event adds over the horizon in that scenario, in the model's units before any spread to a
  target; 0 where the scenario does not schedule it) and ``difference_before_spread:<name>``
  against the reference, then the base, the spread to the target and the rounding to whole units
  (``--round``: the parts are the plan's before it) on rows of their own, so each column adds up
  exactly to the total (difference).

With a target every plan adds up to it, so the differences show where the
volume moves rather than how much there is. :func:`compare` is the
two-scenario case written as ``date, plan_a, plan_b, difference`` (:mod:`evcal.plan.comparison`).

Examples
--------
>>> sc = plan_scenarios(res, "2027", "2027", {"current": "now.yaml", "moved": "moved.yaml",
...                                             "dropped": "dropped.yaml"}, total=210_000)  # doctest: +SKIP
>>> print(sc.summary()); sc.save("scenarios.csv")                                          # doctest: +SKIP
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal._files import atomic_path, atomic_paths
from evcal.amounts import amount
from evcal.errors import EvcalError, PlanError
from evcal.formula_safe import formula_safe_sheet, write_csv
from evcal.outputs import check_beside
from evcal.plan.build import make_plan
from evcal.plan.result import Plan, output_path
from evcal.plan.scenario_events import DIFF_PREFIX as EVENT_DIFF
from evcal.plan.scenario_events import PART_ROWS, by_event, why_no_lift
from evcal.plan.scenario_notes import NOTE_ROW, summary_lines, with_assumptions
from evcal.plan.spread import whole_unit_plan
from evcal.plan.summary import period_name
from evcal.spelling import option

#: the side-by-side table's column prefixes (plan: per scenario, difference: against the first); the
#: by-event table's are in evcal.plan.scenario_events
PLAN_PREFIX, DIFF_PREFIX = "plan:", "difference:"
#: what goes beside a scenarios CSV, as a refusal names it
BY_EVENT = "the by-event table"
#: an event's change smaller than this (units over the horizon) is rounding, not a difference worth naming
_NEGLIGIBLE = 0.5


@dataclass(frozen=True)
class Scenario:
    """One scenario to plan: its name, its calendar and its outside drivers' future values.

    ``calendar`` is a path, YAML text, a Calendar, or None (the fitted calendar); ``drivers`` a
    path or DataFrame as for :func:`evcal.plan.make_plan`. ``setting`` is how a problem with its
    driver file names it (``--compare-drivers``); None leaves such a problem as it is.
    """

    name: str
    calendar: Any = None
    drivers: Any = None
    setting: str | None = None


@dataclass
class Scenarios:
    """Plans of one horizon under several scenarios; the first is the reference.

    Attributes
    ----------
    plans : dict
        Scenario name -> its :class:`Plan`, in the scenarios' order.
    unrounded : dict
        Scenario name -> its plan before the rounding to whole units (``whole_units=``, ``--round``):
        what the by-event table's parts come from. The same plans as ``plans`` without the rounding.
    table : DataFrame
        Side by side: ``date``, ``plan:<name>`` each, ``difference:<name>`` each but the first;
        a last ``total`` row.
    events : DataFrame
        By event (:func:`evcal.plan.scenario_events.by_event`): ``event``,
        ``units_before_spread:<name>`` each, ``difference_before_spread:<name>`` each but the first, then
        ``assumptions`` (each row's assumptions with the scenarios they hold in,
        :mod:`evcal.plan.scenario_notes`); a ``[note]`` row for each note about no event of the table.
    """

    plans: dict[str, Plan]
    table: pd.DataFrame
    events: pd.DataFrame = field(default_factory=pd.DataFrame)
    unrounded: dict[str, Plan] = field(default_factory=dict)

    @property
    def names(self) -> list[str]:
        return list(self.plans)

    @property
    def reference(self) -> str:
        return self.names[0]

    def summary(self, top: int = 3) -> str:
        """Each scenario's total and difference, the periods that move most, the events that differ."""
        ref = self.reference
        first = self.plans[ref]
        lines = [f"Scenarios against the first, {ref} (total {amount(first.total)}):"]
        rows = self.table.iloc[:-1]
        for name in self.names[1:]:
            total = self.plans[name].total
            diff = total - first.total
            pct = 100.0 * diff / first.total if first.total else float("nan")
            moves = largest_moves(rows[DIFF_PREFIX + name].to_numpy(dtype=float), rows["date"], first, top)
            where = f"; moves most in {moves}" if moves else "; the same plan in every period"
            change = f"difference {amount(diff, sign=True)} ({pct:+.1f}%)"
            lines.append(f"  {name}: total {amount(total)}, {change}{where}.")
        if first.target is not None:
            lines.append("Every plan is spread to the same target, so the differences show where the volume "
                         "moves between periods.")
        lines += self._event_lines()
        lines += summary_lines(self.plans)
        lines.append("All are estimates; the choice between the scenarios stays with the people who own it.")
        return "\n".join(lines)

    def _event_lines(self, top: int = 6) -> list[str]:
        # the by-event table is in the model's units before any spread to a target: scaling every
        # scenario to one total changes each event a little, and that is not the event moving
        others = self.names[1:]
        rows = self.events[self.events["event"] != NOTE_ROW]
        diffs = rows[[EVENT_DIFF + n for n in others]].to_numpy(dtype=float)
        moved = np.abs(diffs) >= _NEGLIGIBLE
        size = np.where(moved, np.abs(diffs), 0.0).max(axis=1)
        is_event = ~rows["event"].isin(list(PART_ROWS)).to_numpy()
        order = [k for k in np.argsort(-size, kind="stable") if size[k] > 0 and is_event[k]]
        rest = [k for k in range(len(rows)) if size[k] > 0 and not is_event[k]]

        def each(k: int) -> str:
            event = rows["event"].iloc[k]
            # a scenario without the event's lift: say why, from its calendar (not there, no occurrence
            # in the horizon, or its days closed), not one word for all three
            why = {n: f" ({why_no_lift(self.plans[n], event)})" for j, n in enumerate(others)
                   if moved[k, j] and is_event[k] and event not in self.plans[n].events}
            return ", ".join(f"{n} {amount(diffs[k, j], sign=True)}{why.get(n, '')}"
                             for j, n in enumerate(others) if moved[k, j])

        lines = [f"Events that differ (the model's units over the horizon, before any spread to a target, "
                 f"against {self.reference}): "
                 + "; ".join(f"{rows['event'].iloc[k]}: {each(k)}" for k in order[:top])
                 + (f"; {len(order) - top} more in the by-event table" if len(order) > top else "") + "."
                 if order else "No event adds a different amount in any scenario."]
        if rest:
            lines.append("The rest of each difference: "
                         + "; ".join(f"{PART_ROWS[rows['event'].iloc[k]]}: {each(k)}" for k in rest) + ".")
        return lines

    def save(self, path: str | Path, events: bool = True) -> list[Path]:
        """Write the tables atomically (text formula-safe); returns the paths written.

        ``.csv``: the side-by-side table at ``path`` and, with ``events``, the by-event table beside it
        (:func:`events_path`): both or neither (one failing leaves both as they were), and the one
        beside only over a file evcal wrote (:class:`~evcal.errors.OutputError` otherwise).
        ``.xlsx``: one workbook with the sheets ``Scenarios``, ``Events`` and ``Plans`` (every scenario's
        plan, a ``scenario`` column first).
        """
        path = output_path(path, "scenarios")
        if path.suffix.lower() == ".csv":
            if not events:
                with atomic_path(path) as tmp:
                    write_table_csv(self.table, tmp)
                return [path]
            beside = events_path(path)
            # the user named only the first file: the one beside it is replaced only when evcal wrote it
            check_beside(path, beside, BY_EVENT, "compare", force=True,
                         named=option("path", str(path), flag="--out"))
            with atomic_paths(path, beside) as (tmp, tmp_events):  # both or neither
                write_table_csv(self.table, tmp)
                write_csv(self.events, tmp_events, index=False, float_format="%.6f")
            return [path, beside]
        frames = []
        for name, plan in self.plans.items():  # one long sheet: events differ between scenarios
            frame = plan.table.copy()
            frame["date"] = frame["date"].dt.date
            frame.insert(0, "scenario", name)
            frames.append(frame)
        plans = pd.concat(frames, ignore_index=True)
        sheets = {"Scenarios": excel_dates(self.table), "Events": self.events, "Plans": plans}
        with atomic_path(path) as tmp, pd.ExcelWriter(tmp, engine="openpyxl") as writer:
            writer.book.properties.creator = "evcal"  # how `--out` recognises evcal's own workbook
            for sheet, frame in sheets.items():
                frame.to_excel(writer, index=False, sheet_name=sheet)
                formula_safe_sheet(writer.sheets[sheet].iter_rows())
        return [path]


def events_path(path: str | Path) -> Path:
    """Where the by-event table of a scenarios CSV goes: beside it, ``<stem>-events.csv``.

    Examples
    --------
    >>> events_path("out/scenarios.csv").as_posix()
    'out/scenarios-events.csv'
    """
    path = Path(path)
    return path.with_name(f"{path.stem}-events.csv")


def largest_moves(diff: np.ndarray, dates: Any, plan: Plan, top: int) -> str:
    """The ``top`` periods whose difference is largest in size, as ``period +N; period -M`` ("" for none)."""
    order = [k for k in np.argsort(-np.abs(diff), kind="stable")[:top] if abs(diff[k]) > 1e-9]
    dates = pd.DatetimeIndex(list(dates))
    return "; ".join(f"{period_name(plan.periods[k], dates[k], plan.label)} {amount(diff[k], sign=True)}"
                     for k in order)


def side_by_side(plans: Mapping[str, Plan]) -> pd.DataFrame:
    """``date``, ``plan:<name>`` each, ``difference:<name>`` each but the first; a last ``total`` row."""
    names = list(plans)
    values = {n: plans[n].table["plan"].to_numpy() for n in names}  # whole units stay integers
    ref = values[names[0]]
    cols = {PLAN_PREFIX + n: values[n] for n in names}
    cols |= {DIFF_PREFIX + n: values[n] - ref for n in names[1:]}
    table = pd.DataFrame({"date": list(plans[names[0]].table["date"]), **cols})
    totals = {PLAN_PREFIX + n: [values[n].sum()] for n in names}
    totals |= {DIFF_PREFIX + n: [values[n].sum() - ref.sum()] for n in names[1:]}
    return pd.concat([table, pd.DataFrame({"date": ["total"], **totals})], ignore_index=True)


def plan_scenarios(
    result: Any,
    start: Any,
    end: Any,
    scenarios: Mapping[str, Any] | Sequence[Scenario],
    drivers: Any = None,
    name_problems: bool = True,
    **plan_options: Any,
) -> Scenarios:
    """Plan ``[start, end]`` under each scenario; the first is the reference.

    Parameters
    ----------
    result : FitResult
    start, end
        The horizon, as for :func:`evcal.plan.make_plan`.
    scenarios : mapping or sequence of Scenario
        Name -> calendar (path, YAML text, Calendar; None: the fitted one), in order, or
        :class:`Scenario` items. Two or more, names unique.
    drivers : path or DataFrame, optional
        The outside drivers' future values, the same for every scenario that gives none of its own.
    name_problems : bool
        Start each problem of a scenario's calendar or plan with ``scenario NAME:`` (:func:`compare`
        keeps its own wording).
    **plan_options
        ``total``, ``totals``, ``new_events``, ``n_sims``, ``seed``, ``whole_units``: the same for all. With
        ``whole_units`` each plan is rounded as :func:`evcal.plan.make_plan` rounds it, and the by-event
        table takes its parts from the plan before the rounding (``Scenarios.unrounded``).

    Examples
    --------
    >>> sc = plan_scenarios(res, "2027", "2027", {"now": None, "moved": "moved.yaml"})  # doctest: +SKIP
    >>> sc.table.columns.tolist()                                                      # doctest: +SKIP
    ['date', 'plan:now', 'plan:moved', 'difference:moved']
    """
    items = ([Scenario(str(n), cal) for n, cal in scenarios.items()]
             if isinstance(scenarios, Mapping) else list(scenarios))
    items = [replace(s, drivers=drivers) if s.drivers is None else s for s in items]
    check_scenarios([s.name for s in items])
    whole = bool(plan_options.pop("whole_units", False))
    unrounded = {s.name: _plan(result, start, end, s, named=name_problems, **plan_options) for s in items}
    # rounded as make_plan rounds (the one rounding), after the plan before it is kept: the by-event
    # table's parts come from that, and the rounding is a row of its own
    by_year = plan_options.get("totals") is not None
    plans = {n: whole_unit_plan(p, by_year=by_year) for n, p in unrounded.items()} if whole else unrounded
    events = with_assumptions(by_event(plans, unrounded if whole else None), plans)
    return Scenarios(plans=plans, table=side_by_side(plans), events=events, unrounded=unrounded)


def check_scenarios(names: Sequence[str]) -> None:
    """Two or more scenarios, each named, no name twice: else one :class:`PlanError` line.

    Examples
    --------
    >>> check_scenarios(["now", "moved"])
    >>> try:
    ...     check_scenarios(["now", "now"])
    ... except PlanError as err:
    ...     print(err.problems[0][:45])
    scenarios=: the name 'now' is used twice; giv
    """
    what = option("scenarios", flag="--scenario")
    if len(names) < 2:
        raise PlanError(f"{what}: {len(names)} scenario(s) given; give two or more (the first is the "
                        "reference the others are compared with)")
    seen: set[str] = set()
    for name in names:
        if not name.strip():
            raise PlanError(f"{what}: a scenario has an empty name; name each one, e.g. moved=moved.yaml")
        if name in seen:
            raise PlanError(f"{what}: the name {name!r} is used twice; give each scenario its own name "
                            "(NAME=calendar.yaml)")
        seen.add(name)


def _plan(result: Any, start: Any, end: Any, scenario: Scenario, named: bool = True,
          **plan_options: Any) -> Plan:
    """One scenario's plan. A problem with its driver values or file (a missing driver or date column,
    an unreadable file) names the setting and file that gave them; with ``named``, any problem of its
    calendar or plan starts with the scenario's name."""
    from evcal.errors import HistoryError
    from evcal.io.drivers import DriverError

    drivers, setting = scenario.drivers, scenario.setting
    try:
        return make_plan(result, start, end, calendar=scenario.calendar, drivers=drivers, **plan_options)
    except EvcalError as err:  # a DriverError is a HistoryError
        if setting is not None and isinstance(err, HistoryError) and isinstance(drivers, (str, Path)):
            raise DriverError(f"{setting} {Path(drivers).name}: {err.problems[0]}") from None
        if not named:
            raise
        raise type(err)([f"scenario {scenario.name}: {p}" for p in err.problems]) from None


def write_table_csv(table: pd.DataFrame, path: Path) -> Path:
    """A side-by-side table as CSV at ``path`` as it is (callers write to a temporary): dates as
    ``YYYY-MM-DD``, the totals row's label kept."""
    out = table.copy()
    out["date"] = [d.strftime("%Y-%m-%d") if isinstance(d, pd.Timestamp) else d for d in out["date"]]
    write_csv(out, path, index=False, float_format="%.6f")
    return path


def excel_dates(table: pd.DataFrame) -> pd.DataFrame:
    """A side-by-side table whose dates are Excel dates (the totals row's label kept)."""
    out = table.copy()
    out["date"] = [d.date() if isinstance(d, pd.Timestamp) else d for d in out["date"]]
    return out

