"""Additive outliers, level shifts and temporary changes by the Chen–Liu procedure.

Chen, C. and Liu, L.-M. (1993), "Joint estimation of model parameters and
outlier effects in time series", JASA 88(421), 284–297. The model is a
regression ``y = X b + u`` whose errors ``u`` are white noise or AR(p), plus
outlier effects ``w * xi(B) I_t(t0)`` of three types:

* ``AO`` additive outlier: ``xi = 1`` (one period off);
* ``LS`` level shift: ``xi = 1 / (1 - B)`` (a step from ``t0`` on);
* ``TC`` temporary change: ``xi = 1 / (1 - delta B)``, ``delta = 0.7`` (a jump
  that fades by 30 % a period; Chen & Liu's recommended value).

The three stages, iterated until no new effect is found:

1. **Detection** on the residuals ``e = pi(B) u`` (``pi = phi``, the AR
   polynomial): for each type and date ``t0`` the least-squares effect is
   ``w = sum x e / sum x^2`` with ``x = pi(B) xi(B) I(t0)`` taken net of the
   regressors (the added-variable form; Chen & Liu have no regressors), its statistic
   ``tau = w sqrt(sum x^2) / sigma``, ``sigma = 1.4826 * MAD(e)`` (robust, as
   Chen & Liu use). The largest ``|tau|`` above the critical value is taken,
   its effect is removed from ``e``, and the search repeats.
2. **Joint estimation** of ``b`` and every found effect by least squares
   (``statsmodels`` OLS; with AR errors on the ``phi(B)``-filtered data, a
   feasible GLS in the manner of Cochrane & Orcutt 1949). The effect with the
   smallest ``|t|`` below the critical value is dropped, and again, until all
   are above it.
3. Re-estimate the AR part from the new residuals and go back to 1.

This is the procedure with one simplification: a single outlier is taken per
detection pass (Chen & Liu locate all exceeding dates, then thin them);
taking the largest first is the more conservative reading.

The critical value depends on the series length ``n``: 3 for ``n <= 50``, 4
for ``n >= 450``, linear in between (``3 + 0.0025 (n - 50)``). This is common
practice: the default of the R package *tsoutliers* (López-de-Lacalle),
stated here from memory; Chen & Liu themselves discuss 3 to 4.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import statsmodels.api as sm

from evcal.discovery.outlier_detection import (
    TC_DELTA,
    TYPES,
    ar_filter,
    candidates,
    detection_statistics,
    orthonormal_basis,
    outlier_pattern,
    robust_sigma,
)

__all__ = ["Outlier", "OutlierSearch", "chen_liu", "critical_value"]


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
    """Result of :func:`chen_liu`."""

    outliers: list[Outlier]
    cval: float
    sigma: float
    iterations: int
    ar: np.ndarray = field(default_factory=lambda: np.zeros(0))
    params: pd.Series | None = None

    def frame(self) -> pd.DataFrame:
        """One row per effect: type, position, label, effect, tau."""
        return pd.DataFrame(
            [(o.type, o.position, o.label, o.effect, o.tau) for o in self.outliers],
            columns=["type", "position", "label", "effect", "tau"],
        )


def critical_value(n: int) -> float:
    """Critical |tau| for a series of ``n`` observations (common practice, see module doc).

    Examples
    --------
    >>> critical_value(40), critical_value(250), critical_value(1000)
    (3.0, 3.5, 4.0)
    """
    if n <= 50:
        return 3.0
    if n >= 450:
        return 4.0
    return 3.0 + 0.0025 * (n - 50)


def _fit_ar(u: np.ndarray, p: int) -> np.ndarray:
    """AR(p) coefficients of the regression residuals (Yule–Walker, statsmodels)."""
    if p == 0:
        return np.zeros(0)
    from statsmodels.regression.linear_model import yule_walker

    rho, _ = yule_walker(u[np.isfinite(u)], order=p, method="mle", result_object=False)
    return np.asarray(rho, dtype=float)


def _joint_fit(
    y: np.ndarray,
    exog: np.ndarray,
    effects: list[tuple[str, int]],
    phi: np.ndarray,
    delta: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """OLS of ``phi(B) y`` on ``phi(B) [X, xi_1, ...]``; params, t values, residual u, rows used."""
    n = len(y)
    cols = [exog] + [outlier_pattern(k, t0, n, delta)[:, None] for k, t0 in effects]
    design = np.hstack(cols)
    yf = ar_filter(y, phi)
    xf = ar_filter(design, phi)
    rows = np.isfinite(yf) & np.isfinite(xf).all(axis=1)
    res = sm.OLS(yf[rows], xf[rows]).fit()
    params = np.asarray(res.params)
    with np.errstate(divide="ignore", invalid="ignore"):
        tvalues = np.asarray(res.tvalues)
    u = y - design @ params  # residual on the original (unfiltered) scale
    return params, tvalues, u, rows


def chen_liu(
    y: pd.Series | np.ndarray,
    exog: pd.DataFrame | np.ndarray | None = None,
    *,
    cval: float | None = None,
    types: Sequence[str] = TYPES,
    delta: float = TC_DELTA,
    ar_order: int = 0,
    max_iter: int = 5,
    max_outliers: int | None = None,
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
    types : sequence of {"AO", "LS", "TC"}
    delta : float
        Decay of a temporary change (0.7).
    ar_order : int
        AR order of the errors (0 = white noise).
    max_iter : int
        Rounds of detection and joint estimation.
    max_outliers : int, optional
        Cap on effects (default a tenth of the observations).

    Returns
    -------
    OutlierSearch

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
    if exog is None:
        x = np.ones((n, 1))
    else:
        x = np.asarray(exog, dtype=float)
        if x.ndim == 1:
            x = x[:, None]
        if not (np.ptp(x, axis=0) == 0).any():
            x = np.hstack([np.ones((n, 1)), x])
    observed = np.isfinite(yv) & np.isfinite(x).all(axis=1)
    n_obs = int(observed.sum())
    cval = critical_value(n_obs) if cval is None else float(cval)
    max_outliers = max(1, n_obs // 10) if max_outliers is None else max_outliers
    yv = np.where(observed, yv, np.nan)
    x = np.where(observed[:, None], x, np.nan)
    for t in types:
        if t not in TYPES:
            raise ValueError(f"unknown outlier type {t!r}; use one of {', '.join(TYPES)}")

    # residuals are shorter than the errors by the regressors' degrees of
    # freedom; scale the robust sigma back up so tau is not inflated
    rank = np.linalg.matrix_rank(x[observed])
    dof = float(np.sqrt(n_obs / max(n_obs - rank, 1)))
    found: list[tuple[str, int]] = []
    params, tvalues, u, _ = _joint_fit(yv, x, found, np.zeros(0), delta)
    if ar_order:
        # Starting AR values from residuals cleaned by a white-noise pass: an AR
        # fitted to residuals that still hold a level shift mistakes the step for
        # persistence and then hides it (the masking Chen & Liu warn about).
        start = _detect(u, np.zeros(0), robust_sigma(u) * dof, cval, types, delta, taken=set(),
                        room=max_outliers, exog=x)
        found, _, _, u = _thin(yv, x, start, np.zeros(0), delta, cval)
    phi = _fit_ar(u, ar_order)
    sigma = robust_sigma(ar_filter(u, phi)) * dof
    iterations = 0
    for iterations in range(1, max_iter + 1):  # noqa: B007 - reported below
        e = ar_filter(u, phi)
        sigma = robust_sigma(e) * dof
        new = _detect(e, phi, sigma, cval, types, delta, taken={t0 for _, t0 in found},
                      room=max_outliers - len(found), exog=ar_filter(x, phi))
        if not new:
            break
        found += new
        found, params, tvalues, u = _thin(yv, x, found, phi, delta, cval)
        phi = _fit_ar(u, ar_order)
        if not any(f in found for f in new):
            break
    if found:
        found, params, tvalues, u = _thin(yv, x, found, phi, delta, cval)
    else:
        params, tvalues, u, _ = _joint_fit(yv, x, found, phi, delta)
    k = x.shape[1]
    outliers = [
        Outlier(kind, t0, labels[t0], float(params[k + i]), float(tvalues[k + i]))
        for i, (kind, t0) in enumerate(found)
    ]
    outliers.sort(key=lambda o: o.position)
    names = [f"x{i}" for i in range(k)] + [f"{kind}@{labels[t0]}" for kind, t0 in found]
    return OutlierSearch(
        outliers=outliers,
        cval=cval,
        sigma=sigma,
        iterations=iterations,
        ar=phi,
        params=pd.Series(params, index=names),
    )


def _detect(
    e: np.ndarray,
    phi: np.ndarray,
    sigma: float,
    cval: float,
    types: Sequence[str],
    delta: float,
    taken: set[int],
    room: int,
    exog: np.ndarray | None = None,
) -> list[tuple[str, int]]:
    """Stage 1: take the largest |tau| above ``cval``, remove its effect, repeat.

    ``exog`` are the filtered regressors; effects are measured net of them.
    """
    e = e.copy()
    n = len(e)
    new: list[tuple[str, int]] = []
    ok = np.isfinite(e)
    basis = orthonormal_basis(exog, ok)
    while len(new) < room:
        best: tuple[float, str, int, float] | None = None
        for kind in types:
            pos = np.array([t for t in candidates(kind, n, ok) if int(t) not in taken], dtype=int)
            if len(pos) == 0:
                continue
            pos, w, tau = detection_statistics(e, kind, phi=phi, sigma=sigma, delta=delta,
                                               positions=pos, basis=basis)
            i = int(np.argmax(np.abs(tau)))
            if best is None or abs(tau[i]) > abs(best[0]):
                best = (float(tau[i]), kind, int(pos[i]), float(w[i]))
        if best is None or abs(best[0]) < cval:
            break
        _, kind, t0, w = best
        xf = np.where(ok, np.nan_to_num(ar_filter(outlier_pattern(kind, t0, n, delta), phi)), 0.0)
        if basis is not None:
            xf = xf - basis @ (basis.T @ xf)
        e = e - w * np.where(ok, xf, 0.0)
        new.append((kind, t0))
        taken = taken | {t0}
    return new


def _thin(
    y: np.ndarray,
    x: np.ndarray,
    found: list[tuple[str, int]],
    phi: np.ndarray,
    delta: float,
    cval: float,
) -> tuple[list[tuple[str, int]], np.ndarray, np.ndarray, np.ndarray]:
    """Stage 2: joint OLS; drop the weakest effect below ``cval`` until none is."""
    found = list(found)
    k = x.shape[1]
    while True:
        params, tvalues, u, _ = _joint_fit(y, x, found, phi, delta)
        if not found:
            return found, params, tvalues, u
        t_eff = np.abs(np.nan_to_num(tvalues[k:], nan=0.0))
        weakest = int(np.argmin(t_eff))
        if t_eff[weakest] >= cval:
            return found, params, tvalues, u
        found.pop(weakest)
