"""Split a fitted (or planned) series into base and one contribution per term, for m series at once.

On the log scale the terms add; in units they interact. The split used here
adds up exactly: the closures' share is taken first (the open share of the
period times everything else), then the remaining gap between "with events"
and base is divided among the terms in proportion to their log-scale size.
For the additive model the terms already add up in units. The m series of a
block share the design rows; the coefficients differ.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.effects.span import GroupInfo, SpanContext

__all__ = ["decompose_block", "decompose"]


def decompose_block(ctx: SpanContext, group: GroupInfo, pmap: dict[str, np.ndarray], smear: np.ndarray,
                    curved: dict[str, np.ndarray] | None = None,
                    curved_support: dict[str, np.ndarray] | None = None,
                    terms: list[str] | None = None,
                    ) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]:
    """Base, fitted and each term's contribution in units, (m, n) each.

    Parameters
    ----------
    pmap : dict
        Coefficient name -> (m,) values.
    smear : ndarray, shape (m,)
        Smearing factor of the log model (ones for the additive model).
    curved, curved_support : dict, optional
        Event columns that differ by series, as for :func:`evcal.effects.block.block_tables`.
    terms : list of str, optional
        Term columns to include; every event and intervention column by default.

    Returns
    -------
    base, fitted : ndarray, shape (m, n)
    parts : dict
        Term or closure name -> (m, n) contribution; base + parts add up to fitted.
    """
    m, n = len(smear), len(ctx.periods)
    curved = curved or {}
    base_cols = [c for c in group.base_columns if c in ctx.columns]
    Xb = np.column_stack([ctx.columns[c] for c in base_cols]) if base_cols else np.zeros((n, 0))
    Bb = np.vstack([pmap.get(c, np.zeros(m)) for c in base_cols]) if base_cols else np.zeros((0, m))
    eta_base = Bb.T @ Xb.T  # (m, n)
    terms = [c for c in (terms if terms is not None else group.status) if c in ctx.columns]
    share = ctx.share[None, :]
    # each term's coefficient times its column, on the periods where the column is not zero (an
    # event's windows: a few of the span's periods) or on all of them
    support: dict[str, np.ndarray | slice] = {}
    tmat: dict[str, np.ndarray] = {}
    total = np.zeros_like(eta_base)
    for c in terms:
        nz = (curved_support or {}).get(c) if c in curved else np.flatnonzero(ctx.columns[c])
        # worth working on the support only when it saves most of the work
        support[c] = nz if nz is not None and 2 * len(nz) < n else slice(None)
        x = (curved[c] if c in curved else ctx.columns[c][None, :])[:, support[c]]
        assumed = group.status[c].status == "assumed"
        if assumed:  # log(1 + a) on the log scale; in the additive model the fraction a of base
            a = group.assumed[c]
            coef = np.full(m, float(np.log1p(a)) if group.transform != "none" else a)
        else:  # a borrowed lift takes its target's coefficient; 0 when not estimated
            coef = pmap.get(group.source(c), np.zeros(m))
        tmat[c] = coef[:, None] * x
        if group.transform == "none" and assumed:
            tmat[c] *= eta_base[:, support[c]]
        total[:, support[c]] += tmat[c]
    if group.transform == "none":
        base = eta_base
        fitted = (base + total) * share
        factor = share
    else:
        # (series × periods) arrays, a dozen per block: made in place where they can be
        base = np.exp(eta_base, out=eta_base)
        base *= smear[:, None]
        big = np.abs(total) > 1e-12
        denom = np.where(big, total, 1.0)
        fitted = np.exp(total, out=total)
        fitted *= base
        ratio = fitted - base
        ratio *= share
        ratio /= denom
        # each term's part of the gap: its share of the summed log-effect, or (where the
        # effects are all zero) its own first-order size
        factor = np.multiply(base, share, out=denom)
        np.copyto(factor, ratio, where=big)
        del ratio, denom
        fitted *= share
    parts: dict[str, np.ndarray] = {}
    for c in terms:
        tmat[c] *= factor[:, support[c]]
        if isinstance(support[c], slice):
            parts[c] = tmat[c]
        else:
            parts[c] = np.zeros((m, n))
            parts[c][:, support[c]] = tmat[c]
    cl = ctx.closures.reindex(ctx.periods).fillna(0.0).to_numpy(dtype=float)
    tot = cl.sum(axis=1)
    for j, c in enumerate(ctx.closures.columns):
        # a closure's part (the base lost to closed days, shared among the period's closures) is
        # zero outside the periods it closes
        nz = np.flatnonzero(cl[:, j] > 0)
        parts[c] = np.zeros((m, n))
        parts[c][:, nz] = base[:, nz] * (share[:, nz] - 1.0) * (cl[nz, j] / tot[nz])[None, :]
    return base, fitted, parts


def decompose(result: Any, X: pd.DataFrame, open_share: pd.Series, closures: pd.DataFrame,
              params: pd.Series | None = None, terms: list[str] | None = None) -> pd.DataFrame:
    """:func:`decompose_block` for one fitted model on the rows of ``X``, as a frame.

    Parameters
    ----------
    X : DataFrame
        Unmerged design columns (:func:`evcal.design.matrix.build_design`).
    closures : DataFrame
        Closed share per closure event (:func:`evcal.effects.span.closure_shares`).
    params : Series, optional
        Coefficients to use instead of the fitted ones.
    terms : list of str, optional
        Term columns to include (every event and intervention column by default).
    """
    params = result.params if params is None else params
    group = GroupInfo.of_result(result)
    in_fit = np.ones(len(X), dtype=bool)
    ctx = SpanContext(X.index, None, X, open_share.to_numpy(dtype=float), closures, in_fit)
    pmap = {c: np.array([float(v)]) for c, v in params.items()}
    base, fitted, parts = decompose_block(ctx, group, pmap, np.array([float(result.smear)]), terms=terms)
    return pd.DataFrame({"base": base[0], "fitted": fitted[0], **{c: v[0] for c, v in parts.items()}},
                        index=X.index)
