"""Plans for a panel: each series planned by the single-series plan, or a parent plan allocated down.

``evcal plan PANEL_DIR --from 2027-01-01 --to 2027-12-31 --out plan.csv``
plans every fitted series (or the ones named with ``--series``) with
:func:`evcal.plan.make_plan` on the series' own model and writes one long
table, keys first. ``--allocate CHILD_DIR`` plans the panel's series (the parents, fitted with
``--level``) and shares each parent's plan over its children in the child
panel by the children's own plans, period by period
(:func:`evcal.panel.rollup.allocate`): the children are planned in blocks
without simulation, so only the parents' intervals are drawn. The summary
sets each parent's plan (top-down) against its children's own plans
(bottom-up).

Planning a series rebuilds its single model first (a fraction of a second);
``--workers N`` spreads the series over N processes.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.amounts import amount
from evcal.errors import PlanError
from evcal.panel.own_plans import event_labels, plan_series
from evcal.panel.result import PanelResult, load_panel
from evcal.panel.targets import TARGET_RULE, apply_targets, read_panel_totals
from evcal.plan.spread import check_total
from evcal.spelling import option

__all__ = ["plan_panel", "plan_panel_cmd"]

def plan_panel(model: PanelResult | str | Path, start: Any, end: Any, series: list[str] | None = None,
               calendar: Any = None, new_events: str = "error", n_sims: int = 1000, seed: int = 0,
               total: Any = None, totals: Any = None, allocate: PanelResult | str | Path | None = None,
               workers: int | None = None, progress: bool | None = None, batched: bool = True,
               fallback: list[dict[str, Any]] | None = None, whole_units: bool = False) -> pd.DataFrame:
    """Plan each selected series of a panel; optionally allocate the plans to a child panel.

    Parameters
    ----------
    batched : bool
        Plan the series that share a design in blocks (:mod:`evcal.plan.batched`); False plans
        every series with the single-series plan.
    fallback : list, optional
        Receives the keys of the series planned one by one (the blocks do not handle them).
    whole_units : bool
        Each series (each child, with ``allocate``) in whole units adding up to its target or its
        rounded total (:func:`evcal.plan.spread.round_table`); allocated children are rounded on
        their own, so in a period they may differ from the parent's whole plan by a few units.

    Returns
    -------
    DataFrame
        ``keys..., date, base, plan, low, high, lift:<event>..., assumptions``
        (a ``lift:`` column is 0 for series whose horizon does not touch the
        event). With ``allocate``: the child keys, ``date, share`` and the
        allocated amounts. ``attrs["notes"]``: the plan's notes for the whole panel (a date file
        whose rows stop inside the horizon, :func:`evcal.calendar.datefile.coverage_notes`).

    Raises
    ------
    PlanError
        ``total``/``totals`` with more than one series (a target is per plan:
        plan one series, or fit the level the target belongs to and allocate).
    """
    from evcal.plan.simulate import check_sims
    from evcal.progress import progress_enabled

    check_sims(n_sims)  # before any series is loaded or planned
    fallback = [] if fallback is None else fallback
    path = None if isinstance(model, PanelResult) else str(model)
    model = load_panel(path) if path is not None else model
    if series:
        keys = [model.find(s) for s in series]
    else:
        fitted = model.series[model.series["status"] == "fitted"]
        keys = fitted[model.key_cols].to_dict("records")
    if not keys:
        raise PlanError("the panel model has no fitted series to plan")
    if total is not None and totals is not None:
        raise PlanError(f"give either {option('total')} (one target, allocated over the series) or "
                        f"{option('totals')} (a file with a target per series), not both")
    # one series with --total or a year,total file: its own plan to the target, as before; otherwise the
    # panel's targets are applied to the panel's plan (evcal.panel.targets)
    panel_targets = None
    if total is not None and len(keys) > 1:
        panel_targets = check_total(total)
    elif totals is not None and (len(keys) > 1 or _keyed_totals(totals, model.key_cols)):
        panel_targets = read_panel_totals(totals, model.key_cols, model.series,
                                          pd.DataFrame(keys, columns=model.key_cols))
    if panel_targets is not None:
        total = totals = None
    options = {"start": start, "end": end, "calendar": calendar, "new_events": new_events,
               "n_sims": n_sims, "seed": seed, "total": total, "totals": totals,
               # a series planned to its own target is rounded to it by make_plan; the rest once, below
               "whole_units": whole_units and (total is not None or totals is not None) and allocate is None}
    show = progress_enabled(progress)
    table = plan_series(model, path, keys, options, workers, show, batched, fallback)
    notes = [*table.attrs.get("notes", []),  # the series' own notes, once for the panel (planned at 0)
             *_coverage_notes(model, calendar, table["date"], model.settings["freq"])]
    if panel_targets is not None:
        table, notes = _to_targets(table, model, panel_targets, whole_units and allocate is None, notes)
    if allocate is not None:
        from evcal.panel.rollup import ALLOCATED_NOTE, unfitted_note
        from evcal.panel.rollup import allocate as _allocate

        children, own = _own_plans(allocate, table, model.key_cols, options, workers, show, batched)
        unfitted = unfitted_note(children.series, children.key_cols, table, model.key_cols)
        table = _allocate(table, model.key_cols, own, children.key_cols)
        notes += [unfitted] if unfitted else []
        table["note"] = ALLOCATED_NOTE
    if whole_units:  # per series (or per allocated child), unless make_plan already rounded it to its target
        from evcal.plan.spread import PANEL_WHOLE_UNITS_NOTE, round_table

        if not options["whole_units"] and (panel_targets is None or allocate is not None):
            keys = children.key_cols if allocate is not None else model.key_cols
            groups = table.groupby(keys, sort=False).ngroup().to_numpy()
            goals = None
            if allocate is not None and panel_targets is not None:  # the children add up to the target
                from evcal.panel.targets import nested_whole_goals

                goals = nested_whole_goals(table["plan"].to_numpy(dtype=float), groups,
                                           table.groupby(model.key_cols, sort=False).ngroup().to_numpy())
            table = round_table(table, groups, goals)
        notes.append(PANEL_WHOLE_UNITS_NOTE)
    table.attrs["notes"] = notes
    return table


def _own_plans(allocate: PanelResult | str | Path, parents: pd.DataFrame, parent_keys: list[str],
               options: dict[str, Any], workers: int | None, show: bool, batched: bool
               ) -> tuple[PanelResult, pd.DataFrame]:
    """The child panel and its children's own plans over the parents' horizon, by their own models.

    Only the children of the parents in ``parents`` are planned, without simulation
    (an allocation uses their plans, not their intervals) and without a target.
    """
    path = None if isinstance(allocate, PanelResult) else str(allocate)
    children = load_panel(path) if path is not None else allocate
    fitted = children.series[children.series["status"] == "fitted"]
    if not set(parent_keys) <= set(children.key_cols) or fitted.empty:
        return children, pd.DataFrame()  # the allocation says what is wrong
    wanted = pd.MultiIndex.from_frame(parents[parent_keys].astype(str))
    fitted = fitted[pd.MultiIndex.from_frame(fitted[parent_keys].astype(str)).isin(wanted)]
    if fitted.empty:
        return children, pd.DataFrame()
    mine = {**options, "n_sims": 0, "total": None, "totals": None, "whole_units": False}
    keys = fitted[children.key_cols].to_dict("records")
    return children, plan_series(children, path, keys, mine, workers, show, batched)


def _keyed_totals(totals: Any, key_cols: list[str]) -> bool:
    """Whether a ``--totals`` file is a panel's (its header names every key column), not a year,total one."""
    path = Path(str(totals))
    if isinstance(totals, dict) or not path.is_file():
        return False
    try:
        header = pd.read_csv(path, nrows=0, dtype=str).columns
    except (OSError, ValueError, pd.errors.ParserError):
        return False  # the targets reader says what is wrong with it
    return set(key_cols) <= {str(c).strip() for c in header}


def _to_targets(table: pd.DataFrame, model: PanelResult, targets: float | pd.DataFrame, whole_units: bool,
                notes: list[str]) -> tuple[pd.DataFrame, list[str]]:
    """The panel plan scaled to one total or each series' target (evcal.panel.targets.apply_targets).

    The notes gain the rule the targets were applied by.
    """
    years = pd.DatetimeIndex(pd.to_datetime(table["date"])).year.to_numpy()  # the date label's year
    one = isinstance(targets, float)
    table, goals = apply_targets(table, model.key_cols, years, total=targets if one else None,
                                 targets=None if one else targets, whole_units=whole_units)
    n = table[model.key_cols].drop_duplicates().shape[0]
    if one:
        notes = [*notes, TARGET_RULE.format(total=amount(targets), n=n)]
    else:
        per = "series and year" if "year" in targets.columns else "series"
        notes = [*notes, f"each of the {n} series is spread to its own target (one per {per}, "
                 f"{amount(sum(goals.values()))} in all) by its own profile: one factor for all its periods"]
    return table, notes


def _coverage_notes(model: PanelResult, calendar: Any, dates: pd.Series, freq: str) -> list[str]:
    """The single-series plan's notes for date files whose rows stop inside the horizon, once for the panel.

    Every series plans with one calendar (the panel's, or ``calendar``) over one horizon, so the
    notes are the panel's, not each series'.
    """
    from evcal.calendar.datefile import coverage_notes
    from evcal.model.inputs import load_calendar_any

    cal = model.fitted_options()[1] if calendar is None else load_calendar_any(calendar)
    return coverage_notes(cal, pd.Timestamp(dates.max()).to_period(freq).end_time)


def plan_panel_cmd(model_dir: str, start: str, end: str, out: str, echo: Callable[[str], None],
                   shown: str | None = None, week_labels: str | None = None, **kwargs: Any) -> None:
    """What ``evcal plan`` does with a panel folder: plan, write one CSV or workbook, print a short summary.

    The output location and ``week_labels`` are checked first (:func:`evcal.outputs.check_output`,
    :func:`evcal.io.weeklabels.check_week_labels`), before any series is planned. ``shown`` is how the
    last line names the output (``stdout`` for ``--out -``, whose table is written to a temporary file
    first); ``out`` itself when left out.
    """
    from evcal._files import atomic_path
    from evcal.formula_safe import write_csv
    from evcal.outputs import check_output

    force = bool(kwargs.pop("force", False))
    if kwargs.pop("compare", None):
        raise PlanError("--compare plans one series; for a panel, plan each calendar to its own file")
    suffix = Path(out).suffix.lower()
    if suffix not in (".csv", ".xlsx"):
        raise PlanError(f"--out {shown or out}: unknown file type; write the panel plan as plan.csv or "
                        "plan.xlsx (or - for stdout)")
    check_output(out, "plan", inputs=[model_dir, kwargs.get("calendar"), kwargs.get("totals"),
                                      kwargs.get("allocate")], force=force)
    if week_labels:
        from evcal.io.weeklabels import check_week_labels

        check_week_labels(_panel_freq(model_dir), week_labels)  # refused before any series is planned
    alone: list[dict[str, Any]] = []
    table = plan_panel(model_dir, start, end, fallback=alone, **kwargs)
    notes = list(table.attrs.get("notes", []))
    if week_labels:
        from evcal.io.weeklabels import with_week_labels

        table = with_week_labels(table, _panel_freq(model_dir), week_labels)
    gaps = _gap_lines(table, model_dir) if kwargs.get("allocate") else []
    if suffix == ".xlsx":
        from evcal.plan.workbook_panel import write_panel_workbook

        how = notes + ([ALLOCATED, *gaps] if kwargs.get("allocate") else [])
        write_panel_workbook(out, table, _event_labels(kwargs.get("allocate") or model_dir), how)
    else:
        with atomic_path(out) as tmp:
            write_csv(table, tmp, index=False, date_format="%Y-%m-%d", float_format="%.6f")
    keys = [c for c in table.columns if c not in ("date", "iso_week", "share", "base", "plan", "low", "high",
                                                   "assumptions", "note", "own_plan")
            and not str(c).startswith("lift:")]
    n_series = len(table[keys].drop_duplicates()) if keys else 1
    echo(f"planned {n_series} series, {table['date'].nunique()} periods each; total "
         f"{amount(float(np.nansum(table['plan'].to_numpy(dtype=float))))}")
    if alone and kwargs.get("total") is None and kwargs.get("totals") is None:  # a target: one series, alone
        listed = "; ".join(", ".join(f"{c}={k[c]}" for c in k) for k in alone[:5])
        more = " ..." if len(alone) > 5 else ""
        if kwargs.get("allocate"):  # the series planned alone are parents; the table holds their children
            echo(f"{len(alone)} parent series planned one by one (per-series error models, or a block fit "
                 f"that broke down): {listed}{more}")
        else:
            echo(f"{n_series - len(alone)} series planned in blocks, {len(alone)} one by one (per-series "
                 f"error models, or a block fit that broke down): {listed}{more}")
    for note in notes:
        echo(f"Note: {note}")
    if kwargs.get("allocate"):
        echo(ALLOCATED)
        for line in gaps:
            echo(line)
    echo("Plans are estimates; the decisions stay with the people who own them.")
    echo(f"\nwrote {shown or out} ({len(table)} rows)")


#: how an allocated (``--allocate``) panel plan was made
ALLOCATED = ("allocated top-down: each parent's plan in each period shared over its children by their own "
             "plans there (base and scheduled event lifts)")


def _gap_lines(table: pd.DataFrame, model_dir: str) -> list[str]:
    """The summary's lines on top-down against bottom-up of an allocated plan (:mod:`evcal.panel.summary`)."""
    from evcal.panel.rollup import plan_gaps
    from evcal.panel.summary import gap_lines

    parent_keys = [str(c) for c in _panel_document(model_dir)["keys"]]
    return gap_lines(plan_gaps(table, parent_keys), parent_keys)


def _panel_document(model_dir: str) -> dict[str, Any]:
    """A panel folder's ``panel.json`` (its settings), read without its tables."""
    from evcal.store.values import read_json

    return read_json(Path(model_dir) / "panel.json")


def _panel_freq(model_dir: str) -> str:
    """The period frequency of a panel folder (:func:`_panel_document`)."""
    return str(_panel_document(model_dir).get("freq", ""))


def _event_labels(model_dir: str) -> dict[str, str]:
    """Event code -> its label (``panel.json``'s ``events``), for the workbook's headers."""
    return event_labels(_panel_document(model_dir))
