"""Issue 15 item 7 for panels: the settings left open are chosen once for the panel, and reported.

The panel is invented data with a known truth (named as such): daily sales of 30 products over three
years, a weekday pattern, an annual wave of harmonics 1 and 3 only (so 3 Fourier pairs draw it), a
+30 % lift on Easter Sunday and the 10 days before it (Easter dates of ``dateutil.easter``), 8 %
noise. The choice is made on the sum of the series that share their observed periods (see
``evcal.engine.panel_choice.panel_settings``).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from dateutil.easter import easter
from typer.testing import CliRunner

from evcal.cli import app

runner = CliRunner()

CAL = "name: invented panel\nevents:\n  - {name: easter, when: {easter: 0}, before: auto}\n"


def _long(n_series: int = 30) -> pd.DataFrame:
    rng = np.random.default_rng(5)
    d = pd.date_range("2019-01-01", "2021-12-31", freq="D")
    t = np.arange(len(d))
    weekday = np.array([1.0, 1.0, 1.05, 1.1, 1.3, 1.5, 0.8])[d.day_of_week]
    run = np.zeros(len(d))
    for y in range(2019, 2022):
        e = pd.Timestamp(easter(y))
        run[(d >= e - pd.Timedelta(days=10)) & (d <= e)] = 1.0
    frames = []
    for i in range(n_series):
        wave = 0.3 * np.sin(2 * np.pi * t / 365.25 + i % 5) + 0.1 * np.cos(6 * np.pi * t / 365.25)
        y = 50 * (1 + i % 7) * weekday * np.exp(wave + np.log(1.3) * run + rng.normal(0, 0.08, len(t)))
        frames.append(pd.DataFrame({"product": f"P{i:02d}", "date": d, "value": y.round(2)}))
    # one product that starts a year late: a second design group, left out of the sum
    late = frames[0][frames[0]["date"] >= "2020-01-01"].assign(product="LATE")
    return pd.concat([*frames, late], ignore_index=True)


@pytest.fixture(scope="module")
def fitted(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("aicc_panel")
    _long().to_csv(root / "long.csv", index=False)
    (root / "cal.yaml").write_text(CAL, encoding="utf-8")
    res = runner.invoke(app, ["fit", str(root / "long.csv"), "-c", str(root / "cal.yaml"), "--out",
                              str(root / "m"), "--series-col", "product"])
    assert res.exit_code == 0, res.output
    return root / "m"


def test_panel_chooses_once_on_the_summed_series_and_panel_json_says_so(fitted: Path) -> None:
    """Invented truth: 10-day run-up, 3 Fourier pairs. Before: the panel kept the stand-ins (8 days, 10
    pairs) and recorded no choice (fails on main: fourier_order 10, event_windows absent, choices [])."""
    doc = json.loads((fitted / "panel.json").read_text(encoding="utf-8"))
    design = doc["design"]
    assert design["event_windows"] == {"easter": 10}
    assert design["fourier_order"] == 3
    assert doc["options"]["fourier_order"] == 3  # what every series was fitted with
    by = {c["setting"]: c for c in design["choices"]}
    assert set(by) == {"before:easter", "fourier_order"}
    assert all("chosen once on the panel's 30 series" in c["reason"] for c in by.values())
    assert {c["value"] for c in by["fourier_order"]["candidates"]} >= {"2", "3", "10", "25"}
    # the saved calendar has the chosen days, so a refit of one series uses the panel's window
    assert "before: 10" in doc["calendar_text"]
    lifts = pd.read_csv(fitted / "lifts.csv")
    easter_lift = lifts[lifts["event"] == "easter"]["lift_pct"].median()
    assert 27.0 < easter_lift < 33.0  # truth +30 %


def test_panel_show_prints_the_choices(fitted: Path) -> None:
    res = runner.invoke(app, ["show", str(fitted)])
    assert res.exit_code == 0, res.output
    lines = [ln for ln in res.output.splitlines() if ln.startswith("chosen  :")]
    assert len(lines) == 2
    assert lines[0].startswith("chosen  : run-up of easter (days before): 10")
    assert lines[1].startswith("chosen  : annual Fourier pairs: 3")
