"""Chen–Liu detection statistics: the effect and ``tau`` of an outlier pattern at every date.

The detection stage of the procedure in :mod:`evcal.discovery.outliers`
(Chen, C. and Liu, L.-M. 1993, JASA 88(421), 284–297): the three patterns
``xi(B) I_t(t0)`` (``AO``, ``LS``, ``TC``), the AR filter ``pi(B)`` they and
the residuals go through, the dates where each pattern can be told apart from
the model, and the least-squares effect ``w`` and its statistic ``tau`` of one
pattern type at many dates at once, net of the model's regressors.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy.signal import lfilter

__all__ = [
    "TC_DELTA",
    "TYPES",
    "ar_filter",
    "candidates",
    "detection_statistics",
    "orthonormal_basis",
    "outlier_pattern",
    "robust_sigma",
]

TYPES = ("AO", "LS", "TC")
#: Chen & Liu (1993) recommend delta = 0.7 for a temporary change
TC_DELTA = 0.7


def outlier_pattern(kind: str, t0: int, n: int, delta: float = TC_DELTA) -> np.ndarray:
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
        return np.where(t >= t0, delta ** np.clip(t - t0, 0, None), 0.0)
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


def candidates(kind: str, n: int, observed: np.ndarray) -> np.ndarray:
    """Dates where an effect of ``kind`` can be told apart from the model.

    A level shift at the first date is the constant, and at the last date an
    AO; a TC at the last date is an AO too. Effects start at observed dates only.
    """
    t = np.flatnonzero(observed)
    if kind == "LS":
        t = t[(t > t.min()) & (t < t.max())] if len(t) else t
    if kind == "TC":
        t = t[t < t.max()] if len(t) else t
    return t


def detection_statistics(
    resid: np.ndarray,
    kind: str,
    *,
    phi: Sequence[float] = (),
    sigma: float | None = None,
    delta: float = TC_DELTA,
    positions: np.ndarray | None = None,
    exog: np.ndarray | None = None,
    basis: np.ndarray | None = None,
    chunk: int = 256,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Detection-stage effects and tau statistics of one type at many dates.

    Parameters
    ----------
    resid : array
        Filtered residuals ``e`` on the full grid (NaN where not observed or
        lost to the AR filter).
    kind : {"AO", "LS", "TC"}
    phi : sequence of float
        AR coefficients (empty for white-noise errors).
    sigma : float, optional
        Residual scale; default :func:`robust_sigma` of ``resid``.
    positions : array of int, optional
        Dates ``t0`` to test; default every admissible date.
    exog : array, optional
        The model's regressors, filtered like ``resid``. Each pattern is then
        taken net of them (``x* = (I - H) x``, the added-variable form), so
        ``w`` equals the coefficient of ``x`` in the OLS of ``y`` on ``[X, x]``
        (Frisch–Waugh–Lovell). Without it a level shift in a model with a
        trend is half absorbed by the trend before it is tested.
    basis : array, optional
        An orthonormal basis of ``exog`` on the observed rows (computed from
        ``exog`` when not given; passed in to avoid repeating the QR).

    Returns
    -------
    positions, effects, taus : arrays
    """
    e = np.asarray(resid, dtype=float)
    n = len(e)
    phi = np.asarray(phi, dtype=float)
    ok = np.isfinite(e)
    sigma = robust_sigma(e) if sigma is None else sigma
    if positions is None:
        positions = candidates(kind, n, ok)
    positions = np.asarray(positions, dtype=int)
    e0 = np.where(ok, e, 0.0)
    basis = orthonormal_basis(exog, ok) if basis is None else basis
    if len(phi) == 0:
        num, ss = _white_noise_sums(kind, e0, ok, basis, delta)
        num, ss = num[positions], ss[positions]
    else:
        num = np.zeros(len(positions))
        ss = np.zeros(len(positions))
        for lo in range(0, len(positions), chunk):
            block = positions[lo : lo + chunk]
            xi = np.column_stack([outlier_pattern(kind, int(t0), n, delta) for t0 in block])
            x = ar_filter(xi, phi)
            x = np.where(ok[:, None], np.nan_to_num(x), 0.0)
            if basis is not None:
                x = x - basis @ (basis.T @ x)
            ss[lo : lo + chunk] = (x * x).sum(axis=0)
            num[lo : lo + chunk] = x.T @ e0
    ss = np.where(ss > 1e-12, ss, 0.0)  # a pattern the regressors already span
    with np.errstate(divide="ignore", invalid="ignore"):
        effects = np.where(ss > 0, num / ss, 0.0)
        scale = np.sqrt(ss) / sigma if sigma > 0 else np.zeros_like(ss)
        taus = np.where(ss > 0, effects * scale, 0.0)
    return positions, effects, taus


def orthonormal_basis(exog: np.ndarray | None, ok: np.ndarray) -> np.ndarray | None:
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
    kind: str, e0: np.ndarray, ok: np.ndarray, basis: np.ndarray | None, delta: float
) -> tuple[np.ndarray, np.ndarray]:
    """``x*.e`` and ``x*.x*`` at every date at once, for white-noise errors.

    With ``x* = (I - Q Q') x``: ``x*.e = x.e - (Q'x).(Q'e)`` and
    ``x*.x* = x.x - |Q'x|^2``; for the three patterns ``x.e``, ``x.x`` and
    ``Q'x`` are suffix sums (LS) or decaying suffix sums (TC) of ``e``, the
    observed-row indicator and the rows of ``Q``, so no pattern is built.
    """
    w = ok.astype(float)
    if kind == "AO":
        xe, xx, qx = e0, w, basis
    elif kind == "LS":
        xe, xx = _suffix_filter(e0, 1.0), _suffix_filter(w, 1.0)
        qx = None if basis is None else _suffix_filter(basis, 1.0)
    elif kind == "TC":
        xe, xx = _suffix_filter(e0, delta), _suffix_filter(w, delta * delta)
        qx = None if basis is None else _suffix_filter(basis, delta)
    else:
        raise ValueError(f"unknown outlier type {kind!r}; use one of {', '.join(TYPES)}")
    if basis is None:
        return xe, xx
    qe = basis.T @ e0
    return xe - qx @ qe, xx - (qx * qx).sum(axis=1)
