"""Year-to-date re-planning (issue 18 item 4): actuals so far plus the rest of the year meet the target.

``make_plan(..., actuals=...)`` and ``evcal plan ... --actuals FILE`` count the sales of the plan's year
before the plan towards ``--total`` and spread only the rest over the plan, shape kept. Without
``--actuals`` a history that runs into the plan's year up to the plan is its own actuals. Histories here
are invented (tests/test_plan.py's made-up monthly shop), so the model's own plan is the reference the
re-plan's shape must keep.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from test_plan import EASTER_CAL, monthly_history
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.errors import PlanError
from evcal.plan import make_plan

TARGET = 14_000.0


@pytest.fixture(scope="module")
def fit_2023() -> evcal.FitResult:
    """Invented monthly shop, history 2016-01 to 2023-12 (ends before the actuals)."""
    return evcal.fit(monthly_history(), EASTER_CAL, errors="ols")


@pytest.fixture(scope="module")
def fit_mid_2024() -> evcal.FitResult:
    """The same invented shop with its history running into 2024, to June."""
    return evcal.fit(monthly_history(end="2024-06"), EASTER_CAL, errors="ols")


def actuals_2024(end: str = "2024-06", start: str = "2024-01") -> pd.DataFrame:
    """Invented sales of 2024 so far (month-end dates), whole units."""
    frame = monthly_history(start, end, seed=7)
    return frame.assign(value=frame["value"].round())


def test_rest_of_year_is_spread_so_actuals_plus_plan_meet_the_target(fit_2023: evcal.FitResult) -> None:
    # fails on main: make_plan() got an unexpected keyword argument 'actuals'
    act = actuals_2024()
    plan = make_plan(fit_2023, "2024-07-01", "2024-12-31", total=TARGET, actuals=act, n_sims=0)
    model = make_plan(fit_2023, "2024-07-01", "2024-12-31", n_sims=0)
    so_far = act["value"].sum()
    assert plan.actuals is not None and len(plan.actuals) == 6
    assert plan.actuals["actual"].tolist() == act["value"].tolist()
    assert so_far + plan.total == pytest.approx(TARGET, rel=1e-12)
    # shape kept: every period the model's own plan times one factor, (target - actuals) / model total
    factor = (TARGET - so_far) / model.total
    np.testing.assert_allclose(plan.table["plan"], model.table["plan"] * factor, rtol=1e-12)
    assert plan.target == {2024: pytest.approx(TARGET)} and plan.target_total == TARGET
    text = plan.summary()
    assert "Year to date: the target 14,000" in text and "2024-01: " in text and "2024-12: " in text


def test_history_running_into_the_year_counts_only_when_asked(fit_mid_2024: evcal.FitResult,
                                                            tmp_path: Path) -> None:
    # a plan starting right after a history that runs into its year: --total stays the target of the
    # plan's periods (as documented) and a note names the history's periods of the year and actuals=
    plain = make_plan(fit_mid_2024, "2024-07-01", "2024-12-31", total=TARGET, n_sims=0)
    assert plain.actuals is None and plain.total == pytest.approx(TARGET, rel=1e-12)
    assert any("holds 6 period(s) of 2024 before the plan" in n and "give actuals= (the history file" in n
               for n in plain.notes)
    # the history file itself as --actuals: the year so far counts towards the target
    hist = monthly_history(end="2024-06")
    path = tmp_path / "history.csv"
    hist.to_csv(path, index=False)
    plan = make_plan(fit_mid_2024, "2024-07-01", "2024-12-31", total=TARGET, actuals=path, n_sims=0)
    so_far = hist["value"].iloc[-6:].sum()
    assert plan.actuals is not None
    np.testing.assert_allclose(plan.actuals["actual"], hist["value"].iloc[-6:], rtol=1e-12)
    assert so_far + plan.total == pytest.approx(TARGET, rel=1e-12)
    # without a target the plan is the model's own
    alone = make_plan(fit_mid_2024, "2024-07-01", "2024-12-31", n_sims=0)
    assert alone.actuals is None and alone.total == pytest.approx(sum(alone.model_totals.values()), rel=1e-12)


def test_whole_units_meet_the_target_less_the_actuals(fit_2023: evcal.FitResult) -> None:
    act = actuals_2024()
    plan = make_plan(fit_2023, "2024-07-01", "2024-12-31", total=TARGET, actuals=act, n_sims=0,
                     whole_units=True)
    assert pd.api.types.is_integer_dtype(plan.table["plan"])
    assert int(plan.table["plan"].sum()) + int(act["value"].sum()) == int(TARGET)


@settings(max_examples=15, deadline=None)
@given(months_done=st.integers(1, 11), target=st.floats(8_000, 40_000))
def test_actuals_plus_plan_always_meet_the_target(fit_2023: evcal.FitResult, months_done: int,
                                                  target: float) -> None:
    act = actuals_2024(end=f"2024-{months_done:02d}")
    assume(target > act["value"].sum() * 1.001)  # a target not above the actuals is refused (tested below)
    plan = make_plan(fit_2023, f"2024-{months_done + 1:02d}-01", "2024-12-31", total=target, actuals=act,
                     n_sims=0)
    assert len(plan.actuals) == months_done and len(plan.table) == 12 - months_done
    assert plan.actuals["actual"].sum() + plan.total == pytest.approx(target, rel=1e-10)
    assert (plan.table["plan"] > 0).all()


# ------------------------------------------------------------------ bad input: one line each


@pytest.mark.parametrize("actuals, start, total, words", [
    (actuals_2024(end="2024-07"), "2024-07-01", TARGET, "falls inside the plan"),
    (monthly_history("2023-01", "2023-06", seed=7), "2024-07-01", TARGET, "no period of 2024"),
    (actuals_2024(), "2024-07-01", 3_000.0, "is not above the"),
    (actuals_2024(start="2024-03"), "2024-07-01", TARGET, "no actual for 2 period(s) of 2024"),
    (actuals_2024(end="2024-05"), "2024-07-01", TARGET, "no actual for 1 period(s) of 2024 before the plan"),
    (actuals_2024(), "2025-01-01", TARGET, "starts with the first period of 2025"),
])
def test_bad_actuals_are_one_line(fit_2023: evcal.FitResult, actuals: pd.DataFrame, start: str,
                                  total: float, words: str) -> None:
    with pytest.raises(PlanError) as err:
        make_plan(fit_2023, start, "2025-12-31" if start.startswith("2025") else "2024-12-31", total=total,
                  actuals=actuals, n_sims=0)
    assert len(err.value.problems) == 1 and words in err.value.problems[0], err.value.problems


def test_a_history_file_as_actuals_uses_only_the_plans_year(fit_2023: evcal.FitResult) -> None:
    both = pd.concat([monthly_history("2023-01", "2023-12", seed=9), actuals_2024()], ignore_index=True)
    plan = make_plan(fit_2023, "2024-07-01", "2024-12-31", total=TARGET, actuals=both, n_sims=0)
    assert len(plan.actuals) == 6 and any("12 period(s) before 2024 left out" in n for n in plan.notes)


# ------------------------------------------------------------------ the command line


@pytest.fixture(scope="module")
def model_dir(fit_2023: evcal.FitResult, tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("ytd") / "model"
    fit_2023.save(out)
    return out


def test_cli_writes_the_year_side_by_side(model_dir: Path, tmp_path: Path) -> None:
    act = actuals_2024().rename(columns={"date": "month", "value": "units"})
    act.to_csv(tmp_path / "actuals.csv", index=False)
    out = tmp_path / "plan.csv"
    res = CliRunner().invoke(app, ["plan", str(model_dir), "--from", "2024-07-01", "--to", "2024-12-31",
                                   "--total", "14000", "--actuals", str(tmp_path / "actuals.csv"),
                                   "--date-col", "month", "--value-col", "units", "--sims", "0",
                                   "-o", str(out)])
    assert res.exit_code == 0, res.output
    written = pd.read_csv(out)
    assert list(written.columns[:4]) == ["date", "actual", "base", "plan"]
    assert written["actual"].notna().sum() == 6 and written["plan"].notna().sum() == 6
    assert written["actual"].sum() + written["plan"].sum() == pytest.approx(TARGET, rel=1e-6)
    assert "Year to date: the target 14,000" in res.output


def test_cli_refuses_a_target_below_the_actuals_in_one_line(model_dir: Path, tmp_path: Path) -> None:
    actuals_2024().to_csv(tmp_path / "actuals.csv", index=False)
    out = tmp_path / "plan.csv"
    res = CliRunner().invoke(app, ["plan", str(model_dir), "--from", "2024-07-01", "--to", "2024-12-31",
                                   "--total", "2000", "--actuals", str(tmp_path / "actuals.csv"),
                                   "--sims", "0", "-o", str(out)])
    assert res.exit_code == 2
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "a negative or zero rest cannot be planned" in lines[0]
    assert "Traceback" not in res.output and not out.exists()


def test_report_shows_the_year_side_by_side(model_dir: Path, tmp_path: Path) -> None:
    # fails on main: the report has no year-to-date part (and reads the actual rows as plan rows)
    actuals_2024().to_csv(tmp_path / "actuals.csv", index=False)
    plan_csv, html = tmp_path / "plan.csv", tmp_path / "report.html"
    run = CliRunner()
    res = run.invoke(app, ["plan", str(model_dir), "--from", "2024-07-01", "--to", "2024-12-31", "--total",
                           "14000", "--actuals", str(tmp_path / "actuals.csv"), "--sims", "0", "-o",
                           str(plan_csv)])
    assert res.exit_code == 0, res.output
    res = run.invoke(app, ["report", str(model_dir), "--plan", str(plan_csv), "--out", str(html)])
    assert res.exit_code == 0, res.output
    text = html.read_text()
    assert "The year so far and the rest" in text
    so_far = f"{actuals_2024()['value'].sum():,.0f}"
    assert f"2024 so far as sold (6 periods, {so_far} units)" in text
    assert "14,000 for the year" in text
    # the plan's own cards count the plan's periods only: six, not twelve
    assert "over 6 periods" in text


def test_per_year_targets_past_the_actuals_year_keep_the_year_to_date_lines_to_that_year(
        fit_2023: evcal.FitResult, model_dir: Path, tmp_path: Path) -> None:
    """--totals for two years with actuals of the first: the summary's 'target = actuals + rest' and the
    report's year part speak of the actuals' year only (the next year has its own target).
    Before: "the target 14,000 = ... + 29,xxx planned for the rest" (both years' plan against one target)."""
    totals = tmp_path / "totals.csv"
    totals.write_text("year,total\n2024,14000\n2025,15000\n")
    act = actuals_2024()
    plan = make_plan(fit_2023, "2024-07-01", "2025-12-31", totals=totals, actuals=act, n_sims=0)
    years = pd.DatetimeIndex(plan.table["date"]).year
    rest_2024 = float(plan.table["plan"][years == 2024].sum())
    assert act["value"].sum() + rest_2024 == pytest.approx(14_000, rel=1e-10)
    assert float(plan.table["plan"][years == 2025].sum()) == pytest.approx(15_000, rel=1e-10)
    line = next(ln for ln in plan.summary().splitlines() if ln.startswith("Year to date"))
    assert f"+ {rest_2024:,.0f} planned for the rest" in line
    text = plan.summary().splitlines()
    at = next(i for i, ln in enumerate(text) if ln.startswith("2024 side by side"))
    months = [ln.split(":")[0].strip() for ln in text[at + 1:] if re.match(r"^  \d{4}-\d{2}: ", ln)]
    assert months == [f"2024-{m:02d}" for m in range(1, 13)]
    # the report's year part: 2024 only
    act.to_csv(tmp_path / "actuals.csv", index=False)
    plan_csv, html = tmp_path / "plan.csv", tmp_path / "report.html"
    res = CliRunner().invoke(app, ["plan", str(model_dir), "--from", "2024-07-01", "--to", "2025-12-31",
                                   "--totals", str(totals), "--actuals", str(tmp_path / "actuals.csv"),
                                   "--sims", "0", "-o", str(plan_csv)])
    assert res.exit_code == 0, res.output
    res = CliRunner().invoke(app, ["report", str(model_dir), "--plan", str(plan_csv), "-o", str(html)])
    assert res.exit_code == 0, res.output
    assert "14,000 for the year" in html.read_text(encoding="utf-8")


def test_a_workbook_rebuilt_from_a_year_to_date_plan_file_keeps_its_actuals(model_dir: Path,
                                                                            tmp_path: Path) -> None:
    """evcal.report.workbook_from_files on a year-to-date plan.csv: the actual rows come first and the
    target cell counts them (14,000). Before: no actual rows, and a target of the rest alone."""
    from openpyxl import load_workbook

    from evcal.report import workbook_from_files

    act = actuals_2024()
    act.to_csv(tmp_path / "actuals.csv", index=False)
    plan_csv = tmp_path / "plan.csv"
    res = CliRunner().invoke(app, ["plan", str(model_dir), "--from", "2024-07-01", "--to", "2024-12-31",
                                   "--total", "14000", "--actuals", str(tmp_path / "actuals.csv"),
                                   "--sims", "0", "-o", str(plan_csv)])
    assert res.exit_code == 0, res.output
    ws = load_workbook(workbook_from_files(tmp_path / "plan.xlsx", model_dir, plan_csv))["Plan"]
    assert ws["A1"].value == "Target" and ws["B1"].value == pytest.approx(14_000, rel=1e-9)
    header = next(r for r in ws.iter_rows(values_only=True) if r[0] == "date")
    assert header[1] == "actual"
    rows = list(ws.iter_rows(values_only=True))
    at = rows.index(header) + 2  # the codes row, then the labels' header
    np.testing.assert_allclose([r[1] for r in rows[at:at + 6]], act["value"], rtol=1e-12)
