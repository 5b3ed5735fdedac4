"""BLAS threads held to one for a single series' small problems (issue 16, build 2).

Measured on the 2-core development machine under load: the demo fit took 61 s with OpenBLAS's default
threads (idle threads spinning between thousands of tiny state-space products) and 13 s with one.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from threadpoolctl import threadpool_info, threadpool_limits

import evcal
from evcal.threads import ONE_THREAD_BELOW, blas_threads_for, held_blas

ROOT = Path(__file__).resolve().parents[1]


def _blas_threads() -> int:
    return max((lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas"), default=1)


def test_the_rule_follows_the_problem_size():
    assert blas_threads_for(364, 80) == 1  # a weekly 7-year history
    assert blas_threads_for(7300, 160) == 1  # a daily 20-year history with 100 events
    big = int(np.ceil(ONE_THREAD_BELOW / 500**2)) + 1
    assert blas_threads_for(big, 500) is None


def test_held_blas_sets_one_thread_and_gives_back_the_setting():
    with threadpool_limits(limits=2, user_api="blas"):
        before = _blas_threads()
        with held_blas(100, 10):
            assert _blas_threads() == 1
        assert _blas_threads() == before


def test_a_single_fit_and_its_plan_run_on_one_thread(monkeypatch):
    # the invented demo; what the engine sees while it fits, and the plan while it simulates
    import evcal.engine as engine
    import evcal.plan.build as build

    seen: dict[str, int] = {}
    fit_block, simulate = engine.fit_long_panel, build.simulate_interval

    def spy_fit(*a, **k):
        seen["fit"] = _blas_threads()
        return fit_block(*a, **k)

    def spy_sim(*a, **k):
        seen["plan"] = _blas_threads()
        return simulate(*a, **k)

    monkeypatch.setattr(engine, "fit_long_panel", spy_fit)
    monkeypatch.setattr(build, "simulate_interval", spy_sim)
    hist = pd.read_csv(ROOT / "evcal" / "data" / "demo" / "fernhollow-history.csv")
    with threadpool_limits(limits=2, user_api="blas"):
        res = evcal.fit(hist, ROOT / "evcal" / "data" / "demo" / "fernhollow-calendar.yaml", errors="ols")
        build.make_plan(res, "2027-01-01", "2027-06-30", n_sims=50)
    assert seen == {"fit": 1, "plan": 1}
