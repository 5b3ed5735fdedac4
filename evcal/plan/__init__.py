"""Plan step: fitted model + future calendar -> forward plan, spread to a total.

Examples
--------
>>> import evcal                                                    # doctest: +SKIP
>>> from evcal.plan import make_plan                                 # doctest: +SKIP
>>> res = evcal.load_model("models/garden")                         # doctest: +SKIP
>>> plan = make_plan(res, "2027-01-01", "2027-12-31", total=2_400_000)    # doctest: +SKIP
>>> print(plan.summary())                                           # doctest: +SKIP
>>> plan.save("plan.xlsx")                                          # doctest: +SKIP
"""

from __future__ import annotations

from evcal.plan.build import make_plan, plan_periods
from evcal.plan.comparison import Comparison, compare
from evcal.plan.result import Plan
from evcal.plan.scenarios import Scenario, Scenarios, plan_scenarios

__all__ = ["make_plan", "plan_periods", "Plan", "compare", "Comparison", "plan_scenarios", "Scenario",
           "Scenarios"]
