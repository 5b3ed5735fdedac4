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

from evcal.plan.backtesting import backtest
from evcal.plan.build import make_plan, plan_periods
from evcal.plan.result import Plan
from evcal.plan.scenarios import Comparison, compare

__all__ = ["make_plan", "plan_periods", "Plan", "compare", "Comparison", "backtest"]
