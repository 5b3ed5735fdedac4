"""Design groups of a few series each (series with missing periods of their own), their tables built together.

Every distinct pattern of missing periods is its own design group: its own
identification and its own solve, on its own rows, exactly as the series alone.
What follows the solve does not depend on the pattern once each series has its
coefficients, covariances and fit rows: the output tables (decomposition,
occurrences with their joint draws, lifts, seasonal index, quality). A *pack*
solves its groups one by one and builds the tables of every series whose groups
have the same statuses (up to the strength numbers, which are each series' own)
in one call, instead of one call per pattern. The rows come out in the order the
groups' own units give them, so the outputs equal the unpacked run.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from evcal.effects import BlockTables
from evcal.effects.block import STRENGTH_COLUMNS
from evcal.effects.columns import Columns, join_tables
from evcal.effects.span import FittedBlock
from evcal.engine.units import (
    BatchUnit,
    TablesInput,
    UnitResult,
    concat_tables,
    no_skips,
    solved_inputs,
    unit_result,
)

__all__ = ["PackUnit", "pack_units", "run_pack", "PACK_BELOW", "PACK_SERIES"]

#: groups of fewer series than this are packed (a gapped panel's patterns: one or two series each)
PACK_BELOW = 8
#: series per pack at most (as a batched unit's block)
PACK_SERIES = 500


@dataclass
class PackUnit:
    """Whole small design groups' units, solved one by one, their tables built together."""

    index: int
    units: list[BatchUnit]

    @property
    def sids(self) -> np.ndarray:
        return np.concatenate([u.sids for u in self.units])


def pack_units(units: list[Any]) -> list[Any]:
    """``units`` with runs of small groups' units packed (in order; the others as they were), renumbered."""
    out: list[Any] = []
    pack: list[BatchUnit] = []
    size = 0

    def flush() -> None:
        nonlocal pack, size
        if len(pack) == 1:
            out.append(pack[0])
        elif pack:
            out.append(PackUnit(0, pack))
        pack, size = [], 0

    for u in units:
        small = (isinstance(u, BatchUnit) and not u.keep_models and u.shared is not None
                 and len(u.shared.group.members) < PACK_BELOW)
        if not small:
            flush()
            out.append(u)
            continue
        if size + len(u.sids) > PACK_SERIES:
            flush()
        pack.append(u)
        size += len(u.sids)
    flush()
    for i, u in enumerate(out):
        u.index = i
    return out


def _info_key(info: Any) -> tuple[Any, ...]:
    """What the tables take from a group's statuses, less each series' own strength numbers."""
    status = tuple((c, st.status, st.note, st.twin, st.weak,
                    (getattr(st, "checks", {}) or {}).get("within", "")) for c, st in info.status.items())
    return info.transform, info.spec.trend_origin, tuple(info.fitted_cols), status


def _merged_tables(ts: list[TablesInput]) -> BlockTables:
    """The tables of series of several groups with the same statuses and span, in one call."""
    if len(ts) == 1:
        return ts[0].tables()
    t0 = ts[0]
    n = len(t0.ctx.periods)
    svs = [t.season_var for t in ts]

    def season_var(names: tuple[str, ...], C: np.ndarray) -> np.ndarray:
        return np.concatenate([sv(names, C) for sv in svs], axis=0)

    in_fit = np.concatenate([np.broadcast_to(t.ctx.in_fit, (len(t.sids), n)) for t in ts])
    merged = TablesInput(t0.ctx, t0.info, np.concatenate([t.B for t in ts], axis=1),
                         np.concatenate([t.se for t in ts], axis=1), np.concatenate([t.smear for t in ts]),
                         np.concatenate([t.actual for t in ts]), np.concatenate([t.sids for t in ts]),
                         {c: np.concatenate([t.curved[c] for t in ts]) for c in t0.curved}, t0.support,
                         season_var, None if t0.cov is None else np.concatenate([t.cov for t in ts]))
    tables = merged.tables(in_fit=in_fit)
    # the strength numbers are each series' own: its group's grading on its own rows
    lifts = tables.lifts
    assert isinstance(lifts, Columns)
    n_closures = len(t0.info.closure_events)
    for c in STRENGTH_COLUMNS:
        if c == "within":
            continue
        lifts[c] = np.concatenate([np.tile(np.array(
            [(getattr(st, "checks", {}) or {}).get(c, np.nan) for st in t.info.status.values()]
            + [np.nan] * n_closures, dtype=float), len(t.sids)) for t in ts])
    return tables


def _reordered(table: pd.DataFrame | Columns, rank: Any) -> pd.DataFrame | Columns:
    """``table``'s rows with its series in ``rank`` order (each series' rows kept together, in order)."""
    sid = np.asarray(table["_sid"])
    if not len(sid):
        return table
    perm = np.argsort(rank(sid), kind="stable")
    if np.array_equal(perm, np.arange(len(perm))):
        return table
    if isinstance(table, pd.DataFrame):
        return table.iloc[perm].reset_index(drop=True)
    return Columns({c: v[perm] for c, v in table.items()})


def _fitted_in_order(blocks: list[FittedBlock], rank: Any) -> list[FittedBlock]:
    """The fitted blocks cut and put back so their series come in ``rank`` order."""
    part = np.concatenate([np.full(len(b.sids), i) for i, b in enumerate(blocks)])
    row = np.concatenate([np.arange(len(b.sids)) for b in blocks])
    perm = np.argsort(rank(np.concatenate([b.sids for b in blocks])), kind="stable")
    part, row = part[perm], row[perm]
    cuts = np.flatnonzero(np.diff(part)) + 1
    out = []
    for a, z in zip(np.r_[0, cuts], np.r_[cuts, len(part)], strict=True):
        b, r = blocks[int(part[a])], row[a:z]
        if len(r) == len(b.sids) and np.array_equal(r, np.arange(len(r))):
            out.append(b)
            continue
        out.append(FittedBlock(b.sids[r], b.dates, {c: v[r] for c, v in b.columns.items()},
                               b.in_fit if b.in_fit.ndim == 1 else b.in_fit[r]))
    return out


def run_pack(pack: PackUnit) -> UnitResult:
    """Solve each group of the pack on its own rows, then build the tables of like groups together."""
    classes: dict[tuple[Any, ...], list[TablesInput]] = {}
    order: list[np.ndarray] = []
    results: list[UnitResult] = []
    for u in pack.units:
        solved, inputs = solved_inputs(u)
        for t in inputs:
            classes.setdefault((_info_key(t.info), id(t.ctx.columns)), []).append(t)
            order.append(np.asarray(t.sids))
        results.append(unit_result(u, solved, BlockTables(Columns(), Columns(), Columns(), [], Columns())))
        # the group is wholly in this pack: its factorisation goes now, not with the pack (what the
        # tables still need of it, the seasonal contrasts' Z, their inputs hold)
        u.shared.group.release()
    parts = [_merged_tables(ts) for ts in classes.values()]
    # every series' rows in the order the groups' own units would give them
    first = np.concatenate(order) if order else np.zeros(0, dtype=int)
    sorter = np.argsort(first)

    def rank(sid: np.ndarray) -> np.ndarray:
        return sorter[np.searchsorted(first, sid, sorter=sorter)]

    joined = concat_tables(parts, columns=True)
    tables = BlockTables(_reordered(joined.lifts, rank), _reordered(joined.occurrences, rank),
                         _reordered(joined.profile, rank),
                         _fitted_in_order([b for p in parts for b in p.fitted], rank) if len(first) else [],
                         _reordered(joined.quality, rank))
    series = join_tables([r.series for r in results], ["_sid"])
    params = join_tables([r.params for r in results], ["_sid"])
    reroute = np.concatenate([r.reroute for r in results])
    return UnitResult(pack.index, tables, series, params, no_skips(), reroute=reroute)
