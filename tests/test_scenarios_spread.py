"""Differences by event under a target: the by-event table of ``plan --scenario`` is in the model's
units before the spread, with the spread to the target on its own row, so the rows add up to each
total difference exactly.

Checked for any plans (hypothesis: random parts, random per-year factors, as
:func:`evcal.plan.spread.spread` scales them) and on the invented weekly shop of
``test_scenarios_many`` (a made-up history with a known truth: the promotion adds 300 units).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_scenarios_many import PROMO_UNITS, SCENARIOS, TOLERANCE, result, shop  # noqa: F401

from evcal.plan import make_plan, plan_scenarios
from evcal.plan.result import Plan
from evcal.plan.scenario_events import BASE_ROW, DIFF_PREFIX, DRIVERS_ROW, SPREAD_ROW, UNITS_PREFIX, by_event

EVENTS = ["sale", "fair", "closure"]


def _plan(dates: pd.DatetimeIndex, base: np.ndarray, lifts: dict[str, np.ndarray], driver: np.ndarray | None,
          factors: dict[int, float]) -> Plan:
    """A Plan built as make_plan builds one: the model's parts, their sum the plan, every amount then
    times its year's factor (empty factors: no target)."""
    f = np.array([factors.get(int(y), 1.0) for y in dates.year])
    cols = {"base": base * f, **{f"lift:{e}": v * f for e, v in lifts.items()}}
    if driver is not None:
        cols["driver:price"] = driver * f
    plan = sum(cols.values())
    table = pd.DataFrame({"date": dates, **cols, "plan": plan})
    return Plan(table=table, periods=dates.to_period("M"), freq="M", label="end", events=list(lifts),
                assumptions={}, model_totals={}, target=None, factors=factors, full_years=[], last_year={},
                average_share={}, calendar_name="", interval_note="")


@settings(max_examples=60, deadline=None)
@given(st.integers(2, 4), st.integers(1, 14), st.booleans(), st.booleans(), st.data())
def test_parts_add_up_to_each_total_difference(k: int, n: int, target: bool, drivers: bool,
                                               data: st.DataObject) -> None:
    """For any plans: each event's units are its lift over the factor, the spread row is the plan less
    the plan over the factor, and events + base + drivers + spread add up to each scenario's total and
    each total difference, to 1e-6."""
    dates = pd.date_range("2030-11-30", periods=n, freq="ME")  # one or two years, so factors by year
    amounts = st.lists(st.floats(-1e5, 1e5, allow_nan=False), min_size=n, max_size=n).map(np.array)
    plans = {}
    for j in range(k):
        events = data.draw(st.lists(st.sampled_from(EVENTS), unique=True), label=f"events {j}")
        factors = {y: data.draw(st.floats(0.2, 5.0), label=f"factor {j} {y}")
                   for y in sorted(set(dates.year))} if target else {}
        plans[f"s{j}"] = _plan(dates, data.draw(amounts), {e: data.draw(amounts) for e in events},
                               data.draw(amounts) if drivers else None, factors)
    table = by_event(plans).set_index("event")
    assert (SPREAD_ROW in table.index) == target and (DRIVERS_ROW in table.index) == drivers
    for j, (name, plan) in enumerate(plans.items()):
        f = np.array([plan.factors.get(int(y), 1.0) for y in dates.year])
        column = table[UNITS_PREFIX + name]
        assert column.sum() == pytest.approx(plan.total, abs=1e-6)
        for e in plan.events:  # the model's units: the plan's lift before the factor
            assert column[e] == pytest.approx(float((plan.table[f"lift:{e}"] / f).sum()), abs=1e-6)
        if target:
            plain = float((plan.table["plan"] / f).sum())
            assert column[SPREAD_ROW] == pytest.approx(plan.total - plain, abs=1e-6)
        if j:
            ref = plans["s0"]
            assert table[DIFF_PREFIX + name].sum() == pytest.approx(plan.total - ref.total, abs=1e-6)


def test_dropping_the_promotion_under_a_target(result) -> None:  # noqa: F811
    """Under one target the total difference is 0: dropping the promotion costs its model units (about
    300, the invented truth), and the spread to the target gives exactly as much back to the rest."""
    sc = plan_scenarios(result, "2024-01-01", "2024-12-31", SCENARIOS, total=60_000, n_sims=0)
    ev = sc.events.set_index("event")
    model = make_plan(result, "2024-01-01", "2024-12-31", SCENARIOS["booked"], n_sims=0)  # no target
    promo = float(model.table["lift:promo"].sum())
    assert promo == pytest.approx(PROMO_UNITS, abs=TOLERANCE)
    # the model's units, not the scaled ones: the same as the plan without a target, to rounding
    assert ev.loc["promo", UNITS_PREFIX + "booked"] == pytest.approx(promo, abs=1e-6)
    assert ev.loc["promo", DIFF_PREFIX + "promo-dropped"] == pytest.approx(-promo, abs=1e-6)
    assert ev.loc[BASE_ROW, DIFF_PREFIX + "promo-dropped"] == pytest.approx(0.0, abs=1e-6)
    assert ev.loc[SPREAD_ROW, DIFF_PREFIX + "promo-dropped"] == pytest.approx(promo, abs=1e-6)
    # the moved tournament adds as much in the model: no difference by event, and none from the spread
    assert ev.loc["tournament", DIFF_PREFIX + "tournament-moved"] == pytest.approx(0.0, abs=1e-6)
    for name in list(SCENARIOS)[1:]:
        assert ev[DIFF_PREFIX + name].sum() == pytest.approx(0.0, abs=1e-6)  # one target: same totals
    text = sc.summary()
    assert "before any spread to a target" in text and "tournament:" not in text.split("What the plans")[0]
    assert "The rest of each difference: spread to the target: promo-dropped +" in text
