"""The regression error carried forward: ARIMA forecast of the error, or plain noise.

With ARIMA errors the fit keeps the tail of the regression error (actual
minus the regressors, on the model scale). The plan puts that tail through
statsmodels' state-space filter with the fitted ARMA parameters held fixed
(``SARIMAX.smooth(params)``) and asks for the forecast ``h`` steps on: its mean
is added to the base, its variance goes into the interval. With iid errors
the mean is zero and the variance the residual variance of the fit.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np


@dataclass
class ErrorForecast:
    """Mean and variance of the regression error at each horizon step (model scale)."""

    mean: np.ndarray
    var: np.ndarray
    kind: str


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
    from statsmodels.tsa.statespace.sarimax import SARIMAX

    p, d, q = (int(v) for v in error_model["order"])
    tail = np.array([np.nan if v is None else float(v) for v in error_model["tail"]], dtype=float)
    params = np.r_[np.asarray(error_model.get("ar", []), dtype=float),
                   np.asarray(error_model.get("ma", []), dtype=float),
                   float(error_model["sigma2"])]
    h = int(steps.max()) if len(steps) else 0
    if h <= 0:
        return ErrorForecast(np.zeros(len(steps)), np.zeros(len(steps)), "arima")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = SARIMAX(tail, order=(p, d, q), trend="n")
        res = model.smooth(params)
        fc = res.get_forecast(h)
    mean = np.asarray(fc.predicted_mean, dtype=float)
    var = np.asarray(fc.var_pred_mean, dtype=float)
    return ErrorForecast(mean[steps - 1], var[steps - 1], "arima")
