"""Known future changes in a plan: interventions that start after the history, with an assumed size.

Every history here is invented for the test (a made-up monthly shop with a
fixed season and growth, ``tests/test_plan.py``'s ``monthly_history``), so the
right plan is plain arithmetic on the plan without the change: a level shift of
``effect: {assume: -10%}`` from the first day of a month leaves every period
before it as it was and makes every period from it exactly 0.9 times the plan
without it (the log model multiplies the level by ``(1 + a) ** x``, ``x`` the
intervention's column: :mod:`evcal.plan.future`).
"""

from __future__ import annotations

import calendar as pycal
import sys
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.plan import make_plan

sys.path.insert(0, str(Path(__file__).parent))
import test_panel_plans_batched as batched_tests  # noqa: E402
from test_plan import EASTER_CAL, monthly_history  # noqa: E402

runner = CliRunner()
panel_dir = batched_tests.panel_dir  # the invented panel's fitted folder (a fixture)
SHIFT = "  - {name: price-rise, type: level_shift, start: 2024-04-01, effect: {assume: -10%}}\n"


def _cal(*interventions: str) -> str:
    return EASTER_CAL + ("interventions:\n" + "".join(interventions) if interventions else "")


@pytest.fixture(scope="module")
def fit_log() -> evcal.FitResult:
    return evcal.fit(monthly_history(), EASTER_CAL, errors="ols")


def test_future_level_shift_is_exactly_ninety_percent_after_its_start(fit_log: evcal.FitResult) -> None:
    without = make_plan(fit_log, "2024", "2024", n_sims=200, seed=3).table
    plan = make_plan(fit_log, "2024", "2024", calendar=_cal(SHIFT), n_sims=200, seed=3)
    t = plan.table
    after = pd.DatetimeIndex(t["date"]) >= "2024-04-01"
    assert after.sum() == 9
    for col in ("plan", "low", "high"):
        ratio = t[col].to_numpy() / without[col].to_numpy()
        np.testing.assert_allclose(ratio[~after], 1.0, rtol=1e-12)
        np.testing.assert_allclose(ratio[after], 0.9, rtol=1e-12)
    np.testing.assert_allclose(t["base"], without["base"], rtol=1e-12)  # the change is its own column
    # the change's own part is -10 % of the base; the events act on the changed level (their parts shrink)
    np.testing.assert_allclose(t["lift:price-rise"][after], -0.1 * t["base"][after], rtol=1e-9)
    easter_after = without["lift:easter-run"][after]
    np.testing.assert_allclose(t["lift:easter-run"][after], 0.9 * easter_after, rtol=1e-9)
    assert (t["lift:price-rise"][~after] == 0).all()
    lifts = [c for c in t.columns if c.startswith("lift:")]
    np.testing.assert_allclose(t["base"] + t[lifts].sum(axis=1), t["plan"], rtol=1e-12)
    assert t["assumptions"][after].str.contains("price-rise: assumed level shift -10% from 2024-04-01").all()
    assert (t["assumptions"][~after] == "").all()
    assert plan.future == {"price-rise": pytest.approx(-0.1)}
    assert "price-rise: assumed level shift -10%" in plan.summary()


def test_mid_month_start_takes_the_share_of_days_after_it(fit_log: evcal.FitResult) -> None:
    mid = SHIFT.replace("2024-04-01", "2024-04-16")
    without = make_plan(fit_log, "2024", "2024", n_sims=0).table["plan"].to_numpy()
    t = make_plan(fit_log, "2024", "2024", calendar=_cal(mid), n_sims=0).table["plan"].to_numpy()
    days = pycal.monthrange(2024, 4)[1]  # standard library calendar: April has 30 days
    assert t[3] / without[3] == pytest.approx(0.9 ** (15 / days), rel=1e-12)
    np.testing.assert_allclose(t[4:] / without[4:], 0.9, rtol=1e-12)


def test_ramp_and_temporary_change(fit_log: evcal.FitResult) -> None:
    ramp = "  - {name: new-range, type: ramp, start: 2024-03-01, end: 2024-05-31, effect: {assume: 20%}}\n"
    temp = "  - {name: road-works, type: temporary, start: 2024-09-01, decay: 0.5, effect: {assume: -30%}}\n"
    without = make_plan(fit_log, "2024", "2024", n_sims=0).table["plan"].to_numpy()
    t = make_plan(fit_log, "2024", "2024", calendar=_cal(ramp, temp), n_sims=0).table["plan"].to_numpy()
    r = t / without
    np.testing.assert_allclose(r[:2], 1.0, rtol=1e-12)
    np.testing.assert_allclose(r[5:8], 1.2, rtol=1e-12)  # June-August: the ramp is complete
    assert 1.0 < r[2] < r[3] < r[4] < 1.2  # March-May: building up
    # September-December: -30 % fading by half each month (k-th month keeps 0.5**k of the change)
    np.testing.assert_allclose(r[8:], 1.2 * 0.7 ** (0.5 ** np.arange(4)), rtol=1e-12)


def test_additive_model_takes_the_share_of_the_base(fit_log: evcal.FitResult) -> None:
    res = evcal.fit(monthly_history(), EASTER_CAL, errors="ols", transform="none")
    a = make_plan(res, "2024", "2024", n_sims=0).table
    b = make_plan(res, "2024", "2024", calendar=_cal(SHIFT), n_sims=0).table
    after = (pd.DatetimeIndex(a["date"]) >= "2024-04-01")
    np.testing.assert_allclose(b["plan"][after], a["plan"][after] - 0.1 * a["base"][after], rtol=1e-9)
    np.testing.assert_allclose(b["plan"][~after], a["plan"][~after], rtol=1e-12)


def test_a_target_keeps_the_total_so_the_change_moves_share(fit_log: evcal.FitResult) -> None:
    a = make_plan(fit_log, "2024", "2024", n_sims=0, total=12_000)
    b = make_plan(fit_log, "2024", "2024", calendar=_cal(SHIFT), n_sims=0, total=12_000)
    assert b.table["plan"].sum() == pytest.approx(12_000, rel=1e-12)
    pa, pb = a.table["plan"].to_numpy(), b.table["plan"].to_numpy()
    # the ratio of a period after the change to one before it is 0.9 times what it was
    assert (pb[6] / pb[0]) / (pa[6] / pa[0]) == pytest.approx(0.9, rel=1e-12)
    assert pb[0] > pa[0] and pb[6] < pa[6]
    assert any("moves volume between periods" in n for n in b.notes)


def test_future_change_without_a_size_is_a_note_not_silence(fit_log: evcal.FitResult) -> None:
    bare = "  - {name: new-store, type: level_shift, start: 2024-06-01}\n"
    later = "  - {name: far-off, type: level_shift, start: 2030-06-01}\n"
    without = make_plan(fit_log, "2024", "2024", n_sims=0).table
    plan = make_plan(fit_log, "2024", "2024", calendar=_cal(bare, later), n_sims=0)
    np.testing.assert_allclose(plan.table["plan"], without["plan"], rtol=1e-12)
    assert "lift:new-store" not in plan.table.columns
    note = [n for n in plan.notes if "new-store" in n]
    assert note == ["intervention new-store starts after the history (2024-06-01) and has no assumed size, "
                    "so it is not in the plan; add `effect: {assume: N%}` to it in the calendar to plan it "
                    "(e.g. {assume: -10%})"]
    assert "Note: intervention new-store starts after the history" in plan.summary()
    assert not any("far-off" in n for n in plan.notes)  # after the horizon: nothing to plan here


def test_future_change_in_the_fitted_calendar_is_planned_too() -> None:
    """The plan calendar defaults to the fitted one: a future change written there is not lost."""
    res = evcal.fit(monthly_history(), _cal(SHIFT), errors="ols")
    assert res.status["price-rise"].status != "fitted"
    ref = evcal.fit(monthly_history(), EASTER_CAL, errors="ols")
    a = make_plan(ref, "2024", "2024", n_sims=0).table["plan"].to_numpy()
    b = make_plan(res, "2024", "2024", n_sims=0).table["plan"].to_numpy()
    np.testing.assert_allclose(b[3:] / a[3:], 0.9, rtol=1e-9)


def test_assume_on_an_intervention_inside_the_history_is_fitted_and_noted() -> None:
    # invented shop with a true -15 % level shift from 2020-01 (the calendar assumes -10 %)
    hist = monthly_history()
    hist.loc[pd.DatetimeIndex(hist["date"]) >= "2020-01-01", "value"] *= 0.85
    past = "  - {name: refit, type: level_shift, start: 2020-01-01, effect: {assume: -10%}}\n"
    res = evcal.fit(hist, _cal(past), errors="ols")
    row = res.lifts.set_index("event").loc["refit"]
    assert row["low_pct"] < -15 < row["high_pct"]  # estimated from the history, not held at -10 %
    assert row["lift_pct"] == pytest.approx(-15, abs=2)
    plan = make_plan(res, "2024", "2024", n_sims=0)
    assert "lift:refit" not in plan.table.columns  # in the base, as any fitted level shift
    assert any(n.startswith("intervention refit: effect {assume: -10%} is not used") for n in plan.notes)


def test_intervention_added_inside_the_history_without_a_refit_is_noted(fit_log: evcal.FitResult) -> None:
    past = "  - {name: refit, type: level_shift, start: 2020-01-01, effect: {assume: -10%}}\n"
    without = make_plan(fit_log, "2024", "2024", n_sims=0).table
    plan = make_plan(fit_log, "2024", "2024", calendar=_cal(past), n_sims=0)
    np.testing.assert_allclose(plan.table["plan"], without["plan"], rtol=1e-12)
    assert any("refit starts inside the history (2020-01-01) but the model was fitted without it" in n
               for n in plan.notes)


@pytest.fixture(scope="module")
def model_dir(tmp_path_factory: pytest.TempPathFactory, fit_log: evcal.FitResult) -> Path:
    d = tmp_path_factory.mktemp("future")
    fit_log.save(d / "model")
    return d


def test_cli_plan_workbook_and_report(model_dir: Path) -> None:
    cal = model_dir / "next.yaml"
    cal.write_text(_cal(SHIFT, "  - {name: new-store, type: level_shift, start: 2024-06-01}\n"))
    out = model_dir / "plan.xlsx"
    res = runner.invoke(app, ["plan", str(model_dir / "model"), "--from", "2024", "--to", "2024",
                              "--calendar", str(cal), "--total", "12000", "--sims", "100", "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert "price-rise: assumed level shift -10%" in res.output
    assert "new-store starts after the history" in res.output
    wb = openpyxl.load_workbook(out)
    lifts = list(wb["Lifts"].values)
    header, rows = lifts[0], {r[0]: dict(zip(lifts[0], r, strict=True)) for r in lifts[1:]}
    assert "price-rise" in rows and rows["price-rise"]["lift_pct"] == pytest.approx(-0.10)  # -10 %
    assert rows["price-rise"]["note"].startswith("assumed in the plan calendar, not estimated")
    assert "lift:price-rise" in next(r for r in wb["Plan"].values if r[0] == "date")  # the codes row
    notes = [r[0] for r in wb["Notes"].values]
    assert any(str(n).startswith("Plan note: intervention new-store") for n in notes)
    assert header[0] == "event"
    csv = model_dir / "plan.csv"
    res = runner.invoke(app, ["plan", str(model_dir / "model"), "--from", "2024", "--to", "2024",
                              "--calendar", str(cal), "--sims", "0", "--out", str(csv)])
    assert res.exit_code == 0, res.output
    html = model_dir / "report.html"
    res = runner.invoke(app, ["report", str(model_dir / "model"), "--plan", str(csv), "--out", str(html)])
    assert res.exit_code == 0, res.output
    text = html.read_text()
    assert "price-rise: assumed level shift -10% from 2024-04-01" in text
    assert "assumed lift" in text


@pytest.mark.parametrize("effect, expect", [
    ("{assume: lots}", "interventions[price-rise].effect: assume: 'lots' is not a percentage"),
    ("zero", "interventions[price-rise].effect: effect zero is for events; an intervention takes "
             "effect: {assume: N%}"),
    ("{like: easter-run}", "interventions[price-rise].effect: effect like easter-run is for events"),
    ("{assume: -100%}", "interventions[price-rise].effect: assume: -100% would take sales to zero"),
])
def test_bad_effect_on_an_intervention_is_one_line(model_dir: Path, effect: str, expect: str) -> None:
    cal = model_dir / "bad.yaml"
    cal.write_text(_cal(SHIFT.replace("{assume: -10%}", effect)))
    out = model_dir / "bad-plan.csv"
    res = runner.invoke(app, ["plan", str(model_dir / "model"), "--from", "2024", "--to", "2024",
                              "--calendar", str(cal), "--out", str(out)])
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "Traceback" not in res.output
    assert lines[0].startswith(f"error: {cal}:5: ")  # the file, the intervention's line
    assert expect in lines[0]
    assert not out.exists()


def test_panel_blocks_plan_a_future_change_as_the_single_series_plan(panel_dir: Path) -> None:
    """Invented panel (tests/test_panel.py's products, weekly 2021-2023): the batched plan of a future
    change gives the single-series plan's numbers, and 0.9 times the plan without it."""
    from evcal.panel.planning import plan_panel

    plan_cal, compare = batched_tests.PLAN_CAL, batched_tests._compare
    future = plan_cal + SHIFT
    kw = dict(n_sims=100, progress=False, series=["P01", "P02", "P04"])
    a = plan_panel(panel_dir, "2024-01-01", "2024-12-31", calendar=future, **kw)
    b = plan_panel(panel_dir, "2024-01-01", "2024-12-31", calendar=future, batched=False, **kw)
    lifts = [c for c in a.columns if c.startswith("lift:")]
    assert "lift:price-rise" in lifts
    compare(a, b, ["base", "plan", *lifts], rtol=1e-9)
    compare(a, b, ["low", "high"], rtol=1e-7)
    c = plan_panel(panel_dir, "2024-01-01", "2024-12-31", calendar=plan_cal, **kw)
    after = np.asarray(pd.DatetimeIndex(a["date"]) >= "2024-04-08")  # weeks wholly after the change
    np.testing.assert_allclose(a["plan"].to_numpy()[after] / c["plan"].to_numpy()[after], 0.9, rtol=1e-9)
