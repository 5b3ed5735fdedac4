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

1. **Detection** on the residuals ``e = phi(B) u``: for each type and date
   ``t0`` the least-squares effect ``w = sum x e / sum x^2`` of
   ``x = phi(B) xi(B) I(t0)`` taken net of the regressors (Chen & Liu have
   none), and ``tau = w sqrt(sum x^2) / sigma``, ``sigma = 1.4826 MAD(e)``.
   The largest ``|tau|`` above the critical value is taken, its effect
   removed from ``e``, and the search repeats (Chen & Liu locate all
   exceeding dates, then thin them: one at a time is the more conservative
   reading).
2. **Joint estimation** of ``b`` and every found effect by least squares
   (``statsmodels`` OLS; with AR errors on the ``phi(B)``-filtered data, a
   feasible GLS in the manner of Cochrane & Orcutt 1949). The effect with the
   smallest ``|t|`` below the critical value is dropped, and again, until all
   are above it.
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
import statsmodels.api as sm
from scipy.signal import lfilter

__all__ = ["Outlier", "OutlierSearch", "TC_DELTA", "chen_liu", "critical_value", "detection_statistics",
           "joint_residuals", "lasting_shifts", "outlier_pattern", "robust_sigma"]

TYPES = ("AO", "LS", "TC")
#: Chen & Liu (1993) recommend delta = 0.7 for a temporary change
TC_DELTA = 0.7
#: rounds of detection and joint estimation
MAX_ROUNDS = 5
#: dates whose AR-filtered patterns are built at once (bounds an n x CHUNK array)
CHUNK = 256


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


def outlier_pattern(kind: str, t0: int, n: int) -> np.ndarray:
    """``xi(B) I_t(t0)`` on positions ``0..n-1``.

    Examples
    --------
    >>> outlier_pattern("TC", 1, 4).round(2).tolist()
    [0.0, 1.0, 0.7, 0.49]
    """
    t = np.arange(n)
    if kind == "AO":
        return (t == t0).astype(float)
    if kind == "LS":
        return (t >= t0).astype(float)
    if kind == "TC":
        return np.where(t >= t0, TC_DELTA ** np.clip(t - t0, 0, None), 0.0)
    raise ValueError(f"unknown outlier type {kind!r}; use one of {', '.join(TYPES)}")


def robust_sigma(e: np.ndarray) -> float:
    """``1.4826 * median |e - median e|`` (consistent for the normal sd)."""
    e = e[np.isfinite(e)]
    return float(1.4826 * np.median(np.abs(e - np.median(e))))


def ar_filter(a: np.ndarray, phi: np.ndarray) -> np.ndarray:
    """``phi(B) a`` along axis 0; the first ``p`` rows are NaN (no past to filter with)."""
    p = len(phi)
    if p == 0:
        return a.astype(float, copy=True)
    out = np.full(a.shape, np.nan)
    out[p:] = a[p:]
    for i, coef in enumerate(phi, start=1):
        out[p:] -= coef * a[p - i : len(a) - i]
    return out


def _candidates(kind: str, observed: np.ndarray) -> np.ndarray:
    """Observed dates where an effect of ``kind`` can be told apart from the model.

    A level shift at the first date is the constant, and at the last date an
    AO; a TC at the last date is an AO too.
    """
    t = np.flatnonzero(observed)
    if kind == "LS" and len(t):
        return t[(t > t.min()) & (t < t.max())]
    if kind == "TC" and len(t):
        return t[t < t.max()]
    return t


def detection_statistics(
    resid: np.ndarray,
    kind: str,
    *,
    positions: np.ndarray,
    phi: Sequence[float] = (),
    sigma: float | None = None,
    exog: np.ndarray | None = None,
    basis: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Detection-stage effects and tau statistics of one type at many dates.

    Parameters
    ----------
    resid : array
        Filtered residuals ``e`` on the full grid (NaN where not observed or
        lost to the AR filter).
    kind : {"AO", "LS", "TC"}
    positions : array of int
        Dates ``t0`` to test.
    phi : sequence of float
        AR coefficients (empty for white-noise errors).
    sigma : float, optional
        Residual scale; default :func:`robust_sigma` of ``resid``.
    exog : array, optional
        The model's regressors, filtered like ``resid``; each pattern is taken
        net of them, so ``w`` is the coefficient of ``x`` in the OLS of ``y``
        on ``[X, x]`` (Frisch–Waugh–Lovell). Without it a level shift in a
        model with a trend is half absorbed by the trend before it is tested.
    basis : array, optional
        :func:`_orthonormal_basis` of ``exog``, when already computed.

    Returns
    -------
    positions, effects, taus : arrays
    """
    e = np.asarray(resid, dtype=float)
    n = len(e)
    phi = np.asarray(phi, dtype=float)
    ok = np.isfinite(e)
    sigma = robust_sigma(e) if sigma is None else sigma
    positions = np.asarray(positions, dtype=int)
    e0 = np.where(ok, e, 0.0)
    basis = _orthonormal_basis(exog, ok) if basis is None else basis
    if len(phi) == 0:
        num, ss = _white_noise_sums(kind, e0, ok, basis)
        num, ss = num[positions], ss[positions]
    else:
        num = np.zeros(len(positions))
        ss = np.zeros(len(positions))
        for lo in range(0, len(positions), CHUNK):
            xi = np.column_stack([outlier_pattern(kind, int(t0), n) for t0 in positions[lo : lo + CHUNK]])
            x = np.where(ok[:, None], np.nan_to_num(ar_filter(xi, phi)), 0.0)
            if basis is not None:
                x = x - basis @ (basis.T @ x)
            ss[lo : lo + CHUNK] = (x * x).sum(axis=0)
            num[lo : lo + CHUNK] = x.T @ e0
    ss = np.where(ss > 1e-12, ss, 0.0)  # a pattern the regressors already span
    with np.errstate(divide="ignore", invalid="ignore"):
        effects = np.where(ss > 0, num / ss, 0.0)
        scale = np.sqrt(ss) / sigma if sigma > 0 else np.zeros_like(ss)
        taus = np.where(ss > 0, effects * scale, 0.0)
    return positions, effects, taus


def _orthonormal_basis(exog: np.ndarray | None, ok: np.ndarray) -> np.ndarray | None:
    """Orthonormal basis (QR) of the regressors on the observed rows; zero elsewhere."""
    if exog is None:
        return None
    xo = np.where(ok[:, None], np.nan_to_num(np.asarray(exog, dtype=float)), 0.0)
    q, r = np.linalg.qr(xo)
    return q[:, np.abs(np.diag(r)) > 1e-10 * max(1.0, np.abs(r).max())]


def _suffix_filter(a: np.ndarray, decay: float) -> np.ndarray:
    """``out[t] = sum_{s >= t} decay^(s-t) a[s]`` along axis 0 (decay 1: suffix sums)."""
    return lfilter([1.0], [1.0, -decay], a[::-1], axis=0)[::-1]


def _white_noise_sums(
    kind: str, e0: np.ndarray, ok: np.ndarray, basis: np.ndarray | None
) -> tuple[np.ndarray, np.ndarray]:
    """``x*.e`` and ``x*.x*`` at every date at once, for white-noise errors, building no pattern.

    With ``x* = (I - Q Q') x``: ``x*.e = x.e - (Q'x).(Q'e)``, ``x*.x* = x.x - |Q'x|^2``,
    and ``x.e``, ``x.x``, ``Q'x`` are (decaying) suffix sums for LS (TC).
    """
    w = ok.astype(float)
    if kind == "AO":
        xe, xx, qx = e0, w, basis
    else:
        decay = 1.0 if kind == "LS" else TC_DELTA
        xe, xx = _suffix_filter(e0, decay), _suffix_filter(w, decay * decay)
        qx = None if basis is None else _suffix_filter(basis, decay)
    if basis is None:
        return xe, xx
    qe = basis.T @ e0
    return xe - qx @ qe, xx - (qx * qx).sum(axis=1)


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
    found, params, tvalues, _ = _thin(yv, x, found, phi, cval)
    k = x.shape[1]
    outliers = [Outlier(kind, t0, labels[t0], float(params[k + i]), float(tvalues[k + i]))
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
    """
    e = e.copy()
    n = len(e)
    new: list[tuple[str, int]] = []
    ok = np.isfinite(e)
    basis = _orthonormal_basis(exog, ok)
    while len(new) < room:
        best: tuple[float, str, int, float] | None = None
        for kind in TYPES:
            pos = np.array([t for t in _candidates(kind, ok) if int(t) not in taken], dtype=int)
            if len(pos) == 0:
                continue
            pos, w, tau = detection_statistics(e, kind, phi=phi, sigma=sigma, positions=pos, basis=basis)
            i = int(np.argmax(np.abs(tau)))
            if best is None or abs(tau[i]) > abs(best[0]):
                best = (float(tau[i]), kind, int(pos[i]), float(w[i]))
        if best is None or abs(best[0]) < cval:
            break
        _, kind, t0, w = best
        xf = np.where(ok, np.nan_to_num(ar_filter(outlier_pattern(kind, t0, n), phi)), 0.0)
        if basis is not None:
            xf = xf - basis @ (basis.T @ xf)
        e = e - w * np.where(ok, xf, 0.0)
        new.append((kind, t0))
        taken = taken | {t0}
    return new


def _thin(y: np.ndarray, x: np.ndarray, found: list[tuple[str, int]], phi: np.ndarray,
          cval: float) -> tuple[list[tuple[str, int]], np.ndarray, np.ndarray, np.ndarray]:
    """Stage 2: joint OLS of ``phi(B) y`` on ``phi(B) [X, xi_1, ...]``; drop the weakest
    effect below ``cval`` until none is. Returns the effects kept, params, t values and
    the residual on the original (unfiltered) scale."""
    found = list(found)
    k = x.shape[1]
    while True:
        design = np.hstack([x] + [outlier_pattern(kind, t0, len(y))[:, None] for kind, t0 in found])
        yf, xf = ar_filter(y, phi), ar_filter(design, phi)
        rows = np.isfinite(yf) & np.isfinite(xf).all(axis=1)
        res = sm.OLS(yf[rows], xf[rows]).fit()
        params = np.asarray(res.params)
        with np.errstate(divide="ignore", invalid="ignore"):
            tvalues = np.asarray(res.tvalues)
        u = y - design @ params
        t_eff = np.abs(np.nan_to_num(tvalues[k:], nan=0.0))
        if not found or t_eff.min() >= cval:
            return found, params, tvalues, u
        found.pop(int(np.argmin(t_eff)))
