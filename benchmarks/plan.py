"""Benchmark: a year's daily plan with a 1,000-draw simulated interval.

Compares :func:`evcal.plan.make_plan` (the draws as one matrix product per
block of columns, ``evcal.plan.simulate``) with the plain loop a first
version would write: for each draw, rebuild the plan with
``evcal.effects.decompose`` (pandas) under the drawn coefficients, add the
period's noise, then take the quantiles. Both use the same model on invented
data and the same seed, and draw the same random numbers in the same order,
so the check is that the two intervals agree (to rounding).

Run: ``python benchmarks/plan.py``. Aim: under 1 s for make_plan.
"""

from __future__ import annotations

import os
import sys

# Run as a script, this folder comes first on sys.path, and benchmarks/calendar.py
# would hide the standard library's `calendar` module.
if sys.path and os.path.abspath(sys.path[0]) == os.path.dirname(os.path.abspath(__file__)):
    sys.path.pop(0)

import time  # noqa: E402
from dataclasses import replace  # noqa: E402

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

import evcal  # noqa: E402
from evcal.design.matrix import build_design  # noqa: E402
from evcal.effects import closure_shares, decompose  # noqa: E402
from evcal.plan.simulate import draw_coefficients  # noqa: E402

N_SIMS = 1000


def invented_daily() -> tuple[pd.DataFrame, str]:
    """Four years of an invented daily shop with an Easter run-up and a Christmas closure."""
    rng = np.random.default_rng(3)
    days = pd.date_range("2020-01-01", "2023-12-31", freq="D")
    dow = np.array([1.0, 0.95, 0.95, 1.0, 1.1, 1.4, 0.8])[days.day_of_week]
    wave = np.exp(0.2 * np.sin(2 * np.pi * days.day_of_year.to_numpy() / 365.25))
    y = 200 * dow * wave * np.exp(rng.normal(0, 0.03, len(days)))
    y[(days.month == 12) & (days.day == 25)] = 0.0
    cal = ("name: benchmark (invented)\nevents:\n"
           "  - {name: easter-run, when: {easter: 0}, before: 10, after: 1}\n"
           "  - {name: xmas, when: {fixed: '12-25'}, effect: zero}\n")
    return pd.DataFrame({"date": days.strftime("%Y-%m-%d"), "value": y}), cal


def loop_interval(res: evcal.FitResult, periods: pd.PeriodIndex) -> tuple[np.ndarray, np.ndarray]:
    """The plain version: one pandas decomposition per draw."""
    cal = res.calendar
    design = build_design(res.spec, cal, periods)
    closures = closure_shares(cal, periods)
    rng = np.random.default_rng(1)
    draws = draw_coefficients(res.params, res.cov, N_SIMS, rng)
    sd = np.sqrt(res.sigma2)
    out = np.empty((N_SIMS, len(periods)))
    for s in range(N_SIMS):
        params = res.params.copy()
        params[draws.columns] = draws.iloc[s].to_numpy()
        view = replace(res, smear=1.0)
        parts = decompose(view, design.X, design.open_share, closures, params=params)
        noise = np.exp(rng.normal(0.0, sd, len(periods)))
        out[s] = parts["fitted"].to_numpy() * noise
    low, high = np.quantile(out, [0.025, 0.975], axis=0)
    return low, high


def main() -> None:
    frame, cal = invented_daily()
    res = evcal.fit(frame, cal, errors="ols", fourier_order=4)
    t0 = time.perf_counter()
    plan = evcal.plan.make_plan(res, "2024-01-01", "2024-12-31", n_sims=N_SIMS, seed=1)
    t_vec = time.perf_counter() - t0
    t0 = time.perf_counter()
    low, high = loop_interval(res, plan.periods)
    t_loop = time.perf_counter() - t0
    open_ = plan.table["plan"].to_numpy() > 0
    rel_low = np.abs(plan.table["low"].to_numpy()[open_] / low[open_] - 1)
    rel_high = np.abs(plan.table["high"].to_numpy()[open_] / high[open_] - 1)
    print(f"daily plan, 366 days, {N_SIMS} draws")
    print(f"  make_plan (vectorised draws): {t_vec:8.3f} s")
    print(f"  loop of decompose per draw:   {t_loop:8.3f} s")
    print(f"  ratio loop / make_plan:       {t_loop / t_vec:8.1f}x")
    print(f"  interval agreement: low within {100 * np.median(rel_low):.2f}% (median), "
          f"high within {100 * np.median(rel_high):.2f}%")
    if np.median(rel_low) > 0.02 or np.median(rel_high) > 0.02:
        raise SystemExit("the two intervals disagree by more than Monte-Carlo error")


if __name__ == "__main__":
    main()
