"""Each series of a panel planned by its own model: in blocks where the engine solves blocks, else one by one.

The series the fit solved in blocks are planned in blocks (:mod:`evcal.plan.batched`: the
blocks solved again from the folder's stored histories, one horizon per design group); the
others (per-series error models, a block fit that broke down) by the single-series plan
(:func:`evcal.plan.make_plan` on :meth:`~evcal.panel.result.PanelResult.series_result`), a few
series per unit, here or on a local Dask cluster. :func:`plan_series` does both and returns one
long table in the order of the keys asked for: the panel plan's rows, and the children's own
plans that an allocation shares a parent's plan by (:mod:`evcal.panel.planning`).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import EvcalError, PlanError
from evcal.panel.result import PanelResult, load_panel

__all__ = ["PlanChunk", "event_labels", "floor_note", "plan_blocks", "plan_series"]

#: series per unit of the single-series plan
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
        table["_floored"] = np.isin(np.arange(len(table)), plan.floored)  # named once for the panel
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
                horizons[gid] = group_horizon(fit, plan_cal, periods, options["new_events"],
                                              allow_negative=opts.allow_negative)
            h = horizons[gid]
            parts = plan_block(fit, h, plan_cal, n_sims, options["seed"])
            frame = block_frame(fit, h, parts, panel.label, weak, plan_cal, options["new_events"])
            frame["_floored"] = parts["floored"].ravel()  # block_frame's rows: series by series, in order
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


def plan_series(model: PanelResult, path: str | None, keys: list[dict[str, Any]], options: dict[str, Any],
                workers: int | None = None, show: bool = False, batched: bool = True,
                fallback: list[dict[str, Any]] | None = None) -> pd.DataFrame:
    """The plan of each series of ``keys`` by its own model: ``keys..., date, base, plan, low, high,
    lift:<event>..., assumptions``, the series in the order of ``keys``.

    ``options`` are :func:`evcal.plan.make_plan`'s (``start, end, calendar, new_events, n_sims,
    seed, total, totals, whole_units``); the blocks plan only without a target (``total`` and
    ``totals`` None) and with ``batched``. ``workers`` (with the folder's ``path``) plans the
    series left to the single-series plan on a local Dask cluster. ``fallback`` receives the keys
    of the series planned one by one. A ``lift:`` column is 0 for a series whose horizon does not
    touch the event.
    """
    from evcal.panel.distributed import DaskRunner, local_runner

    frames: list[pd.DataFrame] = []
    alone = list(range(len(keys)))
    if options["total"] is None and options["totals"] is None and batched:
        frames, alone = plan_blocks(model, keys, options)
    if fallback is not None:
        fallback.extend(keys[i] for i in alone)
    if alone:
        in_workers = bool(workers) and path is not None
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
    note = floor_note(table, model.key_cols, str(model.settings["freq"]), str(model.settings["label"]),
                      event_labels(model.settings))
    order = model.key_cols + ["date", "base", "plan", "low", "high"] + lift_cols + ["assumptions"]
    table = table[[c for c in order if c in table.columns]]
    table.attrs["notes"] = [note] if note else []
    return table


#: at most this many series named in a panel's note on its floored plans (then a count of the others)
FLOOR_SERIES_SHOWN = 5
#: at most this many periods named per event of each series named there
FLOOR_PERIODS_SHOWN = 3


def floor_note(table: pd.DataFrame, key_cols: list[str], freq: str, label: str,
               labels: dict[str, str] | None = None) -> str | None:
    """A panel plan's one note on the periods planned at 0, not below (``table["_floored"]``), or None.

    The panel's counterpart of :func:`evcal.plan.floor.floor_note`: how many periods of how many
    series were floored, then the first :data:`FLOOR_SERIES_SHOWN` series with the events and
    periods that took them below zero (:func:`evcal.plan.floor.floor_causes`), so the note stays one
    line for 10,000 series.

    Examples
    --------
    >>> import pandas as pd
    >>> t = pd.DataFrame({"site": ["A", "A", "B", "B"],
    ...                   "date": pd.to_datetime(["2024-03-02", "2024-03-03"] * 2),
    ...                   "base": [10.0, 10.0, 80.0, 80.0], "plan": [0.0, 10.0, 20.0, 80.0],
    ...                   "lift:stocktake": [-10.0, 0.0, -60.0, 0.0],
    ...                   "_floored": [True, False, False, False]})
    >>> floor_note(t, ["site"], "D", "start").split("; these")[0]
    'planned at 0, not below, in 1 period of 1 series (series that cannot be negative, additive models): \
site=A: the stocktake lift on 2024-03-02 (Sat)'
    """
    from evcal.plan.floor import FLOOR_HOW, FLOOR_WHY, floor_causes

    hit = table["_floored"].to_numpy(dtype=bool)
    if not hit.any():
        return None
    ids = table.groupby(key_cols, sort=False).ngroup().to_numpy()
    floored = pd.unique(ids[hit])
    lifts = [c for c in table.columns if str(c).startswith("lift:")]
    named = []
    for sid in floored[:FLOOR_SERIES_SHOWN]:
        rows = table[ids == sid]
        dates = pd.DatetimeIndex(pd.to_datetime(rows["date"]))
        what = floor_causes(rows["_floored"].to_numpy(dtype=bool), rows["base"].to_numpy(dtype=float),
                            {c[len("lift:"):]: rows[c].to_numpy(dtype=float) for c in lifts},
                            dates.to_period(freq), dates, label, labels, most=FLOOR_PERIODS_SHOWN)
        key = ", ".join(f"{c}={rows[c].iat[0]}" for c in key_cols)
        named.append(f"{key}: {what}")
    more = len(floored) - len(named)
    n = int(hit.sum())
    return (f"planned at 0, not below, in {n} period{'s' if n > 1 else ''} of {len(floored)} series "
            f"(series that cannot be negative, additive models): {'; '.join(named)}"
            f"{f'; and {more} more series' if more else ''}; these would take the plan below zero "
            f"{FLOOR_WHY}; {FLOOR_HOW}")


def event_labels(settings: dict[str, Any]) -> dict[str, str]:
    """Event code -> its label, from a panel's settings (``panel.json``'s ``events``)."""
    events = settings.get("events") or {}
    return {str(name): str(info.get("label") or name) if isinstance(info, dict) else str(name)
            for name, info in events.items()}
