"""A scenario that changes an outside driver: ``evcal plan --drivers base.csv --compare-drivers cut.csv``.

Invented weekly sales with a known price elasticity of -1.8 (tests/test_drivers.py). A 10 %
price cut in week 20 of 2024 must raise that week's plan by 0.9 ** b (about +21 %) and
leave every other week as it was; both plans are written side by side as ``--compare`` does.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from test_drivers import _future, invented
from typer.testing import CliRunner

from evcal.cli import app


@pytest.fixture(scope="module")
def model(tmp_path_factory) -> tuple[object, object]:
    folder = tmp_path_factory.mktemp("drv")
    hist = folder / "h.csv"
    invented().to_csv(hist, index=False)
    res = CliRunner().invoke(app, ["fit", str(hist), "--driver", "price:log", "--driver", "temperature",
                                   "--errors", "ols", "--out", str(folder / "m")])
    assert res.exit_code == 0, res.output
    base, cut = folder / "base.csv", folder / "cut.csv"
    _future(np.full(52, 2.0)).to_csv(base, index=False)
    prices = np.full(52, 2.0)
    prices[19] = 1.8  # price -10 % in week 20
    _future(prices).to_csv(cut, index=False)
    return folder, pd.read_csv(folder / "m" / "drivers.csv").set_index("driver")


def _plan(folder, *extra: str):
    return CliRunner().invoke(app, ["plan", str(folder / "m"), "--from", "2024-01-01", "--to", "2024-12-31",
                                    "--sims", "0", *extra])


def test_price_cut_scenario_side_by_side(model):
    """Before: --compare-drivers was not an option (exit 2)."""
    folder, drivers = model
    out = folder / "cmp.csv"
    res = _plan(folder, "--drivers", str(folder / "base.csv"), "--compare-drivers", str(folder / "cut.csv"),
                "--out", str(out))
    assert res.exit_code == 0, res.output
    table = pd.read_csv(out)
    assert list(table.columns) == ["date", "plan_a", "plan_b", "difference"]
    rows = table.iloc[:-1]
    ratio = rows["plan_b"].to_numpy() / rows["plan_a"].to_numpy()
    b = drivers.loc["price", "coefficient"]
    assert ratio[19] == pytest.approx(0.9 ** b, rel=1e-6)  # the CSVs keep 6 decimals
    assert 1.18 < ratio[19] < 1.24  # 0.9 ** -1.8 = 1.209: the invented truth
    np.testing.assert_allclose(np.delete(ratio, 19), 1.0, rtol=1e-9)
    assert table.iloc[-1]["date"] == "total"
    assert table.iloc[-1]["difference"] == pytest.approx(rows["difference"].sum())
    assert "base.csv" in res.output and "cut.csv" in res.output  # the scenarios are named by their files


def test_calendar_compare_on_a_driver_model_uses_the_drivers(model):
    """Before: --compare with --drivers planned both calendars without the driver values (an error)."""
    folder, _ = model
    cal_b = folder / "b.yaml"
    cal_b.write_text("name: with a sale\nevents:\n  - {name: sale, when: {dates: [2024-06-02]}, "
                     "effect: {assume: 20%}}\n", encoding="utf-8")
    res = _plan(folder, "--drivers", str(folder / "base.csv"), "--compare", str(cal_b),
                "--new-events", "zero", "--out", str(folder / "cmp2.csv"))
    assert res.exit_code == 0, res.output


@pytest.mark.parametrize(("extra", "expected"), [
    (["--compare-drivers", "{cut}"], r"--compare-drivers .*cut\.csv: give scenario A's driver values with "
                                     r"--drivers too"),
    (["--drivers", "{base}", "--compare-drivers", "{short}"],
     r"--compare-drivers short\.csv: driver 'price' has no value for period 2024-05-20/2024-05-26 "
     r"\(and 31 more periods\)"),
])
def test_bad_compare_drivers_is_one_line(model, extra, expected):
    import re

    folder, _ = model
    _future(np.full(20, 2.0)).to_csv(folder / "short.csv", index=False)
    files = {"cut": folder / "cut.csv", "base": folder / "base.csv", "short": folder / "short.csv"}
    args = [a.format(**files) for a in extra]
    res = _plan(folder, *args, "--out", str(folder / "bad.csv"))
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "Traceback" not in res.output, res.output
    assert re.search(expected, lines[0]), lines[0]


def test_a_driver_plan_workbook_can_be_written_again(model):
    """A plan workbook with a Drivers sheet is evcal's own plan: planning again onto it replaces it.
    Before: its sheets (Plan, Lifts, Seasonal index, Past occurrences, Drivers, Notes) were not known as a
    plan's, so the second run was refused as a file evcal did not write."""
    from evcal.outputs import file_kind

    folder, _ = model
    out = folder / "drivers-plan.xlsx"
    for _ in range(2):
        res = _plan(folder, "--drivers", str(folder / "base.csv"), "--out", str(out))
        assert res.exit_code == 0, res.output
    assert file_kind(out) == "plan"
