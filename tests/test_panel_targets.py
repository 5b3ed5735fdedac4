"""Targets for a panel plan (issue 18 item 7): one total allocated over the series, or a target per series.

Invented data: tests/test_panel.py's made-up Fernhollow products (weekly 2021-2023 with known lifts),
three of them (keys ``family, product``). The allocation rule (each series' share of the total is its
share of the panel's model plan; each series scaled by one factor) is the usual top-down "share of
forecast" proration of hierarchical planning (Hyndman & Athanasopoulos, Forecasting: Principles and
Practice, 3rd ed., section 11.2, "top-down approaches", from memory); whole units by largest remainder
(Hamilton's method).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_panel import CAL, _panel_frame
from typer.testing import CliRunner

from evcal.cli import app
from evcal.errors import PlanError
from evcal.panel import fit_panel
from evcal.panel.planning import plan_panel

KEYS = ["family", "product"]


@pytest.fixture(scope="module")
def panel_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("targets") / "m"
    fit_panel(_panel_frame(n_items=3), CAL, KEYS, out=out)
    return out


@pytest.fixture(scope="module")
def model_plan(panel_dir):
    return plan_panel(panel_dir, "2024-01-01", "2025-12-31", n_sims=50, progress=False)


def _bad(res, out, *needles: str) -> None:
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    lines = [ln for ln in res.output.strip().splitlines() if ln.strip()]
    assert len(lines) == 1, res.output
    for n in needles:
        assert n in lines[0], (n, lines[0])
    assert not out.exists()


def test_one_total_is_allocated_by_each_series_model_plan(panel_dir, model_plan) -> None:
    # fails on main: PlanError "--total/--totals: the panel has 3 series and a target belongs to one plan"
    planned = plan_panel(panel_dir, "2024-01-01", "2025-12-31", n_sims=50, progress=False, total=90_000)
    assert len(planned) == len(model_plan)
    assert planned["plan"].sum() == pytest.approx(90_000, rel=1e-9)
    own = model_plan.groupby("product")["plan"].sum()
    got = planned.groupby("product")["plan"].sum()
    assert (got / 90_000).to_numpy() == pytest.approx((own / own.sum()).to_numpy(), rel=1e-9)
    # each series spread within itself by its own profile: one factor for every period and column
    factor = 90_000 / own.sum()
    for c in ["base", "plan", "low", "high"] + [c for c in planned.columns if c.startswith("lift:")]:
        assert planned[c].to_numpy() == pytest.approx(model_plan[c].to_numpy() * factor, rel=1e-9), c
    assert any("in proportion to each series' own model plan" in n for n in planned.attrs["notes"])


def test_round_keeps_each_series_on_its_target_and_the_panel_on_the_total(panel_dir, model_plan) -> None:
    # fails on main: PlanError (a target belongs to one plan)
    exact = plan_panel(panel_dir, "2024-01-01", "2025-12-31", n_sims=50, progress=False, total=90_000.6)
    whole = plan_panel(panel_dir, "2024-01-01", "2025-12-31", n_sims=50, progress=False, total=90_000.6,
                       whole_units=True)
    assert whole["plan"].dtype.kind == "i" and int(whole["plan"].sum()) == 90_001
    assert np.abs(whole["plan"].to_numpy() - exact["plan"].to_numpy()).max() <= 1.0
    goals = exact.groupby("product")["plan"].sum()
    sums = whole.groupby("product")["plan"].sum()
    assert (np.abs(sums - goals) < 1).all()  # each series on its whole target, apportioned from 90,001
    parts = ["base"] + [c for c in whole.columns if c.startswith("lift:")]
    assert (whole[parts].sum(axis=1) == whole["plan"]).all()


def test_a_target_per_series_and_year_from_a_file(panel_dir, model_plan, tmp_path) -> None:
    # fails on main: PlanError (a target belongs to one plan)
    keys = model_plan[KEYS].drop_duplicates()
    rows = [dict(k, year=y, total=1000 * (i + 1) + y - 2000)
            for i, k in enumerate(keys.to_dict("records")) for y in (2024, 2025)]
    path = tmp_path / "targets.csv"
    pd.DataFrame(rows).to_csv(path, index=False)
    planned = plan_panel(panel_dir, "2024-01-01", "2025-12-31", n_sims=50, progress=False, totals=path,
                         whole_units=True)
    sums = planned.assign(year=pd.to_datetime(planned["date"]).dt.year).groupby(["product", "year"])["plan"]
    assert sums.sum().to_dict() == {(r["product"], r["year"]): r["total"] for r in rows}
    # a per-series file without years: each series to its own total for the whole horizon
    path2 = tmp_path / "series.csv"
    per_series = [dict(k, total=5000.0 + i) for i, k in enumerate(keys.to_dict("records"))]
    pd.DataFrame(per_series).to_csv(path2, index=False)
    per = plan_panel(panel_dir, "2024-01-01", "2025-12-31", n_sims=50, progress=False, totals=path2)
    assert per.groupby("product")["plan"].sum().to_numpy() == pytest.approx([5000.0, 5001.0, 5002.0])


def test_bad_targets_files_say_the_row(panel_dir, model_plan, tmp_path) -> None:
    keys = model_plan[KEYS].drop_duplicates().to_dict("records")
    out = tmp_path / "plan.csv"

    def run(frame: pd.DataFrame):
        path = tmp_path / "t.csv"
        frame.to_csv(path, index=False)
        return CliRunner().invoke(app, ["plan", str(panel_dir), "--from", "2024-01-01", "--to", "2024-12-31",
                                        "--totals", str(path), "--sims", "0", "--out", str(out)])

    good = pd.DataFrame([dict(k, total=100.0) for k in keys])
    _bad(run(pd.concat([good, pd.DataFrame([{"family": "bulbs", "product": "P99", "total": 5}])])),
         out, "row 5", "product=P99", "not a series of the panel")
    _bad(run(good.iloc[1:]), out, "no total for series", f"product={keys[0]['product']}")
    _bad(run(pd.concat([good, good.iloc[[1]]])), out, "row 5", "given twice", "rows 3 and 5")
    _bad(run(good.drop(columns="family")), out, "missing column family")
    _bad(run(good.assign(total=["100", "-4", "7"])), out, "row 3, column total")
    both = CliRunner().invoke(app, ["plan", str(panel_dir), "--from", "2024-01-01", "--to", "2024-12-31",
                                    "--total", "9", "--totals", str(tmp_path / "t.csv"), "--out", str(out)])
    _bad(both, out, "either --total", "not both")


def test_the_cli_plans_a_panel_to_a_total(panel_dir, tmp_path) -> None:
    # fails on main: exit 2, "--total/--totals: the panel has 3 series and a target belongs to one plan"
    out = tmp_path / "plan.csv"
    res = CliRunner().invoke(app, ["plan", str(panel_dir), "--from", "2024-01-01", "--to", "2024-12-31",
                                   "--total", "48000", "--round", "--sims", "50", "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert "total 48,000" in res.output and "in proportion to each series' own model plan" in res.output
    t = pd.read_csv(out)
    assert int(t["plan"].sum()) == 48_000 and t["plan"].dtype.kind == "i"


@settings(max_examples=60, deadline=None)
@given(st.lists(st.lists(st.floats(0.0, 500.0), min_size=1, max_size=6), min_size=1, max_size=5),
       st.floats(1.0, 1e6))
def test_whole_units_add_up_to_the_total_for_every_panel(series: list[list[float]], total: float) -> None:
    """Property: integers, all series add up to the whole total, each series to its whole share."""
    from evcal.panel.targets import apply_targets  # new with the panel targets (not on main)

    rows = [(f"s{i}", v + 1.0) for i, vals in enumerate(series) for v in vals]  # every plan above 0
    table = pd.DataFrame(rows, columns=["sku", "plan"]).assign(base=lambda d: d["plan"], low=0.0, high=1e9)
    years = np.full(len(table), 2027)
    exact, _ = apply_targets(table, ["sku"], years, total=total)
    whole, goals = apply_targets(table, ["sku"], years, total=total, whole_units=True)
    assert whole["plan"].dtype.kind == "i"
    assert int(whole["plan"].sum()) == int(np.floor(total + 0.5))
    assert np.abs(whole["plan"].to_numpy() - exact["plan"].to_numpy()).max() <= 1.0
    sums = whole.groupby("sku", sort=False)["plan"].sum()
    assert sums.to_dict() == {k[0]: int(v) for k, v in goals.items()}
    shares = exact.groupby("sku", sort=False)["plan"].sum()
    assert (np.abs(sums - shares) < 1).all()


def test_apply_targets_refuses_a_closed_series_with_its_own_target() -> None:
    from evcal.panel.targets import apply_targets

    table = pd.DataFrame({"sku": ["a", "b"], "plan": [0.0, 5.0], "base": [0.0, 5.0]})
    targets = pd.DataFrame({"sku": ["a", "b"], "total": [10.0, 10.0]})
    with pytest.raises(PlanError, match="sku=a adds up to 0"):
        apply_targets(table, ["sku"], np.full(2, 2027), targets=targets)
