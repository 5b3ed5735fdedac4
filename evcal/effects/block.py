"""The contract tables of a block of series that share a design, computed for all at once.

The decomposition, occurrences, lifts, seasonal index and fit quality, with the
series as the first axis of every array.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.seasonal import AnnualFourier, SeasonalDummies, cycle_length
from evcal.effects.columns import Columns, tiled_text
from evcal.effects.decompose import decompose_block
from evcal.effects.netlift import NET_LIFT_COLUMNS, net_columns
from evcal.effects.occurrences import Z95, occurrences_columns
from evcal.effects.span import FittedBlock, GroupInfo, SpanContext
from evcal.effects.wide import too_wide, wide_note

__all__ = ["BlockTables", "block_tables", "LIFT_COLUMNS"]

#: (names of seasonal coefficients, contrasts (r, len(names))) -> their variances (m, r)
SeasonVariance = Callable[[tuple[str, ...], np.ndarray], np.ndarray]

LIFT_COLUMNS = ["event", "lift_pct", "low_pct", "high_pct", "units_per_occurrence", "identifiable", "note"]
#: what the lifts table adds after the contract columns: how well the history pins each lift down
#: (evcal.model.strength; NaN or empty where not measured: unfitted, assumed, closures)
STRENGTH_COLUMNS = ["occurrences_fitted", "leverage", "vif_season", "vif_events", "within"]


@dataclass
class BlockTables:
    """The tables of one block, long, with a ``_sid`` column (the series' position in the panel)."""

    lifts: pd.DataFrame | Columns
    occurrences: pd.DataFrame | Columns
    profile: pd.DataFrame | Columns
    fitted: list[FittedBlock | pd.DataFrame]
    quality: pd.DataFrame | Columns  # _sid, periods_fitted, wape_pct, resid_sd, mean_base


def block_tables(ctx: SpanContext, group: GroupInfo, params: np.ndarray, se: np.ndarray,
                 smear: np.ndarray, actual: np.ndarray, sids: np.ndarray,
                 curved: dict[str, np.ndarray] | None = None,
                 curved_support: dict[str, np.ndarray] | None = None,
                 season_var: SeasonVariance | None = None,
                 cov: np.ndarray | None = None, in_fit: np.ndarray | None = None) -> BlockTables:
    """Fitted/base/contributions, occurrences, lifts, profile and quality for m series.

    Parameters
    ----------
    params : ndarray, shape (len(group.fitted_cols), m)
    se : ndarray, shape (len(group.term_cols), m)
        Standard errors of the event and intervention coefficients (the fit's covariance).
    smear : ndarray, shape (m,)
    actual : ndarray, shape (m, len(ctx.periods))
    sids : ndarray of int, shape (m,)
        The series' positions in the panel (the ``_sid`` column of every table).
    curved : dict, optional
        Event columns that differ by series (each series' own exact aggregation,
        :mod:`evcal.engine.refine`): column -> (m, n) on the span.
    curved_support : dict, optional
        For each curved column, the span's periods outside which it is zero
        (its windows); the products of a sparse column are formed there only.
    season_var : callable, optional
        ``season_var(names, C)``: the variances (m, r) of the contrasts ``C`` (r, len(names))
        of the seasonal coefficients ``names``, from the fit's covariance (the seasonal
        index's interval; NaN without it).
    cov : ndarray, shape (m, len(group.term_cols), len(group.term_cols)), optional
        Covariance of the event and intervention coefficients, for the occurrences'
        joint draws; without it each coefficient is drawn alone from its ``se``.
    in_fit : ndarray of bool, shape (m, len(ctx.periods)), optional
        Each series' own fit rows, when the block's series do not share them (series with
        missing periods of their own, :mod:`evcal.engine.packs`); ``ctx.in_fit`` otherwise.
    """
    curved = curved or {}
    in_fit = ctx.in_fit if in_fit is None else in_fit
    pmap = {c: params[i] for i, c in enumerate(group.fitted_cols)}
    se_map = {c: se[i] for i, c in enumerate(group.term_cols)}
    base, fitted, parts = decompose_block(ctx, group, pmap, smear, curved, curved_support)
    mean_base = base.mean(axis=1)

    occ = occurrences_columns(ctx, group, parts, base, pmap, se_map, sids, curved, cov)
    lifts = lifts_columns(ctx, group, parts, base, pmap, se_map, occ, sids)
    if ctx.dip_links:
        _add_net(ctx, group, parts, base, pmap, se_map, cov, curved, occ, lifts, len(sids))
    profile = profile_columns(group, pmap, mean_base, sids, season_var)
    fitted_block = FittedBlock(sids, ctx.dates.to_numpy(),
                               {"actual": actual, "fitted": fitted, "base": base, **parts}, in_fit)

    with np.errstate(divide="ignore", invalid="ignore"):
        log = group.transform == "log"
        resid = np.log(actual) - np.log(fitted / smear[:, None]) if log else actual - fitted
        ok = (in_fit[None, :] if in_fit.ndim == 1 else in_fit) & np.isfinite(resid)
        n_ok = ok.sum(axis=1)
        wape = np.where(n_ok > 0, 100 * np.sum(np.abs(actual - fitted), axis=1, where=ok)
                        / np.sum(np.abs(actual), axis=1, where=ok), np.nan)
        resid[~ok] = 0.0
        resid -= (resid.sum(axis=1) / n_ok)[:, None]
        resid[~ok] = 0.0
        sd = np.sqrt(np.square(resid).sum(axis=1) / n_ok)
    quality = Columns({"_sid": sids, "periods_fitted": n_ok.astype(int), "wape_pct": wape,
                       "resid_sd": sd, "mean_base": mean_base})
    return BlockTables(lifts, occ, profile, [fitted_block], quality)


def _add_net(ctx: SpanContext, group: GroupInfo, parts: dict[str, np.ndarray], base: np.ndarray,
             pmap: dict[str, np.ndarray], se_map: dict[str, np.ndarray], cov: np.ndarray | None,
             curved: dict[str, np.ndarray], occ: Columns, lifts: Columns, m: int) -> None:
    """The gross / dip / net columns (:mod:`evcal.effects.netlift`) added to the occurrences and lifts."""
    added = np.asarray(occ["added_units"]).reshape(m, -1)
    occ_net, lift_net = net_columns(ctx, group, parts, base, pmap, se_map, cov, curved, added)
    for c, v in occ_net.items():
        occ[c] = v.ravel()
    events = list(dict.fromkeys(lifts["event"][: len(lifts["event"]) // m]))
    dip_of = {d: link.event for link in ctx.dip_links for d in link.dips}
    lifts["dip_of"] = tiled_text([dip_of.get(e, "") for e in events], m)
    nan = np.full(m, np.nan)
    for c in NET_LIFT_COLUMNS[1:]:
        lifts[c] = np.column_stack([lift_net.get(e, {}).get(c, nan) for e in events]).ravel()


def _pct(b: np.ndarray, transform: str, scale: np.ndarray | float) -> np.ndarray:
    if transform == "none":
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(scale != 0, 100.0 * b / scale, np.nan)
    return 100.0 * np.expm1(b)


def lifts_columns(ctx: SpanContext, group: GroupInfo, parts: dict[str, np.ndarray], base: np.ndarray,
           pmap: dict[str, np.ndarray], se_map: dict[str, np.ndarray], occ: Columns,
           sids: np.ndarray) -> Columns:
    """The lifts table for m series: one row per series and column.

    A lift's 95 % interval is the coefficient's (beta ± 1.96 se, from the fit's
    covariance: AR-prewhitened HC2 with a floor at high leverage for OLS) through the monotone
    100 (exp(b) - 1); in the additive model, divided by the mean base of the event's periods.
    ``identifiable`` is ``yes``, ``weak`` or ``no`` (:attr:`ColumnStatus.identifiable`); a
    borrowed lift is as weak as the lift it borrows.
    """
    m = len(sids)
    nan = np.full(m, np.nan)
    occ_events = ctx.occs["event"].to_numpy()
    added = np.asarray(occ["added_units"]).reshape(m, len(occ_events))

    def units_of(ev: str) -> np.ndarray:
        idx = np.flatnonzero(occ_events == ev)
        return added[:, idx].mean(axis=1) if len(idx) else nan

    rows: list[dict[str, Any]] = []
    drivers = {d["name"] for d in getattr(group.spec, "drivers", None) or []}  # their own table (drivers.csv)
    for col, st in group.status.items():
        if col in drivers:
            continue
        kind = "intervention" if col in group.intervention_names else "event"
        info = group.event_info.get(col, {})
        scale: np.ndarray | float = 1.0
        if group.transform == "none" and col in ctx.columns:
            active = ctx.columns[col] > 0
            scale = base[:, active].mean(axis=1) if active.any() else nan
        lift = low = high = nan
        estimated = (src := group.source(col)) in pmap  # (fitted or borrowed: an interval of its own)
        if estimated:
            b, s = pmap[src], se_map[src]
            lift, low, high = (_pct(v, group.transform, scale) for v in (b, b - Z95 * s, b + Z95 * s))
        elif st.status == "assumed":
            lift = low = high = np.full(m, 100.0 * group.assumed[col])
        # an intervention's rows in the occurrences are its calendar years: units per year in force
        if kind == "event":
            units = units_of(info.get("event", col))
        else:
            units = units_of(col) if st.status == "fitted" else nan
        ident, note = _identifiable(group, col, st)
        checks = getattr(st, "checks", {}) or {}
        rows.append({"event": col, "lift_pct": lift, "low_pct": low, "high_pct": high,
                     "units_per_occurrence": units, "identifiable": ident, "note": note, "kind": kind,
                     "label": info.get("label", col), "_fitted": st.status == "fitted",
                     "_estimated": estimated,
                     **{c: checks.get(c, "" if c == "within" else np.nan) for c in STRENGTH_COLUMNS}})
    for ev in group.closure_events:
        rows.append({"event": ev, "lift_pct": np.full(m, -100.0), "low_pct": np.full(m, -100.0),
                     "high_pct": np.full(m, -100.0), "units_per_occurrence": units_of(ev),
                     "identifiable": "yes", "note": "closure (effect: zero): known zero, kept out of the fit",
                     "kind": "event", "label": group.event_labels.get(ev, ev), "_fitted": False,
                     **{c: "" if c == "within" else np.nan for c in STRENGTH_COLUMNS}})
    out: dict[str, Any] = {"_sid": np.repeat(sids, len(rows))}
    wide_text = _wide_grades(rows, m)  # a fitted lift whose interval spans more than an order of magnitude
    for c in LIFT_COLUMNS + ["kind", "label", "_fitted"] + STRENGTH_COLUMNS:
        if c in wide_text:
            out[c] = wide_text[c]
            continue
        values = [row[c] for row in rows]
        if c == "_fitted":
            out[c] = np.tile(np.array(values, dtype=bool), m)
        elif c in STRENGTH_COLUMNS and c != "within":
            out[c] = np.tile(np.array(values, dtype=float), m)
        elif c in ("event", "note", "kind", "label", "identifiable", "within"):
            out[c] = tiled_text(values, m)
        else:
            out[c] = np.column_stack(values).ravel() if rows else np.zeros(0)
    return Columns(out)


def _wide_grades(rows: list[dict[str, Any]], m: int) -> dict[str, pd.Categorical]:
    """``identifiable`` and ``note`` per series where a lift's interval is too wide to trust, else nothing.

    The rule is :func:`evcal.effects.wide.too_wide` on each series' own interval (a panel's series share
    their design's grade, not their intervals); such a ``yes`` lift becomes ``weak`` with the rule's note.
    """
    wide = [too_wide(r["low_pct"], r["high_pct"]) if r.get("_estimated") else np.zeros(m, dtype=bool)
            for r in rows]
    if not rows or not np.any(wide):
        return {}
    ident = np.empty((m, len(rows)), dtype=object)
    note = np.empty((m, len(rows)), dtype=object)
    for j, (r, w) in enumerate(zip(rows, wide, strict=True)):
        ident[:, j], note[:, j] = r["identifiable"], r["note"]
        for i in np.flatnonzero(w):
            extra = wide_note(float(r["low_pct"][i]), float(r["high_pct"][i]))
            ident[i, j] = "weak"
            note[i, j] = f"{r['note']}; {extra}" if r["note"] else extra
    return {"identifiable": pd.Categorical(ident.ravel()), "note": pd.Categorical(note.ravel())}


def _identifiable(group: GroupInfo, col: str, st: Any) -> tuple[str, str]:
    """``yes``/``weak``/``no`` and the note of one column; a borrowed lift is as weak as its source."""
    ident = st.identifiable
    note = st.note
    if st.status == "like":
        source = group.status.get(group.like_map.get(col, ""))
        if source is not None and source.identifiable == "weak":
            ident = "weak"
            note = f"{note}; that lift is weakly identified (see its note)" if note else \
                "borrows a weakly identified lift (see its note)"
    return ident, note


def profile_columns(group: GroupInfo, pmap: dict[str, np.ndarray], mean_base: np.ndarray,
                    sids: np.ndarray, season_var: SeasonVariance | None = None) -> Columns:
    """The seasonal index over one annual cycle (mean 100, free of events) for m series, with its interval.

    The interval is the delta method on the seasonal coefficients' covariance:
    the log seasonal factor of period p, ``sₚ = cₚᵀβ`` (``cₚ`` the seasonal
    columns' values at p), is compared with the mean log factor over the cycle,
    ``sₚ − s̄``, whose variance is ``(cₚ − c̄)ᵀ Cov(β) (cₚ − c̄)``; the 95 % interval
    ``sₚ − s̄ ± 1.96 sd`` is carried to the index through the same monotone map
    (``index · exp(± 1.96 sd)`` on the log scale, ``index ± 1.96 sd · 100 / level``
    in the additive model). The normalising mean is taken as the mean log factor
    (the index divides by the mean factor instead: a second-order difference).
    """
    spec = group.spec
    m = len(sids)
    names, cycle = _season_cycle(spec.annual_block())
    beta = np.vstack([pmap.get(c, np.zeros(m)) for c in names])
    s = cycle @ beta
    p = cycle_length(spec.freq)
    fitted = [i for i, c in enumerate(names) if c in pmap]
    sd = np.full((p, m), np.nan)
    if season_var is not None:
        contrasts = (cycle - cycle.mean(axis=0))[:p][:, fitted]
        sd = np.sqrt(np.clip(season_var(tuple(names[i] for i in fitted), contrasts), 0, None)).T
    if group.transform == "none":
        level = np.where(mean_base != 0, mean_base, 1.0)
        vals = level[None, :] + s - s.mean(axis=0)
        scale = 100.0 / vals.mean(axis=0)
        idx = vals * scale
        low, high = idx[:p] - Z95 * sd * scale, idx[:p] + Z95 * sd * scale
    else:
        e = np.exp(s - s.max(axis=0))
        idx = 100.0 * e / e.mean(axis=0)
        with np.errstate(over="ignore"):  # an undetermined season: an unbounded interval, said as such
            low, high = idx[:p] * np.exp(-Z95 * sd), idx[:p] * np.exp(Z95 * sd)
    return Columns({"_sid": np.repeat(sids, p), "period": np.tile(np.arange(1, p + 1), m),
                    "index": idx[:p].T.ravel(), "low_index": low.T.ravel(), "high_index": high.T.ravel()})


@functools.lru_cache(maxsize=16)
def _season_cycle(block: AnnualFourier | SeasonalDummies) -> tuple[tuple[str, ...], np.ndarray]:
    """The seasonal columns over one cycle, made once per design."""
    cycle = block.cycle()
    values = cycle.to_numpy(dtype=float)
    values.setflags(write=False)
    return tuple(cycle.columns), values
