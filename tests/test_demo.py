"""`evcal demo` end to end on the bundled invented data (Fernhollow Garden Centres)."""

from __future__ import annotations

import json

import openpyxl
import pandas as pd
from typer.testing import CliRunner

from evcal.cli import app
from evcal.demo import DEMO_DATA, TARGET

DEMO = DEMO_DATA  # the package data evcal demo reads


def test_demo_writes_everything_and_quotes_three_lines(tmp_path):
    out = tmp_path / "demo-output"
    res = CliRunner().invoke(app, ["-v", "demo", "--out", str(out), "--data", str(DEMO)])
    assert res.exit_code == 0, res.output
    # each step of seconds names its stage (a spinner on a terminal, a line under --verbose)
    stages = [line for line in res.stderr.splitlines() if line.startswith("evcal: demo: ")]
    assert stages == ["evcal: demo: fitting", "evcal: demo: planning (1,000 simulations)",
                      "evcal: demo: backtest", "evcal: demo: report"]
    for f in ("model/model.json", "model/lifts.csv", "plan.csv", "plan.xlsx", "backtest.csv", "report.html"):
        assert (out / f).is_file(), f
    assert "What a planner would quote:" in res.output
    quoted = res.output.split("What a planner would quote:")[1].splitlines()
    assert sum(1 for ln in quoted if ln.strip().startswith("- ")) == 3
    # the plan is spread to the stated target, to floating-point precision
    plan = pd.read_csv(out / "plan.csv")
    assert abs(plan["plan"].sum() - TARGET) < 1e-6 * TARGET
    # evcal's profile beats the average-share profile in the backtest (spread to actual totals)
    bt = pd.read_csv(out / "backtest.csv")
    spread = bt[bt["spread"] == "spread"].groupby("method")["wape"].mean()
    assert spread["evcal"] < spread["average_share"]
    wb = openpyxl.load_workbook(out / "plan.xlsx")
    assert "Plan" in wb.sheetnames
    model = json.loads((out / "model" / "model.json").read_text())
    assert model["format_version"] == 1
    html = (out / "report.html").read_text()
    assert "estimate" in html.lower()
