"""Regression with ARIMA errors: the exact fit (iterated feasible GLS) and the cheap ranking of orders.

The ranking (:func:`rank_arima`) scores candidate error models by AIC at
Hannan–Rissanen estimates of their ARMA parameters on a first-stage OLS
residual, with no likelihood search; only the chosen order is then fitted by
exact likelihood (:func:`fit_arima`), starting from those estimates.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from evcal.model.estimators import Estimate

__all__ = ["Ranked", "fit_arima", "rank_arima"]


def fit_arima(y: pd.Series, X: pd.DataFrame, offset: pd.Series, order: tuple[int, int, int],
              start: Any = None) -> Estimate:
    """Regression with ARIMA(p, d, q) errors by iterated feasible GLS.

    Two steps, repeated until the coefficients settle (at most 3 rounds):
    the ARMA(p, q) error model is fitted by exact likelihood (statsmodels
    SARIMAX, which skips missing periods) to the regression error of the
    (d-times differenced) series; then the regression is re-estimated by GLS
    with that error model's covariance (``arma_acovf``). This is the classic
    two-step estimator for regression with ARMA errors (e.g. Hamilton 1994,
    §8.3), which reaches the joint maximum-likelihood estimate in the limit
    and avoids a numerical search over every regression coefficient. With
    differenced errors (d >= 1) the constant is not identified and must
    already be absent from ``X``. ``start`` (the ARMA parameters ``[ar..., ma...,
    sigma2]``: the ranking's estimates, or the previous pass's fit) starts the
    iteration at the GLS regression under that ARMA part (instead of OLS), and the
    first likelihood search there (instead of at statsmodels' own start): near the
    answer, one or two rounds settle instead of three.
    """
    from scipy.linalg import cho_factor, cho_solve
    from statsmodels.tsa.statespace.sarimax import SARIMAX  # imported when first used: slow to import

    p, d, q = order
    endog = (y - offset).to_numpy(dtype=float)
    Xa = X.to_numpy(dtype=float)
    yy, XX, obs = _differenced(endog, Xa, d)
    n = int(obs.sum())
    k = XX.shape[1]
    ar = np.zeros(p)
    ma = np.zeros(q)
    long = n > 3000
    arma_start = None if start is None or len(start) != p + q + 1 else np.asarray(start, dtype=float)
    if arma_start is None or not (p or q):
        beta = _lstsq(XX[obs], yy[obs])
    else:  # the first regression error is the GLS one under the start's ARMA part, not the OLS one
        beta = _arma_gls(yy, XX, obs, arma_start[:p], arma_start[p : p + q], long)[0]
    for _ in range(3):
        u = yy - XX @ beta
        if p or q:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                # only the maximising parameters: the likelihood's results (smoothing, their
                # covariance) are not used, the regression's covariance is the GLS one below
                arma_start = np.asarray(SARIMAX(u, order=(p, 0, q), trend="n").fit(
                    disp=False, start_params=arma_start, return_params=True), dtype=float)
            ar = arma_start[:p]
            ma = arma_start[p : p + q]
        new_beta, w_y, w_X, logdet = _arma_gls(yy, XX, obs, ar, ma, long)
        done = np.max(np.abs(new_beta - beta)) < 1e-6 * (1 + np.max(np.abs(beta)))
        beta = new_beta
        if done or not (p or q):
            break
    w_e = w_y - w_X @ beta
    m = len(w_y)
    ssr = float(w_e @ w_e)
    sigma2 = ssr / max(m - k, 1)
    xtx = w_X.T @ w_X
    cov_m = sigma2 * cho_solve(cho_factor(xtx), np.eye(k)) if np.linalg.matrix_rank(xtx) == k \
        else sigma2 * np.linalg.pinv(xtx)
    llf = _gls_llf(ssr, m, logdet)
    names = list(X.columns)
    params = pd.Series(beta, index=names)
    cov = pd.DataFrame(cov_m, index=names, columns=names)
    n_par = len(names) + p + q + 1
    eta = endog - Xa @ beta  # the regression error on the original scale, for forecasting
    innov = pd.Series(np.nan, index=y.index)
    u_full = yy - XX @ beta
    innov.iloc[d:] = u_full
    innov[~y.notna().to_numpy()] = np.nan
    tail_len = max(4 * (p + d + q) + 20, 60)
    error_model = {
        "kind": "arima",
        "order": [p, d, q],
        "ar": [float(v) for v in ar],
        "ma": [float(v) for v in ma],
        # the innovation variance as the likelihood estimates it (ssr / n, as statsmodels' SARIMAX):
        # the plan's forecast variance; the coefficients' own uncertainty is drawn from ``cov``
        "sigma2": ssr / max(m, 1),
        "tail": [None if not np.isfinite(v) else float(v) for v in eta[-tail_len:]],
        "arma_params": [float(v) for v in (arma_start if (p or q) and arma_start is not None else [])],
    }
    level_of = None
    if d:
        # the constant is not in X: the series' level is the error's (evcal.design.level)
        def level_of() -> pd.Series:
            from evcal.design.level import ErrorLevel

            error = pd.Series(eta, index=y.index)
            return pd.Series(ErrorLevel.of_error_model(error_model, error).in_sample(), index=y.index)
    return Estimate(
        method=f"arima({p},{d},{q})",
        params=params,
        cov=cov,
        sigma2=sigma2,
        resid=innov,
        llf=llf,
        aic=float(-2 * llf + 2 * n_par),
        error_model=error_model,
        cov_note=f"regression with ARIMA({p},{d},{q}) errors (iterated feasible GLS), GLS covariance",
        level_of=level_of,
    )


def _differenced(endog: np.ndarray, Xa: np.ndarray, d: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The response and regressors differenced ``d`` times, and where the response is known."""
    yy, XX = (np.diff(endog, n=d), np.diff(Xa, n=d, axis=0)) if d else (endog, Xa)
    return yy, XX, np.isfinite(yy)


def _lstsq(A: np.ndarray, b: np.ndarray) -> np.ndarray:
    from scipy.linalg import lstsq

    return lstsq(A, b, lapack_driver="gelsy")[0]


def _arma_gls(yy: np.ndarray, XX: np.ndarray, obs: np.ndarray, ar: np.ndarray, ma: np.ndarray,
              long: bool) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
    """GLS of ``yy`` on ``XX`` (rows ``obs``) under ARMA(``ar``, ``ma``) errors of unit variance.

    Returns the coefficients, the whitened response and regressors, and the log-determinant of the
    errors' correlation matrix (its Cholesky factor whitens). Above 3,000 periods the whitening is the
    AR part only (the MA part is ignored): an n x n covariance is too big there.
    """
    from scipy.linalg import cho_factor, solve_triangular, toeplitz
    from statsmodels.tsa.arima_process import arma_acovf

    if long:
        w_y, w_X = _ar_whiten(yy, ar), _ar_whiten(XX, ar)
        ok = np.isfinite(w_y) & np.all(np.isfinite(w_X), axis=1)
        w_y, w_X = w_y[ok], w_X[ok]
        logdet = 0.0
    else:
        acov = arma_acovf(np.r_[1.0, -ar], np.r_[1.0, ma], nobs=len(yy), sigma2=1.0)
        chol = cho_factor(toeplitz(acov)[np.ix_(obs, obs)], lower=True)
        w_y = solve_triangular(chol[0], yy[obs], lower=True)
        w_X = solve_triangular(chol[0], XX[obs], lower=True)
        logdet = 2.0 * float(np.sum(np.log(np.diag(chol[0]))))
    return _lstsq(w_X, w_y), w_y, w_X, logdet


def _gls_llf(ssr: float, m: int, logdet: float) -> float:
    """Gaussian log-likelihood of a GLS regression, its variance profiled out (as statsmodels GLS has it)."""
    return float(-0.5 * m * (np.log(2 * np.pi * ssr / m) + 1.0) - 0.5 * logdet)


@dataclass
class Ranked:
    """An ARIMA error model's place in the cheap ranking (:func:`rank_arima`)."""

    order: tuple[int, int, int]
    #: AIC of the regression at the Hannan–Rissanen ARMA estimates (coefficients by GLS, variance profiled)
    aic: float
    #: the ARMA parameters ``[ar..., ma..., sigma2]`` the exact fit starts from
    start: np.ndarray


def rank_arima(y: pd.Series, X: pd.DataFrame, offset: pd.Series,
               orders: Any) -> list[Ranked | tuple[int, int, int]]:
    """Rank ARIMA error models by AIC without a state-space likelihood search.

    For each order: the first stage is OLS of the (d-times differenced) response
    on ``X``; the ARMA(p, q) parameters of its residuals are estimated by the
    Hannan–Rissanen (1982) regressions (statsmodels ``hannan_rissanen``: a long
    autoregression for the innovations, then least squares on lagged residuals
    and innovations) and refined by conditional least squares (the conditional
    sum of squares of the innovations, started at those estimates:
    :func:`_css`); the regression is refitted once by GLS under that ARMA
    correlation and scored by the same exact Gaussian likelihood and AIC
    ``-2 ℓ + 2 (k + p + q + 1)`` as :func:`fit_arima`. The ARMA parameters are
    not the maximum-likelihood ones, so the AIC is a little above what the
    exact fit reaches; the one chosen is then fitted exactly (:func:`fit_arima`,
    starting from these parameters). Gaps are closed up for the first stage's
    ARMA estimates (they need consecutive values). An order whose estimates are
    not stationary and invertible, or that cannot be estimated, is returned as
    its bare order: the caller fits it exactly.
    """
    from statsmodels.tsa.arima.estimators.hannan_rissanen import hannan_rissanen

    endog = (y - offset).to_numpy(dtype=float)
    Xa = X.to_numpy(dtype=float)
    stages: dict[int, tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]] = {}
    out: list[Ranked | tuple[int, int, int]] = []
    for order in orders:
        p, d, q = order
        if d not in stages:
            yy, XX, obs = _differenced(endog, Xa, d)
            stages[d] = (yy, XX, obs, (yy - XX @ _lstsq(XX[obs], yy[obs]))[obs])
        yy, XX, obs, u = stages[d]
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                hr = hannan_rissanen(u, ar_order=p, ma_order=q, demean=False)[0]
            ar, ma = _css(u, np.asarray(hr.ar_params, dtype=float), np.asarray(hr.ma_params, dtype=float))
            if not (_inside(ar) and _inside(-ma)):
                out.append(order)
                continue
            beta, w_y, w_X, logdet = _arma_gls(yy, XX, obs, ar, ma, int(obs.sum()) > 3000)
        except (np.linalg.LinAlgError, ValueError):
            out.append(order)
            continue
        w_e = w_y - w_X @ beta
        llf = _gls_llf(float(w_e @ w_e), len(w_y), logdet)
        innov = _innovations(u, ar, ma)
        start = np.r_[ar, ma, float(np.mean(innov**2))]
        out.append(Ranked(tuple(order), float(-2 * llf + 2 * (XX.shape[1] + p + q + 1)), start))
    return out


def _innovations(u: np.ndarray, ar: np.ndarray, ma: np.ndarray) -> np.ndarray:
    """The ARMA innovations of ``u`` given the values before it are zero (the conditional recursion)."""
    from scipy.signal import lfilter

    return lfilter(np.r_[1.0, -ar], np.r_[1.0, ma], u)


def _css(u: np.ndarray, ar: np.ndarray, ma: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Conditional least-squares ARMA estimates of ``u``, started at ``ar``, ``ma``.

    Minimises the sum of squared innovations (:func:`_innovations`) after the first
    ``len(ar)`` periods (Box & Jenkins' conditional sum of squares), each coefficient kept
    within (-0.999, 0.999). Returns the start when the search fails or does not improve it.
    """
    from scipy.optimize import minimize

    p = len(ar)
    if not len(ma) and p <= 1:
        return ar, ma  # an AR(1) (or white noise): Hannan–Rissanen is already the least-squares fit

    def ssq(x: np.ndarray) -> float:
        e = _innovations(u, x[:p], x[p:])[p:]
        return float(e @ e)

    x0 = np.clip(np.r_[ar, ma], -0.99, 0.99)
    res = minimize(ssq, x0, method="L-BFGS-B", bounds=[(-0.999, 0.999)] * len(x0))
    x = res.x if np.all(np.isfinite(res.x)) and res.fun <= ssq(x0) else x0
    return x[:p], x[p:]


def _inside(coef: np.ndarray) -> bool:
    """Whether the lag polynomial ``1 - Σ coefⱼ Lʲ`` has every root outside the unit circle."""
    if not len(coef) or not np.all(np.isfinite(coef)):
        return bool(np.all(np.isfinite(coef)))
    return bool(np.all(np.abs(np.roots(np.r_[1.0, -coef])) < 1.0))


def _ar_whiten(a: np.ndarray, ar: np.ndarray) -> np.ndarray:
    """Apply the AR polynomial 1 - ar_1 L - ... to rows of ``a`` (first p rows become NaN)."""
    out = np.array(a, dtype=float, copy=True)
    for i, phi in enumerate(ar, start=1):
        lagged = np.full_like(out, np.nan)
        lagged[i:] = a[:-i]
        out = out - phi * lagged
    return out
