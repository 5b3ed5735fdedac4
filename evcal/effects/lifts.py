"""One lift per event column and intervention, with its interval, and the seasonal index, for m series.

A lift's 95 % interval is the coefficient's interval (beta ± 1.96 se, from
the fit's covariance: HAC for OLS) mapped through the monotone transform
100 (exp(b) - 1); for the additive model, divided by the mean base of the
event's periods.
"""

from __future__ import annotations

import functools
from typing import Any

import numpy as np

from evcal.design.seasonal import AnnualFourier, SeasonalDummies, cycle_length
from evcal.effects.columns import Columns, tiled_text
from evcal.effects.occurrences import Z95
from evcal.effects.span import GroupInfo, SpanContext

__all__ = ["lifts_columns", "profile_columns", "LIFT_COLUMNS"]

LIFT_COLUMNS = ["event", "lift_pct", "low_pct", "high_pct", "units_per_occurrence", "identifiable", "note"]


def _pct(b: np.ndarray, transform: str, scale: np.ndarray | float) -> np.ndarray:
    if transform == "none":
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(scale != 0, 100.0 * b / scale, np.nan)
    return 100.0 * np.expm1(b)


def lifts_columns(ctx: SpanContext, group: GroupInfo, parts: dict[str, np.ndarray], base: np.ndarray,
           pmap: dict[str, np.ndarray], se_map: dict[str, np.ndarray], occ: Columns,
           sids: np.ndarray) -> Columns:
    """The lifts table for m series: one row per series and column."""
    m = len(sids)
    nan = np.full(m, np.nan)
    n_occ = len(ctx.occs)
    occ_events = ctx.occs["event"].to_numpy()
    added = np.asarray(occ["added_units"]).reshape(m, n_occ)

    def units_of(ev: str) -> np.ndarray:
        idx = np.flatnonzero(occ_events == ev)
        return added[:, idx].mean(axis=1) if len(idx) else nan

    rows: list[dict[str, Any]] = []
    for col, st in group.status.items():
        kind = "intervention" if col in group.intervention_names else "event"
        info = group.event_info.get(col, {})
        scale: np.ndarray | float = 1.0
        if group.transform == "none" and col in ctx.columns:
            active = ctx.columns[col] > 0
            scale = base[:, active].mean(axis=1) if active.any() else nan
        lift = low = high = nan
        if (src := group.source(col)) in pmap:
            b, s = pmap[src], se_map[src]
            lift, low, high = (_pct(v, group.transform, scale) for v in (b, b - Z95 * s, b + Z95 * s))
        elif st.status == "assumed":
            lift = low = high = np.full(m, 100.0 * group.assumed[col])
        if kind == "event":
            units = units_of(info.get("event", col))
        else:
            units = parts[col].sum(axis=1) if col in parts and st.status == "fitted" else nan
        rows.append({"event": col, "lift_pct": lift, "low_pct": low, "high_pct": high,
                     "units_per_occurrence": units,
                     "identifiable": st.status in ("fitted", "like", "assumed"),
                     "note": st.note, "kind": kind, "label": info.get("label", col),
                     "_fitted": st.status == "fitted"})
    for ev in group.closure_events:
        rows.append({"event": ev, "lift_pct": np.full(m, -100.0), "low_pct": np.full(m, -100.0),
                     "high_pct": np.full(m, -100.0), "units_per_occurrence": units_of(ev),
                     "identifiable": True, "note": "closure (effect: zero): known zero, kept out of the fit",
                     "kind": "event", "label": group.event_labels.get(ev, ev), "_fitted": False})
    out: dict[str, Any] = {"_sid": np.repeat(sids, len(rows))}
    for c in LIFT_COLUMNS + ["kind", "label", "_fitted"]:
        values = [row[c] for row in rows]
        if c in ("identifiable", "_fitted"):
            out[c] = np.tile(np.array(values, dtype=bool), m)
        elif c in ("event", "note", "kind", "label"):
            out[c] = tiled_text(values, m)
        else:
            out[c] = np.column_stack(values).ravel() if rows else np.zeros(0)
    return Columns(out)


def profile_columns(group: GroupInfo, pmap: dict[str, np.ndarray], mean_base: np.ndarray,
             sids: np.ndarray) -> Columns:
    """The seasonal index over one annual cycle (mean 100, free of events) for m series."""
    spec = group.spec
    m = len(sids)
    names, cycle = _season_cycle(spec.annual_block())
    beta = np.vstack([pmap.get(c, np.zeros(m)) for c in names])
    s = cycle @ beta
    if group.transform == "none":
        level = np.where(mean_base != 0, mean_base, 1.0)
        vals = level[None, :] + s - s.mean(axis=0)
        idx = 100.0 * vals / vals.mean(axis=0)
    else:
        e = np.exp(s - s.max(axis=0))
        idx = 100.0 * e / e.mean(axis=0)
    p = cycle_length(spec.freq)
    return Columns({"_sid": np.repeat(sids, p), "period": np.tile(np.arange(1, p + 1), m),
                    "index": idx[:p].T.ravel()})


@functools.lru_cache(maxsize=16)
def _season_cycle(block: AnnualFourier | SeasonalDummies) -> tuple[tuple[str, ...], np.ndarray]:
    """The seasonal columns over one cycle, made once per design."""
    cycle = block.cycle()
    values = cycle.to_numpy(dtype=float)
    values.setflags(write=False)
    return tuple(cycle.columns), values
