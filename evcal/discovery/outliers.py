"""The Chen–Liu search: additive outliers, level shifts and temporary changes.

Chen, C. and Liu, L.-M. (1993), "Joint estimation of model parameters and
outlier effects in time series", JASA 88(421), 284–297. The model is a
regression ``y = X b + u`` whose errors ``u`` are white noise or AR(p), plus
outlier effects ``w * xi(B) I_t(t0)`` of three types:

* ``AO`` additive outlier: ``xi = 1`` (one period off);
* ``LS`` level shift: ``xi = 1 / (1 - B)`` (a step from ``t0`` on);
* ``TC`` temporary change: ``xi = 1 / (1 - delta B)``, ``delta = 0.7`` (a jump
  that fades by 30 % a period; Chen & Liu's recommended value).

The three stages, iterated until no new effect is found:

1. **Detection** on the residuals ``e = phi(B) u``: for each type and date
   ``t0`` the least-squares effect ``w = sum x e / sum x^2`` of
   ``x = phi(B) xi(B) I(t0)`` taken net of the regressors (Chen & Liu have
   none), and ``tau = w sqrt(sum x^2) / sigma``, ``sigma = 1.4826 MAD(e)``,
   for every date and type at once (:mod:`evcal.discovery.detection`).
   The largest ``|tau|`` above the critical value is taken, its effect
   removed from ``e``, and the search repeats (Chen & Liu locate all
   exceeding dates, then thin them: one at a time is the more conservative
   reading).
2. **Joint estimation** of ``b`` and every found effect by least squares
   (with AR errors on the ``phi(B)``-filtered data, a feasible GLS in the
   manner of Cochrane & Orcutt 1949). The regressors are factorised once
   (SVD) and projected out of the effects' patterns (Frisch–Waugh–Lovell), so
   each effect dropped costs a solve of the small system of the effects
   left, not a new regression; the numbers are those of OLS on all columns
   (``statsmodels``, by pseudo-inverse), which the tests check. The effect
   with the smallest ``|t|`` below the critical value is dropped, and again,
   until all are above it.
3. Re-estimate the AR part from the new residuals and go back to 1.

The critical value depends on the series length ``n``: 3 for ``n <= 50``, 4
for ``n >= 450``, linear in between (``3 + 0.0025 (n - 50)``). This is common
practice: the default of the R package *tsoutliers* (López-de-Lacalle),
stated here from memory; Chen & Liu themselves discuss 3 to 4.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.linalg import qr_delete, solve_triangular

from evcal.discovery.detection import (
    TYPES,
    all_statistics,
    ar_filter,
    candidates,
    net_pattern,
    orthonormal_basis,
    outlier_pattern,
    pattern_sums,
    robust_sigma,
)

__all__ = ["Outlier", "OutlierSearch", "chen_liu", "critical_value", "joint_residuals", "lasting_shifts"]

#: rounds of detection and joint estimation
MAX_ROUNDS = 5
#: singular values of the regressors below this share of the largest are zero (statsmodels' ``pinv``)
PINV_RCOND = 1e-15
#: an effect whose pattern keeps less than this share of its norm net of the other columns is not estimable
ESTIMABLE = 1e-7


@dataclass(frozen=True)
class Outlier:
    """One effect found: type, position, jointly estimated size and t statistic."""

    type: str
    position: int
    label: object
    effect: float
    tau: float


@dataclass
class OutlierSearch:
    """Result of :func:`chen_liu`: the effects found and the critical |tau| used."""

    outliers: list[Outlier]
    cval: float


def critical_value(n: int) -> float:
    """Critical |tau| for a series of ``n`` observations (common practice, see module doc).

    Examples
    --------
    >>> critical_value(40), critical_value(250), critical_value(1000)
    (3.0, 3.5, 4.0)
    """
    return float(np.clip(3.0 + 0.0025 * (n - 50), 3.0, 4.0))


def _fit_ar(u: np.ndarray, p: int) -> np.ndarray:
    """AR(p) coefficients of the regression residuals (Yule–Walker, statsmodels)."""
    if p == 0:
        return np.zeros(0)
    from statsmodels.regression.linear_model import yule_walker

    rho, _ = yule_walker(u[np.isfinite(u)], order=p, method="mle", result_object=False)
    return np.asarray(rho, dtype=float)


def chen_liu(
    y: pd.Series | np.ndarray,
    exog: pd.DataFrame | np.ndarray | None = None,
    *,
    cval: float | None = None,
    ar_order: int = 0,
) -> OutlierSearch:
    """Find AO, LS and TC effects in ``y`` given regressors ``exog``.

    Parameters
    ----------
    y : Series or array
        The series on the model's scale (e.g. log sales); NaN = not observed.
    exog : DataFrame or array, optional
        Regressors of the model (trend, seasonal, events). A constant is
        added when no column is constant.
    cval : float, optional
        Critical |tau|; default :func:`critical_value` of the observed length.
    ar_order : int
        AR order of the errors (0 = white noise).

    Returns
    -------
    OutlierSearch
        At most a tenth of the observations are taken as effects.

    Examples
    --------
    >>> import numpy as np
    >>> y = np.random.default_rng(0).normal(0, 1, 100)
    >>> y[60:] += 5
    >>> [(o.type, o.position) for o in chen_liu(y).outliers]
    [('LS', 60)]
    """
    labels = y.index if isinstance(y, pd.Series) else pd.RangeIndex(len(y))
    yv = np.asarray(y, dtype=float)
    n = len(yv)
    x = np.ones((n, 1)) if exog is None else np.asarray(exog, dtype=float).reshape(n, -1)
    if exog is not None and not (np.ptp(x, axis=0) == 0).any():
        x = np.hstack([np.ones((n, 1)), x])
    observed = np.isfinite(yv) & np.isfinite(x).all(axis=1)
    n_obs = int(observed.sum())
    cval = critical_value(n_obs) if cval is None else float(cval)
    max_outliers = max(1, n_obs // 10)
    yv = np.where(observed, yv, np.nan)
    x = np.where(observed[:, None], x, np.nan)

    # residuals are shorter than the errors by the regressors' degrees of
    # freedom; scale the robust sigma back up so tau is not inflated
    rank = np.linalg.matrix_rank(x[observed])
    dof = float(np.sqrt(n_obs / max(n_obs - rank, 1)))
    found, _, _, u = _thin(yv, x, [], np.zeros(0), cval)
    if ar_order:
        # Starting AR values from residuals cleaned by a white-noise pass: an AR
        # fitted to residuals that still hold a level shift mistakes the step for
        # persistence and then hides it (the masking Chen & Liu warn about).
        start = _detect(u, np.zeros(0), robust_sigma(u) * dof, cval, taken=set(), room=max_outliers, exog=x)
        found, _, _, u = _thin(yv, x, start, np.zeros(0), cval)
    phi = _fit_ar(u, ar_order)
    for _ in range(MAX_ROUNDS):
        e = ar_filter(u, phi)
        new = _detect(e, phi, robust_sigma(e) * dof, cval, taken={t0 for _, t0 in found},
                      room=max_outliers - len(found), exog=ar_filter(x, phi))
        if not new:
            break
        found, _, _, u = _thin(yv, x, found + new, phi, cval)
        phi = _fit_ar(u, ar_order)
        if not any(f in found for f in new):
            break
    found, effects, taus, _ = _thin(yv, x, found, phi, cval)
    outliers = [Outlier(kind, t0, labels[t0], float(effects[i]), float(taus[i]))
                for i, (kind, t0) in enumerate(found)]
    return OutlierSearch(sorted(outliers, key=lambda o: o.position), cval)


def joint_residuals(y: pd.Series | np.ndarray, exog: pd.DataFrame | np.ndarray | None,
                    effects: Sequence[Outlier]) -> np.ndarray:
    """Residuals of ``y`` on the regressors and ``effects`` estimated jointly (Chen–Liu's stage 2).

    The trend and every other regressor are re-estimated with the effects in
    the model, so a level shift is not half absorbed by a straight line; the
    effects themselves are part of the fit (nothing is dropped).

    Examples
    --------
    >>> y = np.r_[np.zeros(50), np.ones(50)] + np.random.default_rng(0).normal(0, 0.1, 100)
    >>> shift = Outlier("LS", 50, 50, 1.0, 10.0)
    >>> bool(abs(np.nanmean(joint_residuals(y, None, [shift])[50:])) < 1e-9)
    True
    """
    yv = np.asarray(y, dtype=float)
    n = len(yv)
    x = np.ones((n, 1)) if exog is None else np.asarray(exog, dtype=float).reshape(n, -1)
    if exog is not None and not (np.ptp(x[np.isfinite(x).all(axis=1)], axis=0) == 0).any():
        x = np.hstack([np.ones((n, 1)), x])
    observed = np.isfinite(yv) & np.isfinite(x).all(axis=1)
    yv = np.where(observed, yv, np.nan)
    x = np.where(observed[:, None], x, np.nan)
    # a critical value of 0 keeps every effect: none is dropped, all are re-estimated
    _, _, _, u = _thin(yv, x, [(o.type, o.position) for o in effects], np.zeros(0), 0.0)
    return u


def lasting_shifts(effects: Sequence[Outlier], periods_per_year: int) -> list[Outlier]:
    """The level shifts that last: not undone by a shift of the opposite sign within a year and a half.

    A shift that is reversed (the later one at least half its size, opposite
    sign) within ``1.5 * periods_per_year`` periods is a temporary level, such
    as a disrupted year, not a new level: both are left out.

    Examples
    --------
    >>> down, up = Outlier("LS", 24, 24, -0.3, -9.0), Outlier("LS", 36, 36, 0.3, 9.0)
    >>> [o.position for o in lasting_shifts([down, up, Outlier("LS", 70, 70, 0.2, 6.0)], 12)]
    [70]
    """
    shifts = sorted((o for o in effects if o.type == "LS"), key=lambda o: o.position)
    reach = int(round(1.5 * periods_per_year))
    undone: set[int] = set()
    for i, a in enumerate(shifts):
        for b in shifts[i + 1:]:
            if b.position - a.position > reach:
                break
            if np.sign(b.effect) != np.sign(a.effect) and abs(b.effect) >= 0.5 * abs(a.effect):
                undone |= {a.position, b.position}
    return [o for o in shifts if o.position not in undone]


def _detect(e: np.ndarray, phi: np.ndarray, sigma: float, cval: float, taken: set[int], room: int,
            exog: np.ndarray) -> list[tuple[str, int]]:
    """Stage 1: take the largest |tau| above ``cval``, remove its effect, repeat.

    ``exog`` are the filtered regressors; effects are measured net of them.
    The statistics of every date and type come from a few filters per pass
    (:func:`evcal.discovery.detection.all_statistics`); what does not depend
    on the residuals is computed once.
    """
    e = e.copy()
    ok = np.isfinite(e)
    basis = orthonormal_basis(exog, ok)
    sums = [pattern_sums(kind, ok, phi, basis) for kind in TYPES]
    free = {}
    for kind in TYPES:
        free[kind] = np.zeros(len(e), dtype=bool)
        free[kind][candidates(kind, ok)] = True
        free[kind][sorted(taken)] = False
    new: list[tuple[str, int]] = []
    while len(new) < room:
        e0 = np.where(ok, e, 0.0)
        best: tuple[float, str, int, float] | None = None
        for s in sums:
            pos = np.flatnonzero(free[s.kind])
            if len(pos) == 0:
                continue
            w, tau = all_statistics(e0, s, basis, sigma)
            i = int(pos[np.argmax(np.abs(tau[pos]))])
            if best is None or abs(tau[i]) > abs(best[0]):
                best = (float(tau[i]), s.kind, i, float(w[i]))
        if best is None or abs(best[0]) < cval:
            break
        _, kind, t0, w = best
        e = e - w * net_pattern(kind, t0, ok, phi, basis)
        new.append((kind, t0))
        for mask in free.values():
            mask[t0] = False
    return new


def _thin(y: np.ndarray, x: np.ndarray, found: list[tuple[str, int]], phi: np.ndarray,
          cval: float) -> tuple[list[tuple[str, int]], np.ndarray, np.ndarray, np.ndarray]:
    """Stage 2: joint OLS of ``phi(B) y`` on ``phi(B) [X, xi_1, ...]``; drop the weakest
    effect below ``cval`` until none is. Returns the effects kept, their sizes and t values
    and the residual on the original (unfiltered) scale.

    The regressors are factorised once (SVD) and projected out of the effects'
    patterns and the response (Frisch–Waugh–Lovell); the effects' part is one QR
    of ``[patterns, response]`` whose triangle loses a column per effect dropped
    (``scipy.linalg.qr_delete``). Sizes, t values (``df = rows - rank``) and the
    regressors' coefficients (minimum norm, as a pseudo-inverse gives them)
    are those of OLS on all columns at once.
    """
    found = list(found)
    n = len(y)
    patterns = np.zeros((n, 0))
    if found:
        patterns = np.column_stack([outlier_pattern(kind, t0, n) for kind, t0 in found])
    yf, xf, ef = ar_filter(y, phi), ar_filter(x, phi), ar_filter(patterns, phi)
    rows = np.isfinite(yf) & np.isfinite(xf).all(axis=1) & np.isfinite(ef).all(axis=1)
    yr, xr, er = yf[rows], xf[rows], ef[rows]
    left, sv, right = np.linalg.svd(xr, full_matrices=False)
    keep = sv > PINV_RCOND * sv.max()
    left, sv, right = left[:, keep], sv[keep], right[keep]
    rank_x = int((sv > sv.max() * (xr.shape[1] + len(found)) * np.finfo(float).eps).sum())
    net = np.column_stack([er, yr])
    net = net - left @ (left.T @ net)
    tri = np.linalg.qr(net, mode="r")
    norms = np.sqrt((er * er).sum(axis=0))
    active = list(range(len(found)))
    while True:
        m = len(active)
        diag = np.abs(np.diag(tri)[:m])
        spanned = np.flatnonzero(diag <= ESTIMABLE * np.maximum(norms[active], 1.0))
        if len(spanned):  # not estimable beside the others (t = 0): dropped first
            drop = int(spanned[0])
        else:
            effects = solve_triangular(tri[:m, :m], tri[:m, m]) if m else np.zeros(0)
            inv = solve_triangular(tri[:m, :m], np.eye(m)) if m else np.zeros((0, 0))
            with np.errstate(divide="ignore", invalid="ignore"):
                scale = tri[m, m] ** 2 / (len(yr) - rank_x - m) if tri.shape[0] > m else np.nan
                taus = np.nan_to_num(effects / np.sqrt(scale * (inv * inv).sum(axis=1)), nan=0.0)
            if not m or np.abs(taus).min() >= cval:
                break
            drop = int(np.argmin(np.abs(taus)))
        tri = qr_delete(np.eye(tri.shape[0]), tri, drop, which="col")[1][: tri.shape[1] - 1]
        active.pop(drop)
    coef = right.T @ ((left.T @ (yr - er[:, active] @ effects)) / sv)
    u = y - x @ coef - patterns[:, active] @ effects
    return [found[i] for i in active], effects, taus, u
