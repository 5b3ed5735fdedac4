"""``evcal explain`` (issue 19 part 4): one period's number split into parts that add up exactly.

Models: the bundled demo (invented Fernhollow data: log, ARIMA(1,0,1) errors, a level shift, closures,
an assumed lift) and an invented weekly series with a known truth (trend, annual sine, a level shift, one
event), fitted additive, log with OLS errors and log with differenced ARIMA errors. The references are
the plan file itself (the number explained must be the number ``evcal plan`` writes) and the model
folder's ``fitted.csv``; the known trend and season are the invented truth.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.demo import CALENDAR, DEMO_DATA, HISTORY
from evcal.plan import make_plan
from evcal.plan.explain import explain_history, explain_plan, plan_part_frame, split_base

runner = CliRunner()

# ---------------------------------------------------------------- invented truth

START, WEEKS = "2019-01-06", 312  # six years of weeks ending Sunday
LEVEL, SLOPE, SEASON_AMP, SHIFT, FAIR = np.log(1000.0), 0.001, 0.25, np.log(1.3), np.log(1.5)
SHIFT_DAY = "2021-06-07"
TRUTH_CAL = f"""name: invented weekly shop
events:
  - {{name: fair, when: {{fixed: "09-15"}}, length: 7}}
interventions:
  - {{name: refit, type: level_shift, start: {SHIFT_DAY}}}
"""


def truth_history(transform: str, seed: int = 4) -> pd.DataFrame:
    """Invented weekly sales: level + trend + annual sine + a level shift + a 7-day fair, small noise."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range(START, periods=WEEKS, freq="W-SUN")
    t = np.arange(WEEKS)
    season = SEASON_AMP * np.sin(2 * np.pi * dates.day_of_year / 365.25)
    shift = np.where(dates >= pd.Timestamp(SHIFT_DAY) + pd.Timedelta(days=6), SHIFT, 0.0)
    # the fair's days (15-21 September) inside each week, as a share of the week
    days = pd.date_range(dates[0] - pd.Timedelta(days=6), dates[-1], freq="D")
    on = pd.Series(((days.month == 9) & (days.day >= 15) & (days.day <= 21)).astype(float), index=days)
    fair = FAIR * on.resample("W-SUN").mean().reindex(dates).to_numpy()
    eta = LEVEL + SLOPE * t + season + shift + fair
    if transform == "log":
        value = np.exp(eta + rng.normal(0, 0.02, WEEKS))
    else:  # the same shape in units, added
        value = np.exp(LEVEL) * (1 + SLOPE * t) + 250 * np.sin(2 * np.pi * dates.day_of_year / 365.25) \
            + 300 * (shift > 0) + 500 * fair / FAIR + rng.normal(0, 10, WEEKS)
    return pd.DataFrame({"date": dates.strftime("%Y-%m-%d"), "value": value})


@pytest.fixture(scope="module")
def demo_model(tmp_path_factory: pytest.TempPathFactory) -> str:
    folder = tmp_path_factory.mktemp("demo") / "model"
    evcal.fit(str(DEMO_DATA / HISTORY), str(DEMO_DATA / CALENDAR)).save(folder)
    return str(folder)


@pytest.fixture(scope="module")
def fits() -> dict[str, evcal.FitResult]:
    return {"additive": evcal.fit(truth_history("none"), TRUTH_CAL, transform="none", errors="ols"),
            "log": evcal.fit(truth_history("log"), TRUTH_CAL, transform="log", errors="ols"),
            "arima-d1": evcal.fit(truth_history("log"), TRUTH_CAL, transform="log", errors="arima",
                                  arima_order=(0, 1, 1))}


def _cents(x: float) -> int:
    return int(np.rint(np.round(x, 6) * 100))


def _file_plan(plan, tmp_path, name: str) -> pd.Series:
    """The plan column as the plan file holds it."""
    path = tmp_path / name
    plan.save(path)
    return pd.read_csv(path).set_index("date")["plan"]


# ---------------------------------------------------------------- the rule


def test_split_base_additive_is_the_terms_themselves() -> None:
    parts = split_base("none", np.array([10.0]), {"season": np.array([-3.0])}, np.ones(1))
    assert parts == {"trend": np.array([10.0]), "season": np.array([-3.0])}


@given(st.lists(st.floats(-1.0, 1.0), min_size=1, max_size=5), st.floats(0.9, 1.2))
def test_split_base_log_adds_up_and_is_shapley(logs: list[float], smear: float) -> None:
    """Parts add up to smear·exp(Σ); two players: each gets half the interaction (Shapley 1953)."""
    others = {f"p{i}": np.array([v]) for i, v in enumerate(logs)}
    parts = split_base("log", np.array([np.log(200.0)]), others, np.array([smear]))
    total = 200.0 * smear * np.exp(sum(logs))
    assert sum(float(v[0]) for v in parts.values()) == pytest.approx(total, rel=1e-12)
    if len(logs) == 1 and smear == 1.0:
        assert float(parts["p0"][0]) == pytest.approx(200.0 * np.expm1(logs[0]))


# ---------------------------------------------------------------- plans add up to the plan file


@pytest.mark.parametrize("kind", ["additive", "log", "arima-d1"])
@pytest.mark.parametrize("options", [{}, {"total": 123_456.7}, {"total": 98_765, "whole_units": True}])
def test_every_period_adds_up_to_the_plan_file(fits, kind: str, options: dict, tmp_path) -> None:
    result = fits[kind]
    plan = make_plan(result, "2025-01-01", "2025-12-31", n_sims=0, **options)
    frame, kinds = plan_part_frame(plan)
    file_plan = _file_plan(plan, tmp_path, "plan.csv").to_numpy()
    np.testing.assert_allclose(frame.sum(axis=1).to_numpy(), file_plan, atol=1e-5)
    assert ("spread to the target" in frame) == ("total" in options)
    assert ("whole units" in frame) == bool(options.get("whole_units"))
    if kind == "arima-d1":  # differenced errors: no constant, the level is the error's
        assert "error forecast" not in frame and "trend" in frame
    for i in (0, 20, len(file_plan) - 1):
        e = explain_plan(plan, plan.table["date"].iat[i])
        assert int(np.rint(e.parts["amount"].sum() * 100)) == _cents(file_plan[i])


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(k=st.integers(0, 7 * 52 - 1), rounded=st.booleans())
def test_demo_plan_period_adds_up_to_the_cent(demo_model: str, k: int, rounded: bool, tmp_path) -> None:
    result = evcal.load_model(demo_model)
    plan = make_plan(result, "2027-01-01", "2027-12-31", total=210_000, n_sims=0, whole_units=rounded)
    # any day of any planned week (the demo is weekly, dated by the week's last day): a day drawn from
    # the calendar year could fall after the plan's last week and be refused
    day = pd.Timestamp(plan.table["date"].iat[k // 7]) - pd.Timedelta(days=k % 7)
    e = explain_plan(plan, str(day.date()))
    number = _file_plan(plan, tmp_path, "p.csv").loc[e.date.strftime("%Y-%m-%d")]
    assert int(np.rint(e.parts["amount"].sum() * 100)) == _cents(number)
    assert e.number == pytest.approx(number, abs=1e-6)
    assert set(e.parts["kind"]) >= {"base", "target"}


def test_demo_cli_number_is_the_plan_commands(demo_model: str, tmp_path) -> None:
    opts = ["--from", "2027-01-01", "--to", "2027-12-31", "--total", "210000", "--round"]
    assert runner.invoke(app, ["plan", demo_model, "--out", str(tmp_path / "plan.csv"), "--sims", "0",
                               *opts]).exit_code == 0
    r = runner.invoke(app, ["explain", demo_model, "--date", "2027-05-05", "--out", str(tmp_path / "e.csv"),
                            *opts])
    assert r.exit_code == 0, r.output
    parts = pd.read_csv(tmp_path / "e.csv")
    plan = pd.read_csv(tmp_path / "plan.csv").set_index("date")["plan"]
    assert set(parts["date"]) == {"2027-05-09"}  # the week holding Wednesday 5 May
    assert round(parts["amount"].sum(), 2) == plan.loc["2027-05-09"]
    assert {"new-store-opening", "spring-sale", "spread to the target", "whole units"} <= set(parts["part"])
    assert "Spring sale" in r.output and "= plan" in r.output
    again = runner.invoke(app, ["explain", demo_model, "--date", "2027-05-05",
                                "--out", str(tmp_path / "e.csv"), *opts])
    assert again.exit_code == 0  # its own output is recognised and replaced


# ---------------------------------------------------------------- past periods


@settings(max_examples=10, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(day=st.dates(pd.Timestamp("2020-01-06").date(), pd.Timestamp("2026-11-29").date()))
def test_demo_past_period_adds_up_to_the_actual(demo_model: str, day) -> None:
    result = evcal.load_model(demo_model)
    e = explain_history(result, str(day))
    row = result.fitted.assign(date=pd.to_datetime(result.fitted["date"])).set_index("date").loc[e.date]
    assert int(np.rint(e.parts["amount"].sum() * 100)) == _cents(row["actual"])
    fitted = e.number - float(e.parts.loc[e.parts["part"] == "residual", "amount"].sum())
    assert fitted == pytest.approx(row["fitted"], abs=0.02)  # the model folder's own fitted (2 decimals)
    base = float(e.parts.loc[e.parts["kind"] == "base", "amount"].sum())
    # fitted.csv's base leaves the level shift out; the explanation counts it in the base, as a plan does
    assert base == pytest.approx(row["base"] * _shift_factor(result, e.date), rel=1e-6, abs=0.02)


def _shift_factor(result, day) -> float:
    """exp(coefficient · column) of the demo's level shift in the period holding ``day`` (log model)."""
    from evcal.design.matrix import build_design

    period = pd.PeriodIndex([pd.Timestamp(day).to_period(result.freq)])
    x = float(build_design(result.spec, result.calendar, period).X["new-store-opening"].iat[0])
    return float(np.exp(float(result.params["new-store-opening"]) * x))


@pytest.mark.parametrize("day", ["2024-03-31", "2022-03-13", "2025-11-30"])
def test_demo_level_shift_reads_one_way_in_past_and_plan(demo_model: str, day: str) -> None:
    """The demo's level shift (new-store-opening) is a base part, shared with the season by its Shapley
    value, in a past week as in a plan week: one meaning for an analyst comparing the two."""
    result = evcal.load_model(demo_model)
    past = explain_history(result, day)
    planned = explain_plan(make_plan(result, "2027-05-03", "2027-05-09", n_sims=0), "2027-05-09")
    for e in (past, planned):
        row = e.parts.set_index("part").loc["new-store-opening"]
        assert row["kind"] == "base" and "on the trend" in row["what"], e.text()
        assert "intervention" not in set(e.parts["kind"])  # the demo's only intervention is the shift
    # the base parts are the base with the shift: fitted.csv's base times exp(coefficient · column)
    fitted = result.fitted.assign(date=pd.to_datetime(result.fitted["date"])).set_index("date").loc[past.date]
    base = float(past.parts.loc[past.parts["kind"] == "base", "amount"].sum())
    assert base == pytest.approx(fitted["base"] * _shift_factor(result, day), rel=1e-6, abs=0.02)
    assert _shift_factor(result, day) > 1.01  # the week is after the opening: the check can fail
    assert int(np.rint(past.parts["amount"].sum() * 100)) == _cents(fitted["actual"])


@pytest.mark.parametrize("kind", ["additive", "log", "arima-d1"])
def test_known_trend_and_season_recovered(fits, kind: str) -> None:
    """A week before the shift and away from the fair: trend ≈ the invented level·trend, season ≈ its sine."""
    result = fits[kind]
    day = pd.Timestamp("2020-03-29")  # week 64, before the shift, no fair
    e = explain_history(result, day)
    parts = dict(zip(e.parts["part"], e.parts["amount"], strict=True))
    t = (day - pd.Timestamp(START)).days // 7
    sine = np.sin(2 * np.pi * day.day_of_year / 365.25)
    if kind == "additive":
        trend, season = np.exp(LEVEL) * (1 + SLOPE * t), 250 * sine
    else:
        trend = np.exp(LEVEL + SLOPE * t)
        season = trend * np.expm1(SEASON_AMP * sine)
    if kind != "arima-d1":  # differenced errors carry the level in the error: the trend alone is no level
        assert parts["trend"] == pytest.approx(trend, rel=0.08)
        assert parts["regular season"] == pytest.approx(season, abs=0.08 * trend)
    assert sum(parts.values()) == pytest.approx(e.number, abs=0.005)


def test_known_level_shift_and_event_in_a_plan(fits) -> None:
    """The invented shift (+30 %) and fair (+50 %) come back as parts of a planned fair week."""
    result = fits["log"]
    plan = make_plan(result, "2025-09-21", "2025-09-28", n_sims=0)
    e = explain_plan(plan, "2025-09-21")
    parts = dict(zip(e.parts["part"], e.parts["amount"], strict=True))
    base = sum(v for k, v in parts.items() if k in ("trend", "regular season", "refit", "mean correction"))
    assert parts["fair"] / base == pytest.approx(0.5, abs=0.1)
    assert "refit" in parts and parts["refit"] > 0


# ---------------------------------------------------------------- refusals


@pytest.mark.parametrize(("args", "words"), [
    (["--date", "2012-03-01"], "outside the history"),
    (["--date", "not-a-day"], "not a date"),
    (["--date", "2029-05-09", "--from", "2027-01-01", "--to", "2027-12-31"], "outside the plan"),
    (["--date", "2024-03-31", "--total", "5000"], "leave out --total"),
    (["--date", "2027-05-09", "--round"], "--from and --to"),
    (["--date", "2027-05-09", "--from", "2027-01-01"], "--to"),
    (["--date", "2027-05-09", "--out", "e.txt"], "unknown file type"),
])
def test_refusals_are_one_line(demo_model: str, args: list[str], words: str, tmp_path, monkeypatch) -> None:
    monkeypatch.chdir(tmp_path)
    r = runner.invoke(app, ["explain", demo_model, *args])
    assert r.exit_code == 2, r.output
    lines = [line for line in r.output.splitlines() if line.strip()]
    assert len(lines) == 1 and words in lines[0] and "Traceback" not in r.output
    assert list(tmp_path.iterdir()) == []  # nothing written


def test_not_a_model_folder(tmp_path) -> None:
    r = runner.invoke(app, ["explain", str(tmp_path), "--date", "2027-05-09"])
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert str(tmp_path) in r.output
