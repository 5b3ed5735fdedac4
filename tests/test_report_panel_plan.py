"""The panel report with a panel plan; `evcal report` on panel folders fitted from the CLI (issue 18 item 7).

Invented data: tests/test_report_panel.py's weekly stores (a known +20 % spring sale, one series too
short to fit), fitted and planned from the command line as a user would, then reported.
"""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd
import pytest
from test_report_panel import invented_calendar, invented_history, section
from typer.testing import CliRunner

from evcal.cli import app
from evcal.errors import ModelError
from evcal.report import write_report

runner = CliRunner()


def _ok(args: list[str]) -> str:
    res = runner.invoke(app, args)
    assert res.exit_code == 0, res.output
    return res.output


@pytest.fixture(scope="module")
def fitted(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    """A panel fitted and planned to a total from the CLI: (model folder, plan.csv)."""
    root = tmp_path_factory.mktemp("panelplan")
    hist = invented_history(["north", "south", "east"]).assign(region=lambda d: d["store"].map(
        {"north": "upland", "south": "coast", "east": "coast", "kiosk": "coast"}))
    hist.to_csv(root / "sales.csv", index=False)
    (root / "cal.yaml").write_text(invented_calendar(), encoding="utf-8")
    model = root / "model"
    _ok(["fit", str(root / "sales.csv"), "-c", str(root / "cal.yaml"), "--series-col", "region",
         "--series-col", "store", "--group-col", "region", "--errors", "ols", "--out", str(model)])
    plan = root / "plan.csv"
    _ok(["plan", str(model), "--from", "2025-01-01", "--to", "2025-12-31", "--total", "150000", "--round",
         "--sims", "50", "--out", str(plan)])
    return model, plan


def test_panel_report_with_a_plan(fitted: tuple[Path, Path], tmp_path: Path) -> None:
    # fails on main: ModelError "--plan is read for a single-series model folder only"
    model, plan_csv = fitted
    page = write_report(model, tmp_path / "r.html", plan_csv=plan_csv).read_text()
    plan = pd.read_csv(plan_csv)
    overview = section(page, "overview")
    assert "The plan, series by series" in overview
    assert "3 series" in overview and "150,000 units in all" in overview
    sums = plan.groupby("store")["plan"].sum().sort_values(ascending=False)
    # every series' plan total and its share, largest first (the plan file's own sums)
    listed = re.findall(r"region=\w+, store=(\w+)</td>", overview.split("The plan, series by series")[1])
    assert listed == list(sums.index)
    for store, total in sums.items():
        assert f"{total:,.0f}" in overview, store
        assert f"{100 * total / sums.sum():.1f} %" in overview, store
    # each series shown gets the plan section from its own rows
    titles = re.findall(r'<section id="(series-\d+)" class="series"><h2><span class="num">\d+</span>'
                        r"Series region=\w+, store=(\w+)</h2>", page)
    assert len(titles) == 3
    for sid, store in titles:
        body = section(page, sid)
        assert "Every planned period (52)" in body
        assert f"The plan: {sums[store]:,.0f} units over 52 periods" in body, store


def test_panel_plan_from_another_panel_is_one_line(fitted: tuple[Path, Path], tmp_path: Path) -> None:
    model, plan_csv = fitted
    other = pd.read_csv(plan_csv)
    other.loc[3, "store"] = "west"
    bad = tmp_path / "other.csv"
    other.to_csv(bad, index=False)
    with pytest.raises(ModelError) as err:
        write_report(model, tmp_path / "r.html", plan_csv=bad)
    assert len(err.value.problems) == 1
    line = err.value.problems[0]
    assert "line 5: region=" in line and "store=west is not a series" in line
    single = tmp_path / "single.csv"
    other.drop(columns=["region", "store"]).to_csv(single, index=False)
    res = runner.invoke(app, ["report", str(model), "--plan", str(single), "--out", str(tmp_path / "r.html")])
    assert res.exit_code == 2 and "missing column(s) region, store" in res.output, res.output
    assert not (tmp_path / "r.html").exists()


@pytest.mark.parametrize("extra", [["--level", "region"], ["--group-col", "region"], []])
def test_report_on_a_panel_fitted_from_the_cli(extra: list[str], tmp_path: Path) -> None:
    # the issue saw "model.json: missing" for `evcal report PANEL_DIR`; a panel fitted from the CLI (two key
    # columns; added up to one of them with --level; pooled by group) is reported end to end
    hist = invented_history(["north", "south", "east"]).assign(region=lambda d: d["store"].map(
        {"north": "upland", "south": "coast", "east": "coast", "kiosk": "coast"}))
    hist.to_csv(tmp_path / "sales.csv", index=False)
    (tmp_path / "cal.yaml").write_text(invented_calendar(), encoding="utf-8")
    model, out = tmp_path / "m", tmp_path / "r.html"
    _ok(["fit", str(tmp_path / "sales.csv"), "-c", str(tmp_path / "cal.yaml"), "--series-col", "region",
         "--series-col", "store", "--errors", "ols", "--out", str(model), *extra])
    text = _ok(["report", str(model), "--out", str(out)])
    assert "model.json" not in text
    page = out.read_text()
    assert "Panel overview" in page and "<section id=\"series-1\"" in page
