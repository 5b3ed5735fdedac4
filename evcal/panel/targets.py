"""Targets for a panel plan: one total allocated over the series, or a target per series from a file.

``evcal plan PANEL_DIR --total N``: every planned series first gets its own
model plan for the horizon; the total ``N`` is then allocated over the series
in proportion to those plans (a series planned at 12 % of the panel's model
plan gets 12 % of ``N``), and each series is spread within itself by its own
profile: its periods are scaled by one factor, so every ratio between its
periods and between a lift and its base stays what its model said. As every
series gets the same factor, ``N / (sum of the model plans)``, the allocation
is the top-down "share of the model plan" rule and changes no series' shape.

``--totals targets.csv``: the key columns and ``total`` (and optionally
``year``: then each series' periods of a year are scaled to that year's
target, as ``--totals`` does for one model). With ``--round`` each series is
in whole units adding up exactly to its whole target; under ``--total N`` the
series' whole targets are apportioned from ``N`` by largest remainder
(Hamilton's method), so the whole panel adds up to ``N`` exactly.

Examples
--------
>>> t = pd.DataFrame({"store": ["a", "a", "b", "b"], "plan": [1.0, 3.0, 2.0, 4.0],
...                   "base": [1.0, 3.0, 2.0, 4.0], "low": [0.5, 2.0, 1.0, 3.0], "high": [2.0, 4, 3, 5]})
>>> out, goals = apply_targets(t, ["store"], np.full(4, 2027), total=100.0)
>>> out["plan"].round(6).tolist()
[10.0, 30.0, 20.0, 40.0]
>>> goals
{('a',): 40.0, ('b',): 60.0}
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import PlanError
from evcal.plan.spread import AMOUNT_COLUMNS, apportion, check_total, round_table, whole_number
from evcal.spelling import option, subject

__all__ = ["apply_targets", "nested_whole_goals", "read_panel_totals", "TARGET_RULE"]

#: the note of a panel plan spread to one total (the rule, as the docs state it)
TARGET_RULE = ("the target {total} is allocated over the {n} series in proportion to each series' own "
               "model plan for the horizon, then each series is spread within itself by its own profile "
               "(one factor for all its periods, so its shape and its lifts' ratios to its base stay the "
               "model's)")
#: how many problems of one kind a totals file lists before "and N more"
LISTED = 5


def _key_text(cols: list[str], key: tuple[str, ...]) -> str:
    return ", ".join(f"{c}={v}" for c, v in zip(cols, key, strict=True))


def read_panel_totals(path: str | Path, key_cols: list[str], panel_keys: pd.DataFrame,
                      planned: pd.DataFrame) -> pd.DataFrame:
    """A panel's targets from a CSV with the key columns, ``total`` and optionally ``year``.

    Parameters
    ----------
    path : path
        The targets file; row 1 is the header, so data rows are numbered from 2 as a spreadsheet shows them.
    key_cols : list of str
        The panel's key columns (all must be in the file).
    panel_keys : DataFrame
        Every series of the panel (``series.csv``'s key columns): a key not among them is an error.
    planned : DataFrame
        The series being planned: each needs a row (a row for a series of the panel that is not planned,
        skipped at fit or left out by ``--series``, is left out).

    Returns
    -------
    DataFrame
        ``keys..., [year], total`` for the planned series, keys as text, ``total`` a float.

    Raises
    ------
    PlanError
        One line per problem: file missing or unreadable, a missing column, a total that is not a positive
        number or a year that is not a four-digit year (file and row), a key not in the panel (row), a key
        (and year) given twice (both rows), a planned series with no row.
    """
    path = Path(path)
    need = ", ".join([*key_cols, "total"])
    if not path.is_file():
        raise PlanError(f"{path}: totals file not found; give a CSV with the columns {need} (and optionally "
                        "year)")
    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False)
    except (OSError, ValueError, pd.errors.ParserError) as err:
        raise PlanError(f"{path}: not a readable CSV ({err}); give the columns {need}") from None
    cols = {str(c).strip(): c for c in frame.columns}
    missing = [c for c in [*key_cols, "total"] if c not in cols]
    if missing:
        raise PlanError(f"{path}: missing column {', '.join(missing)}; a panel's totals file needs the key "
                        f"columns and total ({need}, optionally year; found "
                        f"{', '.join(map(str, frame.columns)) or 'none'})")
    by_year = "year" in cols
    known = set(map(tuple, panel_keys[key_cols].astype(str).to_numpy()))
    wanted = list(map(tuple, planned[key_cols].astype(str).to_numpy()))
    problems: list[str] = []
    seen: dict[tuple[str, ...], int] = {}
    rows = []
    for i, rec in enumerate(frame.to_dict("records"), start=2):
        raw = {c: str(rec[cols[c]]).strip() for c in cols}
        if not any(raw.values()):
            continue
        key = tuple(raw[c] for c in key_cols)
        shown = _key_text(key_cols, key)
        if key not in known:
            problems.append(f"{path}: row {i}: {shown} is not a series of the panel model; use the keys of "
                            "series.csv")
            continue
        year = None
        if by_year:
            if not raw["year"].isdigit() or len(raw["year"]) != 4:
                problems.append(f"{path}: row {i}, column year: {raw['year']!r} is not a four-digit year")
                continue
            year = int(raw["year"])
        try:
            total = check_total(raw["total"], what=f"{path}: row {i}, column total:")
        except PlanError as err:
            problems += err.problems
            continue
        ident = (*key, str(year)) if by_year else key
        if ident in seen:
            what = f"{shown}, year {year}" if by_year else shown
            problems.append(f"{path}: row {i}: {what} is given twice (rows {seen[ident]} and {i}); give one "
                            f"total per series{' and year' if by_year else ''}")
            continue
        seen[ident] = i
        rows.append([*key, *([year] if by_year else []), total])
    have = {tuple(r[:len(key_cols)]) for r in rows}
    absent = [k for k in wanted if k not in have]
    if absent and not problems:
        more = f" and {len(absent) - LISTED} more" if len(absent) > LISTED else ""
        shown = "; ".join(_key_text(key_cols, k) for k in absent[:LISTED])
        problems.append(f"{path}: no total for series {shown}{more}; add a row per series planned, or plan "
                        f"only the series in the file with {option('series')}")
    if problems:
        raise PlanError(problems)
    out = pd.DataFrame(rows, columns=[*key_cols, *(["year"] if by_year else []), "total"])
    keep = pd.Series([k in set(wanted) for k in map(tuple, out[key_cols].to_numpy())], dtype=bool)
    return out[keep.to_numpy()].reset_index(drop=True)


def apply_targets(table: pd.DataFrame, key_cols: list[str], years: np.ndarray, total: float | None = None,
                  targets: pd.DataFrame | None = None, whole_units: bool = False
                  ) -> tuple[pd.DataFrame, dict[tuple[Any, ...], float]]:
    """Scale each series (or each series' year) of a panel plan to its target; optionally in whole units.

    Parameters
    ----------
    table : DataFrame
        The panel plan without targets: ``keys..., date, base, plan, low, high, lift:*``.
    years : array
        The calendar year of each row (by the period's date label).
    total : float, optional
        One target for all series, allocated in proportion to each series' model plan.
    targets : DataFrame, optional
        :func:`read_panel_totals`' table: a target per series (``keys, total``) or per series and year.
    whole_units : bool
        Round each series to its whole target (:func:`evcal.plan.spread.round_table`); under ``total``
        the whole targets are apportioned from the whole total, so all series add up to it exactly.

    Returns
    -------
    DataFrame, dict
        The scaled (and rounded) table, and each group's target (``(keys...)`` or ``(keys..., year)``).

    Raises
    ------
    PlanError
        A series (or year) whose model plan adds up to zero or less, or a year of the horizon with no
        target for a series (one line each).
    """
    by_year = targets is not None and "year" in targets.columns
    group_cols = [*key_cols, "year"] if by_year else list(key_cols)
    frame = table[key_cols].astype(str)
    if by_year:
        frame = frame.assign(year=np.asarray(years, dtype=int))
    gid = frame.groupby(group_cols, sort=False).ngroup().to_numpy()
    labels = frame.drop_duplicates().reset_index(drop=True)
    idents = list(map(tuple, labels.to_numpy().tolist()))
    model = np.bincount(gid, weights=table["plan"].to_numpy(dtype=float), minlength=len(idents))
    if total is not None:
        open_ = np.isfinite(model) & (model > 0)  # a series closed all horizon long gets none of it
        whole = float(model[open_].sum())
        if not open_.any():
            raise PlanError(f"{subject('total')}: the series' plans add up to {float(np.nansum(model)):g}, "
                            "so they cannot be spread to a total; check that the horizon is not wholly "
                            "closed")
        goal = np.where(open_, model * (total / whole), 0.0)
    else:
        given = {tuple(str(v) for v in r[:-1]): float(r[-1])
                 for r in targets[group_cols + ["total"]].itertuples(index=False)}
        lost = [i for i in idents if tuple(map(str, i)) not in given]
        if lost:
            shown = "; ".join(f"{_key_text(key_cols, i[:-1])}, year {i[-1]}" for i in lost[:LISTED])
            more = " ..." if len(lost) > LISTED else ""
            raise PlanError(f"{subject('totals')}: no total for {shown}{more}; the horizon covers these "
                            "years: add a row per series and year")
        goal = np.array([given[tuple(map(str, i))] for i in idents])
    bad = ~np.isfinite(model) | (model <= 0)
    if bad.any() and total is None:
        i = int(np.flatnonzero(bad)[0])
        shown = _key_text(group_cols, tuple(map(str, idents[i])))
        raise PlanError(f"{subject('totals')}: the model plan of {shown} adds up to {model[i]:g}, so it "
                        "cannot be spread to a total; check that its horizon is not wholly closed")
    factor = np.where(model > 0, goal / np.where(model > 0, model, 1.0), 0.0)
    out = table.copy()
    f = factor[gid]
    for c in out.columns:
        if c in AMOUNT_COLUMNS or str(c).startswith("lift:"):
            out[c] = out[c].to_numpy(dtype=float) * f
    goals = {i: float(g) for i, g in zip(idents, goal, strict=True)}
    if whole_units:
        if total is not None:
            whole_goal = apportion(goal, whole_number(total))
        else:
            whole_goal = np.array([whole_number(g) for g in goal], dtype=np.int64)
        out = round_table(out, gid, dict(enumerate(int(g) for g in whole_goal)))
        goals = {i: float(g) for i, g in zip(idents, whole_goal, strict=True)}
    return out, goals


def nested_whole_goals(plan: np.ndarray, children: np.ndarray, parents: np.ndarray) -> dict[int, int]:
    """Whole targets of allocated children that add up to their parents' whole targets and to the whole
    total: the parents' sums apportioned to the rounded total, then each parent's children's sums to its
    whole target (largest remainder, :func:`evcal.plan.spread.apportion`, at each level).

    ``plan`` holds the rows' amounts; ``children`` and ``parents`` label each row (a child lies in one
    parent). Returns child label -> whole target.

    Examples
    --------
    >>> nested_whole_goals(np.array([10.4, 20.4, 30.2, 0.0]), np.array([0, 1, 2, 2]), np.array([0, 0, 1, 1]))
    {0: 11, 1: 20, 2: 30}
    """
    child_sum = pd.Series(plan).groupby(children).sum()
    parent_of = pd.Series(parents).groupby(children).first()
    parent_sum = child_sum.groupby(parent_of).sum()
    parent_goal = dict(zip(parent_sum.index, apportion(parent_sum.to_numpy(),
                                                       whole_number(float(parent_sum.sum()))), strict=True))
    goals: dict[int, int] = {}
    for parent, kids in child_sum.groupby(parent_of):
        goals.update(zip(kids.index, apportion(kids.to_numpy(), int(parent_goal[parent])), strict=True))
    return {int(k): int(v) for k, v in goals.items()}
