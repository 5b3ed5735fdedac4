"""The simulated draws behind every interval of the occurrence tables and net lifts: one fixed seed,
1,000 draws, and the 2.5 % and 97.5 % quantiles as numpy computes them.

Low in :mod:`evcal.effects` (it imports nothing of evcal), so the occurrence tables
(:mod:`evcal.effects.occurrences`) and the net lift (:mod:`evcal.effects.netlift`) draw from the same
normals without importing each other.
"""

from __future__ import annotations

import functools

import numpy as np

__all__ = ["H_HIGH", "H_LOW", "N_DRAWS", "OCC_SEED", "cov_root", "joint_normals", "joint_normals_single",
           "lerp", "quantiles95", "sorted_normals"]

N_DRAWS = 1000
OCC_SEED = 7
#: the positions of the 2.5 % and 97.5 % quantiles among the sorted draws (numpy's linear method)
H_LOW = (N_DRAWS - 1) * 0.025
H_HIGH = (N_DRAWS - 1) * 0.975


def lerp(a: np.ndarray, b: np.ndarray, t: float) -> np.ndarray:
    # numpy's quantile interpolation (it computes from the upper end when t >= 0.5)
    diff = b - a
    return b - diff * (1 - t) if t >= 0.5 else a + diff * t


def quantiles95(sims: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``np.quantile(sims, [0.025, 0.975], axis=-1)`` for draws on the last axis (same numbers).

    ``sims`` (..., N_DRAWS) is partitioned in place. The four order statistics numpy interpolates
    come from two single-index partitions: numpy selects one index with a vectorised routine, while
    several indices at once take a scalar path about ten times slower.
    """
    lo_i, hi_i = int(np.floor(H_LOW)), int(np.floor(H_HIGH))
    flat = sims.reshape(-1, N_DRAWS)
    flat.partition(lo_i + 1, axis=-1)  # the lo_i + 1 smallest first: order statistic lo_i is their largest
    lo0, lo1 = flat[:, : lo_i + 1].max(axis=-1), flat[:, lo_i + 1].copy()
    upper = flat[:, lo_i + 1 :]
    upper.partition(hi_i - lo_i - 1, axis=-1)  # order statistic hi_i + 1 is the smallest after hi_i
    hi0, hi1 = upper[:, hi_i - lo_i - 1].copy(), upper[:, hi_i - lo_i :].min(axis=-1)
    shape = sims.shape[:-1]
    return (lerp(lo0, lo1, H_LOW - lo_i).reshape(shape), lerp(hi0, hi1, H_HIGH - hi_i).reshape(shape))


@functools.cache
def sorted_normals() -> np.ndarray:
    """The single-series table's standard normal draws (fixed seed), sorted; made once."""
    return np.sort(np.random.default_rng(OCC_SEED).standard_normal(N_DRAWS))


@functools.cache
def joint_normals(k: int) -> np.ndarray:
    """(N_DRAWS, k) standard normal draws for the joint simulation (fixed seed), made once per k."""
    z = np.random.default_rng(OCC_SEED).standard_normal((N_DRAWS, k))
    z.setflags(write=False)
    return z


@functools.cache
def joint_normals_single(k: int) -> np.ndarray:
    """:func:`joint_normals` rounded to single precision, made once per k."""
    return joint_normals(k).astype(np.float32)


def cov_root(cov: np.ndarray | None, se_map: dict[str, np.ndarray], names: list[str], m: int) -> np.ndarray:
    """(m, K, K) square roots of the covariances (m, K, K) of the coefficients ``names``, taking a singular
    one too; without a covariance, independent draws from their standard errors in ``se_map``."""
    if cov is None:
        root = np.zeros((m, len(names), len(names)))
        for i, c in enumerate(names):
            root[:, i, i] = se_map[c]
        return root
    vals, vecs = np.linalg.eigh(0.5 * (cov + np.swapaxes(cov, 1, 2)))
    return vecs * np.sqrt(np.clip(vals, 0.0, None))[:, None, :]
