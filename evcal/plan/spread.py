"""Spreading a target total over the plan, keeping its shape.

Every amount column of the plan (base, plan, low, high and each event's
lift) is multiplied by one factor per year, so that the year's planned
periods add up to its target and every ratio between periods, and between
a lift and the base, stays what the model said.
"""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import PlanError
from evcal.plan.horizon import period_years
from evcal.spelling import option, subject

AMOUNT_COLUMNS = ("base", "plan", "low", "high")
#: the panel plan's note when each series is in whole units (:func:`round_table` per series)
PANEL_WHOLE_UNITS_NOTE = ("whole units: each series' periods are whole numbers, apportioned by largest "
                          "remainder (Hamilton's method) so they add up exactly to its target or its total "
                          "rounded to a whole unit; low is rounded down and high up")
#: the plan table's column of what each outside driver's planned values add: ``driver:price``
DRIVER_PREFIX = "driver:"


def check_total(value: Any, what: str | None = None) -> float:
    """A target total as a positive finite float, or a one-line :class:`PlanError`.

    Examples
    --------
    >>> check_total("125000")
    125000.0
    >>> check_total(-5)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    evcal.errors.PlanError: total=-5: the target total must be a positive number of units, ...
    """
    try:
        if isinstance(value, bool):
            raise TypeError
        x = float(str(value).replace(",", "").replace("_", "")) if isinstance(value, str) else float(value)
    except (TypeError, ValueError):
        head = option("total", value, quote=True) if what is None else f"{what} {value!r}"
        raise PlanError(f"{head}: not a number; give the target total in units, "
                        f"e.g. {option('total', 125000)}") from None
    if not math.isfinite(x) or x <= 0:
        head = option("total", value) if what is None else f"{what} {value}"
        raise PlanError(f"{head}: the target total must be a positive number of units, "
                        f"e.g. {option('total', 125000)}")
    return x


def read_totals(source: str | Path | dict[Any, Any]) -> dict[int, float]:
    """Targets per year from a dict ``{year: total}`` or a CSV file with columns ``year,total``.

    Raises
    ------
    PlanError
        Unreadable file, missing columns, a year or total that is not valid
        (named by file and row), or a year given twice.
    """
    if isinstance(source, dict):
        out: dict[int, float] = {}
        for k, v in source.items():
            try:
                year = int(k)
            except (TypeError, ValueError):
                raise PlanError(f"totals: {k!r} is not a year; use four-digit years as keys") from None
            out[year] = check_total(v, what=f"totals {year}:")
        return out
    path = Path(source)
    if not path.is_file():
        raise PlanError(f"{path}: totals file not found; give a CSV with columns year,total")
    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False)
    except (OSError, ValueError, pd.errors.ParserError) as err:
        raise PlanError(f"{path}: not a readable CSV ({err}); give columns year,total") from None
    cols = {c.strip().lower(): c for c in frame.columns}
    missing = [c for c in ("year", "total") if c not in cols]
    if missing:
        raise PlanError(f"{path}: missing column {', '.join(missing)}; the totals file needs the "
                        f"columns year,total (found {', '.join(map(str, frame.columns)) or 'none'})")
    problems: list[str] = []
    out = {}
    years_raw = frame[cols["year"]].astype(str).str.strip().tolist()
    totals_raw = frame[cols["total"]].astype(str).str.strip().tolist()
    for i, (raw_year, raw_total) in enumerate(zip(years_raw, totals_raw, strict=True), start=2):
        # row 1 is the header, so data rows are numbered from 2 as a spreadsheet shows them
        if not raw_year and not raw_total:
            continue
        if not raw_year.isdigit() or len(raw_year) != 4:
            problems.append(f"{path}: row {i}, column year: {raw_year!r} is not a four-digit year")
            continue
        year = int(raw_year)
        try:
            total = check_total(raw_total, what=f"{path}: row {i}, column total:")
        except PlanError as err:
            problems += err.problems
            continue
        if year in out:
            problems.append(f"{path}: row {i}: year {year} is given twice; give one total per year")
            continue
        out[year] = total
    if problems:
        raise PlanError(problems)
    if not out:
        raise PlanError(f"{path}: no rows; give one row per year: year,total")
    return out


def spread(table: pd.DataFrame, years: np.ndarray, total: float | None, totals: dict[int, float] | None
           ) -> tuple[pd.DataFrame, dict[int, float], dict[int, float] | None]:
    """Scale every amount column (``base, plan, low, high, lift:*``) so the plan meets its target.

    ``total``: one factor for the whole horizon; ``totals``: one factor per year
    (a year's periods add up to its target). Returns the scaled table, the
    factor of each year and each year's target (empty and None without a target).
    """
    plan = table["plan"].to_numpy()
    needed = sorted({int(y) for y in years})
    if total is not None:
        whole = float(plan.sum())
        if not np.isfinite(whole) or whole <= 0:
            raise PlanError(f"{subject('total')}: the plan adds up to {whole:g}, so it cannot be spread to a "
                            "total; check that the horizon is not wholly closed")
        factors = dict.fromkeys(needed, total / whole)
    elif totals is not None:
        missing = [y for y in needed if y not in totals]
        if missing:
            have = ", ".join(str(y) for y in sorted(totals)) or "none"
            raise PlanError(f"{subject('totals')}: no total for {', '.join(map(str, missing))}; the horizon "
                            f"covers {', '.join(map(str, needed))} (totals given for {have}); add a row per "
                            "year")
        factors = {}
        for y in needed:
            s = float(plan[years == y].sum())
            if not np.isfinite(s) or s <= 0:
                raise PlanError(f"{subject('totals')}: the plan for {y} adds up to {s:g}, so it cannot be "
                                "spread to a total; check that the horizon is not wholly closed")
            factors[y] = totals[y] / s
    else:
        return table, {}, None
    out = table.copy()
    f = np.array([factors[int(y)] for y in years], dtype=float)
    for c in out.columns:
        if c in AMOUNT_COLUMNS or str(c).startswith(("lift:", DRIVER_PREFIX)):
            out[c] = out[c].to_numpy(dtype=float) * f
    scaled = out["plan"].to_numpy()
    target = {y: float(scaled[years == y].sum()) for y in needed} if totals is None \
        else {y: float(totals[y]) for y in needed}
    return out, factors, target


def apportion(values: np.ndarray, total: int) -> np.ndarray:
    """Whole numbers that add up to ``total``, each the floor or the ceiling of its value.

    Largest-remainder apportionment (Hamilton's method): every value is
    floored, then the units still missing go one each to the values with the
    largest fractional remainders (ties: the earlier value first). It needs
    ``|total - sum(values)| < 1``, which holds when ``total`` is the rounded sum
    or the rounded target the values were spread to; then every result is
    within 1 of its value. Negative values (closures) are floored like the rest.

    Examples
    --------
    >>> apportion(np.array([10.4, 20.4, 30.2]), 61).tolist()
    [11, 20, 30]
    >>> apportion(np.array([0.5, 0.5, 0.5, 0.5]), 2).tolist()
    [1, 1, 0, 0]
    >>> apportion(np.array([-2.5, 7.5]), 5).tolist()
    [-2, 7]
    """
    return apportion_rows(np.asarray(values, dtype=float)[None, :], np.array([total]))[0]


def apportion_rows(values: np.ndarray, totals: np.ndarray) -> np.ndarray:
    """:func:`apportion` of each row of ``values`` (n x k) to its whole ``totals[i]``, all rows at once.

    Examples
    --------
    >>> apportion_rows(np.array([[10.4, 20.4, 30.2], [0.5, 0.5, 0.5]]), np.array([61, 2])).tolist()
    [[11, 20, 30], [1, 1, 0]]
    """
    v = np.asarray(values, dtype=float)
    floors = np.floor(v)
    missing = np.rint(np.asarray(totals, dtype=float) - floors.sum(axis=1)).astype(np.int64)
    bad = (missing < 0) | (missing > v.shape[1])
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(f"apportion: {v.shape[1]} values adding up to {float(v[i].sum()):g} cannot be "
                         f"rounded to a total of {totals[i]}")
    # each value's rank by remainder within its row, largest first (ties: the earlier value first)
    order = np.argsort(-(v - floors), axis=1, kind="stable")
    rank = np.empty_like(order)
    np.put_along_axis(rank, order, np.arange(v.shape[1])[None, :].repeat(len(v), axis=0), axis=1)
    return floors.astype(np.int64) + (rank < missing[:, None])


def whole_number(x: float) -> int:
    """``x`` rounded to the nearest whole number, halves away from zero (a total of 0.5 units is 1)."""
    return int(math.floor(abs(x) + 0.5)) * (1 if x >= 0 else -1)


def round_table(table: pd.DataFrame, groups: np.ndarray, targets: dict[Any, int] | None = None
                ) -> pd.DataFrame:
    """The plan table in whole units: ``plan`` by group, its parts by period, ``low``/``high`` outward.

    ``groups`` labels each row (a year, a series, or one label for the whole
    table); the rows of a group are apportioned (:func:`apportion`) to its
    target in ``targets``, or to the group's rounded sum when it has none. In
    each period, ``base`` and the ``lift:``/``driver:`` columns are then
    apportioned to the period's whole plan, so they still add up to it exactly.
    ``low`` is floored and ``high`` ceiled, so the band never narrows and
    still holds the plan. The amount columns become integers (nullable
    ``Int64`` for a ``low``/``high`` left empty without simulation).
    """
    out = table.copy()
    plan = out["plan"].astype("float64").to_numpy()
    whole = np.zeros(len(plan), dtype=np.int64)
    groups = np.asarray(groups)
    for g in pd.unique(groups):
        rows = np.flatnonzero(groups == g)
        goal = (targets or {}).get(g)
        whole[rows] = apportion(plan[rows], whole_number(float(plan[rows].sum())) if goal is None else goal)
    parts = ["base"] + [c for c in out.columns if str(c).startswith(("lift:", DRIVER_PREFIX))]
    values = out[parts].astype("float64").to_numpy()
    split = apportion_rows(values, whole)  # each period's parts to its whole plan
    for j, c in enumerate(parts):
        out[c] = split[:, j]
    out["plan"] = whole
    for c, edge in (("low", np.floor), ("high", np.ceil)):
        if c in out.columns:
            out[c] = pd.array(edge(out[c].astype("float64").to_numpy()), dtype="Int64")
    return out


def whole_unit_plan(plan: Any, by_year: bool) -> Any:
    """``plan`` (a :class:`~evcal.plan.result.Plan`) in whole units, adding up exactly to its whole target.

    ``by_year``: each year's periods add up to that year's target (``totals``);
    otherwise the whole horizon adds up to ``target_total``, or without a
    target to the model's plan total rounded to a whole number. With year-to-date
    actuals (``plan.actuals``) the targets count them, so the plan's periods add up
    to the target less the actuals, rounded to a whole unit.
    """
    from evcal.plan.actuals import actual_by_year

    done = actual_by_year(plan)
    years = period_years(plan.periods, plan.label)
    notes = list(plan.notes)
    if by_year and plan.target:
        groups, goals = years, {y: whole_number(t - done.get(y, 0.0)) for y, t in plan.target.items()}
        shown = {y: t for y, t in plan.target.items() if t != whole_number(t)}
    else:
        groups = np.zeros(len(years), dtype=int)
        rest = None if plan.target_total is None else plan.target_total - sum(done.values())
        goals = None if rest is None else {0: whole_number(rest)}
        shown = {} if goals is None or plan.target_total == whole_number(plan.target_total) \
            else {"the horizon": plan.target_total}
    table = round_table(plan.table, groups, goals)
    goal = "each year's target" if by_year and goals else "the target" if goals \
        else "the model's total rounded to a whole unit"
    if done and goals:
        goal += " less the actuals so far"
    notes.append(f"whole units: every period is a whole number, apportioned by largest remainder (Hamilton's "
                 f"method) so the plan adds up exactly to {goal}; no period moves by more than one unit; "
                 "low is rounded down and high up, so the band does not narrow")
    if shown:
        notes.append("whole units: the target " + ", ".join(f"{t:,.2f} ({y})" for y, t in shown.items())
                     + " is not a whole number; the plan adds up to it rounded to the nearest unit")
    plan_col = table["plan"].to_numpy()
    target = None if plan.target is None else \
        {y: float(plan_col[years == y].sum()) + done.get(y, 0.0) for y in plan.target}
    total = None if plan.target_total is None else float(goals[0]) + sum(done.values()) if not by_year \
        else plan.target_total
    return replace(plan, table=table, target=target, target_total=total, notes=notes, whole_units=True)
