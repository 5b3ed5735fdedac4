"""`discover` on a model folder written by `evcal fit`: the same findings as on the history it came from.

The histories are invented for the test (Fernhollow Garden Centres, invented:
monthly sales with an annual wave, noise and a +25 % promotion in June 2018
and September 2021); the checks are the project's own contract (a model folder stands in
for its history and calendar; a panel folder needs one series named), no
outside source.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pandas.testing as pdt
import pytest

import evcal
from evcal.errors import EvcalError, HistoryError, ModelError
from evcal.panel import fit_panel, load_panel

CAL = """
name: Fernhollow promotions (invented)
events:
  - {name: promo, when: {dates: [{start: 2018-06-01, end: 2018-06-30}, {start: 2021-09-01, end: 2021-09-30}]}}
"""


PROMO_MONTHS = pd.PeriodIndex(["2018-06", "2021-09"], freq="M")


def _monthly(seed: int, level: float = 1000.0) -> pd.DataFrame:
    """Invented monthly sales 2017-2022 (dated on the 1st): annual wave, 3 % noise, +25 % promotions."""
    rng = np.random.default_rng(seed)
    idx = pd.period_range("2017-01", "2022-12", freq="M")
    month = idx.month.to_numpy()
    log_y = (np.log(level) + 0.3 * np.sin(2 * np.pi * (month - 3) / 12)
             + rng.normal(0, 0.03, len(idx)) + np.log(1.25) * idx.isin(PROMO_MONTHS))
    return pd.DataFrame({"date": idx.start_time, "value": np.exp(log_y).round(1)})


def _same(a, b) -> None:
    pdt.assert_frame_equal(a.table, b.table)
    assert a.yaml == b.yaml
    assert a.summary() == b.summary()


@pytest.fixture(scope="module")
def single(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, pd.DataFrame]:
    series = _monthly(1)
    folder = tmp_path_factory.mktemp("single") / "model"
    evcal.fit(series, CAL, errors="ols").save(folder)
    return folder, series


@pytest.fixture(scope="module")
def panel(tmp_path_factory: pytest.TempPathFactory) -> Path:
    frames = []
    for i in range(7):  # seven products: more than the five keys the message names
        s = _monthly(10 + i, level=200.0 * (i + 1))
        frames.append(s.assign(store="S1", product=f"P{i}"))
    folder = tmp_path_factory.mktemp("panel") / "model"
    fit_panel(pd.concat(frames, ignore_index=True), CAL, ["store", "product"], errors="ols", out=folder)
    return folder


def test_single_model_folder_gives_the_findings_of_its_history_and_calendar(single) -> None:
    folder, series = single
    from_folder = evcal.discover(folder, errors="ols")
    _same(from_folder, evcal.discover(series, CAL, errors="ols"))
    # the model's own calendar was used: its event is a column of the fit, not a finding
    assert "promo" in from_folder.fit.params.index
    assert from_folder.n_periods == 72 and from_folder.freq == "M"


def test_a_calendar_given_replaces_the_model_calendar(single) -> None:
    folder, series = single
    found = evcal.discover(str(folder), "name: no events\n", errors="ols")
    _same(found, evcal.discover(series, errors="ols"))
    assert "promo" not in found.fit.params.index


def test_panel_model_folder_gives_the_findings_of_the_named_series(panel) -> None:
    res = load_panel(panel)
    key = res.find("P3")
    from_folder = evcal.discover(panel, series="P3", errors="ols")
    _same(from_folder, evcal.discover(res.history(key), res.settings["calendar_text"], errors="ols"))
    # every form PanelResult.find accepts names the same series
    _same(from_folder, evcal.discover(panel, series="store=S1,product=P3", errors="ols"))
    assert from_folder.source == res.history(key).source


def test_panel_folder_without_series_is_one_line_naming_five_keys(panel) -> None:
    with pytest.raises(ModelError) as err:
        evcal.discover(panel, errors="ols")
    (line,) = err.value.problems
    assert str(panel) in line and "7 series" in line and "name one with series=" in line
    assert "store=S1,product=P0; store=S1,product=P1" in line
    assert "store=S1,product=P4; ... (2 more)" in line and "product=P5" not in line


def test_panel_folder_with_an_unknown_series_is_one_line(panel) -> None:
    with pytest.raises(ModelError) as err:
        evcal.discover(panel, series="P99", errors="ols")
    assert len(err.value.problems) == 1 and "no such series" in err.value.problems[0]


def test_series_is_refused_for_a_history_and_for_a_single_model(single) -> None:
    folder, series = single
    with pytest.raises(HistoryError, match="drop series="):
        evcal.discover(series, series="P1", errors="ols")
    with pytest.raises(ModelError, match="single-series model folder; drop series="):
        evcal.discover(folder, series="P1", errors="ols")


def test_a_frequency_other_than_the_model_s_is_refused(single) -> None:
    folder, _ = single
    with pytest.raises(HistoryError, match="the model in .* is M; drop freq="):
        evcal.discover(folder, freq="W", errors="ols")
    assert evcal.discover(folder, freq="monthly", errors="ols").freq == "M"


def test_a_damaged_model_folder_is_refused_by_the_model_reader(single, tmp_path) -> None:
    folder, _ = single
    broken = tmp_path / "broken"
    broken.mkdir()
    (broken / "model.json").write_text((folder / "model.json").read_text())
    with pytest.raises(EvcalError, match="model folder is missing"):
        evcal.discover(broken, errors="ols")


def test_a_folder_that_is_not_a_model_is_left_to_the_history_reader(tmp_path) -> None:
    with pytest.raises(HistoryError, match="is a folder; give the history file inside it"):
        evcal.discover(tmp_path, errors="ols")


def test_cli_discover_on_a_model_folder(single, panel, tmp_path) -> None:
    from typer.testing import CliRunner

    from evcal.cli import app

    folder, _ = single
    out = tmp_path / "found"
    res = CliRunner().invoke(app, ["discover", str(folder), "--errors", "ols", "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert (out / "suggestions.csv").is_file()
    # a panel folder needs --series: one line, exit 2, nothing written
    out = tmp_path / "found-panel"
    res = CliRunner().invoke(app, ["discover", str(panel), "--errors", "ols", "--out", str(out)])
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output and "name one with --series" in res.output
    assert len(res.output.strip().splitlines()) == 1
    assert not out.exists()


def test_cli_discover_series_option_reaches_the_panel_folder(panel, tmp_path) -> None:
    # `evcal discover PANEL --series P3` looks into that series (the same findings as the API)
    from typer.testing import CliRunner

    from evcal.cli import app

    out = tmp_path / "found"
    args = ["discover", str(panel), "--series", "P3", "--errors", "ols", "--out", str(out)]
    res = CliRunner().invoke(app, args)
    assert res.exit_code == 0, res.output
    api = evcal.discover(panel, series="P3", errors="ols")
    api.save(tmp_path / "api", chart=False)
    # the same findings, not only as many: the saved tables are the same text
    for name in ("suggestions.csv", "suggestions.yaml"):
        assert (out / name).read_text() == (tmp_path / "api" / name).read_text(), name
    res = CliRunner().invoke(app, ["discover", str(panel), "--errors", "ols", "--out", str(tmp_path / "x")])
    assert res.exit_code == 2 and "--series" in res.output and not (tmp_path / "x").exists()
