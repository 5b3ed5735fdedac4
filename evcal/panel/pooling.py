"""Partial pooling of event lifts across series: empirical-Bayes shrinkage toward the group mean.

For one event and one group of series (a product family, say) each series
``i`` has an estimated log-lift ``bᵢ`` (the model-scale coefficient) with
standard error ``sᵢ`` (AR-prewhitened HC2 with a floor at high leverage for OLS). The lifts are
treated as draws around a group mean ``μ`` with between-series variance ``τ²``:

* ``τ²`` by the method of moments of DerSimonian & Laird (1986, "Meta-analysis
  in clinical trials", Controlled Clinical Trials 7:177-188):
  ``Q = Σ wᵢ (bᵢ − b̄_FE)²`` with ``wᵢ = 1/sᵢ²``,
  ``τ² = max(0, (Q − (k − 1)) / (Σw − Σw²/Σw))``;
* ``μ`` the random-effects mean, weights ``1/(sᵢ² + τ²)``;
* each series' pooled log-lift is the posterior mean
  ``θᵢ = Bᵢ μ + (1 − Bᵢ) bᵢ`` with shrinkage ``Bᵢ = sᵢ² / (sᵢ² + τ²)``: a noisy
  series (large ``sᵢ``) moves most of the way to the group mean, a precise
  one stays near its own estimate;
* its variance ``(1 − Bᵢ) sᵢ² + Bᵢ² Var(μ)`` (the second term carries the
  uncertainty of the estimated mean; Morris 1983, "Parametric empirical Bayes
  inference", JASA 78:47-55, eq. 4.1 without the small-k correction).

Reported beside the raw lift as ``pooled_pct, pooled_low_pct, pooled_high_pct``
(``100 (exp(θ) − 1)``, interval ``θ ± 1.96 sd``) and ``shrinkage`` (``Bᵢ``).
Only log-link models (``log`` and ``count`` transforms) are pooled: their
lifts are percentages of each series' own base, so they are comparable across
series of any size. Additive series, assumed and borrowed lifts, closures and
events that are not estimated keep the raw values (``shrinkage`` empty); a
group with a single estimate cannot estimate ``τ²`` and is not pooled.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from evcal.effects import Z95

__all__ = ["dersimonian_laird", "pool_lifts"]


def dersimonian_laird(b: np.ndarray, se: np.ndarray) -> tuple[float, float, float, float]:
    """Random-effects mean, its variance, ``τ²`` and ``Q`` (DerSimonian & Laird 1986).

    Examples
    --------
    >>> mu, var_mu, tau2, q = dersimonian_laird(np.array([0.1, 0.3, 0.2]), np.array([0.05, 0.05, 0.05]))
    >>> round(mu, 3), round(tau2, 4)
    (0.2, 0.0075)
    """
    v = se**2
    w = 1.0 / v
    k = len(b)
    mu_fe = float(np.sum(w * b) / np.sum(w))
    q = float(np.sum(w * (b - mu_fe) ** 2))
    denom = float(np.sum(w) - np.sum(w**2) / np.sum(w))
    tau2 = max(0.0, (q - (k - 1)) / denom) if denom > 0 else 0.0
    w_re = 1.0 / (v + tau2)
    mu = float(np.sum(w_re * b) / np.sum(w_re))
    return mu, float(1.0 / np.sum(w_re)), tau2, q


def pool_lifts(lifts: pd.DataFrame, groups: pd.Series, transforms: pd.Series
               ) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Add the pooled columns to ``lifts`` and return the per-group summary.

    Parameters
    ----------
    lifts : DataFrame
        Long lifts with ``_sid, event, lift_pct, low_pct, high_pct`` (raw, 95 %).
    groups : Series
        Pooling group of each series, indexed by ``_sid`` (one group when no ``--group-col``).
    transforms : Series
        Transform of each series, indexed by ``_sid``.

    Returns
    -------
    lifts : DataFrame
        With ``pooled_pct, pooled_low_pct, pooled_high_pct, shrinkage``.
    summary : DataFrame
        One row per group and event: ``group, event, series, mean_pct, mean_low_pct,
        mean_high_pct, tau, q, i2_pct``.
    """
    out = lifts.copy()
    lift = out["lift_pct"].to_numpy(dtype=float)
    low = out["low_pct"].to_numpy(dtype=float)
    high = out["high_pct"].to_numpy(dtype=float)
    pooled, p_low, p_high = lift.copy(), low.copy(), high.copy()
    shrink = np.full(len(out), np.nan)
    sid = out["_sid"].to_numpy()
    log_link = transforms.reindex(sid).isin(["log", "count"]).to_numpy()
    with np.errstate(invalid="ignore", divide="ignore"):
        b = np.log1p(lift / 100.0)
        se = (np.log1p(high / 100.0) - np.log1p(low / 100.0)) / (2 * Z95)
    estimated = log_link & np.isfinite(b) & np.isfinite(se) & (se > 0) & (low < high)
    if "_fitted" in out.columns:  # borrowed lifts are not estimates of their own
        estimated &= out["_fitted"].to_numpy(dtype=bool)
    grp = groups.reindex(sid).to_numpy()
    summary = []
    frame = pd.DataFrame({"i": np.arange(len(out)), "g": grp, "e": out["event"].astype(str).to_numpy()})
    for (g, ev), idx in frame[estimated].groupby(["g", "e"], sort=True)["i"]:
        ii = idx.to_numpy()
        if len(ii) < 2:
            continue
        mu, var_mu, tau2, q = dersimonian_laird(b[ii], se[ii])
        v = se[ii] ** 2
        B = v / (v + tau2) if tau2 > 0 else np.ones(len(ii))
        theta = B * mu + (1 - B) * b[ii]
        sd = np.sqrt((1 - B) * v + B**2 * var_mu)
        pooled[ii] = 100.0 * np.expm1(theta)
        p_low[ii] = 100.0 * np.expm1(theta - Z95 * sd)
        p_high[ii] = 100.0 * np.expm1(theta + Z95 * sd)
        shrink[ii] = B
        k = len(ii)
        summary.append({"group": g, "event": ev, "series": k, "mean_pct": 100.0 * np.expm1(mu),
                        "mean_low_pct": 100.0 * np.expm1(mu - Z95 * np.sqrt(var_mu)),
                        "mean_high_pct": 100.0 * np.expm1(mu + Z95 * np.sqrt(var_mu)),
                        "tau": float(np.sqrt(tau2)), "q": q,
                        "i2_pct": float(max(0.0, (q - (k - 1)) / q) * 100.0) if q > 0 else 0.0})
    out["pooled_pct"], out["pooled_low_pct"], out["pooled_high_pct"] = pooled, p_low, p_high
    out["shrinkage"] = shrink
    cols = ["group", "event", "series", "mean_pct", "mean_low_pct", "mean_high_pct", "tau", "q", "i2_pct"]
    return out, pd.DataFrame(summary, columns=cols)
