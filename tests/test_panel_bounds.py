"""Bounded reading of long (panel) files: a --freq that contradicts the dates, counted bad cells.

The same rules as a single history (``evcal.io.frequency.check_forced_freq``,
``evcal.io.cells.count_problems``) reached through ``fit --series-col``. The
data are invented (seeded numpy), named as such.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from typer.testing import CliRunner

from evcal.cli import app

runner = CliRunner()
CAL = "name: panel bounds test (invented)\n"


def _long(weeks: int = 120) -> pd.DataFrame:
    rng = np.random.default_rng(5)
    dates = pd.date_range("2021-01-03", periods=weeks, freq="W-SUN")  # Sundays
    return pd.concat([pd.DataFrame({"product": f"P{i}", "date": dates.strftime("%Y-%m-%d"),
                                    "value": rng.uniform(50, 60, weeks).round(1).astype(str)})
                      for i in range(3)], ignore_index=True)


def _run(tmp_path: Path, frame: pd.DataFrame, *extra: str):
    hist = tmp_path / "long.csv"
    frame.to_csv(hist, index=False)
    (tmp_path / "cal.yaml").write_text(CAL, encoding="utf-8")
    out = tmp_path / "model"
    res = runner.invoke(app, ["fit", str(hist), "-c", str(tmp_path / "cal.yaml"), "--out", str(out),
                              "--series-col", "product", "--errors", "ols", *extra])
    return res, out


def test_forced_week_end_that_contradicts_sunday_dates_is_refused(tmp_path: Path) -> None:
    # before: --freq W-SAT on Sunday-dated weeks was taken as given (each date read as the week
    # ending six days later), exit 0
    res, out = _run(tmp_path, _long(), "--freq", "W-SAT")
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "Sunday" in lines[0] and "W-SUN" in lines[0], res.output
    assert not out.exists()


def test_forced_matching_week_end_is_accepted(tmp_path: Path) -> None:
    res, out = _run(tmp_path, _long(), "--freq", "W-SUN")
    assert res.exit_code == 0, res.output
    assert (out / "panel.json").is_file()


def test_many_bad_cells_are_counted_not_listed(tmp_path: Path) -> None:
    frame = _long()
    frame.loc[::2, "value"] = "n/a?"  # 180 bad cells of 360
    res, out = _run(tmp_path, frame)
    assert res.exit_code == 2
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "(and 179 more bad cells)" in lines[0], res.output
    assert not out.exists()
