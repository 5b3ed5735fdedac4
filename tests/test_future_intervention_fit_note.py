"""The fit's note for an intervention that starts after the history (a known future change).

The history is invented (``tests/test_plan.py``'s ``monthly_history``: a made-up monthly shop,
2016-01 .. 2023-12). An intervention of the fitted calendar that starts after it has nothing to be
estimated from: the lifts table, ``evcal show`` and the warnings say when it starts and what a plan
does with it (its assumed size, or left out with a note), as :mod:`evcal.plan.future` then does.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

import evcal
from evcal.cli import app
from evcal.plan import make_plan

sys.path.insert(0, str(Path(__file__).parent))
from test_plan import EASTER_CAL, monthly_history  # noqa: E402

RUN = CliRunner()
CAL = EASTER_CAL + (
    "interventions:\n"
    "  - {name: price-rise, type: level_shift, start: 2024-04-01, effect: {assume: -5%}}\n"
    "  - {name: new-store, type: level_shift, start: 2024-06-01}\n"
    "  - {name: old-pulse, type: pulse, start: 2015-06-01}\n"  # before the history: no occurrence, not future
)
ASSUMED = "starts 2024-04-01, after the history: not fitted; plans use its assumed -5%"
BARE = ("starts 2024-06-01, after the history: not fitted; with no assumed size a plan leaves it out (and "
        "says so): add `effect: {assume: N%}` to it in the calendar to plan it")


@pytest.fixture(scope="module")
def model(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("future-note")
    monthly_history().to_csv(folder / "history.csv", index=False)
    (folder / "cal.yaml").write_text(CAL)
    fit = RUN.invoke(app, ["fit", str(folder / "history.csv"), "-c", str(folder / "cal.yaml"), "--errors",
                           "ols", "--out", str(folder / "model")])
    assert fit.exit_code == 0, fit.output
    (folder / "fit.txt").write_text(fit.output)
    return folder


def test_lifts_table_says_when_it_starts_and_what_plans_use(model: Path) -> None:
    """Main: 'no occurrence inside the fitted history; not fitted' for all three."""
    lifts = pd.read_csv(model / "model" / "lifts.csv").set_index("event")
    assert lifts.loc["price-rise", "note"] == ASSUMED
    assert lifts.loc["new-store", "note"] == BARE
    assert lifts.loc["old-pulse", "note"] == "no occurrence inside the fitted history; not fitted"
    assert (lifts.loc[["price-rise", "new-store", "old-pulse"], "identifiable"] == "no").all()
    assert lifts.loc[["price-rise", "new-store"], "lift_pct"].isna().all()  # nothing estimated


def test_fit_show_and_warnings_say_it(model: Path) -> None:
    """Main: the warnings read 'price-rise: no occurrence in the history; listed, not fitted'."""
    warnings = json.loads((model / "model" / "model.json").read_text(encoding="utf-8"))["warnings"]
    assert f"price-rise: {ASSUMED}" in warnings and f"new-store: {BARE}" in warnings
    assert "old-pulse: no occurrence in the history; listed, not fitted" in warnings
    shown = RUN.invoke(app, ["show", str(model / "model")])
    assert shown.exit_code == 0, shown.output
    for output in ((model / "fit.txt").read_text(), shown.output):
        flat = " ".join(output.split())
        assert f"warning : price-rise: {ASSUMED}" in flat and f"warning : new-store: {BARE}" in flat
        assert "price-rise: no occurrence" not in flat and "new-store: no occurrence" not in flat


def test_the_plan_does_what_the_note_says(model: Path) -> None:
    """The note's promise holds: the plan from the model folder applies -5 % from 2024-04-01 and leaves
    new-store out with its own note."""
    res = evcal.load_model(model / "model")
    plan = make_plan(res, "2024", "2024", n_sims=0)
    assert plan.future == {"price-rise": pytest.approx(-0.05)}
    assert "lift:new-store" not in plan.table.columns
    note = "intervention new-store starts after the history (2024-06-01)"
    assert any(n.startswith(note) for n in plan.notes)


def test_a_panel_series_reads_the_same_note() -> None:
    """Two invented stores (the same shop, one 1.3 times the other): each series' lifts row says it too."""
    from evcal.panel import fit_panel

    h = monthly_history()
    panel = fit_panel(pd.concat([h.assign(store="a"), h.assign(store="b", value=h["value"] * 1.3)]), CAL,
                      ["store"])
    notes = panel.lifts.set_index(["store", "event"])["note"]
    assert [notes[(s, "price-rise")] for s in "ab"] == [ASSUMED, ASSUMED]
    assert [notes[(s, "new-store")] for s in "ab"] == [BARE, BARE]
