"""Prediction intervals for the plan by simulation.

Each draw takes a coefficient vector from the normal distribution of the
estimates, N(params, cov) (the fit's covariance: HAC for OLS, GLS for ARIMA
errors, the GLM's for count models), rebuilds base and event lifts with it,
and adds one period's noise:

* log model: ``exp`` of a normal error on the log scale, variance
  ``sigma2`` (iid errors) or the ARIMA forecast variance at that step;
* additive model: a normal error in units, same variances;
* count models: a Poisson draw, or a negative-binomial (NB2) draw with the
  fitted ``alpha``, around the period's mean.

``low``/``high`` are the 2.5 % and 97.5 % quantiles of the draws in each
period. Borrowed lifts (``like``) move with the coefficient they borrow;
assumed lifts are fixed (they carry no uncertainty of their own). Fully closed
periods are zero in every draw.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.plan.noise import ErrorForecast
from evcal.plan.schedule import Schedule


def draw_coefficients(params: pd.Series, cov: pd.DataFrame, n: int,
                      rng: np.random.Generator) -> pd.DataFrame:
    """``n`` draws of the estimated coefficients from N(params, cov).

    The covariance is factored by its eigen-decomposition with negative
    eigenvalues (rounding) set to zero, so a nearly singular covariance still
    gives draws.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> cov = pd.DataFrame([[4.0, 0.0], [0.0, 0.0]], index=["a", "b"], columns=["a", "b"])
    >>> d = draw_coefficients(pd.Series({"a": 1.0, "b": 2.0}), cov, 20000, np.random.default_rng(0))
    >>> round(float(d["a"].std()), 1), float(d["b"].std())
    (2.0, 0.0)
    """
    names = list(cov.columns)
    mu = params.reindex(names).fillna(0.0).to_numpy(dtype=float)
    c = cov.to_numpy(dtype=float)
    c = (c + c.T) / 2.0
    w, v = np.linalg.eigh(c)
    root = v * np.sqrt(np.clip(w, 0.0, None))[None, :]
    z = rng.standard_normal((n, len(names)))
    return pd.DataFrame(mu[None, :] + z @ root.T, columns=names)


def _coef_draws(name: str, draws: pd.DataFrame, params: pd.Series, n: int) -> np.ndarray:
    if name in draws.columns:
        return draws[name].to_numpy()
    return np.full(n, float(params.get(name, 0.0)))


def simulate_interval(
    result: Any,
    X: pd.DataFrame,
    open_share: np.ndarray,
    base_cols: list[str],
    schedule: Schedule,
    err: ErrorForecast,
    n_sims: int = 1000,
    seed: int = 0,
    level: float = 0.95,
) -> tuple[np.ndarray, np.ndarray]:
    """Low and high ends of the plan's prediction interval in each period.

    Parameters
    ----------
    result : FitResult
        Coefficients, covariance, transform, error model.
    X : DataFrame
        Horizon design (unmerged event columns), without the error column.
    open_share : array
        Share of each period open.
    base_cols : list of str
        Columns that make the base (trend, seasonal, persistent interventions).
    schedule : Schedule
        How each event column is planned.
    err : ErrorForecast
        Mean and variance of the regression error at each period.
    n_sims, seed
        Number of draws and the random seed (the same seed gives the same interval).
    level : float
        Interval coverage (0.95: the 2.5 % and 97.5 % quantiles).
    """
    rng = np.random.default_rng(seed)
    n = int(n_sims)
    draws = draw_coefficients(result.params, result.cov, n, rng)
    params = result.params
    B = X[base_cols].to_numpy(dtype=float)  # periods x base columns
    Pb = np.column_stack([_coef_draws(c, draws, params, n) for c in base_cols]) if base_cols \
        else np.zeros((n, 0))
    eta_base = Pb @ B.T  # draws x periods
    transform = result.transform
    terms = np.zeros_like(eta_base)
    assumed_units = np.zeros_like(eta_base)
    for c in schedule.columns:
        if c not in X.columns:
            continue
        x = X[c].to_numpy(dtype=float)
        if not np.any(x):
            continue
        st = schedule.status.get(c)
        kind = st.status if st is not None else ""
        if kind == "fitted":
            b = _coef_draws(c, draws, params, n)
        elif kind == "like":
            b = _coef_draws(schedule.like_map[c], draws, params, n)
        elif kind == "assumed":
            a = schedule.assumed[c]
            if transform == "none":
                # an assumed lift is a share of the base, in units
                assumed_units += a * eta_base * x[None, :]
                continue
            b = np.full(n, float(np.log1p(a)))
        else:
            continue
        terms += b[:, None] * x[None, :]
    share = np.asarray(open_share, dtype=float)
    open_ = (share > 0).astype(float)
    z = rng.standard_normal(eta_base.shape)
    sd = np.sqrt(np.clip(err.var, 0.0, None))
    if transform == "none":
        level_units = eta_base + terms + assumed_units + err.mean[None, :]
        y = share[None, :] * level_units + open_[None, :] * sd[None, :] * z
    elif transform == "count":
        mu = share[None, :] * np.exp(eta_base + terms)
        kind = result.error_model.get("kind")
        if kind == "negative_binomial":
            alpha = max(float(result.error_model.get("alpha", 0.0)), 1e-12)
            r = 1.0 / alpha
            mu_safe = np.maximum(mu, 1e-300)
            y = rng.negative_binomial(r, r / (r + mu_safe)).astype(float)
            y = np.where(mu > 0, y, 0.0)
        else:
            y = rng.poisson(mu).astype(float)
    else:
        y = share[None, :] * np.exp(eta_base + terms + err.mean[None, :] + sd[None, :] * z)
    tail = (1.0 - level) / 2.0
    low, high = np.quantile(y, [tail, 1.0 - tail], axis=0)
    return low, high
