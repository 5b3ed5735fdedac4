"""``evcal plan BOTTOM --reconcile ... --round``: whole units that still add up at every level.

The models are the invented product × store ones of test_levels_workbook (a known truth, named there);
the checks compare the whole-unit plan with the same command's plan without ``--round``. Largest
remainder (Hamilton's method) is the apportionment of evcal.plan.spread, whose own tests check it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from test_levels_workbook import invoke, models  # noqa: F401 -- the module's fixture, shared

from evcal.formula_safe import unguard_frame
from evcal.plan.spread import whole_number


def plan(d, out, *extra):
    r = invoke("plan", str(d / "items"), "--from", "2024-07-01", "--to", "2024-09-30",
               *[a for lv in ("products", "stores", "total") for a in ("--reconcile", str(d / lv))],
               "--out", str(out), "--force", *extra)
    assert r.exit_code == 0, r.output
    return unguard_frame(pd.read_csv(out, keep_default_na=False)), r.output


def test_whole_units_add_up_at_every_level_and_stay_within_a_unit_at_the_bottom(models):  # noqa: F811
    d = models
    exact, _ = plan(d, d / "exact.csv")
    whole, said = plan(d, d / "whole.csv", "--round")
    assert (whole["plan"] == np.round(whole["plan"])).all()  # every level's plan is whole
    bottom = whole[whole["level"] == "product,store"]
    for level in ("product", "store"):
        parents = whole[whole["level"] == level].set_index([level, "date"])["plan"]
        sums = bottom.groupby([level, "date"])["plan"].sum()
        assert (parents.reindex(sums.index) == sums).all()  # exact: whole numbers, not to a tolerance
    total = whole[whole["level"] == "total"].set_index("date")["plan"]
    by_date = bottom.groupby("date")["plan"].sum()
    assert (total.reindex(by_date.index) == by_date).all()
    # each bottom series within a unit of its reconciled plan; each period's total is its rounded total
    keys = ["level", "product", "store", "date"]
    pair = exact.merge(whole, on=keys, suffixes=("_exact", "_whole"))
    at_bottom = pair[pair["level"] == "product,store"]
    assert (np.abs(at_bottom["plan_whole"] - at_bottom["plan_exact"]) < 1).all()
    period_totals = at_bottom.groupby("date")["plan_exact"].sum().map(whole_number)
    assert (total.reindex(period_totals.index) == period_totals).all()
    # the adjustment is the whole plan's, and the summary says how the units were made
    np.testing.assert_allclose(whole["adjustment"], whole["plan"] - whole["plan_before"], atol=2e-6)
    assert "Note: whole units: in each period the bottom series' plans are rounded by largest " \
        "remainder" in said
    assert "whole units" in whole["note"].iloc[0]
