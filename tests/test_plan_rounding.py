"""Whole-unit plans (issue 18 item 5): integers that add up exactly to the target.

``make_plan(..., whole_units=True)`` and ``evcal plan --round`` apportion the
plan by largest remainder (Hamilton's method): floor every period, then give
the units still missing to the largest fractional remainders. Histories here
are invented (tests/test_plan.py's made-up shops, tests/test_panel.py's
invented products), so the unrounded plan is the reference the whole one must
stay within one unit of.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from test_plan import DAILY_CAL, EASTER_CAL, daily_history, monthly_history
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.plan import make_plan
from evcal.plan.spread import apportion, round_table


@pytest.fixture(scope="module")
def daily_fit() -> evcal.FitResult:
    return evcal.fit(daily_history(), DAILY_CAL, errors="ols")


@pytest.fixture(scope="module")
def monthly_fit() -> evcal.FitResult:
    return evcal.fit(monthly_history(), EASTER_CAL, errors="ols")


def _parts(t: pd.DataFrame) -> list[str]:
    return ["base"] + [c for c in t.columns if c.startswith(("lift:", "driver:"))]


def _check_whole(whole: pd.DataFrame, exact: pd.DataFrame) -> None:
    """Integers, within one unit of the unrounded plan, parts adding up, the band no narrower."""
    for c in ["plan", *_parts(whole)]:
        assert pd.api.types.is_integer_dtype(whole[c]), c
        assert np.abs(whole[c].to_numpy(dtype=float) - exact[c].to_numpy(dtype=float)).max() <= 1.0, c
    assert (whole[_parts(whole)].sum(axis=1) == whole["plan"]).all()
    assert (whole["low"].astype(float) <= exact["low"]).all()
    assert (whole["high"].astype(float) >= exact["high"]).all()
    assert (whole["low"] <= whole["plan"]).all() and (whole["plan"] <= whole["high"]).all()


# ------------------------------------------------------------------ the method


def test_largest_remainder_gives_the_textbook_seats() -> None:
    # Hare quota, 10 seats: votes 47,000 / 16,000 / 15,800 / 12,000 / 6,100 / 3,100 give 5, 2, 1, 1, 1, 0
    # (the worked example of the English Wikipedia article "Largest remainder method", from memory;
    # the arithmetic: quotas 4.7, 1.6, 1.58, 1.2, 0.61, 0.31 floor to 7 seats, the 3 left go to
    # the remainders .70, .61, .60)
    votes = np.array([47_000, 16_000, 15_800, 12_000, 6_100, 3_100])
    assert apportion(votes / 10_000, 10).tolist() == [5, 2, 1, 1, 1, 0]


@settings(max_examples=200, deadline=None)
@given(st.lists(st.floats(-1e6, 1e7, allow_nan=False), min_size=1, max_size=60),
       st.integers(-3, 3))
def test_apportionment_is_whole_exact_and_within_one_unit(values: list[float], shift: int) -> None:
    v = np.array(values)
    total = int(np.floor(v.sum())) + (1 if shift > 0 else 0)  # a whole total within one unit of the sum
    out = apportion(v, total)
    assert out.dtype.kind == "i"
    assert int(out.sum()) == total
    assert np.all(np.abs(out - v) <= 1.0 + 1e-9)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.floats(0, 5e4), st.floats(-5e3, 5e3), st.floats(0, 2e3), st.floats(0, 2e3)),
                min_size=1, max_size=40),
       st.integers(0, 2), st.floats(1e3, 1e7))
def test_rounded_table_meets_its_target_in_every_group(rows: list, n_groups: int, target: float) -> None:
    base = np.array([r[0] for r in rows])
    lift = np.maximum(np.array([r[1] for r in rows]), -base)  # a closure takes at most the base
    plan = base + lift
    assume(plan.sum() >= 1.0)  # a plan of some units, spread to a target of 1,000 to 10 million
    scale = target / plan.sum()
    t = pd.DataFrame({"base": base * scale, "lift:promo": lift * scale, "plan": plan * scale})
    t["low"] = t["plan"] - np.array([r[2] for r in rows]) * scale
    t["high"] = t["plan"] + np.array([r[3] for r in rows]) * scale
    groups = np.arange(len(t)) % (n_groups + 1)
    goals = {g: int(round(t["plan"][groups == g].sum())) for g in np.unique(groups)}
    whole = round_table(t, groups, goals)
    _check_whole(whole, t)
    for g, goal in goals.items():
        assert int(whole["plan"][groups == g].sum()) == goal


# ------------------------------------------------------------------ plans


def test_whole_unit_plan_adds_up_exactly_to_the_target(daily_fit: evcal.FitResult) -> None:
    # fails on main: make_plan takes no whole_units (TypeError); the plan reads 210,000.000000 in sums
    # of fractions such as 556.270...
    exact = make_plan(daily_fit, "2024-01-01", "2024-12-31", total=210_000, n_sims=200)
    whole = make_plan(daily_fit, "2024-01-01", "2024-12-31", total=210_000, n_sims=200, whole_units=True)
    assert int(whole.table["plan"].sum()) == 210_000 and whole.target == {2024: 210_000.0}
    assert whole.whole_units and not exact.whole_units
    _check_whole(whole.table, exact.table)
    closed = whole.table["date"].dt.strftime("%m-%d") == "12-25"
    assert (whole.table.loc[closed, "plan"] == 0).all()  # a closed day stays at zero
    assert not (exact.table["plan"] % 1 == 0).all()  # the unrounded plan has fractions to round
    assert any("adds up exactly to the target" in n for n in whole.notes)


def test_per_year_targets_and_a_fractional_target(monthly_fit: evcal.FitResult) -> None:
    totals = {2024: 12_345.6, 2025: 13_000}
    exact = make_plan(monthly_fit, "2024", "2025", totals=totals, n_sims=200)
    whole = make_plan(monthly_fit, "2024", "2025", totals=totals, n_sims=200, whole_units=True)
    years = whole.table["date"].dt.year
    assert int(whole.table["plan"][years == 2024].sum()) == 12_346  # 12,345.6 to the nearest unit
    assert int(whole.table["plan"][years == 2025].sum()) == 13_000
    assert whole.target == {2024: 12_346.0, 2025: 13_000.0}
    assert any("12,345.60 (2024) is not a whole number" in n for n in whole.notes)
    _check_whole(whole.table, exact.table)


def test_without_a_target_the_total_is_the_rounded_model_total(monthly_fit: evcal.FitResult) -> None:
    exact = make_plan(monthly_fit, "2024", "2024", n_sims=0)
    whole = make_plan(monthly_fit, "2024", "2024", n_sims=0, whole_units=True)
    assert int(whole.table["plan"].sum()) == round(float(exact.table["plan"].sum()))
    assert whole.target is None and whole.target_total is None
    assert whole.table["low"].isna().all()  # no simulation: the band stays empty, not zero


def test_cli_round_writes_integers_to_csv_and_workbook(daily_fit: evcal.FitResult, tmp_path) -> None:
    # fails on main: "No such option: --round"
    daily_fit.save(tmp_path / "model")
    res = CliRunner().invoke(app, ["plan", str(tmp_path / "model"), "--from", "2024-01-01", "--to",
                                   "2024-12-31", "--total", "210000", "--round", "--sims", "100",
                                   "--out", str(tmp_path / "plan.csv")])
    assert res.exit_code == 0, res.output
    text = (tmp_path / "plan.csv").read_text().splitlines()
    assert text[1].split(",")[1:5] == [str(int(v)) for v in pd.read_csv(tmp_path / "plan.csv").iloc[0, 1:5]]
    assert "." not in ",".join(text[1].split(",")[1:5])  # 556, not 556.000000
    assert int(pd.read_csv(tmp_path / "plan.csv")["plan"].sum()) == 210_000
    res = CliRunner().invoke(app, ["plan", str(tmp_path / "model"), "--from", "2024-01-01", "--to",
                                   "2024-12-31", "--total", "210000", "--round", "--sims", "100",
                                   "--out", str(tmp_path / "plan.xlsx")])
    assert res.exit_code == 0, res.output
    from openpyxl import load_workbook

    wb = load_workbook(tmp_path / "plan.xlsx")
    ws = wb["Plan"]
    rows = list(ws.iter_rows())
    at = next(i for i, r in enumerate(rows) if r[0].value == "date")  # the codes row (hidden)
    col = [c.value for c in rows[at]].index("plan")
    cells = [r[col] for r in rows[at + 2:-1]]
    # the plan re-spreads from the target cell by formulas, each period rounded to a whole unit (the
    # values Calc computes are checked in tests/test_workbook_planner.py)
    assert ws["B1"].value == 210_000 and "target" in wb.defined_names
    assert all(str(c.value).startswith("=ROUND(") for c in cells)
    assert cells[0].number_format == "#,##0"  # shown as a whole number, no decimal place


def test_cli_round_with_compare_writes_integers(daily_fit: evcal.FitResult, tmp_path) -> None:
    """Both scenarios rounded: the side-by-side table is whole too (it wrote 556.000000)."""
    daily_fit.save(tmp_path / "model")
    cal = tmp_path / "b.yaml"
    cal.write_text("name: b\n", encoding="utf-8")
    res = CliRunner().invoke(app, ["plan", str(tmp_path / "model"), "--from", "2024-01-01", "--to",
                                   "2024-12-31", "--total", "210000", "--round", "--sims", "0",
                                   "--compare", str(cal), "--out", str(tmp_path / "cmp.csv")])
    assert res.exit_code == 0, res.output
    lines = (tmp_path / "cmp.csv").read_text().splitlines()
    assert "." not in "".join(lines[1:])
    assert lines[-1].split(",")[1:3] == ["210000", "210000"]
