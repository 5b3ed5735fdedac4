"""The exact-aggregation passes of :func:`evcal.model.passes.estimate_exact` for a block of OLS series.

The event columns of a series depend on it only through its log-lifts θ
(:class:`~evcal.design.curved.CurvedEvents`), so each pass projects the
shared trend and seasonal columns out once (Frisch–Waugh–Lovell) and every
series solves only its few event and intervention columns. The covariance
of those coefficients (prewhitened by the AR model of each series' residuals
and weighted by each period's own whitened residual,
:func:`evcal.model.estimators.prewhitened_errors`) comes from the same projected
columns (their rows of ``(XᵀX)⁻¹Xᵀ`` are ``(X̃ᵀX̃)⁻¹X̃ᵀ``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from evcal.design.curved import CurvedEvents
from evcal.model.estimators import PrewhitenedErrors, ar_covariances, prewhitened_errors
from evcal.model.passes import MAX_PASSES, THETA_TOL, beyond_days, joint_twins, theta_moved, theta_sources
from evcal.model.secant import secant_step

__all__ = ["refine"]


def spd_solve(G: np.ndarray, B: np.ndarray) -> np.ndarray:
    """Solve ``G x = b`` for a stack of small symmetric positive-definite ``G`` (m, j, j), ``B`` (m, j, r).

    A Cholesky factorisation written over the stack (loops over the j columns,
    vector operations over the m systems): for thousands of 5 × 5 Gram
    matrices this is many times faster than one LAPACK call per matrix. Falls
    back to :func:`numpy.linalg.solve` if a matrix is not positive definite.

    Examples
    --------
    >>> G = np.array([[[4.0, 2.0], [2.0, 3.0]]])
    >>> spd_solve(G, np.array([[[2.0], [1.0]]]))[0, :, 0].round(4).tolist()
    [0.5, 0.0]
    """
    m, j, _ = G.shape
    L = np.zeros_like(G)
    with np.errstate(invalid="ignore", divide="ignore"):
        for c in range(j):
            L[:, c, c] = np.sqrt(G[:, c, c] - np.einsum("mk,mk->m", L[:, c, :c], L[:, c, :c]))
            for r in range(c + 1, j):
                L[:, r, c] = (G[:, r, c] - np.einsum("mk,mk->m", L[:, r, :c], L[:, c, :c])) / L[:, c, c]
        Y = np.empty_like(B)
        for r in range(j):
            Y[:, r] = (B[:, r] - np.einsum("mk,mkq->mq", L[:, r, :r], Y[:, :r])) / L[:, r, r][:, None]
        X = np.empty_like(B)
        for r in reversed(range(j)):
            X[:, r] = (Y[:, r] - np.einsum("mk,mkq->mq", L[:, r + 1:, r], X[:, r + 1:])) / L[:, r, r][:, None]
    if not np.isfinite(X).all():
        return np.linalg.solve(G, B)
    return X


@dataclass
class Refined:
    """A block after the fixed-point passes."""

    params: np.ndarray  # (k, m) in group.fitted_cols order
    resid: np.ndarray  # (n_rows, m)
    sigma2: np.ndarray  # (m,)
    se_terms: np.ndarray  # (len(term_cols), m)
    cov_terms: np.ndarray  # (m, len(term_cols), len(term_cols)): the covariance behind se_terms
    theta_in: dict[str, np.ndarray]  # θ the final design was built with, per source column
    curved: dict[str, np.ndarray]  # each series' raw (unmerged) event columns for that θ: (m, n_periods)
    errors: PrewhitenedErrors  # each series' AR error model and periods' weights, from its final residuals
    #: (m,) series whose first pass asks an event for a bigger dip than its days hold
    #: (:func:`evcal.model.passes.beyond_days`): the caller fits them on their own, where the rule notes it
    beyond: np.ndarray | None = None
    #: (m,) the passes each series took after the first (share-of-window) fit, at most MAX_PASSES
    passes: np.ndarray | None = None


def _group_basis(group: Any, curve: CurvedEvents, rows: np.ndarray, X_fit: np.ndarray, idx: dict[str, int],
                 base: list[str], term: list[str], js: list[int], curved_cols: list[str]) -> tuple[Any, ...]:
    """What :func:`refine` needs that depends on the design group alone, not on the series."""
    n = X_fit.shape[0]
    A = X_fit[:, [idx[c] for c in base]]
    Qa, Ra = np.linalg.qr(A)
    # merged like columns add their own curve (with the target's θ) to the target column
    like_into: dict[str, list[str]] = {}
    for c, tgt in group.like_map.items():
        if tgt in idx and group.status.get(c) is not None and group.status[c].status == "like":
            like_into.setdefault(tgt, []).append(c)
    # rows any event window touches (an event column is zero elsewhere for every θ)
    fit_periods = np.flatnonzero(rows)
    support = np.zeros(n, dtype=bool)
    for c in curved_cols:
        for name in [c] + like_into.get(c, []):
            support |= curve.column(name, np.zeros(1))[0, fit_periods] != 0
    U = np.flatnonzero(support)
    xs = X_fit[:, [idx[term[j]] for j in js]]  # shared term columns (interventions)
    Ra_inv = np.linalg.solve(Ra, np.eye(Ra.shape[0]))  # once per group: each block then multiplies
    return A, Qa, Ra_inv, like_into, U, Qa[U], fit_periods[U], xs, Qa.T @ xs, xs.T @ xs, xs[U]


def refine(group: Any, curve: CurvedEvents, rows: np.ndarray, X_fit: np.ndarray, Y: np.ndarray,
           B0: np.ndarray, cache: dict[str, Any] | None = None) -> Refined | None:
    """The single-series fit's θ passes for a block of series (None when nothing is curved).

    Each pass solves, for every series still moving, the event and intervention
    coefficients after the shared trend and seasonal columns are projected out
    (``X̃ᵀX̃ = XᵀX − PᵀP``, ``P = QᵀX`` for the orthonormal basis ``Q`` of the
    shared columns); an event column is zero outside its windows whatever θ is,
    so ``P`` needs only the rows the windows touch. Each series stops by the
    single-series rule, so it gets the passes it would get alone.

    ``X_fit`` (n_rows, k) is the first-pass design on the fit ``rows``, ``Y``
    (n_rows, m) the model-scale responses (offset taken off), ``B0`` (k, m) the
    first-pass coefficients; ``cache`` keeps what depends on the design group
    alone for its other blocks.
    """
    cols = list(group.fitted_cols)
    idx = {c: i for i, c in enumerate(cols)}
    curved_cols = [c for c in cols if group.roles.get(c) == "event"]
    if not curved_cols:
        return None
    n, m = Y.shape
    base_set = set(group.base_columns)
    term = [c for c in cols if c not in base_set]
    base = [c for c in cols if c in base_set]
    jc = [term.index(c) for c in curved_cols]
    js = [j for j, c in enumerate(term) if c not in curved_cols]
    cache = {} if cache is None else cache
    if "basis" not in cache:  # a race between two threads only computes it twice
        cache["basis"] = _group_basis(group, curve, rows, X_fit, idx, base, term, js, curved_cols)
    A, Qa, Ra_inv, like_into, U, QU, at, xs, ps, ss, xs_u = cache["basis"]
    qy = Qa.T @ Y
    YU = Y[U]
    sy = xs.T @ Y
    YUt = np.ascontiguousarray(YU.T)  # (m, |U|): a series' touched rows side by side
    qyt = np.ascontiguousarray(qy.T)

    # series-major layouts throughout, so the per-series products are batched matrix products
    def event_values(th: dict[str, np.ndarray], sel: np.ndarray) -> np.ndarray:
        """(ms, n_curved, |U|): each series' event columns on the touched rows."""
        out = np.empty((len(sel), len(curved_cols), len(U)))
        # the events are bent together (a period two of them share takes their days' combined lifts)
        bent = curve.columns({e: th[c][sel] for c in curved_cols for e in [c] + like_into.get(c, [])}, at=at)
        for k, c in enumerate(curved_cols):
            out[:, k, :] = sum((bent[e] for e in like_into.get(c, [])), bent[c])
        return out

    def projections(V: np.ndarray, sel: np.ndarray) -> np.ndarray:
        """P = Qᵀ X_term per series: (ms, j, ka)."""
        ms = len(sel)
        P = np.empty((ms, len(term), Qa.shape[1]))
        P[:, js, :] = ps.T[None, :, :]
        P[:, jc, :] = (V.reshape(ms * len(jc), len(U)) @ QU).reshape(ms, len(jc), -1)
        return P

    # each series' last pass's event values, projections and Gram matrix: its final design's
    V_last = np.zeros((m, len(curved_cols), len(U)))
    P_last = np.zeros((m, len(term), Qa.shape[1]))
    G_last = np.zeros((m, len(term), len(term)))

    def solve(th: dict[str, np.ndarray], sel: np.ndarray) -> np.ndarray:
        """The term coefficients (ms, j) for the designs built with θ."""
        V = event_values(th, sel)
        P = projections(V, sel)
        ms = len(sel)
        # Gram matrix of the term columns, block by block, minus the projected part
        cc = V @ V.transpose(0, 2, 1)
        cs = V @ xs_u
        G = np.empty((ms, len(term), len(term)))
        for a, i in enumerate(jc):
            for b, j in enumerate(jc):
                G[:, i, j] = cc[:, a, b]
            for b, j in enumerate(js):
                G[:, i, j] = G[:, j, i] = cs[:, a, b]
        for a, i in enumerate(js):
            for b, j in enumerate(js):
                G[:, i, j] = ss[a, b]
        G -= np.einsum("mik,mjk->mij", P, P)
        rhs = np.empty((ms, len(term)))
        rhs[:, jc] = (V @ YUt[sel][:, :, None])[:, :, 0]
        rhs[:, js] = sy[:, sel].T
        rhs -= (P @ qyt[sel][:, :, None])[:, :, 0]
        V_last[sel], P_last[sel], G_last[sel] = V, P, G
        return spd_solve(G, rhs[:, :, None])[:, :, 0]

    fit_rows = np.flatnonzero(rows)
    beyond = np.zeros(m, dtype=bool)
    for c in curved_cols:
        beyond |= beyond_days(B0[idx[c]], X_fit[:, idx[c]], curve.floor(c)[fit_rows])
    if joint_twins(group.status, group.roles, lambda c: curve.column(c, np.zeros(1))[0, fit_rows]):
        beyond[:] = True  # a lift that carries a twin on other days keeps its first pass (fitted alone)
    if not curve.profiled and any(c.startswith("trading[") for c in cols):
        # each series' trading-day coefficients weigh its days (evcal.model.passes.trading_weights):
        # its own columns, so every series takes the per-series passes (the same fixed point)
        beyond[:] = True
    params = B0.copy()
    theta = {c: B0[idx[c]].copy() for c in curved_cols}
    theta_in = {c: np.zeros(m) for c in curved_cols}
    active = np.ones(m, dtype=bool)
    passes = np.zeros(m, dtype=int)
    # each series' previous pass, input and output (n_curved, m), for its secant step (evcal.model.secant)
    last_in, last_out = np.zeros((len(curved_cols), m)), np.zeros((len(curved_cols), m))
    for c in curved_cols:  # a flagged series keeps its linear columns (it is fitted again on its own)
        theta[c][beyond] = 0.0
    for k in range(MAX_PASSES):
        sel = np.flatnonzero(active)
        if not len(sel):
            break
        bt = solve(theta, sel)
        for j, c in enumerate(term):
            params[idx[c], sel] = bt[:, j]
        for c in curved_cols:
            theta_in[c][sel] = theta[c][sel]
        passes[sel] += 1
        new = {c: np.where(beyond[sel], 0.0, params[idx[c], sel]) for c in curved_cols}
        moved = theta_moved(new, {c: theta[c][sel] for c in curved_cols})
        active[sel[moved < THETA_TOL]] = False
        # the series still moving go on from the fixed point of each lift's line through its last two
        # passes, as each would alone (evcal.model.passes.estimate_exact); after their first pass, from
        # the pass's own output
        x1 = np.stack([theta[c][sel] for c in curved_cols])
        g1 = np.stack([new[c] for c in curved_cols])
        nxt = g1 if k == 0 else secant_step(last_in[:, sel], last_out[:, sel], x1, g1)[0]
        last_in[:, sel], last_out[:, sel] = x1, g1
        for i, c in enumerate(curved_cols):
            theta[c][sel] = nxt[i]

    # the final designs: residuals and the covariance of the term coefficients
    V, P, G = V_last, P_last, G_last  # built with theta_in
    bt = np.stack([params[idx[c]] for c in term], axis=1)  # (m, j)
    # the shared columns' coefficients, once, from each series' final pass
    ba = Ra_inv @ (qy - np.einsum("mjk,mj->km", P, bt))
    for j, c in enumerate(base):
        params[idx[c]] = ba[j]
    # an event column is zero off the rows U, so its part of the residual is added there only
    resid = Y - A @ ba - xs @ bt[:, js].T
    resid[U] -= np.einsum("mcu,mc->um", V, bt[:, jc])
    k_all = len(cols)
    sigma2 = np.einsum("nm,nm->m", resid, resid) / max(n - k_all, 1)
    # each term column with the shared columns projected out, (n, terms, m): by Frisch-Waugh-Lovell the
    # term coefficients' rows of (XᵀX)⁻¹Xᵀ are G⁻¹X̃ᵀ, and a period's leverage in the full design is its
    # leverage in the shared columns plus x̃ₜᵀ G⁻¹ x̃ₜ (the estimator of estimators.ar_covariances, on this
    # block's (periods, terms, series) layout)
    n_t = len(term)
    Xt = np.empty((n, n_t, m))
    for j in range(n_t):
        if j in js:  # a shared column: the same for every series
            Xt[:, j, :] = (xs[:, js.index(j)] - Qa @ ps[:, js.index(j)])[:, None]
        else:
            np.matmul(Qa, P[:, j, :].T, out=Xt[:, j, :])
            np.negative(Xt[:, j, :], out=Xt[:, j, :])
            Xt[U, j, :] += V[:, jc.index(j), :].T
    Ginv = spd_solve(G, np.broadcast_to(np.eye(n_t), G.shape).copy())
    lev = np.einsum("tim,mij,tjm->tm", Xt, Ginv, Xt, optimize=True) + np.einsum("nk,nk->n", Qa, Qa)[:, None]
    errors = prewhitened_errors(resid, lev)
    meat = ar_covariances(Xt, errors)
    del Xt
    cov = Ginv @ meat @ Ginv
    se = np.sqrt(np.clip(np.diagonal(cov, axis1=1, axis2=2), 0, None)).T
    order = [term.index(c) for c in group.term_cols]
    sources = theta_sources(group.status, group.roles, group.like_map, cols)
    curved = curve.columns({c: theta_in[src] for c, src in sources.items() if src in theta_in})
    return Refined(params, resid, sigma2, se[order], cov[:, order][:, :, order], theta_in, curved, errors,
                   beyond, passes)
