"""A single model's report given a plan file made for another report says where the file goes.

``evcal report MODEL_DIR --plan FILE`` reads one model's plan (``date, base, plan, low, high, ...``). A
plan of several levels (``evcal plan BOTTOM --reconcile ...``), a panel's plan and an allocated one are
plans too, of other models: given to a single model's report they used to stop on "missing column(s)
base, low, high" (or on a key "is not a number"). Now one line says what the file is and which report
takes it, exit 2, nothing written; the report named there takes the file.

The models are the invented product x store ones of test_levels_workbook (a known truth, named there):
``items`` the bottom panel, ``products`` a panel of its products, ``total`` the one-series grand total.
"""

from __future__ import annotations

import pandas as pd
import pytest
from test_levels_workbook import invoke, models  # noqa: F401 -- the module's fixture, shared

from evcal.backtesting import COLUMNS as BACKTEST_COLUMNS
from evcal.errors import ModelError
from evcal.report import write_report

SPAN = ("--from", "2024-07-01", "--to", "2024-09-30")


def refused(d, plan, out) -> str:
    """The report of the grand total's single model given ``plan``: exit 2, one line, nothing written."""
    r = invoke("report", str(d / "total"), "--plan", str(plan), "--out", str(out))
    assert r.exit_code == 2, r.output
    assert not out.exists()
    lines = [ln for ln in r.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "Traceback" not in r.output, r.output
    assert "missing column" not in lines[0]
    return lines[0]


def taken(d, model, plan, out) -> None:
    """The report the refusal names takes the file."""
    r = invoke("report", str(d / model), "--plan", str(plan), "--out", str(out))
    assert r.exit_code == 0, r.output
    assert out.is_file()


def test_a_reconciled_plan_goes_to_the_bottom_panel_models_report(models, tmp_path):  # noqa: F811
    d, plan = models, tmp_path / "reconciled.csv"
    r = invoke("plan", str(d / "items"), *SPAN, "--reconcile", str(d / "products"), "--reconcile",
               str(d / "total"), "--out", str(plan))
    assert r.exit_code == 0, r.output
    line = refused(d, plan, tmp_path / "total.html")
    assert (f"{plan}: a plan of several levels (evcal plan --reconcile): give it to the report of the bottom "
            f"panel model (its series by product, store), `evcal report BOTTOM_DIR --plan {plan}`") in line
    taken(d, "items", plan, tmp_path / "items.html")


def test_a_panel_plan_goes_to_its_panel_models_report(models, tmp_path):  # noqa: F811
    d, plan = models, tmp_path / "panel.csv"
    r = invoke("plan", str(d / "items"), *SPAN, "--sims", "0", "--out", str(plan))
    assert r.exit_code == 0, r.output
    line = refused(d, plan, tmp_path / "total.html")
    assert f"{plan}: a panel plan (evcal plan PANEL_DIR; its series by product, store)" in line
    assert f"`evcal report PANEL_DIR --plan {plan}`" in line
    taken(d, "items", plan, tmp_path / "items.html")


def test_an_allocated_plan_goes_to_the_child_panel_models_report(models, tmp_path):  # noqa: F811
    d, plan = models, tmp_path / "allocated.csv"
    r = invoke("plan", str(d / "products"), *SPAN, "--sims", "0", "--allocate", str(d / "items"),
               "--out", str(plan))
    assert r.exit_code == 0, r.output
    assert {"share", "own_plan"} <= set(pd.read_csv(plan, nrows=0).columns)
    line = refused(d, plan, tmp_path / "total.html")
    assert f"{plan}: an allocated panel plan (evcal plan PARENT_DIR --allocate CHILD_DIR; its series by " \
           f"product, store): give it to the report of the child panel model" in line
    assert f"`evcal report CHILD_DIR --plan {plan}`" in line
    taken(d, "items", plan, tmp_path / "items.html")


def test_a_backtest_table_given_as_a_plan_says_to_give_it_as_a_backtest(models, tmp_path):  # noqa: F811
    d, plan = models, tmp_path / "backtest.csv"
    plan.write_text(",".join(BACKTEST_COLUMNS) + "\n2023,model,spread,5.0,1.0,3.0\n")  # an invented row
    line = refused(d, plan, tmp_path / "total.html")
    assert line.endswith(f"{plan}: a backtest table (evcal backtest), not a plan: give it with --backtest")


def test_from_python_the_line_names_write_reports_arguments(models, tmp_path):  # noqa: F811
    d, plan = models, tmp_path / "reconciled.csv"
    r = invoke("plan", str(d / "items"), *SPAN, "--reconcile", str(d / "total"), "--out", str(plan))
    assert r.exit_code == 0, r.output
    with pytest.raises(ModelError) as err:
        write_report(d / "total", tmp_path / "r.html", plan_csv=plan)
    assert err.value.problems == [
        f"{plan}: a plan of several levels (evcal plan --reconcile): give it to the report of the bottom "
        f"panel model (its series by product, store), write_report(BOTTOM_DIR, 'report.html', "
        f"plan_csv={str(plan)!r})"]
    assert not (tmp_path / "r.html").exists()


def test_a_single_models_own_plan_is_still_read(models, tmp_path):  # noqa: F811
    d, plan = models, tmp_path / "total-plan.csv"
    r = invoke("plan", str(d / "total"), *SPAN, "--sims", "0", "--week-labels", "iso", "--out", str(plan))
    assert r.exit_code == 0, r.output
    taken(d, "total", plan, tmp_path / "total.html")
