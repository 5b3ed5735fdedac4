"""Plans for a panel: each series planned by the single-series plan, or a parent plan allocated down.

``evcal plan PANEL_DIR --from 2027-01-01 --to 2027-12-31 --out plan.csv``
plans every fitted series (or the ones named with ``--series``) with
:func:`evcal.plan.make_plan` on the series' own model and writes one long
table, keys first. ``--allocate CHILD_DIR`` plans the panel's series (the
parents, fitted with ``--level``) and spreads each parent's plan over its
children in the child panel by the children's own base profiles
(:func:`evcal.panel.rollup.allocate`): the fast way to plan thousands of
items, since only the parents are simulated.

Planning a series rebuilds its single model first (a fraction of a second);
``--workers N`` spreads the series over N processes.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.amounts import amount
from evcal.errors import EvcalError, PlanError
from evcal.panel.result import PanelResult, load_panel
from evcal.panel.targets import TARGET_RULE, apply_targets, read_panel_totals
from evcal.plan.spread import check_total
from evcal.spelling import option

__all__ = ["plan_panel", "plan_panel_cmd"]

PLAN_CHUNK = 8


@dataclass
class PlanChunk:
    """A few series to plan: a unit for the runners of :mod:`evcal.panel.distributed`.

    ``model`` is the panel, or its folder when the chunk is planned in a worker
    (which reads the folder itself); ``frame`` holds the plans once made.
    """

    index: int
    model: PanelResult | str
    sids: list[dict[str, Any]]  # the series' keys
    options: dict[str, Any]
    frame: pd.DataFrame | None = None
    positions: list[int] | None = None  # the series' places in the plan's order


def _plan_chunk(chunk: PlanChunk) -> PlanChunk:
    """Plan each series of ``chunk`` with the single-series plan; keys first in its table."""
    from evcal.plan import make_plan

    model = chunk.model if isinstance(chunk.model, PanelResult) else load_panel(chunk.model)
    frames = []
    for pos, key in zip(chunk.positions or range(len(chunk.sids)), chunk.sids, strict=True):
        res = model.series_result(key)
        try:
            plan = make_plan(res, **chunk.options)
        except EvcalError as err:
            shown = ", ".join(f"{c}={key[c]!r}" for c in model.key_cols)
            raise PlanError([f"series {shown}: {p}" for p in err.problems]) from None
        table = plan.table.copy()
        for i, c in enumerate(model.key_cols):
            table.insert(i, c, key[c])
        table["_pos"] = pos
        frames.append(table)
    chunk.frame = pd.concat(frames, ignore_index=True)
    return chunk


def _stored_panel(model: PanelResult, keys: list[dict[str, Any]]) -> Any:
    """The selected series' stored histories as a :class:`~evcal.io.panel.Panel`, in ``keys``' order."""
    from evcal.io.panel import Panel

    cols = model.key_cols
    rows = model.fitted[cols + ["date", "actual"]] if model._fitted is not None else \
        pd.read_parquet(model.fitted_path, columns=cols + ["date", "actual"])
    wanted = pd.DataFrame(keys, columns=cols).astype(str)
    wanted["_pos"] = np.arange(len(keys))
    rows = rows.assign(**{c: rows[c].astype(str) for c in cols}).merge(wanted, on=cols)
    freq = model.settings["freq"]
    per = pd.DatetimeIndex(rows["date"]).to_period(freq)
    periods = pd.period_range(per.min(), per.max(), freq=freq)
    t = (per.asi8 - periods[0].ordinal).astype(int)
    pos = rows["_pos"].to_numpy()
    values = np.full((len(periods), len(keys)), np.nan)
    values[t, pos] = rows["actual"].to_numpy(dtype=float)
    first = np.full(len(keys), len(periods), dtype=int)
    last = np.full(len(keys), -1, dtype=int)
    np.minimum.at(first, pos, t)
    np.maximum.at(last, pos, t)
    return Panel(pd.DataFrame(keys, columns=cols), values, periods, first, last, freq,
                 model.settings["label"], str(model.settings["source"]),
                 str(model.settings.get("value_col", "value")))


def plan_blocks(model: PanelResult, keys: list[dict[str, Any]], options: dict[str, Any]
                ) -> tuple[list[pd.DataFrame], list[int]]:
    """Plan the series that the engine solves in blocks, a block at a time (:mod:`evcal.plan.batched`).

    Returns the blocks' tables (keys first, ``_pos`` the series' place in
    ``keys``) and the places of the series left to the single-series plan.
    """
    from types import SimpleNamespace

    from evcal.engine.run import plan_units
    from evcal.engine.units import BatchUnit
    from evcal.model.inputs import load_calendar_any
    from evcal.plan.batched import block_frame, group_horizon, plan_block, series_weak, solve_block
    from evcal.plan.horizon import horizon_periods
    from evcal.plan.simulate import check_sims
    from evcal.threads import held_blas

    opts, cal = model.fitted_options()
    opts = replace(opts, errors="ols" if opts.errors in ("auto", "ols") else opts.errors)
    panel = _stored_panel(model, keys)
    plan_cal = cal if options["calendar"] is None else load_calendar_any(options["calendar"])
    end = panel.periods[int(panel.last.max())]
    periods = horizon_periods(SimpleNamespace(freq=panel.freq, history_end=str(end), label=panel.label),
                              options["start"], options["end"])
    n_sims = check_sims(options["n_sims"], len(periods))
    frames, alone = [], []
    weak = series_weak(model.lifts, panel.keys)  # each series' own grade (its interval), as lifts.csv says
    horizons: dict[int, Any] = {}
    with held_blas(10**9, 10**3):  # blocks of many series: one BLAS thread, as the panel fit holds it
        units, _, _ = plan_units(panel, cal, opts)
        for unit in units:
            if not isinstance(unit, BatchUnit):
                alone.extend(int(s) for s in unit.sids)
                continue
            fit = solve_block(unit, covariance=n_sims > 0)
            alone.extend(int(s) for s in fit.broken)
            if not len(fit.sids):
                continue
            gid = fit.group.gid
            if gid not in horizons:
                horizons[gid] = group_horizon(fit, plan_cal, periods, options["new_events"])
            h = horizons[gid]
            parts = plan_block(fit, h, plan_cal, n_sims, options["seed"])
            frame = block_frame(fit, h, parts, panel.label, weak, plan_cal, options["new_events"])
            # a base or plan that is not a finite number: the single-series plan says so in one line
            bad = ~np.isfinite(frame[["base", "plan"]].to_numpy()).all(axis=1)
            if bad.any():
                lost = np.unique(frame["_sid"].to_numpy()[bad])
                alone.extend(int(s) for s in lost)
                frame = frame[~frame["_sid"].isin(lost)]
            sid = frame["_sid"].to_numpy()
            for i, c in enumerate(model.key_cols):
                frame.insert(i, c, panel.keys[c].to_numpy()[sid])
            frames.append(frame.rename(columns={"_sid": "_pos"}))
    return frames, sorted(alone)


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
    from evcal.panel.distributed import DaskRunner, local_runner
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
    in_workers = bool(workers) and path is not None
    show = progress_enabled(progress)
    frames: list[pd.DataFrame] = []
    alone = list(range(len(keys)))
    if total is None and totals is None and batched:
        frames, alone = plan_blocks(model, keys, options)
    fallback.extend(keys[i] for i in alone)
    if alone:
        chunks = [PlanChunk(i, path if in_workers else model, [keys[j] for j in alone[a:a + PLAN_CHUNK]],
                            options, positions=alone[a:a + PLAN_CHUNK])
                  for i, a in enumerate(range(0, len(alone), PLAN_CHUNK))]
        if in_workers:
            with DaskRunner(workers, None, show, "planning series") as run:
                frames += [c.frame for c in run(chunks, _plan_chunk)]
        else:
            run = local_runner(show, threads=1, label="planning series")
            frames += [c.frame for c in run(chunks, _plan_chunk)]
    table = pd.concat(frames, ignore_index=True).sort_values("_pos", kind="stable").drop(columns="_pos")
    table = table.reset_index(drop=True)
    lift_cols = [c for c in table.columns if str(c).startswith("lift:")]
    table[lift_cols] = table[lift_cols].fillna(0.0)
    order = model.key_cols + ["date", "base", "plan", "low", "high"] + lift_cols + ["assumptions"]
    table = table[[c for c in order if c in table.columns]]
    notes = _coverage_notes(model, calendar, table["date"], model.settings["freq"])
    if panel_targets is not None:
        table, notes = _to_targets(table, model, panel_targets, whole_units and allocate is None, notes)
    if allocate is not None:
        from evcal.panel.rollup import allocate as _allocate

        children = allocate if isinstance(allocate, PanelResult) else load_panel(allocate)
        table = _allocate(table, model.key_cols, children, calendar)
        table["note"] = ("allocated from the parent plan by each child's share of the parents' base; "
                         "low/high are the parent's interval times the share, not the child's own interval")
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
    if suffix == ".xlsx":
        from evcal.plan.workbook_panel import write_panel_workbook

        how = notes + ([ALLOCATED] if kwargs.get("allocate") else [])
        write_panel_workbook(out, table, _event_labels(kwargs.get("allocate") or model_dir), how)
    else:
        with atomic_path(out) as tmp:
            write_csv(table, tmp, index=False, date_format="%Y-%m-%d", float_format="%.6f")
    keys = [c for c in table.columns if c not in ("date", "iso_week", "share", "base", "plan", "low", "high",
                                                   "assumptions", "note") and not str(c).startswith("lift:")]
    n_series = len(table[keys].drop_duplicates()) if keys else 1
    echo(f"planned {n_series} series, {table['date'].nunique()} periods each; total "
         f"{amount(float(np.nansum(table['plan'].to_numpy(dtype=float))))}")
    if alone and kwargs.get("total") is None and kwargs.get("totals") is None:  # a target: one series, alone
        shown = "; ".join(", ".join(f"{c}={k[c]}" for c in k) for k in alone[:5])
        echo(f"{n_series - len(alone)} series planned in blocks, {len(alone)} one by one (per-series error "
             f"models, or a block fit that broke down): {shown}{' ...' if len(alone) > 5 else ''}")
    for note in notes:
        echo(f"Note: {note}")
    if kwargs.get("allocate"):
        echo(ALLOCATED)
    echo("Plans are estimates; the decisions stay with the people who own them.")
    echo(f"\nwrote {shown or out} ({len(table)} rows)")


#: how an allocated (``--allocate``) panel plan was made
ALLOCATED = "allocated top-down: each parent's plan spread over its children by their own base profiles"


def _panel_document(model_dir: str) -> dict[str, Any]:
    """A panel folder's ``panel.json`` (its settings), read without its tables."""
    from evcal.store.values import read_json

    return read_json(Path(model_dir) / "panel.json")


def _panel_freq(model_dir: str) -> str:
    """The period frequency of a panel folder (:func:`_panel_document`)."""
    return str(_panel_document(model_dir).get("freq", ""))


def _event_labels(model_dir: str) -> dict[str, str]:
    """Event code -> its label (``panel.json``'s ``events``), for the workbook's headers."""
    events = _panel_document(model_dir).get("events") or {}
    return {str(name): str(info.get("label") or name) if isinstance(info, dict) else str(name)
            for name, info in events.items()}
