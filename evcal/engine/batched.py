"""One factorisation, many right-hand sides: OLS and its covariances for a block of series.

Series that share a design (the same periods and the same fit rows) share
``X``. Least squares is then one QR factorisation ``X = QR`` and one solve
``B = R⁻¹ Qᵀ Y`` for every column of ``Y`` at once, which is what
statsmodels' ``OLS(...).fit(method="qr")`` does for one column.

The covariance of series ``s`` is ``Zᵀ Σₛ Z`` with ``Z = X (XᵀX)⁻¹`` and ``Σₛ``
its errors' covariance: an AR(p) model of its residuals for the autocorrelation,
each period's own whitened residual for the variance
(:func:`evcal.model.estimators.prewhitened_errors`, the estimator
:func:`evcal.model.estimators.fit_ols` uses), every series of the block at once.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from evcal.model.estimators import (
    PrewhitenedErrors,
    ar_covariances,
    contrast_variances,
    leverage,
    prewhitened_errors,
)

__all__ = ["SharedSolve"]


@dataclass
class SharedSolve:
    """The factorised design shared by a block of series.

    Parameters
    ----------
    X : ndarray, shape (n, k)
        Regressors on the fit rows (full column rank: the fit's identifiability
        check has already left out columns with no information).

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> X = np.column_stack([np.ones(40), np.arange(40.0)])
    >>> Y = X @ np.array([[1.0, 2.0], [0.5, -0.1]]) + rng.normal(0, 0.1, (40, 2))
    >>> s = SharedSolve.of(X)
    >>> B, E, sigma2 = s.solve(Y)
    >>> np.round(B, 1).tolist()
    [[1.0, 2.0], [0.5, -0.1]]
    """

    X: np.ndarray
    Q: np.ndarray
    R: np.ndarray
    Z: np.ndarray  # X (X'X)^-1 = Q R^-T
    leverage: np.ndarray  # (n,) each period's leverage, diag X (X'X)^-1 X'

    @classmethod
    def of(cls, X: np.ndarray) -> SharedSolve:
        X = np.ascontiguousarray(X, dtype=float)
        Q, R = np.linalg.qr(X)
        Rinv = np.linalg.solve(R, np.eye(R.shape[0]))
        Z = Q @ Rinv.T
        return cls(X=X, Q=Q, R=R, Z=Z, leverage=leverage(X, Z))

    def coefficients(self, Y: np.ndarray) -> np.ndarray:
        """Coefficients (k, m) only: ``(XᵀX)⁻¹XᵀY = ZᵀY``, a product (``R⁻¹`` is formed once per design)."""
        return self.Z.T @ Y

    def solve(self, Y: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Coefficients (k, m), residuals (n, m) and residual variances ``ssr / (n - k)`` (m,)."""
        B = self.coefficients(Y)
        E = Y - self.X @ B
        n, k = self.X.shape
        sigma2 = np.einsum("ij,ij->j", E, E) / max(n - k, 1)
        return B, E, sigma2

    def errors(self, E: np.ndarray) -> PrewhitenedErrors:
        """The AR error model and the periods' weights of each residual column of ``E`` (n, m)."""
        return prewhitened_errors(E, self.leverage)

    def covariances(self, errors: PrewhitenedErrors, cols: np.ndarray | None = None) -> np.ndarray:
        """Covariance of each series' coefficients (m, j, j), for columns ``cols`` (all by default)."""
        Z = self.Z if cols is None else self.Z[:, cols]
        return ar_covariances(Z, errors)

    def contrast_variances(self, errors: PrewhitenedErrors, cols: np.ndarray, C: np.ndarray) -> np.ndarray:
        """Variances (m, r) of the contrasts ``C`` (r, len(cols)) of the coefficients ``cols``."""
        return contrast_variances(self.Z[:, cols], errors, C)
