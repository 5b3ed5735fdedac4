"""The bundled demo data (invented: Fernhollow Garden Centres) are what their generator says.

The demo history is invented data with a known truth. These tests check that
the committed files are exactly what the seeded generator writes, that the
closures and the stock-out are in the data as described, and that the
calendar file encodes the same dates the generator used. Easter and Christmas
dates are checked against the ``holidays`` library (reference library), which
the generator does not use (it takes Easter from ``dateutil.easter``).
"""

from __future__ import annotations

import importlib.util
import json
import subprocess
import sys
from pathlib import Path
from types import ModuleType

import holidays
import numpy as np
import pandas as pd
import pytest

from evcal.calendar import load_calendar
from evcal.demo import DEMO_DATA
from evcal.io import read_history

DEMO = DEMO_DATA  # the package data evcal demo reads
FILES = ("fernhollow-history.csv", "fernhollow-calendar.yaml", "truth.json")


@pytest.fixture(scope="module")
def gen() -> ModuleType:
    spec = importlib.util.spec_from_file_location("fernhollow_generate", DEMO / "generate.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look the module up while it loads
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def sim(gen: ModuleType) -> tuple[pd.DataFrame, pd.Series]:
    return gen.simulate()


@pytest.fixture(scope="module")
def truth() -> dict:
    return json.loads((DEMO / "truth.json").read_text())


def test_generator_reproduces_committed_files(tmp_path: Path) -> None:
    run = subprocess.run(
        [sys.executable, str(DEMO / "generate.py"), "--out", str(tmp_path)],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert run.returncode == 0, run.stderr
    for name in FILES:
        assert (tmp_path / name).read_bytes() == (DEMO / name).read_bytes(), name


def test_history_file_reads_as_weekly_sundays() -> None:
    h = read_history(DEMO / "fernhollow-history.csv")
    assert h.freq == "W-SUN" and h.label == "end" and not h.missing
    assert str(h.dates()[0].date()) == "2020-01-05" and str(h.dates()[-1].date()) == "2026-11-29"
    assert len(h.values) == 361
    assert (h.values == np.round(h.values)).all() and (h.values > 0).all()


def test_closure_days_are_exactly_zero(sim: tuple[pd.DataFrame, pd.Series]) -> None:
    daily, _ = sim
    gb = holidays.country_holidays("GB", subdiv="ENG", years=range(2019, 2027))
    christmas = [d for d, name in gb.items() if name == "Christmas Day"]
    # Easter Sunday is two days after Good Friday (holidays library names Good Friday).
    easter_sundays = [d + pd.Timedelta(days=2) for d, name in gb.items() if name == "Good Friday"]
    closed = sorted(pd.Timestamp(d) for d in christmas + easter_sundays)
    closed = [d for d in closed if daily.index[0] <= d <= daily.index[-1]]
    assert len(closed) == 6 + 7  # Christmas 2020-2025, Easter Sunday 2020-2026
    assert (daily.loc[closed, "sales"] == 0.0).all()
    assert (daily.loc[closed, "demand"] > 0).all()
    assert list(daily.index[daily["sales"] == 0.0]) == closed  # and no other day is zero


def test_stock_out_weeks(sim: tuple[pd.DataFrame, pd.Series], truth: dict) -> None:
    daily, weekly = sim
    days = daily.loc["2023-05-08":"2023-05-28"]
    assert len(days) == 21 and days.index[0].day_name() == "Monday"
    np.testing.assert_allclose(days["sales"], 0.4 * days["demand"])
    assert daily["stockout"].sum() == 21
    history = pd.read_csv(DEMO / "fernhollow-history.csv", index_col="date", parse_dates=True)["value"]
    demand = daily["demand"].resample("W-SUN").sum()
    ratio = history / demand
    weeks = pd.to_datetime(["2023-05-14", "2023-05-21", "2023-05-28"])
    sigma = truth["noise"]["sigma"]
    # Each stock-out week is 40 % of demand up to the weekly noise (4 sigma).
    assert ratio.loc[weeks].between(0.4 * np.exp(-4 * sigma), 0.4 * np.exp(4 * sigma)).all()
    for week in (pd.Timestamp("2023-05-07"), pd.Timestamp("2023-06-04")):
        assert 0.85 < ratio.loc[week] < 1.15  # the weeks either side are full demand
    assert truth["exclusions"][0]["lost_fraction"] == pytest.approx(0.6)
    assert truth["exclusions"][0]["reason"].startswith("stock-out:")


def test_noise_is_as_stated(sim: tuple[pd.DataFrame, pd.Series], truth: dict) -> None:
    daily, weekly = sim
    log_noise = np.log(weekly / daily["sales"].resample("W-SUN").sum())
    # 361 draws: the sample sd of N(0, 0.03^2) is within 0.003 of 0.03 with high probability.
    assert abs(log_noise.std() - truth["noise"]["sigma"]) < 0.003
    assert abs(log_noise.mean()) < 0.006


def test_truth_lists_the_scenario(truth: dict) -> None:
    events = truth["events"]
    assert {k: v["lift_pct"] for k, v in events.items()} == {
        "easter-weekend": 40.0,
        "mothering-sunday": 25.0,
        "summer-tournament": 15.0,
        "spring-sale": 30.0,
    }
    sale_2024 = next(o for o in events["spring-sale"]["occurrences"] if o["start"] == "2024-05-09")
    assert sale_2024["strength"] == 1.5 and sale_2024["lift_pct"] == pytest.approx(100 * (1.3**1.5 - 1))
    tournament = [(o["start"], o["end"]) for o in events["summer-tournament"]["occurrences"]]
    assert tournament == [("2022-11-20", "2022-12-18"), ("2026-06-11", "2026-07-11")]
    assert truth["interventions"]["new-store-opening"] == {
        "type": "level_shift",
        "start": "2022-03-07",
        "lift_pct": 12.0,
    }
    assert truth["assumed"]["centenary-weekend"]["assume_pct"] == 20.0
    assert truth["seed"] == 20261201


def test_added_units_match_the_daily_data(sim: tuple[pd.DataFrame, pd.Series], truth: dict) -> None:
    daily, _ = sim
    # Mothering Sunday's window never meets a closure: added = lift x no-event sales.
    for occ in truth["events"]["mothering-sunday"]["occurrences"]:
        window = daily.loc[occ["window_start"] : occ["window_end"]]
        no_event = window["sales"] / 1.25
        assert occ["added_units"] == pytest.approx(0.25 * no_event.sum(), abs=0.1)
        assert len(window) == 7 and window.index[-1].day_name() == "Sunday"


def test_calendar_file_encodes_the_generator_dates(gen: ModuleType, sim: tuple) -> None:
    daily, _ = sim
    cal = load_calendar(DEMO / "fernhollow-calendar.yaml")
    occ = cal.occurrences(2020, 2027)
    from_file = {
        (r.event, pd.Timestamp(r.start).date(), pd.Timestamp(r.end).date(), float(r.strength))
        for r in occ.itertuples()
    }
    from_generator = {
        (e.name, s, end, float(k))
        for e in gen.events()
        for s, end, k in e.occurrences
        if s.year >= 2020 and end.year <= 2027
    }
    assert from_file == from_generator
    closed = cal.closed_days(daily.index[0], daily.index[-1])
    assert (closed.to_numpy() == daily["closed"].to_numpy()).all()
    assert cal.event("mothering-sunday").before == 6
    assert cal.event("centenary-weekend").effect.assume == pytest.approx(0.20)
