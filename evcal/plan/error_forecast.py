"""The regression error carried forward: its forecast's mean and variance at each step of a plan.

With ARIMA errors the fit keeps the tail of the regression error (actual
minus the regressors, on the model scale). The plan puts that tail through
statsmodels' state-space filter with the fitted ARMA parameters held fixed
(``SARIMAX.smooth(params)``) and asks for the forecast ``h`` steps on: its mean
is added to the base, its variance goes into the interval
(:mod:`evcal.plan.simulate`). With iid errors the mean is zero and the variance
the residual variance of the fit. :func:`tail_forecast_weights` says how that
forecast moves when the simulation draws other coefficients.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.level import ErrorLevel

__all__ = ["ErrorForecast", "error_forecast", "tail_forecast_weights"]


@dataclass
class ErrorForecast:
    """Mean and variance of the regression error at each horizon step (model scale)."""

    mean: np.ndarray
    var: np.ndarray
    kind: str
    steps: np.ndarray | None = None  # periods after the history's end (ARIMA errors)


def error_forecast(error_model: dict[str, Any], sigma2: float, steps: np.ndarray) -> ErrorForecast:
    """The error's forecast at ``steps`` periods after the history end.

    Parameters
    ----------
    error_model : dict
        ``FitResult.error_model``: ``{"kind": "arima", "order": [p, d, q], "ar": [...],
        "ma": [...], "sigma2": s2, "tail": [...]}``, or ``{"kind": "iid"}`` (and count models).
    sigma2 : float
        Residual variance of the fit (used for iid errors).
    steps : array of int
        Steps after the history's last period (1 = the next period).

    Examples
    --------
    >>> import numpy as np
    >>> em = {"kind": "arima", "order": [1, 0, 0], "ar": [0.5], "ma": [], "sigma2": 1.0,
    ...       "tail": [0.0] * 59 + [2.0]}
    >>> fc = error_forecast(em, 1.0, np.array([1, 2]))
    >>> [round(float(v), 3) for v in fc.mean], [round(float(v), 3) for v in fc.var]
    ([1.0, 0.5], [1.0, 1.25])
    """
    steps = np.asarray(steps, dtype=int)
    if error_model.get("kind") != "arima":
        return ErrorForecast(np.zeros(len(steps)), np.full(len(steps), float(sigma2)), "iid")
    tail = pd.Series(np.array(error_model["tail"], dtype=float))  # None (a gap) becomes NaN
    # the horizon starts after the history (horizon_periods), so every step is 1 or more
    mean, var = ErrorLevel.of_error_model(error_model, tail).forecast(steps)
    return ErrorForecast(mean, var, "arima", steps)


def tail_forecast_weights(result: Any, columns: list[str], steps: np.ndarray) -> pd.DataFrame:
    """How the error's forecast moves with each coefficient: ``F[h, j]`` = the forecast of column j's tail.

    The plan's error forecast is the filter's forecast of the tail of
    ``η = y − X β`` (model scale). The filter is linear in its data, so with
    other coefficients ``β'`` the forecast is ``forecast(η) − F (β' − β)``,
    ``F`` holding, for each regressor, the same forecast of that regressor's
    values on the tail's periods (gaps where the tail has gaps). Without this a
    drawn coefficient moves the plan's mean by ``x_h (β' − β)`` where it really
    moves it by ``(x_h − F_h)(β' − β)``: with differenced errors the level at
    the end of the history is pinned by the data, and only the change since then
    is uncertain (far less, for the first periods, than a trend drawn over the
    whole history).
    """
    from evcal.design.matrix import build_design  # the fitted design's own code, on the tail's periods

    em = result.error_model
    tail = np.array(em["tail"], dtype=float)
    end = pd.Period(result.history_end, freq=result.freq)
    periods = pd.period_range(end - (len(tail) - 1), end, freq=result.freq)
    design = build_design(result.spec, result.calendar, periods)
    X = design.X.copy()
    for c, target in (result.like_map or {}).items():  # like-events share their target's coefficient
        if target in X.columns and c in X.columns:
            X[target] = X[target] + X[c]
    if result.transform == "none":  # the additive model's rows are scaled by the open share
        X = X.mul(design.open_share.to_numpy(dtype=float), axis=0)
    out = {}
    for c in columns:
        x = X[c].to_numpy(dtype=float) if c in X.columns else np.zeros(len(tail))
        x = np.where(np.isfinite(tail), x, np.nan)
        out[c] = ErrorLevel.of_error_model(em, pd.Series(x)).forecast(steps)[0] if np.any(x) \
            else np.zeros(len(steps))
    return pd.DataFrame(out)
