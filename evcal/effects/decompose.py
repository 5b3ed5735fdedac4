"""Split a fitted (or planned) series into base and one contribution per term, for m series at once.

On the log scale the terms add; in units they interact. A term's part is
counterfactual: what the fitted sales lose when the term is taken out. Where
terms overlap in a period the overlap is shared by the Shapley value, in three
steps that add up exactly to fitted − base:

1. closures take base × (open share − 1) (the base lost to closed days);
2. interventions (level shifts, ramps, temporary changes, pulses) take the
   Shapley value among the interventions present of
   ``v(S) = open base × (exp(Σ_S iᵢ) − 1)``: they change the level that the
   events act on, so they come before the events;
3. events take the Shapley value among the events present of
   ``v(S) = level × (exp(Σ_S eⱼ) − 1)``, with level = open base × exp(Σ i).

An event alone in its periods thus gets fitted − fitted without it, exactly.
An event with several columns (a ``daily`` shape) is one player; its part is
shared among its columns in proportion to their log-scale size. For the
additive model the terms already add up in units (each term's part is its own).
The m series of a block share the design rows; the coefficients differ.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from typing import Any

import numpy as np
import pandas as pd

from evcal.effects.span import GroupInfo, SpanContext

__all__ = ["decompose_block", "decompose", "shapley_exp", "player_of"]


@functools.cache
def _legendre(k: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Legendre nodes on (0, 1) and half their weights, exact for polynomials of degree k − 1."""
    nodes, weights = np.polynomial.legendre.leggauss(max((k + 1) // 2, 1))
    return 0.5 * (nodes + 1.0), 0.5 * weights


def shapley_exp(level: np.ndarray | float, logs: np.ndarray, player: int | None = None,
                expm1: Callable[[np.ndarray], np.ndarray] = np.expm1) -> np.ndarray:
    """Shapley values of the game ``v(S) = level (exp(Σ_{j∈S} logs_j) − 1)``, exact for any number of players.

    Parameters
    ----------
    level : ndarray or float
        The level the players act on, broadcastable against ``logs[0]``.
    logs : ndarray, shape (k, ...)
        Each player's log-scale effect (0 where a player is absent: a null player gets 0).
    player : int, optional
        Only this player's value (what the occurrence intervals need): the other players'
        values are not computed.
    expm1 : callable, optional
        ``exp(x) − 1`` elementwise; the occurrence tables' single-precision screen passes a
        faster, less accurate one (the nodes and weights then take ``logs``' precision too).

    Returns
    -------
    ndarray, shape of ``logs`` (of ``logs[0]`` with ``player``)
        Player j's value; the values add up to ``level (exp(Σ logs) − 1)``.

    Notes
    -----
    The game's multilinear extension is ``level (∏ⱼ (1 + xⱼ (aⱼ − 1)) − 1)`` with
    ``aⱼ = exp(logsⱼ)``, and a player's Shapley value is the integral over t in
    [0, 1] of its partial derivative on the diagonal (Owen 1972):
    ``level (aⱼ − 1) ∫₀¹ ∏_{i≠j} (1 + t (aᵢ − 1)) dt``. The integrand is a
    polynomial of degree k − 1, so Gauss–Legendre with ⌈k/2⌉ nodes gives it
    exactly: no sum over the 2ᵏ subsets, no cap on the players present.
    """
    k = logs.shape[0]
    gain = expm1(logs)  # aⱼ − 1
    nodes, half_weights = _legendre(k)  # nodes on (0, 1): every factor 1 + t (a − 1) >= 1 − t > 0
    if logs.dtype != nodes.dtype:  # numpy scalars of double precision would promote single-precision logs
        nodes, half_weights = nodes.astype(logs.dtype), half_weights.astype(logs.dtype)
    if player is not None:
        others = [gain[i] for i in range(k) if i != player]
        one: np.ndarray | float = 0.0
        for t, w in zip(nodes, half_weights, strict=True):
            prod: np.ndarray | float = w
            for g in others:
                prod = prod * (1.0 + t * g)
            one = one + prod
        return level * gain[player] * one
    out = np.zeros_like(gain)
    for t, w in zip(nodes, half_weights, strict=True):
        f = 1.0 + t * gain
        # the product of the other players' factors, from the products before and after each player
        before = np.ones_like(f)
        after = np.ones_like(f)
        if k > 1:
            np.cumprod(f[:-1], axis=0, out=before[1:])
            np.cumprod(f[:0:-1], axis=0, out=after[-2::-1])
        out += w * before * after
    return level * gain * out


def player_of(group: GroupInfo, col: str) -> str:
    """The player a term column belongs to: its event (one player for a ``daily`` shape's columns)."""
    if col in group.intervention_names:
        return col
    return str(group.event_info.get(col, {}).get("event", col))


def _shared_parts(level: np.ndarray, terms: dict[str, tuple[np.ndarray, np.ndarray]],
                  players: dict[str, list[str]]) -> dict[str, np.ndarray]:
    """Each column's part of ``level (exp(Σ terms) − 1)``: Shapley among the players, log-share within one.

    ``terms``: column -> (periods, (m, len(periods)) log-scale values); ``level`` (m, n).
    Returns column -> (m, n) parts.
    """
    m, n = level.shape
    plog: dict[str, np.ndarray] = {}
    present = np.zeros(n, dtype=np.int64)
    on: dict[str, np.ndarray] = {}
    for p, cols in players.items():
        plog[p] = np.zeros((m, n)) if len(cols) > 1 else None  # type: ignore[assignment]
        hit = np.zeros(n, dtype=bool)
        for c in cols:
            idx, val = terms[c]
            hit[idx] = True
            if plog[p] is not None:
                plog[p][:, idx] += val
        on[p] = hit
        present += hit
    parts: dict[str, np.ndarray] = {}
    value: dict[str, np.ndarray] = {p: np.zeros((m, n)) for p in players}
    # a player alone in a period: fitted with it minus fitted without it
    for p, cols in players.items():
        alone = np.flatnonzero(on[p] & (present == 1))
        if not len(alone):
            continue
        if plog[p] is None:
            idx, val = terms[cols[0]]
            pos = np.searchsorted(idx, alone)
            value[p][:, alone] = level[:, alone] * np.expm1(val[:, pos])
        else:
            value[p][:, alone] = level[:, alone] * np.expm1(plog[p][:, alone])
    shared = np.flatnonzero(present > 1)
    if len(shared):
        names = [p for p in players if on[p][shared].any()]
        logs = np.zeros((len(names), m, len(shared)))
        for i, p in enumerate(names):
            if plog[p] is not None:
                logs[i] = plog[p][:, shared]
            else:
                idx, val = terms[players[p][0]]
                inside = on[p][shared]
                logs[i][:, inside] = val[:, np.searchsorted(idx, shared[inside])]
        phi = shapley_exp(level[:, shared], logs)
        for i, p in enumerate(names):
            value[p][:, shared] = phi[i]
    for p, cols in players.items():
        if len(cols) == 1:
            parts[cols[0]] = value[p]
            continue
        # several columns of one event: its part shared in proportion to each column's log-scale size
        big = np.abs(plog[p]) > 1e-12
        scale = np.where(big, value[p] / np.where(big, plog[p], 1.0), level)
        for c in cols:
            idx, val = terms[c]
            parts[c] = np.zeros((m, n))
            parts[c][:, idx] = val * scale[:, idx]
    return parts


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
        Term or closure name -> (m, n) contribution; base + parts add up to fitted
        (see the module notes for how overlapping terms share).
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
    # event's windows: a few of the span's periods)
    tmat: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    total = np.zeros_like(eta_base)
    for c in terms:
        nz = (curved_support or {}).get(c) if c in curved else None
        idx = np.flatnonzero(ctx.columns[c]) if nz is None else np.unique(np.asarray(nz, dtype=np.int64))
        x = (curved[c] if c in curved else ctx.columns[c][None, :])[:, idx]
        assumed = group.status[c].status == "assumed"
        if assumed:  # log(1 + a) on the log scale; in the additive model the fraction a of base
            a = group.assumed[c]
            coef = np.full(m, float(np.log1p(a)) if group.transform != "none" else a)
        else:  # a borrowed lift takes its target's coefficient; 0 when not estimated
            coef = pmap.get(group.source(c), np.zeros(m))
        val = coef[:, None] * x
        if group.transform == "none" and assumed:
            val = val * eta_base[:, idx]
        tmat[c] = (idx, val)
        total[:, idx] += val
    parts: dict[str, np.ndarray] = {}
    if group.transform == "none":
        base = eta_base
        fitted = (base + total) * share
        for c, (idx, val) in tmat.items():
            parts[c] = np.zeros((m, n))
            parts[c][:, idx] = val * share[:, idx]
    else:
        base = np.exp(eta_base, out=eta_base)
        base *= smear[:, None]
        level = base * share
        fitted = level * np.exp(total)
        interventions = [c for c in terms if c in group.intervention_names]
        events = [c for c in terms if c not in group.intervention_names]
        for cols in (interventions, events):
            players: dict[str, list[str]] = {}
            for c in cols:
                players.setdefault(player_of(group, c), []).append(c)
            parts.update(_shared_parts(level, {c: tmat[c] for c in cols}, players))
            if cols is interventions and cols:
                # the events act on the level with the interventions in it: open base × exp(Σ i)
                level = level + sum(parts[c] for c in cols)
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
