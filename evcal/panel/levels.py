"""Plans that agree across levels: each level's model plans, then the plans are reconciled.

``evcal plan BOTTOM --reconcile LEVEL ...`` plans the bottom panel model and
each level's model (a panel fitted with ``--level`` on the bottom's key
columns, or a one-series model of the grand total) over one horizon, then
moves every plan as little as it can so that each parent is exactly the sum
of its bottom series (:mod:`evcal.panel.reconcile`). The weights come from
each series' in-sample residuals (actual − fitted of its model folder) on the
periods all series share. The plan file is long: ``level``, the key columns
(blank for columns the level does not have), ``date, plan, plan_before,
adjustment``.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.amounts import amount
from evcal.errors import PlanError
from evcal.panel.level_checks import check_levels, named, skipped_inside
from evcal.panel.reconcile import METHODS, Reconciled, reconcile, summing_structure
from evcal.panel.result import PanelResult, is_panel_dir, load_panel
from evcal.spelling import option, subject

__all__ = ["LevelModel", "plan_levels", "plan_levels_cmd"]

#: what a reconciled plan table holds besides the level and keys
COLUMNS = ["date", "plan", "plan_before", "adjustment"]


class LevelModel:
    """One level's model folder: a panel (keys = the level's columns) or one series (the grand total)."""

    def __init__(self, path: str) -> None:
        from evcal.model import load_model

        self.path = path
        self.panel: PanelResult | None = load_panel(path) if is_panel_dir(path) else None
        self.single = None if self.panel is not None else load_model(path)
        self.keys: list[str] = self.panel.key_cols if self.panel is not None else []
        self.freq = str(self.panel.settings["freq"]) if self.panel is not None else self.single.freq

    def plan(self, start: str, end: str, calendar: Any, new_events: str) -> pd.DataFrame:
        """``keys..., date, plan`` (keys as text) without simulations: only the plan is reconciled."""
        if self.panel is not None:
            from evcal.panel.planning import plan_panel

            table = plan_panel(self.panel, start, end, calendar=calendar, new_events=new_events, n_sims=0,
                               progress=False)
        else:
            from evcal.plan import make_plan

            table = make_plan(self.single, start, end, calendar=calendar, new_events=new_events,
                              n_sims=0).table
        out = table[self.keys + ["date", "plan"]].copy()
        out["date"] = pd.to_datetime(out["date"])
        for c in self.keys:
            out[c] = out[c].astype(str)
        return out

    def residuals(self) -> pd.DataFrame:
        """In-sample actual − fitted: one column per series (a tuple of its keys as text), dates down."""
        fitted = self.panel.fitted if self.panel is not None else self.single.fitted
        frame = pd.DataFrame({"date": pd.to_datetime(fitted["date"]),
                              "resid": fitted["actual"].to_numpy(dtype=float)
                              - fitted["fitted"].to_numpy(dtype=float)})
        frame["series"] = series_ids(fitted, self.keys)
        return frame.pivot_table(index="date", columns="series", values="resid", aggfunc="first",
                                 dropna=False)


def series_ids(frame: pd.DataFrame, keys: list[str]) -> np.ndarray:
    """One text id per row from its key columns (``""`` for the grand total, which has none)."""
    if not keys:
        return np.full(len(frame), "", dtype=object)
    return frame[keys].astype(str).agg("\x1f".join, axis=1).to_numpy(dtype=object) if len(keys) > 1 \
        else frame[keys[0]].astype(str).to_numpy(dtype=object)


def _bottom_keys(bottom: LevelModel, plan: pd.DataFrame, levels: list[LevelModel]) -> pd.DataFrame:
    """The bottom series' keys (and the pooling group column when a level names it: an attribute), as text."""
    keys = plan[bottom.keys].drop_duplicates().reset_index(drop=True)
    group = bottom.panel.settings.get("group_col")
    if group and group not in keys.columns and any(group in lv.keys for lv in levels):
        table = bottom.panel.series[bottom.keys + ["pool_group"]].astype(str)
        keys = keys.merge(table.rename(columns={"pool_group": group}), on=bottom.keys, how="left")
    return keys


def refuse(options: dict[str, Any]) -> None:
    """One line for a setting the reconciled plan cannot honour, before any work."""
    if options.get("total") is not None or options.get("totals") is not None:
        flag = "--total" if options.get("total") is not None else "--totals"
        raise PlanError(f"{flag} with --reconcile: a target moves one level's plan and the reconciliation "
                        "moves it again, so both cannot hold; plan without the target, or plan a panel "
                        "level (fitted with --level) to it and spread it down with --allocate")
    for name, flag in (("allocate", "--allocate"), ("compare", "--compare"), ("series", "--series"),
                       ("actuals", "--actuals"), ("drivers", "--drivers"),
                       ("compare_drivers", "--compare-drivers"), ("week_labels", "--week-labels")):
        if options.get(name):
            why = {"--week-labels": "the reconciled plan is written without them"}.get(
                flag, "it is made for one model's plan")
            raise PlanError(f"{flag} with --reconcile: {why}; leave out {flag} (or --reconcile)")


def plan_levels(bottom_dir: str, level_dirs: list[str], start: str, end: str, method: str = "auto",
                calendar: Any = None, new_events: str = "error", whole_units: bool = False
                ) -> tuple[pd.DataFrame, Reconciled, list[str]]:
    """Plan the bottom model and each level's, then reconcile them (see the module notes).

    ``whole_units``: the reconciled plans in whole units that still add up (:func:`round_reconciled`).

    Returns
    -------
    table : DataFrame
        ``level, keys..., date, plan, plan_before, adjustment``: the bottom rows first, then each
        level's, keys blank where a level does not have the column.
    reconciled : Reconciled
        The numbers (:func:`evcal.panel.reconcile.reconcile`): method, why, λ, the summary per level.
    notes : list of str
        What the reader should know (series left out).

    Examples
    --------
    >>> table, rec, notes = plan_levels("models/items", ["models/products", "models/stores"],
    ...                                 "2027-01-01", "2027-12-31")          # doctest: +SKIP
    """
    if method not in METHODS:
        raise PlanError(f"{option('method', method, flag='--reconcile-method')}: use one of "
                        f"{', '.join(METHODS)}")
    if not is_panel_dir(bottom_dir):
        raise PlanError(f"{subject('bottom_dir', flag='--reconcile')}: {bottom_dir} is a one-series model; "
                        "plan the panel model of the bottom series (fitted with --series-col) and each "
                        f"level's model with {subject('level_dirs', flag='--reconcile')}")
    bottom = LevelModel(bottom_dir)
    levels = [LevelModel(d) for d in level_dirs]
    check_levels(bottom, levels)
    notes = skipped_inside(bottom, levels)
    bottom_plan = bottom.plan(start, end, calendar, new_events)
    bkeys = _bottom_keys(bottom, bottom_plan, levels)
    for lv in levels:
        if lv.freq != bottom.freq:
            raise PlanError(f"{named(lv.path)}: its periods are {lv.freq}, the bottom model's "
                            f"{bottom.freq}; fit every level at the bottom model's frequency")
    structure = summing_structure(bkeys, [lv.keys for lv in levels], bottom_cols=bottom.keys)
    bottom_plan = bottom_plan.merge(bkeys, on=bottom.keys, how="left")
    dates = pd.DatetimeIndex(sorted(bottom_plan["date"].unique()))
    yb = _wide(bottom_plan, bottom.keys, bkeys, dates, bottom_dir, "the bottom model")
    agg_rows = []
    res_cols = [bottom.residuals()]
    for lv in levels:
        plan = lv.plan(start, end, calendar, new_events)
        got = pd.DatetimeIndex(sorted(plan["date"].unique()))
        if not got.equals(dates):
            raise PlanError(f"{named(lv.path)}: its plan has {len(got)} periods "
                            f"({got.min():%Y-%m-%d} to {got.max():%Y-%m-%d}), the bottom model's "
                            f"{len(dates)} ({dates.min():%Y-%m-%d} to {dates.max():%Y-%m-%d}); fit both with "
                            "the same date labels")
        mine = structure.agg_keys[structure.agg_keys["level"] == (",".join(lv.keys) or "total")]
        agg_rows.append(_wide(plan, lv.keys, mine[lv.keys], dates, lv.path, "its model"))
        extra = len(plan[lv.keys].drop_duplicates()) - len(mine) if lv.keys else 0
        if extra > 0:
            notes.append(f"{lv.path}: {extra} series with no planned bottom series were left out")
        res_cols.append(lv.residuals())
    Eb, Ea = _residuals(res_cols, bkeys[bottom.keys], structure, levels)
    rec = reconcile(structure, yb, np.vstack(agg_rows), Eb, Ea, method=method)
    if not bool((bottom.panel.settings.get("options") or {}).get("allow_negative")):
        rec, note = _floored(rec, dates)
        notes += [note] if note else []
    if whole_units:
        rec, note = round_reconciled(rec)
        notes.append(note)
    return _long(structure, rec, dates), rec, notes


def _floored(rec: Reconciled, dates: pd.DatetimeIndex) -> tuple[Reconciled, str | None]:
    """Bottom plans below zero set to zero for a bottom model fitted without allow_negative, and the note
    naming the level, the series and the periods (:func:`evcal.panel.reconcile.floor_at_zero`)."""
    from evcal.panel.reconcile import floor_at_zero

    rec, hit = floor_at_zero(rec)
    if not hit.any():
        return rec, None
    rows, cols = np.nonzero(hit)
    level = rec.structure.levels[0]
    keys = rec.structure.bottom_keys[level.split(",")].astype(str)
    shown = [f"{','.join(keys.iloc[r])} {dates[c]:%Y-%m-%d}"
             for r, c in zip(rows[:3], cols[:3], strict=True)]
    more = f" and {len(rows) - 3} more" if len(rows) > 3 else ""
    return rec, (f"{len(rows)} reconciled plans of {len(set(rows))} series of level {level} were below zero "
                 f"({'; '.join(shown)}{more}); the bottom model's series cannot be negative "
                 "(fitted without allow_negative), so they were set to zero and every level above is the sum "
                 "of its bottom series again: those parents moved a little more than the least the "
                 "reconciliation needs")


def round_reconciled(rec: Reconciled) -> tuple[Reconciled, str]:
    """The reconciled plans in whole units that still add up at every level, and the note that says how.

    In each period the bottom series' plans are rounded by largest remainder
    (:func:`evcal.plan.spread.apportion_rows`) to the period's rounded grand total, so each is within a
    unit of its reconciled plan; every level above is then the sum of its rounded bottom series. Rounding
    each level on its own cannot keep the sums when levels are crossed (a product × store bottom rounded
    within each product need not add up within each store), so the aggregates are not rounded themselves:
    each is within a unit per bottom series in it of its reconciled plan (the note gives the largest gap
    per level). The adjustment sizes are those of the whole-unit plans.

    Examples
    --------
    >>> import pandas as pd
    >>> from evcal.panel.reconcile import reconcile, summing_structure
    >>> st = summing_structure(pd.DataFrame({"store": ["s", "t", "u"]}), [[]])
    >>> rec = reconcile(st, np.array([[10.4], [20.4], [30.2]]), np.array([[61.0]]), method="ols")
    >>> whole, note = round_reconciled(rec)
    >>> whole.bottom.ravel().tolist(), whole.agg.ravel().tolist()
    ([11, 20, 30], [61])
    """
    from dataclasses import replace

    from evcal.panel.reconcile import adjustment_summary
    from evcal.plan.spread import apportion_rows, whole_number

    totals = np.array([whole_number(x) for x in rec.bottom.sum(axis=0)], dtype=np.int64)
    bottom = apportion_rows(rec.bottom.T, totals).T  # periods as rows: each period's bottoms to its total
    agg = np.rint(rec.structure.A @ bottom.astype(float)).astype(np.int64)
    gaps = []
    names = rec.structure.agg_keys["level"].to_numpy()
    for name in rec.structure.levels[1:]:
        gap = np.abs(agg[names == name] - rec.agg[names == name])
        gaps.append(f"{name} {amount(float(gap.max())) if gap.size else 0}")
    note = ("whole units: in each period the bottom series' plans are rounded by largest remainder to the "
            "period's rounded total, and every level above is the sum of its rounded bottom series (largest "
            f"gap to its reconciled plan, in units: {', '.join(gaps)})")
    summary = adjustment_summary(rec.structure, bottom - rec.bottom_before, rec.bottom_before,
                                 agg - rec.agg_before, rec.agg_before)
    return replace(rec, bottom=bottom, agg=agg, summary=summary), note


def _wide(plan: pd.DataFrame, keys: list[str], want: pd.DataFrame, dates: pd.DatetimeIndex, path: str,
          whose: str) -> np.ndarray:
    """Rows of ``want`` (keys as text) × ``dates`` from a long plan; one line if a series is missing."""
    if not keys:
        return plan.set_index("date")["plan"].reindex(dates).to_numpy(dtype=float)[None, :]
    index = pd.MultiIndex.from_frame(want[keys].astype(str))
    wide = plan.pivot_table(index=keys, columns="date", values="plan", aggfunc="first")
    wide = wide.reindex(index=index if len(keys) > 1 else index.get_level_values(0), columns=dates)
    gaps = np.flatnonzero(wide.isna().any(axis=1).to_numpy())
    if len(gaps):
        shown = ", ".join(f"{c}={v}" for c, v in zip(keys, want.iloc[gaps[0]][keys], strict=True))
        raise PlanError(f"{named(path)}: {whose} has no plan for {shown}, which the bottom series make; "
                        "fit that level from the same history as the bottom model")
    return wide.to_numpy(dtype=float)


def _residuals(frames: list[pd.DataFrame], bottom_keys: pd.DataFrame, structure: Any,
               levels: list[LevelModel]) -> tuple[np.ndarray | None, np.ndarray | None]:
    """T × n_b and T × n_a residuals on the dates every series has one; None when there are none."""
    wanted = [series_ids(bottom_keys, list(bottom_keys.columns))]
    for lv in levels:
        mine = structure.agg_keys[structure.agg_keys["level"] == (",".join(lv.keys) or "total")]
        wanted.append(series_ids(mine, lv.keys))
    cols = [frame.reindex(columns=pd.Index(ids)) for frame, ids in zip(frames, wanted, strict=True)]
    joined = pd.concat(cols, axis=1, join="inner").dropna(axis=0, how="any")
    if joined.empty:
        return None, None
    values = joined.to_numpy(dtype=float)
    n_b = len(wanted[0])
    return values[:, :n_b], values[:, n_b:]


def _long(structure: Any, rec: Reconciled, dates: pd.DatetimeIndex) -> pd.DataFrame:
    """The long plan table: bottoms then aggregates, each series' periods in order."""
    H = len(dates)
    key_cols = [c for c in structure.bottom_keys.columns]
    bottom = structure.bottom_keys.assign(level=structure.levels[0])
    agg = structure.agg_keys.reindex(columns=["level", *key_cols]).astype(object).fillna("")
    keys = pd.concat([bottom[["level", *key_cols]], agg], ignore_index=True)
    table = keys.loc[keys.index.repeat(H)].reset_index(drop=True)
    table["date"] = np.tile(dates.to_numpy(), len(keys))
    table["plan"] = np.vstack([rec.bottom, rec.agg]).ravel()
    table["plan_before"] = np.vstack([rec.bottom_before, rec.agg_before]).ravel()
    table["adjustment"] = table["plan"] - table["plan_before"]
    return table


def method_lines(rec: Reconciled) -> list[str]:
    """How the plans were moved, one line each: the method, why, and MinT's λ (the workbook, the report).

    Examples
    --------
    >>> import pandas as pd
    >>> from evcal.panel.reconcile import reconcile, summing_structure
    >>> st = summing_structure(pd.DataFrame({"store": ["s", "t"]}), [[]])
    >>> method_lines(reconcile(st, np.array([[10.0], [20.0]]), np.array([[33.0]]), method="ols"))
    ['method: ols', 'why: as asked']
    """
    lines = [f"method: {rec.method}", f"why: {rec.reason}"]
    if rec.lam is not None:
        lines.append(f"shrinkage intensity λ = {rec.lam:.3f} (0: the residuals' covariance as estimated, "
                     "1: its diagonal only)")
    return lines


def with_note(table: pd.DataFrame, rec: Reconciled, notes: list[str]) -> pd.DataFrame:
    """The CSV's table with a last column ``note``: each level's first row says how the plans were moved
    (the method, why, λ) and what was left out; the other rows leave it empty (it would repeat on every
    row of every series). ``evcal report --plan`` reads it.

    Examples
    --------
    >>> import pandas as pd
    >>> from evcal.panel.reconcile import reconcile, summing_structure
    >>> st = summing_structure(pd.DataFrame({"store": ["s", "t"]}), [[]])
    >>> rec = reconcile(st, np.array([[10.0], [20.0]]), np.array([[33.0]]), method="ols")
    >>> t = with_note(pd.DataFrame({"level": ["store", "store", "total"]}), rec, [])
    >>> [n[:22] for n in t["note"]]
    ['reconciled by ols (as ', '', 'reconciled by ols (as ']
    """
    text = "; ".join([describe(rec)[0], *(f"note: {n}" for n in notes)])
    first = ~table["level"].duplicated().to_numpy()
    return table.assign(note=np.where(first, text, ""))


def describe(rec: Reconciled) -> list[str]:
    """The summary lines: the method, why, and the adjustment sizes per level."""
    lam = f"; shrinkage intensity λ = {rec.lam:.3f}" if rec.lam is not None else ""
    lines = [f"reconciled by {rec.method} ({rec.reason}{lam}): every parent's plan is now the sum of "
             "its bottom series' plans"]
    for r in rec.summary.itertuples():
        lines.append(f"  {r.level}: {r.series} series moved {r.mean_abs_pct:.2f} % of their plans in all; "
                     f"the largest move {amount(r.max_abs_units)} units ({r.max_abs_pct:.2f} % of an average "
                     f"period of {r.largest_at})")
    return lines


def plan_levels_cmd(model_dir: str, start: str, end: str, out: str, echo: Callable[[str], None],
                    shown: str | None, level_dirs: list[str], method: str, **options: Any) -> None:
    """What ``evcal plan --reconcile`` does: refuse what cannot hold, plan, reconcile, write one CSV (the long
    table) or a workbook (a sheet per level, :mod:`evcal.plan.workbook_levels`)."""
    from evcal._files import atomic_path
    from evcal.formula_safe import write_csv
    from evcal.outputs import check_output

    refuse(options)
    suffix = Path(out).suffix.lower()
    if suffix not in (".csv", ".xlsx"):
        raise PlanError(f"--out {shown or out}: unknown file type; write plan.csv (one long table), "
                        "plan.xlsx (a sheet per level) or - for stdout")
    check_output(out, "plan", inputs=[model_dir, *level_dirs, options.get("calendar")],
                 force=bool(options.get("force")))
    table, rec, notes = plan_levels(model_dir, level_dirs, start, end, method=method,
                                    calendar=options.get("calendar"),
                                    new_events=options.get("new_events") or "error",
                                    whole_units=bool(options.get("whole_units")))
    if suffix == ".xlsx":
        from evcal.plan.workbook_levels import write_levels_workbook

        write_levels_workbook(out, table, rec.summary, method_lines(rec), notes)
        names = ", ".join(rec.summary["level"])
        wrote = f"{len(rec.summary) + 2} sheets: Levels, one per level ({names}), Notes"
    else:
        with atomic_path(out) as tmp:
            write_csv(with_note(table, rec, notes), tmp, index=False, date_format="%Y-%m-%d",
                      float_format="%.6f")
        wrote = f"{len(table)} rows: level, keys, date, plan, plan_before, adjustment, note"
    for line in describe(rec) + [f"Note: {n}" for n in notes]:
        echo(line)
    echo("Plans are estimates; the decisions stay with the people who own them.")
    echo(f"\nwrote {shown or out} ({wrote})")
