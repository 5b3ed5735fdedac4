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
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import EvcalError, PlanError
from evcal.panel.result import PanelResult, load_panel

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


def _plan_chunk(chunk: PlanChunk) -> PlanChunk:
    """Plan each series of ``chunk`` with the single-series plan; keys first in its table."""
    from evcal.plan import make_plan

    model = chunk.model if isinstance(chunk.model, PanelResult) else load_panel(chunk.model)
    frames = []
    for key in chunk.sids:
        res = model.series_result(key)
        try:
            plan = make_plan(res, **chunk.options)
        except EvcalError as err:
            shown = ", ".join(f"{c}={key[c]!r}" for c in model.key_cols)
            raise PlanError([f"series {shown}: {p}" for p in err.problems]) from None
        table = plan.table.copy()
        for i, c in enumerate(model.key_cols):
            table.insert(i, c, key[c])
        frames.append(table)
    chunk.frame = pd.concat(frames, ignore_index=True)
    return chunk


def plan_panel(model: PanelResult | str | Path, start: Any, end: Any, series: list[str] | None = None,
               calendar: Any = None, new_events: str = "error", n_sims: int = 1000, seed: int = 0,
               total: Any = None, totals: Any = None, allocate: PanelResult | str | Path | None = None,
               workers: int | None = None, progress: bool | None = None) -> pd.DataFrame:
    """Plan each selected series of a panel; optionally allocate the plans to a child panel.

    Returns
    -------
    DataFrame
        ``keys..., date, base, plan, low, high, lift:<event>..., assumptions``
        (a ``lift:`` column is 0 for series whose horizon does not touch the
        event). With ``allocate``: the child keys, ``date, share`` and the
        allocated amounts.

    Raises
    ------
    PlanError
        ``total``/``totals`` with more than one series (a target is per plan:
        plan one series, or fit the level the target belongs to and allocate).
    """
    from evcal.panel.distributed import dask_runner, local_runner
    from evcal.plan.simulate import check_sims
    from evcal.progress import progress_enabled

    check_sims(n_sims)  # before any series is loaded or planned
    path = None if isinstance(model, PanelResult) else str(model)
    model = load_panel(path) if path is not None else model
    if series:
        keys = [model.find(s) for s in series]
    else:
        fitted = model.series[model.series["status"] == "fitted"]
        keys = [{c: row[c] for c in model.key_cols} for _, row in fitted.iterrows()]
    if not keys:
        raise PlanError("the panel model has no fitted series to plan")
    if (total is not None or totals is not None) and len(keys) > 1:
        raise PlanError(f"--total/--totals: the panel has {len(keys)} series and a target belongs to one "
                        "plan; name one series with --series, or fit the level the target is set for "
                        "(--level) and spread it down with --allocate")
    options = {"start": start, "end": end, "calendar": calendar, "new_events": new_events,
               "n_sims": n_sims, "seed": seed, "total": total, "totals": totals}
    in_workers = bool(workers) and path is not None
    chunks = [PlanChunk(i, path if in_workers else model, keys[a:a + PLAN_CHUNK], options)
              for i, a in enumerate(range(0, len(keys), PLAN_CHUNK))]
    show = progress_enabled(progress)
    run = dask_runner(workers, None, show, "planning series") if in_workers \
        else local_runner(show, threads=1, label="planning series")
    done = sorted(run(chunks, _plan_chunk), key=lambda c: c.index)
    table = pd.concat([c.frame for c in done], ignore_index=True)
    lift_cols = [c for c in table.columns if str(c).startswith("lift:")]
    table[lift_cols] = table[lift_cols].fillna(0.0)
    order = model.key_cols + ["date", "base", "plan", "low", "high"] + lift_cols + ["assumptions"]
    table = table[[c for c in order if c in table.columns]]
    if allocate is not None:
        from evcal.panel.rollup import allocate as _allocate

        children = allocate if isinstance(allocate, PanelResult) else load_panel(allocate)
        table = _allocate(table, model.key_cols, children, calendar)
        table["note"] = ("allocated from the parent plan by each child's share of the parents' base; "
                         "low/high are the parent's interval times the share, not the child's own interval")
    return table


def plan_panel_cmd(model_dir: str, start: str, end: str, out: str, echo: Callable[[str], None],
                   **kwargs: Any) -> None:
    """What ``evcal plan`` does with a panel folder: plan, write one CSV, print a short summary.

    The output location is checked first (:func:`evcal.outputs.check_output`), before the panel is read.
    """
    from evcal._files import atomic_path
    from evcal.formula_safe import write_csv
    from evcal.outputs import check_output

    force = bool(kwargs.pop("force", False))
    if kwargs.pop("compare", None):
        raise PlanError("--compare plans one series; for a panel, plan each calendar to its own file")
    if Path(out).suffix.lower() != ".csv":
        raise PlanError(f"--out {out}: a panel plan is one long table; write it as CSV (e.g. plan.csv)")
    check_output(out, "plan", inputs=[model_dir, kwargs.get("calendar"), kwargs.get("totals"),
                                      kwargs.get("allocate")], force=force)
    table = plan_panel(model_dir, start, end, **kwargs)
    with atomic_path(out) as tmp:
        write_csv(table, tmp, index=False, date_format="%Y-%m-%d", float_format="%.6f")
    keys = [c for c in table.columns if c not in ("date", "share", "base", "plan", "low", "high",
                                                   "assumptions", "note") and not str(c).startswith("lift:")]
    n_series = len(table[keys].drop_duplicates()) if keys else 1
    echo(f"planned {n_series} series, {table['date'].nunique()} periods each; total "
         f"{np.nansum(table['plan'].to_numpy(dtype=float)):,.0f}")
    if kwargs.get("allocate"):
        echo("allocated top-down: each parent's plan spread over its children by their own base profiles")
    echo("Plans are estimates; the decisions stay with the people who own them.")
    echo(f"\nwrote {out} ({len(table)} rows)")
