"""Plan step: fitted model + future calendar -> forward plan, spread to a total; backtest.

Examples
--------
>>> import evcal                                                    # doctest: +SKIP
>>> res = evcal.load_model("models/garden")                         # doctest: +SKIP
>>> plan = res.plan("2027-01-01", "2027-12-31", total=2_400_000)    # doctest: +SKIP
>>> print(plan.summary())                                           # doctest: +SKIP
>>> plan.save("plan.xlsx")                                          # doctest: +SKIP
"""

from __future__ import annotations

from typing import Any

from evcal.plan.build import make_plan, plan_periods
from evcal.plan.result import Plan

__all__ = ["make_plan", "plan_periods", "Plan", "compare", "Comparison", "backtest"]


def __getattr__(name: str) -> Any:
    # scenarios and the backtest pull in the fit step; imported when first used
    if name in ("compare", "Comparison"):
        from evcal.plan import compare as _compare

        return getattr(_compare, name)
    if name == "backtest":
        from evcal.plan.backtest import backtest

        return backtest
    raise AttributeError(f"module 'evcal.plan' has no attribute {name!r}")
