"""Fitting a block of series (one column for a single series): screen, group, solve, collect the tables.

The work is cut into *units* that depend only on their inputs: a block of at
most :data:`BLOCK_SERIES` series of one design group (batched OLS), or a few
series for the per-series path (ARIMA errors, count models). The same units
run in this process or on a Dask cluster (:mod:`evcal.panel.distributed`),
so the results do not depend on where they ran. Which series share a
design: :mod:`evcal.engine.groups`.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.effects import SpanContext
from evcal.effects.columns import join_tables
from evcal.engine.groups import Group, Template, distinct_spans, group_info, pattern_ids
from evcal.engine.memory import release_freed_memory
from evcal.engine.packs import pack_units
from evcal.engine.screen import Screen, screen_series
from evcal.engine.units import BatchShared, BatchUnit, LoopUnit, UnitResult, concat_tables, run_unit
from evcal.io.panel import Panel
from evcal.model.inputs import ModelInputs, calendar_text, load_calendar_any
from evcal.model.options import FitOptions
from evcal.model.passes import ols_by_rule

__all__ = ["PanelFit", "fit_long_panel", "BLOCK_SERIES", "LOOP_SERIES"]

#: series per batched unit (fixed, so results never depend on how the work is spread)
BLOCK_SERIES = 500
#: series per unit of the per-series path
LOOP_SERIES = 16
#: freed memory goes back to the system after this many units (without it the median peak of
#: benchmarks/panel.py's 10,000 series rose 14 %, 356 -> 407 MiB, for no change in time)
TRIM_EVERY = 4


@dataclass
class PanelFit:
    """Everything a panel fit produced, with ``_sid`` (series position) in every table."""

    panel: Panel
    options: FitOptions
    calendar: Any
    lifts: pd.DataFrame
    occurrences: pd.DataFrame
    profile: pd.DataFrame
    fitted_blocks: list[Any]  # FittedBlock or frames, in series order (empty when streamed)
    quality: pd.DataFrame
    series: pd.DataFrame
    params: pd.DataFrame
    skipped: pd.DataFrame
    groups: list[dict[str, Any]]
    models: dict[int, Any] = field(default_factory=dict)  # sid -> whole model (a panel of one only)
    chosen: Any = None  # the settings chosen once for the panel (evcal.engine.panel_choice.panel_settings)

    @property
    def fitted(self) -> pd.DataFrame:
        """The long fitted table (``_sid, date, actual, fitted, base, ...``), built on request."""
        frames = [b if isinstance(b, pd.DataFrame) else b.frame() for b in self.fitted_blocks]
        return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()


def plan_units(panel: Panel, calendar: Any, options: FitOptions, single: ModelInputs | None = None
               ) -> tuple[list[Any], Screen, list[Group]]:
    """Screen the series, build the shared inputs and cut the work into units.

    ``single`` is the prepared and checked inputs of a panel of one (the
    single-series API): that series needs no screen, its inputs are the
    shared ones, and its units keep the whole fitted model.
    """

    @functools.cache
    def template(tr: str) -> Template:
        return Template.build(panel, calendar, options, tr, single)

    @functools.cache
    def span_context(tr: str, origin: float, f: int, last: int) -> SpanContext:
        # what the tables of a span share does not depend on which of its periods a series has (its
        # fit rows are set per group): one build for every design group of that origin and span
        tpl = template(tr)
        sl = slice(f, last + 1)
        periods = panel.periods[sl]
        raw = tpl.with_origin(tpl.inp.raw_X, origin)
        return SpanContext.build(raw.iloc[sl], tpl.inp.design.open_share.to_numpy()[sl], calendar, periods,
                                 panel.dates(periods), tpl.inp.rows[sl], tpl.inp.status)

    if single is None:
        from evcal.design.events import OpenShare

        closed_full = OpenShare(calendar).values(panel.periods).to_numpy() <= 1e-9
        screen = screen_series(panel.values, panel.periods, panel.freq, options.transform,
                               options.allow_negative, closed_full)
    else:
        screen = Screen(*(np.array([text], dtype=object) for text in (single.transform, "", "")))
    batched = np.isin(screen.transform, ["log", "none"]) & ols_by_rule(options, panel.n_series,
                                                                       len(panel.periods))
    loop = (screen.transform != "") & ~batched
    keep = single is not None

    units: list[Any] = []
    groups: list[Group] = []
    pos = np.flatnonzero(batched)
    if len(pos):
        # (all series are usually batched: no copy of the values then)
        obs = ~np.isnan(panel.values if len(pos) == panel.n_series else panel.values[:, pos])
        tr_code = np.where(screen.transform[pos] == "log", 0, 1)
        t0 = template(str(screen.transform[pos[0]]))
        origins = t0.origins(panel.first[pos])
        gid_local = pattern_ids(obs, [tr_code, origins.astype(np.int64)])
        for gl in range(int(gid_local.max()) + 1):
            members = pos[gid_local == gl]
            tr = str(screen.transform[members[0]])
            tpl = template(tr)
            origin = float(origins[gid_local == gl][0])
            observed = ~np.isnan(panel.values[:, members[0]])
            info, rows, notes = group_info(tpl, observed, origin)
            n_fit, k = int(rows.sum()), len(info.fitted_cols)
            if n_fit <= k:
                screen.skip(members, "too few periods for the model",
                            f"{n_fit} periods in the fit for {k} coefficients")
                continue
            g = Group(len(groups), tr, origin, rows, members, info, tpl, notes,
                      offset=tpl.inp.offset.to_numpy()[rows],
                      share=tpl.inp.design.open_share.to_numpy()[rows], curve=tpl.curve())
            groups.append(g)
            spans = np.column_stack([panel.first[members], panel.last[members]])
            contexts: dict[tuple[int, int], SpanContext] = {}
            for f, last in distinct_spans(spans, len(panel.periods)):
                contexts[(f, last)] = span_context(tr, origin, f, last).with_fit_rows(rows[f:last + 1])
            shared = BatchShared(g, contexts)
            for a in range(0, len(members), BLOCK_SERIES):
                sids = members[a:a + BLOCK_SERIES]
                units.append(BatchUnit(len(units), sids, np.ascontiguousarray(panel.values[:, sids].T),
                                       spans[a:a + BLOCK_SERIES], shared, keep))
    units += loop_units(panel, np.flatnonzero(loop), screen.transform, calendar, options, len(units), single)
    return units, screen, groups


def loop_units(panel: Panel, positions: np.ndarray, transforms: np.ndarray, calendar: Any,
               options: FitOptions, first_index: int, single: ModelInputs | None = None) -> list[LoopUnit]:
    """The per-series units of the series at ``positions`` (a few series each)."""
    cal_text = calendar_text(calendar, None)
    units = []
    for a in range(0, len(positions), LOOP_SERIES):
        sids = positions[a:a + LOOP_SERIES]
        units.append(LoopUnit(first_index + len(units), sids, [panel.history(int(j)) for j in sids],
                              [str(transforms[j]) for j in sids], cal_text, options, single is not None,
                              [single] if single is not None else None))
    return units


Runner = Callable[[list[Any], Callable[[Any], "UnitResult"]], Iterable["UnitResult"]]


def fit_long_panel(panel: Panel, calendar: Any, options: FitOptions, runner: Runner | None = None,
                   on_fitted: Callable[[list[Any]], None] | None = None, single: ModelInputs | None = None
                   ) -> PanelFit:
    """Fit every series of ``panel`` with the shared ``calendar``.

    Parameters
    ----------
    runner : callable, optional
        ``runner(units, fn)`` yields each unit's result (in any order); runs the
        units here, one after the other, when None (see :mod:`evcal.panel.distributed`).
    on_fitted : callable, optional
        Receives each unit's fitted blocks in unit order (e.g. to stream them to
        a Parquet file); they are then not kept in memory.
    single : ModelInputs, optional
        The prepared inputs of a panel of one (see :func:`plan_units`); the
        result's ``models`` then holds its whole fitted model.
    """
    cal = load_calendar_any(calendar)
    chosen = None
    if single is None:  # a panel chooses the settings left open once, for every series (panel_settings)
        from evcal.engine.panel_choice import panel_settings

        options, cal, chosen = panel_settings(options, cal, panel)
    units, screen, groups = plan_units(panel, cal, options, single)
    # the small groups (series with missing periods of their own) build their tables together
    units = pack_units(units)
    results = _run(units, runner, on_fitted)
    # series whose block fit broke down, fitted again one by one with the block's error model
    again = np.concatenate([r.reroute for r in results]) if results else np.zeros(0, dtype=int)
    if len(again):
        # (a panel's blocks stand for OLS; a single series is in a block only when its options give OLS)
        ols = options if single is not None else replace(options, errors="ols")
        results += _run(loop_units(panel, np.sort(again), screen.transform, cal, ols, 0, single), runner,
                        on_fitted)
    for r in results:
        if len(r.skipped):
            screen.skip(r.skipped["_sid"].to_numpy(dtype=int), "fit failed", r.skipped["detail"].to_numpy())
    tables = concat_tables([r.tables for r in results])
    series = join_tables([r.series for r in results], ["_sid"])
    params = join_tables([r.params for r in results], ["_sid"])
    skipped_pos = np.flatnonzero(~screen.ok)
    skipped = pd.DataFrame({"_sid": skipped_pos, "reason": screen.reason[skipped_pos],
                            "detail": screen.detail[skipped_pos]})
    # a group counts the series its block fitted: those fitted again on their own (``again``) or
    # skipped are not its series any more (panel.json checks the sum against counts.batched)
    in_block = series["group"][series["engine"] == "batched"].to_numpy() if len(series) else np.zeros(0)
    group_rows = [{"group": g.gid, "transform": g.transform, "trend_origin": g.origin,
                   "series": int((in_block == g.gid).sum()), "periods_fitted": int(g.rows.sum()),
                   "coefficients": len(g.info.fitted_cols), "hac_lags": None,
                   "status": {c: {"status": st.status, "note": st.note, **({"weak": True} if st.weak else {})}
                              for c, st in g.info.status.items()},
                   "fitted_columns": g.info.fitted_cols, "notes": g.notes} for g in groups]
    models = {k: v for r in results for k, v in r.models.items()}
    return PanelFit(panel, options, cal, tables.lifts, tables.occurrences, tables.profile, tables.fitted,
                    tables.quality, series.sort_values("_sid", kind="stable").reset_index(drop=True),
                    params.sort_values("_sid", kind="stable").reset_index(drop=True), skipped, group_rows,
                    models, chosen)


def _run(units: list[Any], runner: Runner | None, on_fitted: Callable[[list[Any]], None] | None
         ) -> list[UnitResult]:
    """Run ``units`` (here, or with ``runner``) and hand their fitted rows on in unit order."""
    stream = runner(units, run_unit) if runner is not None else (run_unit(u) for u in units)
    results: list[UnitResult] = []
    pending: dict[int, UnitResult] = {}
    next_index = 0
    for r in stream:
        pending[r.index] = r
        while next_index in pending:  # hand the fitted rows on in unit order
            done = pending.pop(next_index)
            if on_fitted is not None:
                on_fitted(done.tables.fitted)
                done.tables.fitted = []
            results.append(done)
            next_index += 1
            if next_index % TRIM_EVERY == 0:  # the units' temporaries, before more are made
                release_freed_memory()
    return results
