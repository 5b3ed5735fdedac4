"""The occurrence intervals' order-statistic shortcut equals the quantiles of all the simulated draws.

Reference: numpy.quantile (linear interpolation) of the 1,000 draws of
sum_t base_t (exp((b + s z) x_t) - 1) times the ratio, computed directly;
inputs are invented (non-negative columns and base, as every fit has them).
"""

from __future__ import annotations

import numpy as np

from evcal.effects.draws import N_DRAWS, OCC_SEED
from evcal.effects.occurrences import _sim_bounds


def test_bounds_equal_the_quantiles_of_all_draws() -> None:
    rng = np.random.default_rng(3)
    m, k, width = 4, 5, 3
    b, s = rng.normal(0.2, 0.3, m), rng.uniform(0.0, 0.2, m)
    xs = rng.uniform(0.0, 1.0, (k, width))
    base_t = rng.uniform(0.0, 50.0, (m, k, width))
    ratio = rng.uniform(-1.0, 2.0, (m, k))  # a negative ratio turns the draws' order around
    z = np.random.default_rng(OCC_SEED).standard_normal(N_DRAWS)
    slope = (b[None, :] + s[None, :] * z[:, None])[:, :, None, None]
    draws = (base_t[None] * np.expm1(slope * xs[None, None])).sum(axis=-1) * ratio[None]
    low, high = np.quantile(draws, [0.025, 0.975], axis=0)
    got_low, got_high = _sim_bounds(b, s, xs, base_t, ratio)
    np.testing.assert_allclose(got_low, low, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(got_high, high, rtol=1e-12, atol=1e-12)
