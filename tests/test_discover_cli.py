"""`evcal discover` on the command line: outputs, summary, bad input (exit 2, nothing written)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from evcal.cli import app
from evcal.discovery.suggestions import COLUMNS

runner = CliRunner()


@pytest.fixture(scope="module")
def history(tmp_path_factory) -> Path:
    """Invented monthly sales (Fernhollow Garden Centres, invented), a +20 % shift from 2021-04."""
    rng = np.random.default_rng(9)
    idx = pd.period_range("2016-01", "2023-12", freq="M")
    y = 1000 * np.exp(0.3 * np.sin(2 * np.pi * (idx.month.to_numpy() - 3) / 12)
                      + rng.normal(0, 0.03, len(idx)))
    y[idx >= pd.Period("2021-04", "M")] *= 1.2
    path = tmp_path_factory.mktemp("h") / "sales.csv"
    pd.DataFrame({"month": idx.to_timestamp(how="end").normalize().strftime("%Y-%m-%d"),
                  "units": y.round(1)}).to_csv(path, index=False)
    return path


def _run(*args: str):
    return runner.invoke(app, ["discover", *args])


def test_cli_writes_suggestions_and_prints_a_summary(history, tmp_path) -> None:
    out = tmp_path / "found"
    res = _run(str(history), "--date-col", "month", "--value-col", "units", "--errors", "ols",
               "--out", str(out))
    assert res.exit_code == 0, res.output
    assert "cycle of 12.0 periods" in res.output
    assert "1 level shifts" in res.output
    table = pd.read_csv(out / "suggestions.csv")
    assert list(table.columns) == COLUMNS
    shift = table[table["kind"] == "level_shift"].iloc[0]
    assert shift["start"] == "2021-04-01"
    assert "type: level_shift" in (out / "suggestions.yaml").read_text()


def test_cli_stockouts_file_adds_lost_demand(history, tmp_path) -> None:
    so = tmp_path / "so.csv"
    so.write_text("start,end,reason\n2019-05-01,2019-05-31,depot\n")
    out = tmp_path / "found"
    res = _run(str(history), "--date-col", "month", "--value-col", "units", "--errors", "ols",
               "--stockouts", str(so), "--out", str(out))
    assert res.exit_code == 0, res.output
    assert (out / "lost_demand.csv").is_file()
    assert "lost demand 2019-05-01..2019-05-31" in res.output


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--value-col", "nope"], "nope"),
        (["--stockouts", "BAD"], "row 2: column end"),
        (["--calendar", "BADCAL"], "easter"),
        (["--critical", "50"], "option --critical"),
    ],
)
def test_cli_bad_input_is_one_line_exit_2_and_nothing_written(history, tmp_path, args, message) -> None:
    bad_so = tmp_path / "so.csv"
    bad_so.write_text("start,end\n2019-05-01,2019-13-31\n")
    bad_cal = tmp_path / "cal.yaml"
    bad_cal.write_text("name: x\nevents:\n  - {name: a, when: {easter: soon}}\n")
    args = [str(bad_so) if a == "BAD" else str(bad_cal) if a == "BADCAL" else a for a in args]
    if "--value-col" not in args:
        args += ["--value-col", "units"]
    out = tmp_path / "never"
    res = runner.invoke(app, ["discover", str(history), "--date-col", "month", *args, "--out", str(out)])
    assert res.exit_code == 2
    lines = [line for line in res.output.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: ") and message in lines[0]
    assert "Traceback" not in res.output
    assert not out.exists()
    assert not list(tmp_path.glob(".never*"))  # no temporary left behind
