"""The estimators: OLS with autocorrelation-consistent intervals, regression with ARIMA errors, count GLMs.

Each takes the model-scale response ``y`` (NaN where a period is left out of
the fit), the regressors ``X`` and an offset, and returns an :class:`Estimate`
of plain data. Inference is statsmodels' own throughout.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd


@dataclass
class Estimate:
    """One fitted regression, as plain data."""

    method: str
    params: pd.Series
    cov: pd.DataFrame
    sigma2: float
    resid: pd.Series
    llf: float
    aic: float
    error_model: dict[str, Any] = field(default_factory=dict)
    cov_note: str = ""
    #: differenced errors only: how to make :attr:`level` (a smoothing pass, run only when it is asked for:
    #: the exact-aggregation passes fit many times and keep only the last)
    level_of: Callable[[], pd.Series] | None = field(default=None, repr=False, compare=False)

    @property
    def level(self) -> pd.Series | None:
        """Differenced errors only: the error's level on every period (evcal.design.level.ErrorLevel)."""
        if self.level_of is None:
            return None
        if not hasattr(self, "_level"):
            self._level = self.level_of()
        return self._level


def ar_max_order(n: int) -> int:
    """Largest autoregression order tried for the residuals: Schwert's (1989) rule floor(12 (n/100)^(1/4)).

    Kept below a tenth of the periods (common practice, no source), so each order's
    Yule–Walker estimate rests on many periods.
    """
    return max(1, min(int(math.floor(12 * (n / 100.0) ** 0.25)), n // 10))


def interval_note(order: int | None = None) -> str:
    """How the covariance of an OLS fit was estimated, as the model's notes say it."""
    p = "p chosen by AIC" if order is None else f"p = {order} by AIC"
    return (f"OLS; covariance robust to autocorrelation and heteroskedasticity (residuals prewhitened "
            f"by an AR(p), Yule-Walker, {p}; each period weighted by its own whitened residual, HC2, "
            f"with the share of its noise the fit absorbs (its leverage) at the pooled variance)")


#: the largest leverage a period's weight is corrected for: a row the design fits exactly (h = 1) has no
#: residual to learn from, and 1 / (1 - h) would blow up (common practice, no source)
MAX_LEVERAGE = 0.99


@dataclass
class PrewhitenedErrors:
    """Each of m series' AR(p) whitening filter and the weight of every period in the covariance.

    With ``A`` the whitening filter of a series (``εₜ = eₜ − Σⱼ φⱼ eₜ₋ⱼ``, zero before
    the first period, so ``e = A⁻¹ε`` exactly) and ``dₜ`` its weights, the errors'
    covariance is taken as ``A⁻¹ diag(d) A⁻ᵀ``: the autocorrelation from the AR
    model, the variance of each period's innovation from its own whitened
    residual. Equal weights give the AR model's homoskedastic covariance.
    """

    phi: np.ndarray  # (q, m) AR coefficients, zero past each series' order (q the largest order in use)
    order: np.ndarray  # (m,) the chosen autoregression order of each series
    weights: np.ndarray  # (n, m) dₜ: HC2 with a model-based floor at high leverage (period_weights)

    def take(self, pick: Any) -> PrewhitenedErrors:
        """The series ``pick`` only."""
        return PrewhitenedErrors(self.phi[:, pick], self.order[pick], self.weights[:, pick])

    def bands(self, columns: int) -> list[np.ndarray]:
        """The series with an AR part in bands of neighbouring orders, for a recursion over ``columns``.

        Each band's recursion runs to its own largest order: in a block where most
        series have order 1 or 2 and a few order 15, one recursion to order 15
        would do order-15 work on every series. But every band costs a numpy call
        per period, so the bands are the partition of the sorted orders with the
        least total cost ``Σ (_CALL_COST + q_band × columns × series_band)``
        (a small dynamic programme over the distinct orders). Order 0 needs no
        recursion (``A`` is the identity). The bands change the time taken, never
        the numbers: each series' recursion is the same whatever band it is in.
        """
        orders, counts = np.unique(self.order[self.order > 0], return_counts=True)
        before = np.concatenate([[0], np.cumsum(counts)])
        best, cut = [0.0], [0]
        for i in range(1, len(orders) + 1):
            work = orders[i - 1] * columns * (before[i] - before[:i])  # bands j+1 .. i at order orders[i-1]
            costs = [best[j] + _CALL_COST + work[j] for j in range(i)]
            cut.append(int(np.argmin(costs)))
            best.append(min(costs))
        out, i = [], len(orders)
        while i > 0:
            lo, hi = orders[cut[i]], orders[i - 1]
            out.append(np.flatnonzero((self.order >= lo) & (self.order <= hi)))
            i = cut[i]
        return out[::-1]

    def _band_phi(self, idx: np.ndarray) -> np.ndarray:
        """The AR coefficients of the series ``idx`` up to their largest order (q, len(idx))."""
        return np.ascontiguousarray(self.phi[: int(self.order[idx].max()), idx])

    def unwhiten(self, a: np.ndarray) -> np.ndarray:
        """``A⁻ᵀ a`` (n, r, m) for every series: ``a`` (n, r) shared by the series, or (n, r, m) each its own.

        ``Aᵀ`` is upper triangular, so this is the backward recursion
        ``wₜ = aₜ + Σⱼ φⱼ wₜ₊ⱼ`` from the last period (:func:`_ar_backward`), a band of
        orders at a time (:meth:`bands`).
        """
        n, m = self.weights.shape
        w = np.empty((n,) + a.shape[1:2] + (m,))
        w[...] = a if a.ndim == 3 else a[:, :, None]
        for idx in self.bands(w.shape[1]):
            # the band's series gathered last-axis contiguous (fancy indexing alone puts them outermost)
            w[:, :, idx] = _ar_backward(np.ascontiguousarray(w[:, :, idx]), self._band_phi(idx))
        return w

    def weighted_squares(self, a: np.ndarray) -> np.ndarray:
        """``Σₜ dₜ (A⁻ᵀ a)ₜ²`` (m, r) for ``a`` (n, r) shared by the series: the variances of ``aᵀ e``.

        The series of order 0 take one matrix product; each band of orders is
        unwhitened a few columns at a time, so the working set stays near
        ``_WHITENED_ELEMENTS`` (a daily seasonal index has hundreds of columns).
        """
        n, m = self.weights.shape
        out = np.empty((m, a.shape[1]))
        white = self.order == 0
        out[white] = self.weights[:, white].T @ (a * a)
        for idx in self.bands(a.shape[1]):
            phi, d = self._band_phi(idx), self.weights[:, idx]
            step = max(1, _WHITENED_ELEMENTS // max(n * len(idx), 1))
            for c in range(0, a.shape[1], step):
                w = _ar_backward(np.repeat(a[:, c:c + step, None], len(idx), axis=2), phi)
                w *= w
                w *= d[:, None, :]
                out[idx, c:c + step] = w.sum(axis=0).T
                del w  # before the next chunk's array is made: one chunk alive at a time
        return out


def _ar_backward(w: np.ndarray, phi: np.ndarray) -> np.ndarray:
    """``wₜ += Σⱼ φⱼ wₜ₊ⱼ`` from the last period back, in place, for ``w`` (n, r, m) and ``phi`` (q, m)."""
    n, q = w.shape[0], phi.shape[0]
    for t in range(n - 2, -1, -1):
        j = min(q, n - 1 - t)
        w[t] += np.einsum("jm,jrm->rm", phi[:j], w[t + 1:t + 1 + j])
    return w


def prewhitened_errors(E: np.ndarray, leverage: np.ndarray) -> PrewhitenedErrors:
    """An AR(p) model of each residual column of ``E`` (n, m), p by AIC, and each period's weight.

    Yule–Walker estimates for p = 0 .. :func:`ar_max_order` by the Levinson–Durbin
    recursion (Brockwell & Davis 1991, §8.2), vectorised over the series; each
    series keeps the order of lowest AIC ``n log σ²ₚ + 2p`` (Yule–Walker estimates
    are always stationary). The residuals are whitened by that model and each
    period is weighted by :func:`period_weights`: ``ε̂ₜ² / (1 − hₜ)`` (HC2, MacKinnon
    & White 1985) with a model-based floor at high leverage, ``hₜ`` the period's
    ``leverage`` in the regression ((n,) shared, or (n, m)): a prewhitened
    heteroskedasticity-robust estimate in the manner of Andrews & Monahan (1992).
    """
    n, m = E.shape
    P = ar_max_order(n)
    g = np.stack([np.einsum("nm,nm->m", E[lag:], E[: n - lag]) for lag in range(P + 1)]) / n
    g0 = np.where(g[0] > 0, g[0], 1.0)
    phi = np.zeros((P, m))
    best_phi = np.zeros((P, m))
    sig = g0.copy()
    best_aic, order = n * np.log(sig), np.zeros(m, dtype=int)
    for p in range(1, P + 1):
        kappa = (g[p] - np.einsum("pm,pm->m", phi[: p - 1], g[p - 1 : 0 : -1])) / sig
        kappa = np.clip(kappa, -0.999999, 0.999999)
        phi[: p - 1] = phi[: p - 1] - kappa * phi[p - 2 :: -1] if p > 1 else phi[:0]
        phi[p - 1] = kappa
        sig = sig * (1 - kappa**2)
        aic = n * np.log(sig) + 2 * p
        better = aic < best_aic
        best_aic = np.where(better, aic, best_aic)
        np.copyto(best_phi, phi, where=better[None, :])
        order[better] = p
    q = int(order.max(initial=0))  # the coefficients past every series' order are zero
    best_phi = np.ascontiguousarray(best_phi[:q])
    eps = np.array(E, dtype=float, copy=True)
    for j in range(1, min(q, n - 1) + 1):
        eps[j:] -= best_phi[j - 1] * E[:-j]
    return PrewhitenedErrors(best_phi, order, period_weights(eps, leverage))


def period_weights(eps: np.ndarray, leverage: np.ndarray) -> np.ndarray:
    """Each period's weight ``dₜ = max(ε̂ₜ² / (1 − hₜ), ε̂ₜ² + hₜ σ̄²)`` (n, m) in the covariance.

    ``ε̂`` are the whitened residuals (n, m), ``hₜ`` each period's ``leverage`` ((n,)
    shared, or (n, m)) and ``σ̄² = Σₜ ε̂ₜ² / (n − Σₜ hₜ)`` each series' pooled
    innovation variance. The first term is HC2 (MacKinnon & White 1985): unbiased
    under constant variance, but it reads a period's noise from its own residual
    alone, and the fit absorbs the share ``hₜ`` of that noise: a lift resting on one
    period (``hₜ`` near 1) would read ~0, on two periods (``hₜ`` near ½) one degree
    of freedom (measured coverage of 95 % intervals: 35 % and 82 %). The second
    term is the model-based floor: the share the residual shows taken as it is,
    the share the fit absorbed at the pooled variance, so a period of leverage 1
    counts at ``σ̄²``, as the classical covariance ``σ² (XᵀX)⁻¹`` counts it. This is
    the rule "the larger of the conventional and the robust variance" (Angrist &
    Pischke 2009, *Mostly Harmless Econometrics*, §8.1, against the downward bias of
    robust variances at high leverage shown by Chesher & Jewitt 1987), applied to
    each period in proportion to its leverage rather than to each coefficient (the
    proportion is this project's; no source): a weight is never below HC2's, and a
    period of low leverage keeps nearly its HC2 weight (``ε̂ₜ² + hₜ σ̄²`` against
    ``ε̂ₜ² (1 + hₜ + …)``).
    """
    h = np.clip(leverage, 0.0, 1.0)
    h = h if h.ndim == 2 else h[:, None]
    sq = eps**2
    pooled = sq.sum(axis=0) / np.maximum(eps.shape[0] - h.sum(axis=0), 1.0)
    return np.maximum(sq / (1.0 - np.minimum(h, MAX_LEVERAGE)), sq + h * pooled)


def leverage(X: np.ndarray, Z: np.ndarray) -> np.ndarray:
    """Each period's leverage ``hₜ = xₜᵀ (XᵀX)⁻¹ xₜ`` (n,), from ``X`` and ``Z = X (XᵀX)⁻¹``."""
    return np.einsum("nk,nk->n", X, Z)


def ar_covariances(Z: np.ndarray, errors: PrewhitenedErrors) -> np.ndarray:
    """Covariances ``Zᵀ A⁻¹ diag(d) A⁻ᵀ Z`` (m, j, j) under each series' errors, for ``Z`` (n, j).

    ``Z`` is ``X (XᵀX)⁻¹`` for the coefficients wanted (shared by the series, or
    (n, j, m) each its own): the OLS coefficients' covariance, robust to the
    errors' autocorrelation (the AR model) and heteroskedasticity (the weights).
    """
    W = errors.unwhiten(Z)  # (n, j, m)
    return np.einsum("tim,tm,tjm->mij", W, errors.weights, W, optimize=True)


def contrast_variances(Z: np.ndarray, errors: PrewhitenedErrors, C: np.ndarray) -> np.ndarray:
    """Variances (m, r) of contrasts ``C`` (r, j) of the coefficients of ``Z`` (n, j) (see ar_covariances).

    The contrasts' own columns ``Z Cᵀ`` are unwhitened (:meth:`PrewhitenedErrors.weighted_squares`),
    never the r x r covariance of all of them.
    """
    return errors.weighted_squares(Z @ C.T)


#: whitened numbers formed at once by PrewhitenedErrors.weighted_squares (2 ** 22 numbers: 32 MB)
_WHITENED_ELEMENTS = 2**22
#: what one period's step of the AR recursion costs besides its multiply-adds, in multiply-adds (measured on
#: a 2-core machine: about 15 µs a step against about 0.5 ns a multiply-add); it sets how finely
#: PrewhitenedErrors.bands splits the orders
_CALL_COST = 30_000


def fit_ols(y: pd.Series, X: pd.DataFrame, offset: pd.Series) -> Estimate:
    """Least squares on the rows where ``y`` is known; a prewhitened heteroskedasticity-robust covariance.

    The coefficients are OLS; their covariance is the sandwich
    ``(XᵀX)⁻¹ Xᵀ A⁻¹ diag(d) A⁻ᵀ X (XᵀX)⁻¹`` (:func:`prewhitened_errors`): ``A``
    the whitening filter of an AR(p) model of the residuals (p by AIC), ``dₜ``
    each period's squared whitened residual over ``1 − hₜ`` (HC2) with a floor at high
    leverage (:func:`period_weights`). The AR model
    carries the errors' autocorrelation, learnt from every period (as in the
    autoregressive spectral estimators of Berk 1974 and den Haan & Levin 1997);
    the weights let a period whose errors are larger count for more (an
    erratic holiday gets a wide interval, a steady one a narrow interval).
    Measured by simulation (benchmarks/coverage.py) and on modeldata::Chicago:
    docs/intervals.md. Event columns are nonzero on a few rows only, so a kernel
    (Newey–West) estimator, which sees the autocorrelation only on those rows,
    with their leverage, under-covered (86.7-90.2 % at AR(1) φ up to 0.6, 1,000 replications).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> X = pd.DataFrame({"const": np.ones(50), "x": np.arange(50.0)})
    >>> y = pd.Series(1.0 + 0.5 * X["x"] + np.sin(np.arange(50)))
    >>> round(float(fit_ols(y, X, pd.Series(np.zeros(50))).params["x"]), 2)
    0.5
    """
    rows = y.notna().to_numpy()
    yy = (y - offset).to_numpy(dtype=float)[rows]
    XX = X.to_numpy(dtype=float)[rows]
    n, k = XX.shape
    beta, *_ = np.linalg.lstsq(XX, yy, rcond=None)
    e = yy - XX @ beta
    rank = int(np.linalg.matrix_rank(XX.T @ XX))
    ssr = float(e @ e)
    llf = -0.5 * n * (np.log(2 * np.pi * ssr / n) + 1.0)
    # (XᵀX)⁺ as before: the identifiability check has left X with full column rank
    Z = XX @ np.linalg.pinv(XX.T @ XX)
    errors = prewhitened_errors(e[:, None], leverage(XX, Z))
    cov = ar_covariances(Z, errors)[0]
    resid = pd.Series(np.nan, index=y.index)
    resid[rows] = e
    return Estimate(
        method="ols",
        params=pd.Series(beta, index=X.columns),
        cov=pd.DataFrame(cov, index=X.columns, columns=X.columns),
        sigma2=ssr / max(n - rank, 1),
        resid=resid,
        llf=float(llf),
        aic=float(-2 * llf + 2 * rank),
        error_model={"kind": "iid"},
        cov_note=interval_note(int(errors.order[0])),
    )


def fit_count(y_units: pd.Series, X: pd.DataFrame, log_offset: pd.Series) -> Estimate:
    """Poisson GLM with a log link; negative binomial (NB2) when overdispersed.

    The switch uses the Pearson dispersion (chi2 / df > 1.5: common practice,
    no source). Periods with missing ``y_units`` are left out.
    """
    import statsmodels.api as sm  # imported when first used: it is slow to import
    rows = y_units.notna().to_numpy()
    yy = y_units[rows].to_numpy(dtype=float)
    XX = X.loc[rows].to_numpy()
    off = log_offset[rows].to_numpy(dtype=float)
    pois = sm.GLM(yy, XX, family=sm.families.Poisson(), offset=off).fit()
    dispersion = float(pois.pearson_chi2 / max(pois.df_resid, 1))
    names = list(X.columns)
    if dispersion > 1.5:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            nb = sm.NegativeBinomial(yy, XX, offset=off, loglike_method="nb2").fit(
                start_params=np.r_[pois.params, 0.1], disp=0, maxiter=200)
        k = XX.shape[1]
        params = pd.Series(nb.params[:k], index=names)
        cov = pd.DataFrame(np.asarray(nb.cov_params())[:k, :k], index=names, columns=names)
        alpha = float(nb.params[-1])
        mu = np.exp(XX @ params.to_numpy() + off)
        method, llf, aic = "negative_binomial", float(nb.llf), float(nb.aic)
        error_model = {"kind": "negative_binomial", "alpha": alpha}
        note = f"negative-binomial GLM (alpha {alpha:.3g}; Poisson dispersion {dispersion:.2f})"
    else:
        params = pd.Series(pois.params, index=names)
        cov = pd.DataFrame(pois.cov_params(), index=names, columns=names)
        mu = pois.fittedvalues
        method, llf, aic = "poisson", float(pois.llf), float(pois.aic)
        error_model = {"kind": "poisson"}
        note = f"Poisson GLM (dispersion {dispersion:.2f})"
    resid = pd.Series(np.nan, index=y_units.index)
    resid[rows] = np.log((yy + 0.5) / (mu + 0.5))
    return Estimate(
        method=method,
        params=params,
        cov=cov,
        sigma2=float(np.nanvar(resid[rows])),
        resid=resid,
        llf=llf,
        aic=aic,
        error_model=error_model,
        cov_note=note,
    )
