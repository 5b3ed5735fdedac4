"""Chen–Liu detection statistics: every date and type at once, from a few filters.

Chen, C. and Liu, L.-M. (1993), "Joint estimation of model parameters and
outlier effects in time series", JASA 88(421), 284–297. On the residuals
``e = phi(B) u`` of a regression with AR(p) errors (p = 0: white noise), an
effect of type ``AO`` (``xi = 1``), ``LS`` (``xi = 1 / (1 - B)``) or ``TC``
(``xi = 1 / (1 - delta B)``, ``delta = 0.7``) at date ``t0`` is seen as the
pattern ``x = phi(B) xi(B) I(t0)``. Its least-squares effect is
``w = x*.e / x*.x*`` and its statistic ``tau = w sqrt(x*.x*) / sigma``, where
``x*`` is ``x`` net of the model's (filtered) regressors and ``sigma`` the
robust scale ``1.4826 MAD(e)``.

No pattern is built. ``phi(B) xi(B)`` is a rational filter ``b(B) / a(B)``
with impulse response ``h``, and ``x`` at ``t0`` is ``h`` moved to ``t0``, so
``x.e``, ``x.x`` and ``Q'x`` (``Q`` an orthonormal basis of the regressors)
are correlations with ``h`` at every ``t0``: one reversed
``scipy.signal.lfilter`` each. With ``x* = (I - Q Q') x``:
``x*.e = x.e - (Q'x).(Q'e)`` and ``x*.x* = x.x - |Q'x|^2``. ``h^2`` is
rational too (``h`` decays geometrically after lag ``p``), so ``x.x`` is one
more filter. Only ``x.e`` and ``Q'e`` change with the residuals; the rest is
computed once per search (:func:`pattern_sums`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.signal import lfilter

__all__ = ["TC_DELTA", "TYPES", "PatternSums", "all_statistics", "ar_filter", "candidates",
           "detection_statistics", "net_pattern", "orthonormal_basis", "outlier_pattern", "pattern_sums",
           "robust_sigma"]

TYPES = ("AO", "LS", "TC")
#: Chen & Liu (1993) recommend delta = 0.7 for a temporary change
TC_DELTA = 0.7
#: a pattern whose part outside the regressors' span has a smaller sum of squares is spanned by them
SPANNED = 1e-12


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


def candidates(kind: str, observed: np.ndarray) -> np.ndarray:
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


def orthonormal_basis(exog: np.ndarray | None, ok: np.ndarray) -> np.ndarray | None:
    """Orthonormal basis (QR) of the regressors on the observed rows; zero elsewhere."""
    if exog is None:
        return None
    xo = np.where(ok[:, None], np.nan_to_num(np.asarray(exog, dtype=float)), 0.0)
    q, r = np.linalg.qr(xo)
    return q[:, np.abs(np.diag(r)) > 1e-10 * max(1.0, np.abs(r).max())]


def _rational(kind: str, phi: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """``phi(B) xi(B) = b(B) / a(B)`` and ``h^2`` as ``b2(B) / a2(B)``, ``h`` its impulse response."""
    b = np.r_[1.0, -phi]
    decay = {"AO": 0.0, "LS": 1.0, "TC": TC_DELTA}[kind]
    if decay == 0.0:
        return b, np.ones(1), b * b, np.ones(1)
    a = np.array([1.0, -decay])
    # after lag p the impulse response decays by ``decay`` a period, so h^2 by decay^2
    h = lfilter(b, a, np.r_[1.0, np.zeros(len(b))])[: len(b)]
    h2 = h * h
    return b, a, np.r_[h2[0], h2[1:] - decay * decay * h2[:-1]], np.array([1.0, -decay * decay])


def _correlate(b: np.ndarray, a: np.ndarray, values: np.ndarray) -> np.ndarray:
    """``out[t0] = sum_j h_j values[t0 + j]`` along axis 0, ``h`` the impulse response of ``b / a``."""
    return lfilter(b, a, values[::-1], axis=0)[::-1]


@dataclass(frozen=True)
class PatternSums:
    """What the detection statistics of one type need besides the residuals.

    ``weight`` marks the rows a filtered pattern reaches (observed, past the
    filter's start); ``xx`` is ``x*.x*`` and ``qx`` is ``Q'x`` at every date.
    """

    kind: str
    b: np.ndarray
    a: np.ndarray
    weight: np.ndarray
    xx: np.ndarray
    qx: np.ndarray | None


def pattern_sums(kind: str, ok: np.ndarray, phi: Sequence[float], basis: np.ndarray | None) -> PatternSums:
    """``x*.x*`` and ``Q'x`` of type ``kind`` at every date (they do not depend on the residuals)."""
    phi = np.asarray(phi, dtype=float)
    b, a, b2, a2 = _rational(kind, phi)
    weight = ok & (np.arange(len(ok)) >= len(phi))
    xx = _correlate(b2, a2, weight.astype(float))
    qx = None
    if basis is not None:
        qx = _correlate(b, a, np.where(weight[:, None], basis, 0.0))
        xx = xx - (qx * qx).sum(axis=1)
    return PatternSums(kind, b, a, weight, np.where(xx > SPANNED, xx, 0.0), qx)


def all_statistics(e0: np.ndarray, sums: PatternSums, basis: np.ndarray | None,
                   sigma: float) -> tuple[np.ndarray, np.ndarray]:
    """Effects ``w`` and statistics ``tau`` of one type at every date.

    ``e0`` are the residuals with zeros where not observed; a pattern the
    regressors span has ``w = tau = 0``.
    """
    xe = _correlate(sums.b, sums.a, np.where(sums.weight, e0, 0.0))
    if basis is not None:
        xe = xe - sums.qx @ (basis.T @ e0)
    ss = sums.xx
    with np.errstate(divide="ignore", invalid="ignore"):
        effects = np.where(ss > 0, xe / ss, 0.0)
        scale = np.sqrt(ss) / sigma if sigma > 0 else np.zeros_like(ss)
        taus = np.where(ss > 0, effects * scale, 0.0)
    return effects, taus


def net_pattern(kind: str, t0: int, ok: np.ndarray, phi: np.ndarray, basis: np.ndarray | None) -> np.ndarray:
    """The filtered pattern ``x*`` of one effect on the observed rows (zero elsewhere)."""
    x = np.where(ok, np.nan_to_num(ar_filter(outlier_pattern(kind, t0, len(ok)), phi)), 0.0)
    if basis is not None:
        x = x - basis @ (basis.T @ x)
    return np.where(ok, x, 0.0)


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
        :func:`orthonormal_basis` of ``exog``, when already computed.

    Returns
    -------
    positions, effects, taus : arrays

    Examples
    --------
    >>> e = np.r_[np.zeros(10), 1.0, np.zeros(9)]
    >>> _, w, tau = detection_statistics(e, "AO", positions=np.array([10, 12]), sigma=0.1)
    >>> w.tolist(), tau.tolist()
    ([1.0, 0.0], [10.0, 0.0])
    """
    e = np.asarray(resid, dtype=float)
    ok = np.isfinite(e)
    sigma = robust_sigma(e) if sigma is None else sigma
    positions = np.asarray(positions, dtype=int)
    basis = orthonormal_basis(exog, ok) if basis is None else basis
    effects, taus = all_statistics(np.where(ok, e, 0.0), pattern_sums(kind, ok, phi, basis), basis, sigma)
    return positions, effects[positions], taus[positions]
