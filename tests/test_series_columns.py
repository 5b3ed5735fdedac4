"""series.csv of a panel folder: the residual AR order gets an honest column, ``hac_lags`` is kept empty.

Since the OLS path's covariance comes from an AR(p) model of the residuals (issue 15, observation 5),
the number each batched series carries is an autoregression order, not a count of HAC lags. The output
contract is extended, never renamed: ``hac_lags`` stays (empty for new fits) and ``error_ar_order`` is
added after the existing columns. The data are invented (benchmarks/coverage.py: weekly sums with AR(1)
errors, φ = 0.8, a known truth).
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from evcal.panel import fit_panel, load_panel

_spec = importlib.util.spec_from_file_location(
    "coverage_bench", Path(__file__).resolve().parents[1] / "benchmarks" / "coverage.py")
cov_bench = importlib.util.module_from_spec(_spec)
sys.modules["coverage_bench"] = cov_bench  # its dataclass looks its module up
_spec.loader.exec_module(cov_bench)


@pytest.fixture(scope="module")
def folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    periods, values = cov_bench.simulate(cov_bench.Case("W", 0.8), 6)
    dates = periods.end_time.normalize()
    long = pd.concat([pd.DataFrame({"rep": f"r{r}", "date": dates, "value": values[:, r]})
                      for r in range(values.shape[1])], ignore_index=True)
    out = tmp_path_factory.mktemp("arorder") / "model"
    fit_panel(long, cov_bench.calendar_yaml(), "rep", errors="ols", out=out, progress=False)
    return out


def test_series_csv_has_error_ar_order_and_keeps_hac_lags(folder: Path) -> None:
    # On main series.csv had no error_ar_order and hac_lags held the AR order (1-3 here); now hac_lags is
    # kept (empty) and the order is in error_ar_order. φ = 0.8 errors: every series' order is >= 1.
    raw = pd.read_csv(folder / "series.csv")
    cols = list(raw.columns)
    assert "hac_lags" in cols and "error_ar_order" in cols
    assert cols.index("error_ar_order") == len(cols) - 1  # appended: every older column keeps its place
    assert raw["hac_lags"].isna().all()
    batched = raw["engine"] == "batched"
    assert batched.all()
    order = raw.loc[batched, "error_ar_order"]
    assert (order >= 1).all() and (order == order.round()).all()


def test_folder_reads_back_with_and_without_the_new_column(folder: Path, tmp_path: Path) -> None:
    loaded = load_panel(folder)
    assert str(loaded.series["error_ar_order"].dtype) == "Int64"
    assert (loaded.series["error_ar_order"] >= 1).all()
    # a folder written before the column existed (hac_lags held the order) still loads
    import shutil

    old = shutil.copytree(folder, tmp_path / "old")
    frame = pd.read_csv(old / "series.csv", dtype=str, keep_default_na=False)
    frame["hac_lags"] = frame["error_ar_order"]
    frame.drop(columns="error_ar_order").to_csv(old / "series.csv", index=False)
    again = load_panel(old)
    assert "error_ar_order" not in again.series.columns
    np.testing.assert_array_equal(again.series["hac_lags"].to_numpy(dtype=float),
                                  loaded.series["error_ar_order"].to_numpy(dtype=float))
