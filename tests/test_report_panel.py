"""The HTML report of a panel model folder: overview, per-series sections, picking series, escaping.

The panel folders are real ones, written by ``evcal.panel.fit_panel`` from an
invented synthetic history (three weekly store series over 2022-2024 with a
known spring sale, and one series too short to fit): the report reads them
with ``evcal.panel.load_panel`` and builds each series' section from the
folder's own tables.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from test_report import HOSTILE, assert_only_text
from typer.testing import CliRunner

from evcal.cli import app
from evcal.errors import ModelError
from evcal.panel import fit_panel
from evcal.report import panel_report as pr
from evcal.report import write_report

#: invented truth: the spring sale adds 20 % in the weeks it touches (common practice, no source)
SALE = 0.20
SALE_WEEKS = [("2022-03-07", "2022-03-13"), ("2023-04-10", "2023-04-16"), ("2024-03-18", "2024-03-24")]


def invented_calendar(name: str = "Invented stores (test)", sale_label: str = "Spring sale") -> str:
    dates = ", ".join(f"{{start: {a}, end: {b}}}" for a, b in SALE_WEEKS)
    return (f"name: {json.dumps(name)}\nevents:\n  - name: spring-sale\n    label: {json.dumps(sale_label)}\n"
            f"    when: {{dates: [{dates}]}}\n  - name: xmas\n    label: Christmas closed\n"
            "    when: {fixed: \"12-25\"}\n    effect: zero\n")


def invented_history(stores: list[str]) -> pd.DataFrame:
    """Weekly sales of invented stores (a sine season, the sale, 3 % noise) and one short series."""
    dates = pd.date_range("2022-01-02", "2024-12-29", freq="W-SUN")
    sale = np.zeros(len(dates), dtype=bool)
    for a, b in SALE_WEEKS:
        sale |= (dates >= a) & (dates <= pd.Timestamp(b) + pd.Timedelta(days=6))
    rng = np.random.default_rng(11)
    frames = []
    for i, store in enumerate(stores):
        base = 100 * (i + 1) * (1 + 0.3 * np.sin(2 * np.pi * dates.day_of_year.to_numpy() / 365.25))
        values = base * np.where(sale, 1 + SALE, 1.0) * np.exp(rng.normal(0, 0.03, len(dates)))
        frames.append(pd.DataFrame({"store": store, "date": dates, "value": values.round(1)}))
    short = dates[-30:]  # 30 weeks: fewer than two seasonal cycles, so it is skipped
    frames.append(pd.DataFrame({"store": "kiosk", "date": short, "value": np.full(len(short), 50.0)}))
    return pd.concat(frames, ignore_index=True)


@pytest.fixture(scope="module")
def panel(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("panel") / "panel"
    fit_panel(invented_history(["north", "south", "east"]), invented_calendar(), ["store"], out=out,
              errors="ols")
    return out


def section(page: str, key: str) -> str:
    """The markup of one ``<section id=key>``."""
    match = re.search(rf'<section id="{key}"[^>]*>(.*?)</section>', page, re.S)
    assert match is not None, key
    return match.group(1)


def test_panel_report_has_an_overview_and_every_fitted_series(panel: Path, tmp_path: Path) -> None:
    page = write_report(panel, tmp_path / "r.html").read_text()
    overview = section(page, "overview")
    assert "4 series (keys: store)" in overview and "3 fitted" in overview and "1 skipped" in overview
    assert "Shown below: all 3 fitted series." in overview
    # the skipped series is listed with its reason from skipped.csv
    skipped = pd.read_csv(panel / "skipped.csv")
    assert "store=kiosk" in overview and skipped["reason"].iloc[0] in overview
    # the pooled lift per event: the median of lifts.csv's pooled_pct over the series (numpy)
    lifts = pd.read_csv(panel / "lifts.csv")
    sale = lifts[lifts["event"] == "spring-sale"]
    assert f"{np.median(sale['pooled_pct']):+.1f} %" in overview
    assert f"{np.median(sale['lift_pct']):+.1f} %" in overview
    heading = r'<section id="(series-\d+)" class="series"><h2><span class="num">\d+</span>([^<]*)</h2>'
    titles = re.findall(heading, page)
    series = pd.read_csv(panel / "series.csv")
    fitted = series.loc[series["status"] == "fitted", "store"].tolist()
    assert [t for _, t in titles] == [f"Series store={s}" for s in fitted]
    for sid, _ in titles:
        body = section(page, sid)
        for part in ("History, fitted and base", "Seasonal index", "Event lifts", "What each event added"):
            assert part in body
        assert len(re.findall(r'<img src="data:image/png;base64,', body)) == 4


def test_series_section_shows_that_series_own_rows(panel: Path, tmp_path: Path) -> None:
    page = write_report(panel, tmp_path / "r.html", series=["south"]).read_text()
    body = section(page, "series-1")
    lifts = pd.read_csv(panel / "lifts.csv")
    own = lifts[(lifts["store"] == "south") & (lifts["event"] == "spring-sale")].iloc[0]
    other = lifts[(lifts["store"] == "north") & (lifts["event"] == "spring-sale")].iloc[0]
    # the series' own interval from lifts.csv, not another series'
    assert f"{own.low_pct:+.1f} % to {own.high_pct:+.1f} %".replace("-", "−") in body
    assert f"{other.low_pct:+.1f} % to {other.high_pct:+.1f} %".replace("-", "−") not in body
    # the invented truth (+20 %) lies in the series' 95 % interval widened by 3 points (the week-of-year
    # season drifts a day a year against the invented daily sine season, as in test_report's truth check)
    assert own.low_pct - 3 < 100 * SALE < own.high_pct + 3
    # the history text's WAPE is computed from fitted.parquet's rows of that series
    fitted = pd.read_parquet(panel / "fitted.parquet")
    rows = fitted[fitted["store"] == "south"]
    wape = np.abs(rows["actual"] - rows["fitted"]).sum() / rows["actual"].abs().sum() * 100
    assert f"fitted values are off by {wape:.1f} % of actual sales" in body
    occ = pd.read_csv(panel / "occurrences.csv")
    assert f"Every past occurrence ({int((occ['store'] == 'south').sum())})" in body
    assert "Shown below: the 1 series named with --series." in section(page, "overview")


def test_first_series_only_and_the_report_says_how_to_pick(panel: Path, tmp_path: Path,
                                                           monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(pr, "SHOWN_BY_DEFAULT", 2)
    page = write_report(panel, tmp_path / "r.html").read_text()
    assert len(re.findall(r'<section id="series-\d+"', page)) == 2
    overview = section(page, "overview")
    assert "the first 2 of 3 fitted series; 1 is not shown" in overview
    assert "--series" in overview


def test_a_named_skipped_series_says_why(panel: Path, tmp_path: Path) -> None:
    page = write_report(panel, tmp_path / "r.html", series=["kiosk", "store=north", "north"]).read_text()
    assert len(re.findall(r'<section id="series-\d+"', page)) == 2  # north named twice: shown once
    body = section(page, "series-1")
    assert "Not fitted: too short" in body and "<figure>" not in body


def test_one_series_given_as_text(panel: Path, tmp_path: Path) -> None:
    page = write_report(panel, tmp_path / "r.html", series="store=east").read_text()
    assert re.findall(r'<section id="series-\d+" class="series"><h2><span class="num">2</span>([^<]*)</h2>',
                      page) == ["Series store=east"]


def test_unknown_series_is_one_line(panel: Path, tmp_path: Path) -> None:
    with pytest.raises(ModelError) as err:
        write_report(panel, tmp_path / "r.html", series=["nowhere"])
    assert len(err.value.problems) == 1 and "no such series" in err.value.problems[0]
    assert not (tmp_path / "r.html").exists()


def test_options_that_do_not_apply_are_one_line(panel: Path, tmp_path: Path) -> None:
    # a panel's plan is read (tests/test_report_panel_plan.py); a backtest is a single model's
    with pytest.raises(ModelError, match="backtest_csv= is read for a single-series model folder only"):
        write_report(panel, tmp_path / "r.html", backtest_csv=tmp_path / "backtest.csv")
    single = tmp_path / "single"
    (single).mkdir()
    (single / "model.json").write_text("{}")
    with pytest.raises(ModelError, match="series= picks series of a panel model folder"):
        write_report(single, tmp_path / "r.html", series=["north"])
    assert not (tmp_path / "r.html").exists()


def test_cli_report_on_a_panel_folder(panel: Path, tmp_path: Path) -> None:
    out = tmp_path / "r.html"
    res = CliRunner().invoke(app, ["report", str(panel), "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert "Panel overview" in out.read_text()


def test_hostile_keys_and_labels_in_a_panel_are_text(tmp_path: Path) -> None:
    keys = HOSTILE[:3]
    out = tmp_path / "panel"
    fit_panel(invented_history([k + " (key)" for k in keys]),
              invented_calendar(HOSTILE[3] + " (calendar)", HOSTILE[4] + " (label)"), ["store"], out=out,
              errors="ols")
    settings = json.loads((out / "panel.json").read_text())
    settings["source"] = HOSTILE[0] + " (source)"  # free text: the history file's name
    (out / "panel.json").write_text(json.dumps(settings))
    page = write_report(out, tmp_path / "r.html").read_text()
    marks = [k + " (key)" for k in keys] + [HOSTILE[3] + " (calendar)", HOSTILE[4] + " (label)",
                                            HOSTILE[0] + " (source)"]
    assert_only_text(page, marks)


def test_cli_report_series_option_picks_the_sections(panel: Path, tmp_path: Path) -> None:
    # --series reaches write_report: one series section, and the overview says which
    out = tmp_path / "r.html"
    res = CliRunner().invoke(app, ["report", str(panel), "--out", str(out), "--series", "south"])
    assert res.exit_code == 0, res.output
    page = out.read_text()
    assert len(re.findall(r'<section id="series-\d+"', page)) == 1
    assert "Shown below: the 1 series named with --series." in section(page, "overview")
