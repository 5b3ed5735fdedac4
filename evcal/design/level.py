"""The level of the regression error: a block that enters the base with coefficient 1.

With ARIMA errors the model is ``y_t = x_t β + η_t`` with ``η`` an ARIMA(p, d, q)
process. When ``d ≥ 1`` the design has no constant (differencing removes it) and
the level of the series lives in ``η``: without it the base would be ``exp(x β)``,
about 1 on the log scale, whatever the sales. This block carries that level:

* inside the history, the one-step-ahead prediction of ``η_t`` from the periods
  before it (the state-space filter with the fitted ARMA parameters held fixed,
  statsmodels ``SARIMAX.smooth(params)``: what statsmodels reports as an ARIMA
  model's fitted values), so actual minus fitted is the model's innovation; the
  first ``d`` periods, which have no past, take the prediction of the same filter
  run backwards in time (a Gaussian ARIMA process reads the same reversed);
* after the history, the forecast of ``η`` from the same filter, with its variance
  (what the plan's base and interval use).

One implementation serves the fitted tables and the plan, so the base a plan
carries forward is the base the fit reported.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

#: the design column of the error's level (a name no calendar event can take: names are checked text)
LEVEL_COLUMN = "__error_level__"


@dataclass(frozen=True)
class ErrorLevel:
    """The regression error's level on ``periods`` (a block: :meth:`columns`).

    Parameters
    ----------
    order : tuple of int
        ``(p, d, q)`` of the error model.
    params : tuple of float
        The ARMA parameters as statsmodels orders them: AR, MA, innovation variance.
    eta : Series
        The regression error on the model scale over consecutive periods (NaN where
        not observed), indexed by period.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> idx = pd.period_range("2020-01", periods=4, freq="M")
    >>> lv = ErrorLevel((0, 1, 0), (0.01,), pd.Series([5.0, 5.1, 5.3, 5.2], index=idx))
    >>> lv.columns(pd.period_range("2020-02", periods=4, freq="M"))[LEVEL_COLUMN].round(2).tolist()
    [5.0, 5.1, 5.3, 5.2]
    """

    order: tuple[int, int, int]
    params: tuple[float, ...]
    eta: pd.Series

    @classmethod
    def of_error_model(cls, error_model: dict[str, Any], eta: pd.Series) -> ErrorLevel:
        """The block of a fitted ARIMA error model (``FitResult.error_model``) and its error ``eta``."""
        p, d, q = (int(v) for v in error_model["order"])
        params = (*error_model.get("ar", []), *error_model.get("ma", []), error_model["sigma2"])
        return cls((p, d, q), tuple(float(v) for v in params), eta)

    def _filter(self, values: np.ndarray) -> Any:
        from statsmodels.tsa.statespace.sarimax import SARIMAX  # slow to import: when first used

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return SARIMAX(values, order=self.order, trend="n").smooth(np.asarray(self.params))

    def in_sample(self) -> np.ndarray:
        """One-step-ahead predictions of ``eta`` on its periods (the first ``d``: the reversed filter's)."""
        values = self.eta.to_numpy(dtype=float)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            pred = np.asarray(self._filter(values).predict(), dtype=float)
            d = self.order[1]
            if d and len(values) > d:
                back = np.asarray(self._filter(values[::-1]).predict(), dtype=float)[::-1]
                pred[:d] = back[:d]
        return pred

    def forecast(self, steps: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Mean and variance of ``eta`` ``steps`` periods after its last one (every step 1 or more)."""
        steps = np.asarray(steps, dtype=int)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            fc = self._filter(self.eta.to_numpy(dtype=float)).get_forecast(int(steps.max()))
        return (np.asarray(fc.predicted_mean, dtype=float)[steps - 1],
                np.asarray(fc.var_pred_mean, dtype=float)[steps - 1])

    def columns(self, periods: pd.PeriodIndex) -> pd.DataFrame:
        """The level on ``periods``: in-sample predictions inside ``eta``'s span, forecasts after it."""
        first = self.eta.index[0].ordinal
        pos = periods.asi8 - first
        n = len(self.eta)
        if (pos < 0).any():
            raise ValueError("the error's level is not known before the periods it was fitted on")
        out = np.empty(len(periods))
        inside = pos < n
        if inside.any():
            out[inside] = self.in_sample()[pos[inside]]
        if (~inside).any():
            out[~inside] = self.forecast(pos[~inside] - n + 1)[0]
        return pd.DataFrame({LEVEL_COLUMN: out}, index=periods)
