"""`evcal plan` from the command line, and every bad-input case of the plan issue.

Each bad input gives exit code 2, one line on stderr, no traceback and no
output file. The history is invented (a made-up monthly shop).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from test_workbook import plan_rows
from typer.testing import CliRunner

import evcal
from evcal.cli import app

runner = CliRunner()

CAL = ("name: invented shop (test)\nevents:\n"
       "  - {name: easter-run, when: {easter: 0}, before: 10, after: 1}\n"
       "  - {name: boxing-day-closed, when: {fixed: '12-26'}, effect: zero}\n")


@pytest.fixture(scope="module")
def model_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    # invented monthly shop, 2017-2023, with a fixed season and 2 % noise
    rng = np.random.default_rng(9)
    idx = pd.period_range("2017-01", "2023-12", freq="M")
    season = np.array([0.8, 0.85, 1.0, 1.1, 1.2, 1.15, 1.1, 1.05, 0.95, 0.9, 1.0, 1.3])
    y = 1000 * season[idx.month - 1] * np.exp(rng.normal(0, 0.02, len(idx)))
    d = tmp_path_factory.mktemp("cli")
    pd.DataFrame({"date": idx.end_time.normalize().strftime("%Y-%m-%d"), "value": y}).to_csv(
        d / "history.csv", index=False)
    (d / "cal.yaml").write_text(CAL)
    evcal.fit(d / "history.csv", d / "cal.yaml", errors="ols").save(d / "model")
    return d


def _plan(model_dir: Path, out: Path, *extra: str):
    return runner.invoke(app, ["plan", str(model_dir / "model"), "--out", str(out), *extra])


def _one_error_line(res, out: Path) -> str:
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1, res.output
    assert lines[0].startswith("error: ")
    assert not out.exists()
    assert not [p for p in out.parent.iterdir() if p.name.startswith(f".{out.name}")]  # no temp left
    return lines[0]


def test_plan_writes_csv_and_prints_summary(model_dir: Path, tmp_path: Path) -> None:
    out = tmp_path / "plan.csv"
    res = _plan(model_dir, out, "--from", "2024-01-01", "--to", "2024-12-31", "--total", "14000")
    assert res.exit_code == 0, res.output
    t = pd.read_csv(out)
    assert list(t.columns) == ["date", "base", "plan", "low", "high", "lift:easter-run",
                               "lift:boxing-day-closed", "assumptions"]
    assert t["plan"].sum() == pytest.approx(14000, rel=1e-9)  # CSV keeps 6 decimals
    assert "Peak:" in res.output and "total 14,000 units" in res.output
    assert "estimate" in res.output


def test_plan_xlsx(model_dir: Path, tmp_path: Path) -> None:
    out = tmp_path / "plan.xlsx"
    res = _plan(model_dir, out, "--from", "2024-01-01", "--to", "2024-06-30", "--sims", "200")
    assert res.exit_code == 0, res.output
    codes, rows = plan_rows(openpyxl.load_workbook(out)["Plan"])  # the table under the target block
    low, plan = ([r[codes.index(f"model:{c}")].value for r in rows] for c in ("low", "plan"))
    assert len(rows) == 6 and all(lo <= p for lo, p in zip(low, plan, strict=True))


def test_plan_totals_file(model_dir: Path, tmp_path: Path) -> None:
    totals = tmp_path / "totals.csv"
    totals.write_text("year,total\n2024,13000\n2025,13500\n")
    out = tmp_path / "plan.csv"
    res = _plan(model_dir, out, "--from", "2024", "--to", "2025", "--totals", str(totals), "--sims", "0")
    assert res.exit_code == 0, res.output
    t = pd.read_csv(out, parse_dates=["date"])
    assert t.groupby(t["date"].dt.year)["plan"].sum().round(3).to_dict() == {2024: 13000.0, 2025: 13500.0}


def test_compare_writes_side_by_side(model_dir: Path, tmp_path: Path) -> None:
    cal_b = tmp_path / "b.yaml"
    cal_b.write_text(CAL + "  - {name: summer-fair, when: {dates: [{start: 2024-07-05, end: 2024-07-07}]},"
                           " effect: {assume: 30%}}\n")
    out = tmp_path / "cmp.csv"
    res = _plan(model_dir, out, "--from", "2024-01-01", "--to", "2024-12-31", "--compare", str(cal_b),
                "--sims", "0")
    assert res.exit_code == 0, res.output
    t = pd.read_csv(out)
    assert list(t.columns) == ["date", "plan_a", "plan_b", "difference"]
    july = t[t["date"] == "2024-07-31"]
    assert float(july["difference"].iloc[0]) > 0
    assert t["difference"].iloc[-1] == pytest.approx(float(july["difference"].iloc[0]), rel=1e-6)
    assert "difference B - A" in res.output


@pytest.mark.parametrize("args, expect", [
    (["--from", "2023-06-01", "--to", "2024-06-30"], "must start after the history"),
    (["--from", "2024-06-01", "--to", "2024-01-31"], "is before --from"),
    (["--from", "2024-01-01", "--to", "2024-12-31", "--total", "0"], "--total 0"),
    (["--from", "2024-01-01", "--to", "2024-12-31", "--total", "-5"], "--total -5"),
    (["--from", "2024-01-01", "--to", "2024-12-31", "--total", "nan"], "--total nan"),
    (["--from", "2024-01-01", "--to", "2024-12-31", "--total", "a lot"], "not a number"),
    (["--from", "2024-01-01", "--to", "2024-12-31", "--new-events", "maybe"], "--new-events"),
])
def test_bad_requests(model_dir: Path, tmp_path: Path, args: list[str], expect: str) -> None:
    out = tmp_path / "plan.csv"
    line = _one_error_line(_plan(model_dir, out, *args), out)
    assert expect in line


def test_totals_file_with_missing_year(model_dir: Path, tmp_path: Path) -> None:
    totals = tmp_path / "totals.csv"
    totals.write_text("year,total\n2024,13000\n")
    out = tmp_path / "plan.csv"
    line = _one_error_line(_plan(model_dir, out, "--from", "2024", "--to", "2025", "--totals", str(totals)),
                           out)
    assert "no total for 2025" in line


def test_totals_file_with_bad_row(model_dir: Path, tmp_path: Path) -> None:
    totals = tmp_path / "totals.csv"
    totals.write_text("year,total\n2024,13000\n2025,lots\n")
    out = tmp_path / "plan.csv"
    line = _one_error_line(_plan(model_dir, out, "--from", "2024", "--to", "2025", "--totals", str(totals)),
                           out)
    assert "row 3" in line and "column total" in line


def test_unknown_event_via_cli(model_dir: Path, tmp_path: Path) -> None:
    cal = tmp_path / "new.yaml"
    cal.write_text(CAL + "  - {name: garden-show, when: {dates: [2024-05-18]}}\n")
    out = tmp_path / "plan.csv"
    line = _one_error_line(_plan(model_dir, out, "--from", "2024-01-01", "--to", "2024-12-31",
                                 "--calendar", str(cal)), out)
    assert "garden-show" in line and "--new-events zero" in line
    res = _plan(model_dir, out, "--from", "2024-01-01", "--to", "2024-12-31", "--calendar", str(cal),
                "--new-events", "zero", "--sims", "0")
    assert res.exit_code == 0, res.output
    assert "garden-show: new event, no lift" in res.output


def test_bad_model_folder_and_bad_calendar(model_dir: Path, tmp_path: Path) -> None:
    out = tmp_path / "plan.csv"
    res = runner.invoke(app, ["plan", str(tmp_path / "nowhere"), "--from", "2024", "--to", "2024",
                              "--out", str(out)])
    assert "not a model folder" in _one_error_line(res, out)
    broken = tmp_path / "old-model"
    broken.mkdir()
    for f in (model_dir / "model").iterdir():
        (broken / f.name).write_bytes(f.read_bytes())
    d = json.loads((broken / "model.json").read_text())
    d["format_version"] = 999
    (broken / "model.json").write_text(json.dumps(d))
    res = runner.invoke(app, ["plan", str(broken), "--from", "2024", "--to", "2024", "--out", str(out)])
    assert "format_version 999" in _one_error_line(res, out)
    bad_cal = tmp_path / "bad.yaml"
    bad_cal.write_text("name: x\nevents:\n  - {name: a, when: {easter: 0}, length: -1}\n")
    res = _plan(model_dir, out, "--from", "2024", "--to", "2024", "--calendar", str(bad_cal))
    assert res.exit_code == 2 and "Traceback" not in res.output and not out.exists()
    assert "bad.yaml" in res.output


def test_unknown_output_type(model_dir: Path, tmp_path: Path) -> None:
    out = tmp_path / "plan.json"
    line = _one_error_line(_plan(model_dir, out, "--from", "2024", "--to", "2024"), out)
    assert "plan.csv or plan.xlsx" in line
