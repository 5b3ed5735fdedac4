"""Whole units (``plan --scenario ... --round``): the by-event table's parts come from each scenario's
plan before the rounding, and a ``[whole units]`` row (the rounded plan less the unrounded one) keeps
every column adding up exactly to the whole-unit total.

Checked for any plans (hypothesis: random parts and per-year factors, rounded by the one rounding,
:func:`evcal.plan.spread.whole_unit_plan`) and on the invented weekly shop of ``test_scenarios_many``
(a made-up history with a known truth): moving the tournament leaves the base as it was, to the last
decimal, with or without ``--round``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_scenarios_many import SCENARIOS, _cli, _scenario_args, result, shop  # noqa: F401

from evcal.plan import make_plan, plan_scenarios
from evcal.plan.result import Plan
from evcal.plan.scenario_events import BASE_ROW, DIFF_PREFIX, UNITS_PREFIX, WHOLE_ROW, by_event
from evcal.plan.spread import whole_unit_plan

EVENTS = ["sale", "fair", "closure"]


def _plan(dates: pd.DatetimeIndex, base: np.ndarray, lifts: dict[str, np.ndarray], factors: dict[int, float],
          by_year: bool) -> Plan:
    """An unrounded Plan built as make_plan builds one: the model's parts, their sum the plan, every amount
    then times its year's factor; the target is what the scaled plan adds up to (per year, or the horizon's
    ``target_total``), so the rounding has a target as under ``--total``/``--totals``."""
    f = np.array([factors.get(int(y), 1.0) for y in dates.year])
    cols = {"base": base * f, **{f"lift:{e}": v * f for e, v in lifts.items()}}
    plan = sum(cols.values())
    table = pd.DataFrame({"date": dates, **cols, "plan": plan})
    years = sorted(set(dates.year))
    target = {int(y): float(plan[dates.year == y].sum()) for y in years} if factors else None
    total = None if not factors or by_year else float(plan.sum())
    return Plan(table=table, periods=dates.to_period("M"), freq="M", label="end", events=list(lifts),
                assumptions={}, model_totals={}, target=target, factors=factors, full_years=[], last_year={},
                average_share={}, calendar_name="", interval_note="", target_total=total)


@settings(max_examples=60, deadline=None)
@given(st.integers(2, 4), st.integers(1, 14), st.sampled_from(["none", "total", "totals"]), st.data())
def test_whole_unit_parts_are_the_unrounded_ones(k: int, n: int, target: str, data: st.DataObject) -> None:
    """For any plans: every row but ``[whole units]`` is the unrounded plan's, the ``[whole units]`` row
    is the rounded total less the unrounded one, and each column adds up to the whole-unit total (and each
    difference column to the whole-unit difference), to 1e-6."""
    dates = pd.date_range("2030-11-30", periods=n, freq="ME")  # one or two years, so factors by year
    amounts = st.lists(st.floats(-1e5, 1e5, allow_nan=False), min_size=n, max_size=n).map(np.array)
    unrounded = {}
    for j in range(k):
        events = data.draw(st.lists(st.sampled_from(EVENTS), unique=True), label=f"events {j}")
        factors = {y: data.draw(st.floats(0.2, 5.0), label=f"factor {j} {y}")
                   for y in sorted(set(dates.year))} if target != "none" else {}
        unrounded[f"s{j}"] = _plan(dates, data.draw(amounts), {e: data.draw(amounts) for e in events},
                                   factors, by_year=target == "totals")
    rounded = {n: whole_unit_plan(p, by_year=target == "totals") for n, p in unrounded.items()}
    table = by_event(rounded, unrounded).set_index("event")
    plain = by_event(unrounded).set_index("event")
    assert list(table.index) == [*plain.index, WHOLE_ROW]
    pd.testing.assert_frame_equal(table.drop(WHOLE_ROW), plain)  # the parts before the rounding, as they were
    for j, name in enumerate(unrounded):
        column = table[UNITS_PREFIX + name]
        assert column[WHOLE_ROW] == pytest.approx(rounded[name].total - unrounded[name].total, abs=1e-6)
        assert abs(column[WHOLE_ROW]) <= n  # no period moves by a whole unit or more
        assert column.sum() == pytest.approx(rounded[name].total, abs=1e-6)
        if j:
            assert table[DIFF_PREFIX + name].sum() == pytest.approx(rounded[name].total - rounded["s0"].total,
                                                                   abs=1e-6)


@pytest.mark.parametrize("target", [{}, {"total": 60_000.4}])
def test_round_leaves_the_parts_as_without_it(result, target: dict) -> None:  # noqa: F811
    """On the invented shop, with and without a target: each scenario's plan is the one make_plan rounds
    (one rounding), the parts are those of the same scenarios without ``--round`` (the moved tournament
    keeps its units; the base differs by 0 between scenarios), and ``[whole units]`` takes the rest."""
    horizon = ("2024-01-01", "2024-12-31")
    whole = plan_scenarios(result, *horizon, SCENARIOS, n_sims=0, whole_units=True, **target)
    plain = plan_scenarios(result, *horizon, SCENARIOS, n_sims=0, **target)
    for name, calendar in SCENARIOS.items():
        own = make_plan(result, *horizon, calendar, n_sims=0, whole_units=True, **target)
        np.testing.assert_array_equal(whole.plans[name].table["plan"], own.table["plan"])
    ev, before = whole.events.set_index("event"), plain.events.set_index("event")
    parts = [c for c in before.columns if c.startswith((UNITS_PREFIX, DIFF_PREFIX))]
    np.testing.assert_allclose(ev.loc[before.index, parts].to_numpy(float), before[parts].to_numpy(float),
                               rtol=0, atol=1e-9)
    for name in list(SCENARIOS)[1:]:
        assert ev.loc[BASE_ROW, DIFF_PREFIX + name] == pytest.approx(0.0, abs=1e-9)
    for name in SCENARIOS:
        rounding = whole.plans[name].total - plain.plans[name].total
        assert ev.loc[WHOLE_ROW, UNITS_PREFIX + name] == pytest.approx(rounding, abs=1e-9)
        assert 0 < abs(rounding) < 1  # the model's total (or the target) is not a whole number here
        assert ev[UNITS_PREFIX + name].sum() == pytest.approx(whole.plans[name].total, abs=1e-6)
        assert whole.plans[name].whole_units and not whole.unrounded[name].whole_units


def test_cli_round_writes_the_whole_units_row(shop: Path, tmp_path: Path) -> None:  # noqa: F811
    """``--round``: the by-event CSV has the ``[whole units]`` row and each column adds up to the side-by-side
    table's whole-unit total; the report names the row."""
    out = tmp_path / "scenarios.csv"
    res = _cli(shop, out, *_scenario_args(shop), "--round", "--total", "60000.4")
    assert res.exit_code == 0, res.output
    side = pd.read_csv(out).set_index("date")
    events = pd.read_csv(tmp_path / "scenarios-events.csv").set_index("event")
    assert [e for e in events.index if e != "[note]"][-1] == WHOLE_ROW  # the notes' rows come last
    for name in SCENARIOS:
        assert side.loc["total", f"plan:{name}"] == 60_000
        assert events[UNITS_PREFIX + name].sum() == pytest.approx(60_000, abs=1e-5)
        assert events.loc[WHOLE_ROW, UNITS_PREFIX + name] == pytest.approx(-0.4, abs=1e-5)
    from typer.testing import CliRunner

    from evcal.cli import app

    html = tmp_path / "report.html"
    res = CliRunner().invoke(app, ["report", str(shop / "model"), "--plan", str(out), "--out", str(html)])
    assert res.exit_code == 0, res.output
    assert "<td>whole units</td>" in html.read_text(encoding="utf-8")
