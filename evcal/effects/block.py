"""The contract tables of a block of series that share a design, computed for all at once.

The decomposition, occurrences, lifts, seasonal index and fit quality, with the
series as the first axis of every array.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from evcal.effects.columns import Columns
from evcal.effects.decompose import decompose_block
from evcal.effects.lifts import lifts_columns, profile_columns
from evcal.effects.occurrences import occurrences_columns
from evcal.effects.span import FittedBlock, GroupInfo, SpanContext

__all__ = ["BlockTables", "block_tables"]


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
                 curved_support: dict[str, np.ndarray] | None = None) -> BlockTables:
    """Fitted/base/contributions, occurrences, lifts, profile and quality for m series.

    Arrays are series-major (one row per series), so the long tables are
    plain reshapes.

    Parameters
    ----------
    params : ndarray, shape (len(group.fitted_cols), m)
    se : ndarray, shape (len(group.term_cols), m)
        HAC standard errors of the event and intervention coefficients.
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
    """
    curved = curved or {}
    pmap = {c: params[i] for i, c in enumerate(group.fitted_cols)}
    se_map = {c: se[i] for i, c in enumerate(group.term_cols)}
    base, fitted, parts = decompose_block(ctx, group, pmap, smear, curved, curved_support)
    mean_base = base.mean(axis=1)

    occ = occurrences_columns(ctx, group, parts, base, pmap, se_map, sids, curved)
    lifts = lifts_columns(ctx, group, parts, base, pmap, se_map, occ, sids)
    profile = profile_columns(group, pmap, mean_base, sids)
    fitted_block = FittedBlock(sids, ctx.dates.to_numpy(),
                               {"actual": actual, "fitted": fitted, "base": base, **parts}, ctx.in_fit)

    with np.errstate(divide="ignore", invalid="ignore"):
        log = group.transform == "log"
        resid = np.log(actual) - np.log(fitted / smear[:, None]) if log else actual - fitted
        ok = ctx.in_fit[None, :] & np.isfinite(resid)
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


