"""Split a fitted (or planned) series into base and one contribution per term.

On the log scale the terms add; in units they interact. The split used here
adds up exactly: the closures' share is taken first (the open share of the
period times everything else), then the remaining gap between "with events"
and base is divided among the terms in proportion to their log-scale size.
For the additive model the terms already add up in units.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import day_span, period_days
from evcal.design.dayweights import aggregate_day_weights


def term_coefficients(result: Any, params: pd.Series | None = None) -> dict[str, float]:
    """Model-scale coefficient of every event and intervention column (0 when not estimated)."""
    params = result.params if params is None else params
    coefs: dict[str, float] = {}
    for col, st in result.status.items():
        if st.status == "fitted":
            coefs[col] = float(params.get(col, 0.0))
        elif st.status == "like":
            target = result.like_map.get(col, "")
            coefs[col] = float(params.get(target, 0.0))
        elif st.status == "assumed":
            a = result.assumed[col]
            coefs[col] = float(np.log1p(a)) if result.transform != "none" else a
        else:
            coefs[col] = 0.0
    return coefs


def closure_shares(calendar: Any, periods: pd.PeriodIndex) -> pd.DataFrame:
    """Share of each period's days closed by each ``effect: zero`` event."""
    zero = [e.name for e in calendar.events if e.effect.kind == "zero"]
    if not zero:
        return pd.DataFrame(index=periods)
    start, end = day_span(periods)
    daily = calendar.day_weights(start, end, normalize="none", events=zero)
    daily = (daily > 0).astype(float)
    agg = aggregate_day_weights(daily, periods)
    days = period_days(periods)
    out = pd.DataFrame({c: agg[c].to_numpy() / days for c in agg.columns}, index=periods)
    # the event columns of a `daily` closure collapse to the event
    colmap = calendar.event_columns()
    return out.T.groupby(lambda c: colmap.get(c, c)).sum().T.clip(upper=1.0)


def decompose(
    result: Any,
    X: pd.DataFrame,
    open_share: pd.Series,
    closures: pd.DataFrame,
    params: pd.Series | None = None,
    terms: list[str] | None = None,
) -> pd.DataFrame:
    """Base, fitted and each term's contribution in units, for the rows of ``X``.

    Parameters
    ----------
    result : FitResult
        Supplies the transform, the smearing factor, column statuses.
    X : DataFrame
        Unmerged design columns (as built by :func:`evcal.design.matrix.build_design`).
    open_share : Series
        Share of each period open.
    closures : DataFrame
        Closed share per closure event (from :func:`closure_shares`).
    params : Series, optional
        Coefficients to use (a simulation draw); the fitted ones by default.
    terms : list of str, optional
        Term columns to include; all event and intervention columns by default.
    """
    params = result.params if params is None else params
    coefs = term_coefficients(result, params)
    base_cols = [c for c in result.base_columns if c in X.columns]
    eta_base = X[base_cols].to_numpy() @ params.reindex(base_cols).fillna(0.0).to_numpy()
    terms = [c for c in (terms if terms is not None else list(coefs)) if c in X.columns]
    tmat = np.column_stack([X[c].to_numpy() * coefs.get(c, 0.0) for c in terms]) if terms else \
        np.zeros((len(X), 0))
    share = open_share.to_numpy(dtype=float)
    if result.transform == "none":
        base = eta_base
        # an assumed lift is a fraction of base, not a number of units
        for j, c in enumerate(terms):
            if c in result.status and result.status[c].status == "assumed":
                tmat[:, j] = tmat[:, j] * base
        with_events = base + tmat.sum(axis=1)
        contrib = tmat * share[:, None]
    else:
        smear = result.smear
        base = smear * np.exp(eta_base)
        total = tmat.sum(axis=1)
        with_events = smear * np.exp(eta_base + total)
        gap = (with_events - base) * share
        safe = np.where(np.abs(total) > 1e-12, total, 1.0)
        contrib = np.where(np.abs(total)[:, None] > 1e-12, gap[:, None] * tmat / safe[:, None],
                           (base * share)[:, None] * tmat)
    fitted = with_events * share
    cols: dict[str, np.ndarray] = {"base": base, "fitted": fitted}
    for j, c in enumerate(terms):
        cols[c] = contrib[:, j]
    # closures: the base the closed days lose. The event terms above are already
    # scaled by the open share, so base + terms + closures adds up to `fitted`.
    lost = base * (share - 1.0)
    if len(closures.columns):
        cl = closures.reindex(X.index).fillna(0.0).to_numpy()
        tot = cl.sum(axis=1)
        safe_tot = np.where(tot > 0, tot, 1.0)
        for j, c in enumerate(closures.columns):
            cols[c] = np.where(tot > 0, lost * cl[:, j] / safe_tot, 0.0)
    return pd.DataFrame(cols, index=X.index)
