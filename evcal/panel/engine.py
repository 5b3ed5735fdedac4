"""Fitting every series of a panel: screen, group by design, solve in blocks, collect the tables.

The work is cut into *units* that depend only on their inputs: a block of at
most :data:`BLOCK_SERIES` series of one design group (batched OLS), or a few
series for the per-series path (ARIMA errors, count models). The same units
run in this process or on a Dask cluster (:mod:`evcal.panel.distributed`),
so the results do not depend on where they ran.

Grouping. Series share a design when they have the same transform, the same
trend origin (the year their history starts) and the same *fit-row pattern*
(which periods have a value; exclusions and closures are shared through the
calendar). Each group gets its own identifiability check, exactly as a single
series would (:func:`evcal.fit.identify.check_columns` on its rows), and one
QR factorisation.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field, fields, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import period_mid_years
from evcal.design.seasonal import base_freq
from evcal.design.trend import Trend
from evcal.effects import LIFT_COLUMNS, OCC_COLUMNS, BlockTables, GroupInfo, SpanContext, block_tables
from evcal.effects.columns import Columns, join_columns, join_tables, text_dtype
from evcal.fit.identify import check_columns, independent_base_columns
from evcal.fit.model import load_calendar_any, prepare, term_info
from evcal.fit.options import FitOptions
from evcal.io.history import History
from evcal.panel.batched import SharedSolve
from evcal.panel.longformat import Panel
from evcal.panel.memory import release_freed_memory
from evcal.panel.skipped import Screen, screen_series

__all__ = ["PanelFit", "fit_long_panel", "BLOCK_SERIES", "LOOP_SERIES"]

#: series per batched unit (fixed, so results never depend on how the work is spread)
BLOCK_SERIES = 500
#: series per unit of the per-series path
LOOP_SERIES = 16
#: freed memory goes back to the system after this many units (each release costs the page
#: faults of refilling it; never releasing lets the heap of two threads grow by a third)
TRIM_EVERY = 4


# ---------------------------------------------------------------- shared model inputs


@dataclass
class Template:
    """:func:`evcal.fit.model.prepare` on a placeholder series covering the whole panel.

    Everything that does not depend on a series' values (design, offset,
    exclusions, closures, assumed and borrowed lifts) is computed once here.
    """

    transform: str
    inp: Any  # ModelInputs
    raw: pd.DataFrame  # unmerged design (like-events apart), for the tables
    mid_years: np.ndarray
    calendar: Any = None
    periods: Any = None
    _curve: Any = None

    @classmethod
    def build(cls, panel: Panel, calendar: Any, options: FitOptions, transform: str) -> Template:
        placeholder = History(pd.Series(1.0, index=panel.periods, name="value"), panel.freq, panel.label,
                              panel.source, [])
        # each design group is checked on its own rows (_group_info): not the placeholder's
        inp = prepare(placeholder, calendar, replace(options, transform=transform), identify=False)
        raw = inp.raw_X
        return cls(transform, inp, raw, period_mid_years(panel.periods), calendar, panel.periods)

    def curve(self) -> Any:
        """Event columns as functions of θ, when the single-series fit aggregates lifts exactly.

        :func:`evcal.fit.model.estimate_exact` refits weekly, monthly and quarterly
        log-link models with each event column built from the series' own lift;
        additive models and daily data keep the linear columns.
        """
        if self.transform == "none" or base_freq(self.inp.spec.freq) == "D":
            return None
        if self._curve is None:
            from evcal.design.curved import CurvedEvents

            spec = self.inp.spec
            self._curve = CurvedEvents(self.calendar, list(spec.event_columns), self.periods)
        return self._curve

    def origins(self, first: np.ndarray) -> np.ndarray:
        """Trend origins of series whose histories start at periods ``first`` (as prepare sets them)."""
        return np.floor(self.mid_years[np.asarray(first, dtype=int)]).astype(float)

    def with_origin(self, frame: pd.DataFrame, origin: float) -> pd.DataFrame:
        spec = self.inp.spec
        if origin == spec.trend_origin:
            return frame
        trend = Trend(origin, spec.trend_order, spec.constant).columns(frame.index)
        out = frame.copy()
        for c in trend.columns:
            out[c] = trend[c].to_numpy()
        return out


@dataclass
class Group:
    """Series that share a design: one factorisation, one set of column statuses."""

    gid: int
    transform: str
    origin: float
    rows: np.ndarray  # bool over the panel's periods
    members: np.ndarray  # series positions
    info: GroupInfo
    solve: SharedSolve | None
    notes: list[str] = field(default_factory=list)
    offset: np.ndarray | None = None  # model-scale offset on the fit rows
    share: np.ndarray | None = None  # open share on the fit rows (additive model)
    curve: Any = None  # CurvedEvents on the panel's periods, when lifts are aggregated exactly
    refine_cache: dict[str, Any] = field(default_factory=dict)  # refine's group-level inputs, made once


def _group_info(template: Template, calendar: Any, observed: np.ndarray, origin: float
                ) -> tuple[GroupInfo, np.ndarray, np.ndarray, list[str]]:
    """Fit rows, column statuses and the fit matrix for one observed pattern (prepare's last steps)."""
    inp = template.inp
    rows = observed & inp.rows
    roles = inp.design.roles
    X = template.with_origin(inp.design.X, origin)
    all_base = [c for c in X.columns if roles[c] in ("trend", "seasonal")]
    base_cols = independent_base_columns(X, rows, all_base)
    fixed = {c: st for c, st in inp.status.items() if st.status in ("assumed", "like")}
    candidates = [c for c in inp.status if c not in fixed]
    status = check_columns(X, rows, base_cols, candidates, {c: roles[c] for c in X.columns})
    status.update(fixed)
    fitted_cols = base_cols + [c for c in candidates if status[c].status == "fitted"]
    spec = replace(inp.spec, trend_origin=origin)
    event_info = term_info(calendar)
    info = GroupInfo(
        transform=template.transform, status=status, fitted_cols=fitted_cols, base_columns=all_base,
        like_map=dict(inp.like_map), assumed=dict(inp.assumed),
        intervention_names=[t["name"] for t in spec.interventions],
        closure_events=[e.name for e in calendar.events if e.effect.kind == "zero"],
        event_info=event_info, event_labels={e.name: e.label for e in calendar.events}, spec=spec,
        roles=dict(roles))
    Xf = X.loc[rows, fitted_cols].to_numpy(dtype=float)
    notes = list(inp.notes)
    if template.transform == "none":
        if inp.assumed:  # as evcal.fit.model._estimate: the base carries the assumed lifts
            scale = 1.0 + sum(a * X[c].to_numpy() for c, a in inp.assumed.items())
            is_base = np.array([roles.get(c) in ("trend", "seasonal") for c in fitted_cols])
            Xf[:, is_base] = Xf[:, is_base] * scale[rows][:, None]
        share = inp.design.open_share.to_numpy()
        Xf = Xf * np.where(share > 0, share, 1.0)[rows][:, None]  # the additive model scales rows
    for c, st in status.items():
        if st.status in ("unidentifiable", "duplicate"):
            notes.append(f"{c}: {st.note}")
        elif st.status == "no_history":
            notes.append(f"{c}: no occurrence in the history; listed, not fitted")
    return info, rows, Xf, notes


def _distinct_spans(spans: np.ndarray, n_periods: int) -> list[tuple[int, int]]:
    """The distinct (first, last) rows of ``spans``, in sorted order."""
    code = np.unique(spans[:, 0].astype(np.int64) * (n_periods + 1) + spans[:, 1])
    return [(int(c // (n_periods + 1)), int(c % (n_periods + 1))) for c in code]


def _pattern_ids(obs: np.ndarray, keys: list[np.ndarray]) -> np.ndarray:
    """One id per distinct (extra keys, observed-rows pattern) among the columns of ``obs``."""
    packed = np.packbits(obs, axis=0).T  # (series, bytes)
    extra = np.column_stack([np.asarray(k, dtype=np.int64) for k in keys]) if keys else \
        np.zeros((obs.shape[1], 0), dtype=np.int64)
    table = np.concatenate([extra.view(np.uint8).reshape(obs.shape[1], -1), packed], axis=1)
    table = np.ascontiguousarray(table)
    rows = table.view(np.dtype((np.void, table.shape[1]))).ravel()
    _, first, inv = np.unique(rows, return_index=True, return_inverse=True)
    # number groups in order of their first series, so group ids follow the key order
    order = np.argsort(first, kind="stable")
    rank = np.empty_like(order)
    rank[order] = np.arange(len(order))
    return rank[inv.ravel()]


# ---------------------------------------------------------------- units of work


@dataclass
class BatchShared:
    """What every block of a group shares: the factorised design and the spans' tables inputs.

    Sent to each Dask worker once (scattered), not with every block.
    """

    group: Group
    contexts: dict[tuple[int, int], SpanContext]


@dataclass
class BatchUnit:
    """A block of series of one group: its values, and the group's shared inputs."""

    index: int
    sids: np.ndarray
    actual: np.ndarray  # (m, n_periods): the panel's values for these series (series-major)
    spans: np.ndarray  # (m, 2): first, last
    shared: BatchShared | None

    def without_shared(self) -> BatchUnit:
        return replace(self, shared=None)

    def with_shared(self, shared: BatchShared) -> BatchUnit:
        return replace(self, shared=shared)


@dataclass
class LoopUnit:
    """A few series fitted one by one with :func:`evcal.fit.fit`."""

    index: int
    sids: np.ndarray
    histories: list[History]
    transforms: list[str]
    calendar_text: str
    options: FitOptions


@dataclass
class UnitResult:
    index: int
    tables: BlockTables
    series: pd.DataFrame  # _sid, engine, group, transform, method, sigma2, smear, note
    params: pd.DataFrame  # _sid + one column per coefficient
    skipped: pd.DataFrame  # _sid, reason, detail


def run_batch(unit: BatchUnit) -> UnitResult:
    """Solve a block of series that share a design, then build their tables."""
    assert unit.shared is not None
    g = unit.shared.group
    assert g.solve is not None
    rows = g.rows
    # (periods × series); a view when every period is fitted (no gaps: the usual case)
    y = unit.actual.T if rows.all() else unit.actual[:, rows].T
    if g.transform == "log":
        with np.errstate(divide="ignore"):
            Y = np.log(y)
        Y -= g.offset[:, None]
    else:
        # the single-series path divides by the open share, then scales rows by it
        share = g.share[:, None]
        Y = (y / share) * np.where(share > 0, share, 1.0)
    refined = None
    if g.curve is not None:
        from evcal.panel.curved import refine

        # the first pass's coefficients start the passes; its residuals are not needed
        refined = refine(g.info, g.curve, rows, g.solve.X, Y, g.solve.coefficients(Y), g.solve.lags,
                         cache=g.refine_cache)
    if refined is not None:
        B, E, sigma2, se = refined.params, refined.resid, refined.sigma2, refined.se_terms
    else:
        B, E, sigma2 = g.solve.solve(Y)
        term_idx = np.array([g.info.fitted_cols.index(c) for c in g.info.term_cols], dtype=int)
        if len(term_idx):
            cov = g.solve.covariances(E, term_idx)
            se = np.sqrt(np.clip(np.diagonal(cov, axis1=1, axis2=2), 0, None)).T
        else:
            se = np.zeros((0, len(unit.sids)))
    smear = np.exp(E).mean(axis=0) if g.transform == "log" else np.ones(len(unit.sids))
    curved_all: dict[str, np.ndarray] = {}
    if refined is not None:
        from evcal.panel.curved import curved_columns

        curved_all = curved_columns(g.curve, g.info, refined.theta_in)
    parts: list[BlockTables] = []
    for (f, last), ctx in unit.shared.contexts.items():
        pick: Any = np.flatnonzero((unit.spans[:, 0] == f) & (unit.spans[:, 1] == last))
        if not len(pick):
            continue
        if len(pick) == len(unit.sids):
            pick = slice(None)  # the whole block has this span (the usual case): views, not copies
        curved = {c: v[pick, f:last + 1] for c, v in curved_all.items()}
        support = {c: t[(t >= f) & (t <= last)] - f for c in curved
                   if (t := g.curve.touched.get(c)) is not None} if g.curve is not None else {}
        parts.append(block_tables(ctx, g.info, B[:, pick], se[:, pick], smear[pick],
                                  unit.actual[pick, f:last + 1], unit.sids[pick], curved, support))
    tables = _join_blocks(parts)
    m = len(unit.sids)

    def text(value: str) -> pd.Categorical:
        return pd.Categorical.from_codes(np.zeros(m, dtype=np.int8), dtype=text_dtype((value,)),
                                         validate=False)

    series = Columns({"_sid": unit.sids, "engine": text("batched"), "group": np.full(m, g.gid),
                      "transform": text(g.transform), "method": text("ols"), "sigma2": sigma2, "smear": smear,
                      "hac_lags": np.full(m, g.solve.lags), "trend_origin": np.full(m, g.origin),
                      "note": text("; ".join(g.notes))})
    params = Columns({"_sid": unit.sids, **{c: B[i] for i, c in enumerate(g.info.fitted_cols)}})
    return UnitResult(unit.index, tables, series, params, _no_skips())


@functools.lru_cache(maxsize=1)
def _no_skips() -> pd.DataFrame:
    """The (shared, never changed) skipped table of a unit that skipped nothing."""
    return pd.DataFrame({"_sid": np.zeros(0, dtype=int), "reason": [], "detail": []})


def _join_blocks(parts: list[BlockTables]) -> BlockTables:
    """A unit's tables from its spans' blocks, kept as columns (one frame is made at the end)."""
    if len(parts) == 1:
        return parts[0]

    def cat(name: str) -> Any:
        joined = join_columns([getattr(p, name) for p in parts])
        return joined if joined is not None else join_tables([getattr(p, name) for p in parts], _EMPTY[name])

    return BlockTables(cat("lifts"), cat("occurrences"), cat("profile"), [f for p in parts for f in p.fitted],
                       cat("quality"))


_CAL_CACHE: dict[str, Any] = {}


def _calendar(text: str) -> Any:
    if text not in _CAL_CACHE:
        _CAL_CACHE[text] = load_calendar_any(text)
    return _CAL_CACHE[text]


def run_loop(unit: LoopUnit) -> UnitResult:
    """Fit each series with the single-series :func:`evcal.fit.fit`; failures become skip reasons."""
    from evcal.errors import EvcalError
    from evcal.fit import fit

    cal = _calendar(unit.calendar_text)
    parts: list[BlockTables] = []
    series_rows, param_rows, skipped = [], [], []
    for sid, hist, tr in zip(unit.sids, unit.histories, unit.transforms, strict=True):
        try:
            res = fit(hist, cal, **{**_option_dict(unit.options), "transform": tr})
        except (EvcalError, np.linalg.LinAlgError, ValueError) as err:
            text = "; ".join(err.problems) if isinstance(err, EvcalError) else f"{type(err).__name__}: {err}"
            skipped.append({"_sid": sid, "reason": "fit failed", "detail": text})
            continue
        parts.append(_result_tables(res, int(sid)))
        series_rows.append({"_sid": sid, "engine": "per-series", "group": -1, "transform": res.transform,
                            "method": res.model_choice.get("chosen", ""), "sigma2": res.sigma2,
                            "smear": res.smear, "hac_lags": np.nan, "trend_origin": res.spec.trend_origin,
                            "note": "; ".join(res.warnings)})
        param_rows.append({"_sid": sid, **{k: float(v) for k, v in res.params.items()}})
    return UnitResult(unit.index, _concat_tables(parts), pd.DataFrame(series_rows),
                      pd.DataFrame(param_rows), pd.DataFrame(skipped, columns=["_sid", "reason", "detail"]))


def _option_dict(options: FitOptions) -> dict[str, Any]:
    return {f.name: getattr(options, f.name) for f in fields(options)}


def _result_tables(res: Any, sid: int) -> BlockTables:
    def tag(frame: pd.DataFrame) -> pd.DataFrame:
        out = frame.copy()
        out.insert(0, "_sid", sid)
        return out

    q = res.quality or {}
    quality = pd.DataFrame({"_sid": [sid], "periods_fitted": [int(q.get("periods_fitted", 0))],
                            "wape_pct": [q.get("wape_pct", np.nan)], "resid_sd": [q.get("resid_sd", np.nan)],
                            "mean_base": [res.mean_base]})
    lifts = tag(res.lifts)
    lifts["_fitted"] = [getattr(res.status.get(e), "status", "") == "fitted" for e in res.lifts["event"]]
    return BlockTables(lifts, tag(res.occurrences), tag(res.profile), [tag(res.fitted)], quality)


_EMPTY = {  # the columns of each table when no series produced a row
    "lifts": ["_sid", *LIFT_COLUMNS, "kind", "label", "_fitted"],
    "occurrences": ["_sid", *OCC_COLUMNS, "low_units", "high_units"],
    "profile": ["_sid", "period", "index"],
    "quality": ["_sid", "periods_fitted", "wape_pct", "resid_sd", "mean_base"],
}


def _concat_tables(parts: list[BlockTables]) -> BlockTables:
    def cat(name: str) -> pd.DataFrame:
        return join_tables([getattr(p, name) for p in parts], _EMPTY[name])

    fitted = [f for p in parts for f in p.fitted]
    return BlockTables(cat("lifts"), cat("occurrences"), cat("profile"), fitted, cat("quality"))


# ---------------------------------------------------------------- the whole panel


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

    @property
    def fitted(self) -> pd.DataFrame:
        """The long fitted table (``_sid, date, actual, fitted, base, ...``), built on request."""
        frames = [b if isinstance(b, pd.DataFrame) else b.frame() for b in self.fitted_blocks]
        return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()


def plan_units(panel: Panel, calendar: Any, options: FitOptions) -> tuple[list[Any], Screen, list[Group]]:
    """Screen the series, build the shared inputs and cut the work into units."""
    templates: dict[str, Template] = {}

    def template(tr: str) -> Template:
        if tr not in templates:
            templates[tr] = Template.build(panel, calendar, options, tr)
        return templates[tr]

    from evcal.design.events import OpenShare

    closed_full = OpenShare(calendar).values(panel.periods).to_numpy() <= 1e-9
    screen = screen_series(panel.values, panel.periods, panel.freq, options.transform,
                           options.allow_negative, closed_full)
    batched = (screen.transform != "") & np.isin(screen.transform, ["log", "none"]) \
        & (options.errors in ("auto", "ols"))
    loop = (screen.transform != "") & ~batched

    units: list[Any] = []
    groups: list[Group] = []
    pos = np.flatnonzero(batched)
    if len(pos):
        # (all series are usually batched: no copy of the values then)
        obs = ~np.isnan(panel.values if len(pos) == panel.n_series else panel.values[:, pos])
        tr_code = np.where(screen.transform[pos] == "log", 0, 1)
        t0 = template(str(screen.transform[pos[0]]))
        origins = t0.origins(panel.first[pos])
        gid_local = _pattern_ids(obs, [tr_code, origins.astype(np.int64)])
        for gl in range(int(gid_local.max()) + 1):
            members = pos[gid_local == gl]
            tr = str(screen.transform[members[0]])
            tpl = template(tr)
            origin = float(origins[gid_local == gl][0])
            observed = ~np.isnan(panel.values[:, members[0]])
            info, rows, Xf, notes = _group_info(tpl, calendar, observed, origin)
            n_fit, k = Xf.shape
            if n_fit <= k:
                screen.skip(members, "too few periods for the model",
                            f"{n_fit} periods in the fit for {k} coefficients")
                continue
            g = Group(len(groups), tr, origin, rows, members, info, SharedSolve.of(Xf), notes,
                      offset=tpl.inp.offset.to_numpy()[rows],
                      share=tpl.inp.design.open_share.to_numpy()[rows], curve=tpl.curve())
            groups.append(g)
            raw = tpl.with_origin(tpl.raw, origin)
            share_all = tpl.inp.design.open_share.to_numpy()
            spans = np.column_stack([panel.first[members], panel.last[members]])
            contexts: dict[tuple[int, int], SpanContext] = {}
            for f, last in _distinct_spans(spans, len(panel.periods)):
                sl = slice(f, last + 1)
                periods = panel.periods[sl]
                contexts[(f, last)] = SpanContext.build(raw.iloc[sl], share_all[sl], calendar, periods,
                                                        panel.dates(periods), rows[sl], info.status)
            shared = BatchShared(g, contexts)
            for a in range(0, len(members), BLOCK_SERIES):
                sids = members[a:a + BLOCK_SERIES]
                units.append(BatchUnit(len(units), sids, np.ascontiguousarray(panel.values[:, sids].T),
                                       spans[a:a + BLOCK_SERIES], shared))
    lpos = np.flatnonzero(loop)
    cal_text = calendar_text_of(calendar)
    for a in range(0, len(lpos), LOOP_SERIES):
        sids = lpos[a:a + LOOP_SERIES]
        units.append(LoopUnit(len(units), sids, [panel.history(int(j)) for j in sids],
                              [str(screen.transform[j]) for j in sids], cal_text, options))
    return units, screen, groups


def calendar_text_of(calendar: Any) -> str:
    from evcal.fit.model import calendar_text

    return calendar_text(calendar, None)


def run_unit(unit: Any) -> UnitResult:
    return run_batch(unit) if isinstance(unit, BatchUnit) else run_loop(unit)


Runner = Callable[[list[Any], Callable[[Any], "UnitResult"]], Iterable["UnitResult"]]


def fit_long_panel(panel: Panel, calendar: Any, options: FitOptions, runner: Runner | None = None,
                   on_fitted: Callable[[list[Any]], None] | None = None) -> PanelFit:
    """Fit every series of ``panel`` with the shared ``calendar``.

    Parameters
    ----------
    runner : callable, optional
        ``runner(units, fn)`` yields each unit's result (in any order); runs the
        units here, one after the other, when None (see :mod:`evcal.panel.distributed`).
    on_fitted : callable, optional
        Receives each unit's fitted blocks in unit order (e.g. to stream them to
        a Parquet file); they are then not kept in memory.
    """
    cal = load_calendar_any(calendar)
    units, screen, groups = plan_units(panel, cal, options)
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
    for r in results:
        if len(r.skipped):
            screen.skip(r.skipped["_sid"].to_numpy(dtype=int), "fit failed", r.skipped["detail"].to_numpy())
    tables = _concat_tables([r.tables for r in results])
    series = join_tables([r.series for r in results], ["_sid"])
    params = join_tables([r.params for r in results], ["_sid"])
    skipped_pos = np.flatnonzero(~screen.ok)
    skipped = pd.DataFrame({"_sid": skipped_pos, "reason": screen.reason[skipped_pos],
                            "detail": screen.detail[skipped_pos]})
    group_rows = [{"group": g.gid, "transform": g.transform, "trend_origin": g.origin,
                   "series": int(len(g.members)), "periods_fitted": int(g.rows.sum()),
                   "coefficients": len(g.info.fitted_cols), "hac_lags": g.solve.lags if g.solve else None,
                   "status": {c: {"status": st.status, "note": st.note} for c, st in g.info.status.items()},
                   "fitted_columns": g.info.fitted_cols, "notes": g.notes} for g in groups]
    return PanelFit(panel, options, cal, tables.lifts, tables.occurrences, tables.profile, tables.fitted,
                    tables.quality, series.sort_values("_sid", kind="stable").reset_index(drop=True),
                    params.sort_values("_sid", kind="stable").reset_index(drop=True), skipped, group_rows)
