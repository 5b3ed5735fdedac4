"""A panel plan says once which series, events and periods it planned at 0, not below.

The single plan of an additive model of a series that cannot be negative names its floored periods in
one note (evcal.plan.floor, tests/test_plan_floor.py); a panel plan floors the same numbers and says so
once for all its series: how many periods of how many series, the first few series with their events
and periods, in the summary's notes and the workbook's Notes sheet, whether a series was planned in a
block or by the single-series plan.

Invented data with a known truth (the idea of tests/test_plan_floor.py): sites open on weekdays (100 a
day), a stocktake day 60 lower; each site's weekend level is its own. A stocktake on Saturday
2024-03-02 would take a site whose weekend is below 60 below zero (7 invented sites, weekends 10 to 40);
the site whose weekend is 80 is planned at 80 - 60 = 20, not floored. The Wednesday stocktake
(2024-03-06) is 100 - 60 = 40 everywhere.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook
from typer.testing import CliRunner

from evcal.cli import app
from evcal.panel import fit_panel
from evcal.panel.planning import plan_panel

WEEKDAY, LIFT = 100.0, -60.0
HISTORY_DAYS = ["2021-02-10", "2021-09-15", "2022-02-09", "2022-09-14", "2023-02-08", "2023-09-13"]  # Weds
SAT, WED = "2024-03-02", "2024-03-06"
CAL = ("name: invented site\nevents:\n  - {name: stocktake, label: Stocktake day, when: {dates: ["
       + ", ".join(HISTORY_DAYS + [SAT, WED]) + "]}}\n")
#: invented sites and their weekend levels: the first seven below the stocktake's 60, the last above it
SITES = {"s1": 10.0, "s2": 15.0, "s3": 20.0, "s4": 25.0, "s5": 30.0, "s6": 35.0, "s7": 40.0, "s8": 80.0}
FLOORED_SITES = [s for s, w in SITES.items() if w < -LIFT]
FROM, TO = "2024-02-26", "2024-03-10"


def invented(weekend: float, seed: int) -> pd.DataFrame:
    """Invented daily sales 2021-2023: weekdays 100, weekends ``weekend``, the stocktake days 60 lower."""
    rng = np.random.default_rng(seed)
    dates = pd.date_range("2021-01-01", "2023-12-31", freq="D")
    level = np.where(dates.day_of_week >= 5, weekend, WEEKDAY)
    level = level + LIFT * dates.isin(pd.to_datetime(HISTORY_DAYS))
    return pd.DataFrame({"date": dates, "value": np.clip(level + rng.normal(0, 1.0, len(dates)), 0, None)})


def _frame(sites: dict[str, float]) -> pd.DataFrame:
    frame = pd.concat([invented(w, seed=i).assign(site=s) for i, (s, w) in enumerate(sites.items())],
                      ignore_index=True)
    frame["date"] = frame["date"].dt.strftime("%Y-%m-%d")
    return frame


@pytest.fixture(scope="module")
def panel_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("floornotes") / "m"
    fit_panel(_frame(SITES), CAL, ["site"], out=out, transform="none", errors="ols", progress=False)
    return out


def _floor_notes(notes: list[str]) -> list[str]:
    return [n for n in notes if n.startswith("planned at 0")]


def test_a_batched_panel_plan_names_its_floored_series_once(panel_dir):
    alone: list = []
    table = plan_panel(panel_dir, FROM, TO, n_sims=0, fallback=alone, progress=False)
    assert alone == []  # every series planned in its block
    sat = table[table["date"] == pd.Timestamp(SAT)].set_index("site")
    assert (sat.loc[FLOORED_SITES, "plan"] == 0.0).all()  # the known truth: 10..40 - 60 < 0
    assert sat.loc["s8", "plan"] == pytest.approx(80.0 + LIFT, abs=3.0)
    notes = _floor_notes(table.attrs["notes"])
    assert len(notes) == 1
    note = notes[0]
    # 7 sites, one Saturday each; the first five named with the event's label and the day, then a count
    assert note.startswith("planned at 0, not below, in 7 periods of 7 series")
    for s in FLOORED_SITES[:5]:
        assert f"site={s}: the Stocktake day lift on 2024-03-02 (Sat)" in note
    assert "site=s6" not in note and "site=s7" not in note and "and 2 more series" in note
    assert "site=s8" not in note and WED not in note  # not floored
    assert "base + lifts = 0" in note and len(note) < 900  # one line, short at any panel size


def test_the_series_planned_one_by_one_give_the_same_note(panel_dir):
    """The single-series plan path (batched=False: every series alone, as the per-series error models
    and broken blocks are) used to drop the series' plan notes."""
    blocks = plan_panel(panel_dir, FROM, TO, n_sims=0, progress=False)
    alone = plan_panel(panel_dir, FROM, TO, n_sims=0, batched=False, progress=False)
    assert _floor_notes(alone.attrs["notes"]) == _floor_notes(blocks.attrs["notes"])
    assert len(_floor_notes(alone.attrs["notes"])) == 1


def test_a_plan_that_floors_nothing_says_nothing(panel_dir):
    table = plan_panel(panel_dir, WED, WED, n_sims=0, progress=False)  # a weekday stocktake: 40, not 0
    assert (table["plan"] > 0).all() and _floor_notes(table.attrs["notes"]) == []
    one = plan_panel(panel_dir, FROM, TO, series=["site=s8"], n_sims=0, progress=False)
    assert _floor_notes(one.attrs["notes"]) == []


def test_a_panel_fitted_with_allow_negative_is_not_floored_and_has_no_note(tmp_path):
    out = tmp_path / "neg"
    fit_panel(_frame({"s1": 10.0, "s8": 80.0}), CAL, ["site"], out=out, transform="none", errors="ols",
              allow_negative=True, progress=False)
    table = plan_panel(out, SAT, SAT, n_sims=0, progress=False)
    assert table.set_index("site").loc["s1", "plan"] == pytest.approx(10.0 + LIFT, abs=3.0)
    assert _floor_notes(table.attrs["notes"]) == []


runner = CliRunner()


def test_the_summary_and_the_workbook_carry_the_note(panel_dir, tmp_path):
    csv, xlsx = tmp_path / "plan.csv", tmp_path / "plan.xlsx"
    for out in (csv, xlsx):
        res = runner.invoke(app, ["plan", str(panel_dir), "--from", FROM, "--to", TO, "--out", str(out),
                                  "--sims", "100"])
        assert res.exit_code == 0, res.output
        lines = [ln for ln in res.output.splitlines() if ln.startswith("Note: planned at 0")]
        assert len(lines) == 1 and "in 7 periods of 7 series" in lines[0]
    written = pd.read_csv(csv)
    sat = written[written["date"] == SAT].set_index("site")
    assert (sat.loc[FLOORED_SITES, ["plan", "low"]] == 0.0).all().all()  # each draw floored too
    notes = [r[0] for r in load_workbook(xlsx)["Notes"].iter_rows(values_only=True) if r[0]]
    assert sum(str(n).startswith("Plan note: planned at 0, not below, in 7 periods") for n in notes) == 1
    first = load_workbook(xlsx)["Plan"]["A1"].value
    assert "planned at 0" not in first  # the first line says how the plan was made (targets), not this
