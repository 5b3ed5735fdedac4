"""Units of work: a block of series of one design group (batched OLS) or a few series fitted one by one.

A unit depends only on its inputs, so the same units run in this process or
on a Dask cluster (:mod:`evcal.panel.distributed`) with the same results.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.effects import LIFT_COLUMNS, OCC_COLUMNS, BlockTables, SpanContext, block_tables
from evcal.effects.columns import Columns, join_columns, join_tables, tiled_text
from evcal.engine.batched import SharedSolve
from evcal.engine.groups import Group
from evcal.engine.series import fit_series
from evcal.io.history import History
from evcal.model.estimators import contrast_variances
from evcal.model.identify import breakdown
from evcal.model.inputs import load_calendar_any
from evcal.model.options import FitOptions
from evcal.model.passes import theta_sources

__all__ = ["BatchShared", "BatchUnit", "LoopUnit", "UnitResult", "BlockModel", "run_unit", "concat_tables",
           "solved_inputs", "unit_result", "no_skips", "TablesInput", "EMPTY_TABLES"]


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
    keep_models: bool = False  # a block of one fitted for the single-series API: keep its whole model

    def without_shared(self) -> BatchUnit:
        return replace(self, shared=None)

    def with_shared(self, shared: BatchShared) -> BatchUnit:
        return replace(self, shared=shared)


@dataclass
class LoopUnit:
    """A few series fitted one by one (:func:`evcal.engine.series.fit_series`)."""

    index: int
    sids: np.ndarray
    histories: list[History]
    transforms: list[str]
    calendar_text: str
    options: FitOptions
    keep_models: bool = False  # keep each FitResult, and let a user error through (single-series API)
    inputs: list[Any] | None = None  # each series' prepared inputs, when the caller has them


@dataclass
class UnitResult:
    index: int
    tables: BlockTables
    series: pd.DataFrame  # _sid, engine, group, transform, method, sigma2, smear, note
    params: pd.DataFrame  # _sid + one column per coefficient
    skipped: pd.DataFrame  # _sid, reason, detail
    reroute: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))  # to fit one by one
    models: dict[int, Any] = field(default_factory=dict)  # sid -> FitResult or BlockModel (keep_models)


@dataclass
class BlockModel:
    """The whole fitted state of one series solved in a block (kept for the single-series API)."""

    params: pd.Series
    cov: pd.DataFrame
    sigma2: float
    smear: float
    aic: float
    ar_order: int  # order of the residuals' autoregression behind the covariance
    theta: dict[str, float]  # log-lift each event column was aggregated with (empty: linear columns)
    group: Group
    tables: BlockTables


@dataclass
class BlockSolve:
    """A block's coefficients after the solve and the exact-aggregation passes, before any table."""

    Y: np.ndarray  # (n_rows, m) model-scale responses on the fit rows (offset taken off)
    y: np.ndarray  # (n_rows, m) the actuals on the fit rows
    first: np.ndarray | None  # the first pass's coefficients (exact aggregation), else None
    refined: Any  # evcal.engine.refine.Refined, or None when nothing is curved
    B: np.ndarray  # (k, m) coefficients in group.info.fitted_cols order
    E: np.ndarray  # (n_rows, m) residuals
    sigma2: np.ndarray
    se: np.ndarray  # (len(term_cols), m)
    errors: Any  # each series' AR error model (PrewhitenedErrors)
    smear: np.ndarray
    broken: np.ndarray  # (m,) series to fit again on their own


def solve_unit(unit: BatchUnit) -> BlockSolve:
    """Solve a block of series that share a design, with the exact-aggregation passes; no tables.

    The one solve of a block: :func:`run_batch` builds the tables from it, and the batched panel
    plan (:func:`evcal.plan.batched.solve_block`) its coefficients' covariances.
    """
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
    refined = first = None
    if g.curve is not None:
        from evcal.engine.refine import refine

        # the first pass's coefficients start the passes; its residuals are not needed
        first = g.solve.coefficients(Y)
        refined = refine(g.info, g.curve, rows, g.solve.X, Y, first, cache=g.refine_cache)
    if refined is not None:
        B, E, sigma2, se = refined.params, refined.resid, refined.sigma2, refined.se_terms
        errors = refined.errors
    else:
        B, E, sigma2 = g.solve.solve(Y)
        errors = g.solve.errors(E)
        term_idx = np.array([g.info.fitted_cols.index(c) for c in g.info.term_cols], dtype=int)
        if len(term_idx):
            # the variances only (the diagonal), not the full covariance matrices
            var = g.solve.contrast_variances(errors, term_idx, np.eye(len(term_idx)))
            se = np.sqrt(np.clip(var, 0, None)).T
        else:
            se = np.zeros((0, len(unit.sids)))
    smear = np.exp(E).mean(axis=0) if g.transform == "log" else np.ones(len(unit.sids))
    # a series whose fit breaks down (a lift past any real event's, or an interval that does not
    # say even its order of magnitude) is fitted again on its own, where the degenerate-fit rule
    # leaves the broken columns out (evcal.model.passes.estimate_exact)
    broken = _broken(g, B, se, first, y)
    if refined is not None and refined.beyond is not None:
        broken |= refined.beyond  # a dip beyond the event's days: the per-series passes note it
    return BlockSolve(Y, y, first, refined, B, E, sigma2, se, errors, smear, broken)


@dataclass
class TablesInput:
    """What :func:`evcal.effects.block_tables` takes for the series of one block that share a span."""

    ctx: SpanContext
    info: Any  # GroupInfo
    B: np.ndarray  # (k, m)
    se: np.ndarray
    smear: np.ndarray
    actual: np.ndarray  # (m, span)
    sids: np.ndarray
    curved: dict[str, np.ndarray]
    support: dict[str, np.ndarray]
    season_var: Any
    cov: np.ndarray | None

    def tables(self, in_fit: np.ndarray | None = None) -> BlockTables:
        return block_tables(self.ctx, self.info, self.B, self.se, self.smear, self.actual, self.sids,
                            self.curved, self.support, self.season_var, cov=self.cov, in_fit=in_fit)


def solved_inputs(unit: BatchUnit) -> tuple[BlockSolve, list[TablesInput]]:
    """Solve a block, and the inputs of its tables, one per span (the broken series left out)."""
    solved = solve_unit(unit)
    g = unit.shared.group
    refined = solved.refined
    B, se, smear, errors = solved.B, solved.se, solved.smear, solved.errors
    cov = refined.cov_terms if refined is not None else None  # the occurrences' joint draws
    curved_all = refined.curved if refined is not None else {}
    keep = ~solved.broken
    col_of = {c: i for i, c in enumerate(g.info.fitted_cols)}
    Z = g.solve.Z  # only this of the factorisation is kept for the tables (the group may be released)

    def season_var(pick: Any) -> Any:
        """The seasonal contrasts' variances of the series ``pick``, from the block's first-pass design
        (the seasonal columns' covariance hardly depends on each series' exact event columns)."""
        sub = errors.take(pick)
        def variances(names: tuple[str, ...], C: np.ndarray) -> np.ndarray:
            # SharedSolve.contrast_variances
            return contrast_variances(Z[:, np.array([col_of[c] for c in names], dtype=int)], sub, C)

        return variances

    inputs: list[TablesInput] = []
    for (f, last), ctx in unit.shared.contexts.items():
        pick: Any = np.flatnonzero((unit.spans[:, 0] == f) & (unit.spans[:, 1] == last) & keep)
        if not len(pick):
            continue
        if len(pick) == len(unit.sids):
            pick = slice(None)  # the whole block has this span (the usual case): views, not copies
        curved = {c: v[pick, f:last + 1] for c, v in curved_all.items()}
        support = {c: t[(t >= f) & (t <= last)] - f for c in curved
                   if (t := g.curve.touched.get(c)) is not None} if g.curve is not None else {}
        inputs.append(TablesInput(ctx, g.info, B[:, pick], se[:, pick], smear[pick],
                                  unit.actual[pick, f:last + 1], unit.sids[pick], curved, support,
                                  season_var(pick), None if cov is None else cov[pick]))
    return solved, inputs


def unit_result(unit: BatchUnit, solved: BlockSolve, tables: BlockTables) -> UnitResult:
    """A solved block's result: its tables, series and coefficient rows, the series to refit alone."""
    g = unit.shared.group
    Y, first, refined = solved.Y, solved.first, solved.refined
    B, E, sigma2, smear, errors = solved.B, solved.E, solved.sigma2, solved.smear, solved.errors
    broken = solved.broken
    keep = ~broken
    sids = unit.sids[keep]
    m = len(sids)
    series = Columns({"_sid": sids, "engine": tiled_text(["batched"], m), "group": np.full(m, g.gid),
                      "transform": tiled_text([g.transform], m), "method": tiled_text(["ols"], m),
                      "sigma2": sigma2[keep], "smear": smear[keep], "hac_lags": np.full(m, np.nan),
                      "error_ar_order": errors.order[keep],
                      "trend_origin": np.full(m, g.origin), "note": tiled_text(["; ".join(g.notes)], m)})
    params = Columns({"_sid": sids, **{c: B[i, keep] for i, c in enumerate(g.info.fitted_cols)}})
    out = UnitResult(unit.index, tables, series, params, no_skips(), reroute=unit.sids[broken])
    if unit.keep_models and m:
        # the error model's AIC is the first pass's, as the per-series fit reports it
        E0 = E if first is None else Y - g.solve.X @ first
        out.models = {int(sids[0]): _block_model(g, refined, B[:, keep], E[:, keep], E0[:, keep],
                                                 sigma2[keep], smear[keep], tables)}
    return out


def run_batch(unit: BatchUnit) -> UnitResult:
    """Solve a block of series that share a design, then build their tables."""
    solved, inputs = solved_inputs(unit)
    tables = concat_tables([t.tables() for t in inputs], columns=True)
    out = unit_result(unit, solved, tables)
    g = unit.shared.group
    if not unit.keep_models and len(unit.sids) == len(g.members):  # no other unit solves this group
        g.release()
    return out


def _broken(g: Group, B: np.ndarray, se: np.ndarray, first: np.ndarray | None, y: np.ndarray) -> np.ndarray:
    """Series whose fit breaks down by :func:`evcal.model.identify.breakdown` (m,)."""
    term_idx = [g.info.fitted_cols.index(c) for c in g.info.term_cols]
    if not term_idx:
        return np.zeros(B.shape[1], dtype=bool)
    level: Any = 1.0
    if g.transform == "none":
        with np.errstate(invalid="ignore", divide="ignore"):
            level = np.nanmean(np.abs(y / g.share[:, None]), axis=0)
    bad = breakdown(B[term_idx], se, g.transform, level)
    if first is not None:  # the first pass of the exact aggregation, before its columns bend
        bad |= breakdown(first[term_idx], None, g.transform, level)
    return bad


def _block_model(g: Group, refined: Any, B: np.ndarray, E: np.ndarray, E0: np.ndarray, sigma2: np.ndarray,
                 smear: np.ndarray, tables: BlockTables) -> BlockModel:
    """The whole fitted state of the block's one series: every coefficient's covariance too."""
    cols = g.info.fitted_cols
    solve, theta = g.solve, {}
    if refined is not None:
        # the last pass's design: the event columns for the series' θ
        X = g.solve.X.copy()
        idx = {c: i for i, c in enumerate(cols)}
        for c, v in refined.curved.items():  # fitted columns first: a borrowed column adds onto its target
            if g.info.status[c].status == "fitted" and c in idx:
                X[:, idx[c]] = v[0, g.rows]
        for c, v in refined.curved.items():
            if g.info.status[c].status == "like" and g.info.like_map.get(c) in idx:
                X[:, idx[g.info.like_map[c]]] += v[0, g.rows]
        sources = theta_sources(g.info.status, g.info.roles, g.info.like_map, cols)
        theta = {c: float(refined.theta_in[s][0]) for c, s in sources.items() if s in refined.theta_in}
        theta.update({c: float(np.log1p(a)) for c, a in g.info.assumed.items()})
        solve = SharedSolve.of(X)
    errors = solve.errors(E[:, :1])
    cov = solve.covariances(errors)[0]
    n, k = solve.X.shape
    ssr = float(E0[:, 0] @ E0[:, 0])
    llf = -0.5 * n * (np.log(2 * np.pi * ssr / n) + 1.0)
    return BlockModel(pd.Series(B[:, 0], index=cols), pd.DataFrame(cov, index=cols, columns=cols),
                      float(sigma2[0]), float(smear[0]), float(-2 * llf + 2 * k), int(errors.order[0]),
                      theta, g, tables)


@functools.lru_cache(maxsize=1)
def no_skips() -> pd.DataFrame:
    """The (shared, never changed) skipped table of a unit that skipped nothing."""
    return pd.DataFrame({"_sid": np.zeros(0, dtype=int), "reason": [], "detail": []})


@functools.cache
def _calendar(text: str) -> Any:
    return load_calendar_any(text)


def run_loop(unit: LoopUnit) -> UnitResult:
    """Fit each series on its own (:func:`evcal.engine.series.fit_series`); failures become skip reasons."""
    from evcal.errors import EvcalError

    cal = _calendar(unit.calendar_text)
    parts: list[BlockTables] = []
    series_rows, param_rows, skipped = [], [], []
    models: dict[int, Any] = {}
    inputs = unit.inputs or [None] * len(unit.sids)
    for sid, hist, tr, inp in zip(unit.sids, unit.histories, unit.transforms, inputs, strict=True):
        try:
            # a series prepared by the caller keeps the caller's options (its transform is chosen)
            opts = unit.options if inp is not None else replace(unit.options, transform=tr)
            res, tables = fit_series(hist, cal, opts, inp, int(sid))
        except (EvcalError, np.linalg.LinAlgError, ValueError) as err:
            if unit.keep_models and isinstance(err, EvcalError):
                raise
            text = "; ".join(err.problems) if isinstance(err, EvcalError) else f"{type(err).__name__}: {err}"
            skipped.append({"_sid": sid, "reason": "fit failed", "detail": text})
            continue
        if unit.keep_models:
            models[int(sid)] = res
        parts.append(tables)
        series_rows.append({"_sid": sid, "engine": "per-series", "group": -1, "transform": res.transform,
                            "method": res.model_choice.get("chosen", ""), "sigma2": res.sigma2,
                            "smear": res.smear, "hac_lags": np.nan, "error_ar_order": np.nan,
                            "trend_origin": res.spec.trend_origin,
                            "note": "; ".join(res.warnings)})
        param_rows.append({"_sid": sid, **{k: float(v) for k, v in res.params.items()}})
    return UnitResult(unit.index, concat_tables(parts), pd.DataFrame(series_rows),
                      pd.DataFrame(param_rows), pd.DataFrame(skipped, columns=["_sid", "reason", "detail"]),
                      models=models)


EMPTY_TABLES = {  # the columns of each table when no series produced a row
    "lifts": ["_sid", *LIFT_COLUMNS, "kind", "label", "_fitted"],
    "occurrences": ["_sid", *OCC_COLUMNS, "low_units", "high_units"],
    "profile": ["_sid", "period", "index", "low_index", "high_index"],
    "quality": ["_sid", "periods_fitted", "wape_pct", "resid_sd", "mean_base"],
}


def concat_tables(parts: list[BlockTables], columns: bool = False) -> BlockTables:
    """The tables of ``parts`` joined in order: as frames, or kept as columns where they are (``columns``)."""

    def cat(name: str) -> Any:
        tables = [getattr(p, name) for p in parts]
        joined = join_columns(tables) if columns else None
        return joined if joined is not None else join_tables(tables, EMPTY_TABLES[name])

    fitted = [f for p in parts for f in p.fitted]
    return BlockTables(cat("lifts"), cat("occurrences"), cat("profile"), fitted, cat("quality"))


def run_unit(unit: Any) -> UnitResult:
    """Run one unit of any kind (a pack of small groups: :mod:`evcal.engine.packs`)."""
    if isinstance(unit, BatchUnit):
        return run_batch(unit)
    if isinstance(unit, LoopUnit):
        return run_loop(unit)
    from evcal.engine.packs import run_pack

    return run_pack(unit)
