"""Whole-unit panel plans (issue 18 item 5): each series in integers adding up to its rounded total.

Invented data: tests/test_panel.py's made-up products (weekly 2021-2023 with
known lifts), three of them, planned with and without ``whole_units``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from test_panel import CAL, _panel_frame
from typer.testing import CliRunner

from evcal.cli import app
from evcal.panel import fit_panel
from evcal.panel.planning import plan_panel


@pytest.fixture(scope="module")
def panel_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("round") / "m"
    fit_panel(_panel_frame(n_items=3), CAL, ["family", "product"], out=out)
    return out


def test_each_series_is_whole_and_adds_up_to_its_rounded_total(panel_dir) -> None:
    # fails on main: plan_panel takes no whole_units (TypeError)
    exact = plan_panel(panel_dir, "2024-01-01", "2024-12-31", n_sims=100, progress=False)
    whole = plan_panel(panel_dir, "2024-01-01", "2024-12-31", n_sims=100, progress=False, whole_units=True)
    assert list(whole.columns) == list(exact.columns) and len(whole) == len(exact)
    parts = ["base"] + [c for c in whole.columns if c.startswith("lift:")]
    for c in ["plan", *parts]:
        assert whole[c].dtype.kind == "i", c
        assert np.abs(whole[c].to_numpy(dtype=float) - exact[c].to_numpy(dtype=float)).max() <= 1.0, c
    assert (whole[parts].sum(axis=1) == whole["plan"]).all()
    assert (whole["low"].astype(float) <= exact["low"]).all()
    assert (whole["high"].astype(float) >= exact["high"]).all()
    sums = whole.groupby("product")["plan"].sum()
    goals = exact.groupby("product")["plan"].sum().round()
    assert sums.to_dict() == {k: int(v) for k, v in goals.items()}
    assert len(sums) == 3
    assert any("largest remainder" in n for n in whole.attrs["notes"])


def test_one_series_with_a_target_through_the_cli(panel_dir, tmp_path) -> None:
    out = tmp_path / "plan.csv"
    res = CliRunner().invoke(app, ["plan", str(panel_dir), "--series", "P01", "--from", "2024-01-01",
                                   "--to", "2024-12-31", "--total", "5000.5", "--round", "--sims", "50",
                                   "--out", str(out)])
    assert res.exit_code == 0, res.output
    t = pd.read_csv(out)
    assert int(t["plan"].sum()) == 5001 and t["plan"].dtype.kind == "i"  # 5,000.5 to the nearest unit
