"""`evcal explain MODEL --plan plan.csv --date D`: the number of a plan file, explained.

The issue asks for ``evcal explain PLAN_OR_MODEL``. A plan file does not record the options it was
made with, so the plan is made again from the model with the file's own total (or each year's) and
whole units, as the report's "What makes the plan" section does, and explained only when that gives
the file's numbers. On the invented demo (Fernhollow, evcal.demo).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from test_explain import demo_model  # noqa: F401  (the demo fitted once)
from typer.testing import CliRunner

from evcal.cli import app

runner = CliRunner()


def _plan(model: str, out: Path, *extra: str) -> None:
    res = runner.invoke(app, ["plan", model, "--from", "2027-01-01", "--to", "2027-12-31", "--sims", "0",
                              "--out", str(out), *extra])
    assert res.exit_code == 0, res.output


def test_a_plan_files_number_is_explained_to_the_cent(demo_model: str, tmp_path: Path) -> None:  # noqa: F811
    plan = tmp_path / "plan.csv"
    _plan(demo_model, plan, "--total", "210000", "--round")
    out = tmp_path / "e.csv"
    res = runner.invoke(app, ["explain", demo_model, "--plan", str(plan), "--date", "2027-05-05", "--out",
                              str(out)])
    assert res.exit_code == 0, res.output
    assert "made again from the model: the file's own total (210,000)" in res.output
    parts = pd.read_csv(out)
    row = pd.read_csv(plan).set_index("date").loc[parts["date"].iat[0], "plan"]
    assert int(np.rint(parts["amount"].sum() * 100)) == int(np.rint(row * 100))
    assert {"spread to the target", "whole units"} <= set(parts["part"])


def test_an_edited_plan_file_is_refused_in_one_line(demo_model: str, tmp_path: Path) -> None:  # noqa: F811
    plan = tmp_path / "plan.csv"
    _plan(demo_model, plan, "--total", "210000")
    edited = pd.read_csv(plan)
    edited.loc[10, "plan"] += 500.0  # a planner's hand edit: no plan of this model gives it
    edited.to_csv(tmp_path / "edited.csv", index=False)
    out = tmp_path / "e.csv"
    res = runner.invoke(app, ["explain", demo_model, "--plan", str(tmp_path / "edited.csv"), "--date",
                              "2027-05-05", "--out", str(out)])
    assert res.exit_code == 2
    lines = [ln for ln in res.output.strip().splitlines() if ln.strip()]
    assert len(lines) == 1 and "does not give the file's numbers" in lines[0], res.output
    assert not out.exists()


def test_plan_options_with_a_plan_file_are_refused(demo_model: str, tmp_path: Path) -> None:  # noqa: F811
    plan = tmp_path / "plan.csv"
    _plan(demo_model, plan)
    res = runner.invoke(app, ["explain", demo_model, "--plan", str(plan), "--date", "2027-05-05", "--total",
                              "5000"])
    assert res.exit_code == 2
    assert "--total with --plan" in res.output and "Traceback" not in res.output
