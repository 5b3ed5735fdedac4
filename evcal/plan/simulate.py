"""The plan's uncertainty: the interval by simulation.

The regression error carried forward (its forecast's mean, added to the base,
and variance) is :mod:`evcal.plan.error_forecast`'s; with iid errors the mean is
zero and the variance the residual variance of the fit.

Each draw takes a coefficient vector from the normal distribution of the
estimates, N(params, cov) (the fit's covariance: AR-prewhitened HC2 with a floor at high
leverage for OLS, GLS for ARIMA errors, the GLM's for count models), rebuilds base and event lifts with it,
and adds one period's noise:

* log model: ``exp`` of a normal error on the log scale, variance
  ``sigma2`` (iid errors) or the ARIMA forecast variance at that step;
* additive model: a normal error in units, same variances;
* count models: a Poisson draw, or a negative-binomial (NB2) draw with the
  fitted ``alpha``, around the period's mean.

``low``/``high`` are the 2.5 % and 97.5 % quantiles of the draws in each
period; for an additive model of a series that cannot be negative each draw's
plan is floored at zero first (:mod:`evcal.plan.floor`: the rule the plan itself
follows). Borrowed lifts (``like``) move with the coefficient they borrow;
assumed lifts are fixed (they carry no uncertainty of their own). Fully closed
periods are zero in every draw.

Count models and separation. When every count at one seasonal position (or
in one event's periods) is zero, the GLM's estimate of that coefficient has no
finite maximum (separation: Albert & Anderson, Biometrika 1984): the fit stops
at a large negative value with a huge standard error, and a normal draw from it
is ``exp`` of hundreds or thousands, i.e. infinite or exactly zero counts. Such
coefficients (standard error above :data:`MAX_LOG_SE` on the log scale) are held
at their estimate, and the other coefficients are drawn from their normal
distribution conditional on them (the Schur complement of the covariance), so
the interval keeps the uncertainty the data do carry. Means are formed on the
log scale with closed periods at exactly zero, so no draw multiplies a zero
share by an overflow.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import PlanError
from evcal.plan.error_forecast import ErrorForecast, error_forecast, tail_forecast_weights
from evcal.plan.order_stats import order_quantiles as _order_quantiles
from evcal.plan.schedule import Schedule
from evcal.spelling import option

# error_forecast: the plan takes the error's forecast and the draws from here (evcal.plan.build)
__all__ = ["MAX_SIMS", "check_sims", "draw_coefficients", "error_forecast", "scheduled_terms", "separated",
           "simulate_block", "simulate_interval", "sqrt_psd"]

#: a coefficient of a count model whose standard error on the log scale is above this is not
#: drawn: its 95 % interval would span a factor of exp(2 x 1.96 x 10), about 1e17, which only
#: happens when the estimate runs off towards minus infinity (separation; see the module notes)
MAX_LOG_SE = 10.0
#: largest mean count a draw may have (numpy's Poisson sampler refuses means near 9.2e18)
MAX_COUNT_MEAN = 1e15


#: most simulation draws a plan takes: 100,000 puts the 2.5 % and 97.5 % quantiles within a
#: fraction of a percent of their limit (common practice, no source); more only costs memory
MAX_SIMS = 100_000
#: most numbers one draws x periods array may hold (50 million: 400 MB of float64); the
#: simulation keeps a few such arrays at once
MAX_DRAW_CELLS = 50_000_000


def _sims(n: Any) -> str:
    """The number of draws as set: ``--sims 1000`` on the command line, ``n_sims=1000`` in Python."""
    return option("n_sims", n, flag="--sims")


def check_sims(n_sims: Any, n_periods: int | None = None) -> int:
    """The number of simulation draws as an int in 0..:data:`MAX_SIMS`, or a one-line :class:`PlanError`.

    With ``n_periods``, also ``n_sims x n_periods <= MAX_DRAW_CELLS``: each draw
    holds one number per period (8 bytes each) in several arrays at once.

    Examples
    --------
    >>> check_sims(1000)
    1000
    >>> check_sims(100_000_000)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    evcal.errors.PlanError: n_sims=100000000: ...
    """
    if isinstance(n_sims, bool) or not isinstance(n_sims, int | np.integer):
        raise PlanError(f"{_sims(n_sims)}: not a whole number; give 0 (no interval) to {MAX_SIMS:,}")
    n = int(n_sims)
    if not 0 <= n <= MAX_SIMS:
        raise PlanError(f"{_sims(n)}: must be 0 (no interval) to {MAX_SIMS:,} draws; the simulation "
                        f"keeps draws x periods numbers of 8 bytes in memory several times over, and "
                        f"{MAX_SIMS:,} draws already fix the 95 % interval's ends closely")
    if n_periods and n * n_periods > MAX_DRAW_CELLS:
        most = MAX_DRAW_CELLS // n_periods
        raise PlanError(f"{_sims(n)}: a horizon of {n_periods} periods allows at most {most:,} draws "
                        f"(draws x periods x 8 bytes, at most {MAX_DRAW_CELLS * 8 // 10**6} MB per array); "
                        "use fewer draws or a shorter horizon")
    return n


def separated(cov: pd.DataFrame) -> list[str]:
    """Count-model coefficients whose normal approximation says nothing (see :data:`MAX_LOG_SE`).

    Examples
    --------
    >>> import pandas as pd
    >>> separated(pd.DataFrame([[0.01, 0.0], [0.0, 2e8]], index=["a", "b"], columns=["a", "b"]))
    ['b']
    """
    var = np.diag(cov.to_numpy(dtype=float))
    return [c for c, v in zip(cov.columns, var, strict=True) if not v <= MAX_LOG_SE ** 2]


def draw_coefficients(params: pd.Series, cov: pd.DataFrame, n: int,
                      rng: np.random.Generator, fixed: list[str] | None = None) -> pd.DataFrame:
    """``n`` draws of the estimated coefficients from N(params, cov).

    The draws are ``params + z S`` with ``S`` the covariance's symmetric square
    root (:func:`sqrt_psd`, negative eigenvalues from rounding set to zero, so a
    nearly singular covariance still gives draws): unlike the eigenvectors
    themselves, whose signs LAPACK may choose either way for two covariances
    equal to the last bits, it moves continuously with the covariance, so the
    batched panel plan draws what the single-series plan draws. Coefficients
    named in ``fixed`` stay at their estimate in every draw and the others are
    drawn conditionally on them (covariance
    ``S_oo - S_of S_ff^-1 S_fo``; the conditional mean is the estimate, since
    the fixed ones sit at theirs).

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
    hold = np.isin(names, list(fixed or []))
    if hold.any():
        o, f = ~hold, hold
        s_of = c[np.ix_(o, f)]
        cond = c[np.ix_(o, o)] - s_of @ np.linalg.pinv(c[np.ix_(f, f)]) @ s_of.T
        c = np.zeros_like(c)
        c[np.ix_(o, o)] = cond
    z = rng.standard_normal((n, len(names)))
    return pd.DataFrame(mu[None, :] + z @ sqrt_psd(c), columns=names)


def sqrt_psd(cov: np.ndarray) -> np.ndarray:
    """The symmetric square root ``V diag(√w) Vᵀ`` of symmetric ``cov`` (..., k, k), ``w < 0`` taken as 0.

    Examples
    --------
    >>> import numpy as np
    >>> r = sqrt_psd(np.array([[4.0, 0.0], [0.0, 9.0]]))
    >>> r.round(12).tolist()
    [[2.0, 0.0], [0.0, 3.0]]
    """
    w, v = np.linalg.eigh(cov)
    return np.matmul(v * np.sqrt(np.clip(w, 0.0, None))[..., None, :], np.swapaxes(v, -1, -2))


def _coef_draws(name: str, draws: pd.DataFrame, params: pd.Series, n: int) -> np.ndarray:
    if name in draws.columns:
        return draws[name].to_numpy()
    return np.full(n, float(params.get(name, 0.0)))


def scheduled_terms(schedule: Schedule, column: Callable[[str], np.ndarray]
                    ) -> Iterator[tuple[np.ndarray, str | None, float | None]]:
    """The scheduled event columns a simulation draws: ``(values, source, assumed)`` for each.

    ``values`` is ``column(c)`` (any shape); ``source`` the coefficient the column moves with (its
    own, or the one it borrows), or ``assumed`` the lift it is held at (it carries no uncertainty of
    its own). Columns with no value in the horizon, or planned with no lift, are left out. The one
    rule of the single-series plan's simulation and the batched panel plan's level map.
    """
    for c in schedule.columns:
        x = column(c)
        kind = schedule.status[c].status
        if not np.any(x) or kind not in ("fitted", "like", "assumed"):
            continue
        if kind == "assumed":
            yield x, None, float(schedule.assumed[c])
        else:
            yield x, schedule.like_map[c] if kind == "like" else c, None


def simulate_interval(result: Any, X: pd.DataFrame, open_share: np.ndarray, base_cols: list[str],
                      schedule: Schedule, err: ErrorForecast, n_sims: int = 1000, seed: int = 0,
                      level: float = 0.95, floor: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """Low and high ends of the plan's prediction interval in each period.

    ``X`` is the horizon's design (unmerged event columns, no error column),
    ``base_cols`` its columns that make the base, ``err`` the error's forecast;
    the same ``seed`` gives the same interval. ``floor``: each draw of an additive
    model floored at zero (:mod:`evcal.plan.floor`).
    """
    rng = np.random.default_rng(seed)
    n = int(n_sims)
    transform = result.transform
    # a count model's separated coefficients are held at their estimate (module notes)
    fixed = separated(result.cov) if transform == "count" else []
    draws = draw_coefficients(result.params, result.cov, n, rng, fixed=fixed)
    params = result.params
    B = X[base_cols].to_numpy(dtype=float)  # periods x base columns
    Pb = np.column_stack([_coef_draws(c, draws, params, n) for c in base_cols]) if base_cols \
        else np.zeros((n, 0))
    eta_base = Pb @ B.T  # draws x periods
    terms = np.zeros_like(eta_base)
    assumed_units = np.zeros_like(eta_base)
    for x, source, assumed in scheduled_terms(schedule, lambda c: X[c].to_numpy(dtype=float)):
        if assumed is not None and transform == "none":
            # an assumed lift is a share of the base, in units
            assumed_units += assumed * eta_base * x[None, :]
            continue
        b = np.full(n, np.log1p(assumed)) if assumed is not None else _coef_draws(source, draws, params, n)
        terms += b[:, None] * x[None, :]
    if err.kind == "arima" and err.steps is not None:
        # the error forecast moves with the drawn coefficients (tail_forecast_weights)
        moving = [c for c in draws.columns if np.ptp(draws[c].to_numpy()) > 0]
        if moving:
            F = tail_forecast_weights(result, moving, err.steps).to_numpy()  # periods x moving
            dev = draws[moving].to_numpy() - params.reindex(moving).fillna(0.0).to_numpy()[None, :]
            terms -= dev @ F.T
    share = np.asarray(open_share, dtype=float)
    z = rng.standard_normal(eta_base.shape)
    sd = np.sqrt(np.clip(err.var, 0.0, None))
    if transform == "none":
        level_units = eta_base + terms + assumed_units + err.mean[None, :]
        y = share[None, :] * level_units + (share > 0).astype(float)[None, :] * sd[None, :] * z
        if floor:
            y = np.maximum(y, 0.0)
    elif transform == "count":
        # the mean on the log scale: closed periods are exactly zero (no 0 x overflow)
        with np.errstate(divide="ignore", over="ignore"):
            log_mu = np.where(share[None, :] > 0, np.log(np.where(share > 0, share, 1.0))[None, :]
                              + eta_base + terms, -np.inf)
            mu = np.exp(log_mu)
        if not (np.all(mu <= MAX_COUNT_MEAN) and np.all(np.isfinite(log_mu) | (log_mu == -np.inf))):
            raise PlanError("the count model's coefficients give a mean beyond any count in some "
                            f"simulation draws, so no interval can be simulated; plan with {_sims(0)} "
                            "(no low/high), or refit on a longer history")
        if result.error_model.get("kind") == "negative_binomial":
            r = 1.0 / max(float(result.error_model.get("alpha", 0.0)), 1e-12)
            y = rng.negative_binomial(r, r / (r + mu)).astype(float)
        else:
            y = rng.poisson(mu).astype(float)
    else:
        y = share[None, :] * np.exp(eta_base + terms + err.mean[None, :] + sd[None, :] * z)
    tail = (1.0 - level) / 2.0
    low, high = np.quantile(y, [tail, 1.0 - tail], axis=0)
    return low, high


def _same(x: np.ndarray) -> np.ndarray:
    return x


def _at_zero(x: np.ndarray) -> np.ndarray:  # a draw's plan floored at zero (evcal.plan.floor)
    return np.maximum(x, 0.0)


#: series whose draws are formed at once by simulate_block (draws x series x periods numbers)
_BLOCK_CELLS = 2**23


def simulate_block(transform: str, mu: np.ndarray, cov: np.ndarray, M: np.ndarray, const: np.ndarray,
                   sd: np.ndarray, open_share: np.ndarray, n_sims: int = 1000, seed: int = 0,
                   level: float = 0.95, floor: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """:func:`simulate_interval` for m series of one design with iid errors (log or additive), at once.

    ``mu`` (m, k) and ``cov`` (m, k, k) are each series' coefficients and their
    covariance; the plan's model-scale level in each period is ``M β + const``
    (``M`` (m, periods, k), ``const`` (m, periods)): the base columns, each
    event column on its (own or borrowed) coefficient, assumed lifts fixed.
    ``sd`` (m,) is the noise's standard deviation. Every series takes the same
    standard normal numbers from ``seed`` as its single-series plan does, in the
    same order, so its interval does not depend on the other series of the
    block, and equals the single-series plan's up to rounding. The draws are
    laid out last (series, periods, draws); in the log model only the order
    statistics that give the quantiles are exponentiated (``exp`` keeps the order); so are
    the additive model's draws floored at zero (``floor``: ``max(x, 0)`` keeps the order too,
    so the quantiles are those of the floored draws exactly).
    """
    rng = np.random.default_rng(seed)
    m, n_periods, k = M.shape
    zc = rng.standard_normal((n_sims, k))
    zn = rng.standard_normal((n_sims, n_periods))
    c = (cov + np.swapaxes(cov, 1, 2)) / 2.0
    root = sqrt_psd(c)  # (m, k, k), symmetric: draws are mu + zc root
    center = np.einsum("mk,mpk->mp", mu, M) + const
    Lt = np.matmul(M, root)  # (m, periods, k): the draws' level is center + Lt zc^T
    zcT = np.ascontiguousarray(zc.T)
    znT = np.ascontiguousarray(zn.T)  # (periods, draws)
    share = np.asarray(open_share, dtype=float)
    tail = (1.0 - level) / 2.0
    low, high = np.empty((m, n_periods)), np.empty((m, n_periods))
    step = min(m, max(1, _BLOCK_CELLS // max(n_sims * n_periods, 1)))
    # two working arrays for every chunk: a fresh array per chunk paid its page faults each time
    eta_buf, noise_buf = np.empty(step * n_periods * n_sims), np.empty(step * n_periods * n_sims)
    for a in range(0, m, step):
        b = min(a + step, m)
        cells = (b - a) * n_periods * n_sims
        eta = np.matmul(Lt[a:b].reshape(-1, k), zcT, out=eta_buf[:cells].reshape(-1, n_sims))
        eta = eta.reshape(b - a, n_periods, n_sims)
        eta += center[a:b, :, None]
        noise = np.multiply(sd[a:b, None, None], znT[None, :, :],
                            out=noise_buf[:cells].reshape(b - a, n_periods, n_sims))
        # each (series, period)'s draws are normal: their mean and sd guide the order statistics' search
        spread = np.einsum("cpk,cpk->cp", Lt[a:b], Lt[a:b])
        if transform == "none":
            eta *= share[:, None]
            noise *= (share > 0)[:, None]
            y = np.add(eta, noise, out=eta)
            guide_sd = np.sqrt(share**2 * spread + (share > 0) * sd[a:b, None] ** 2)
            low[a:b], high[a:b] = _order_quantiles(y, (tail, 1.0 - tail), _at_zero if floor else _same,
                                                   share * center[a:b], guide_sd)
        else:
            eta += noise
            low[a:b], high[a:b] = _order_quantiles(eta, (tail, 1.0 - tail), lambda x: share * np.exp(x),
                                                   center[a:b], np.sqrt(spread + sd[a:b, None] ** 2))
    return low, high
