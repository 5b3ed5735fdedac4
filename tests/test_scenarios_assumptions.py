"""What each scenario assumes, shown once per assumption: ``plan --scenario`` on the invented weekly shop
of ``test_scenarios_many`` (a made-up history with a known truth: a promotion of 300 units a week, a
tournament of 200 units in each of four weeks).

Two scenarios add a flash sale the shop never ran (so the model has no lift for it) at an assumed
+15 %, one of them also moving the tournament; one adds a new event with no lift at all, planned at
zero (``new_events="zero"``). A planner must see in the summary, the tables, the workbook and the report
that the +15 % is an assumption and where it holds, each line once.
"""

from __future__ import annotations

from pathlib import Path

import openpyxl
import pandas as pd
import pytest
from test_scenarios_many import (  # noqa: F401
    SCENARIOS,
    _dates,
    _week,
    calendar_text,
    result,
    runner,
    scenarios_section,
    shop,
)

from evcal.cli import app
from evcal.plan import make_plan, plan_scenarios
from evcal.plan.scenario_notes import NOTE_ROW, held_in

FLASH = ("  - name: flash-sale\n"
         f"    when: {{dates: {_dates([(_week(2024, 30), 1)])}}}\n"
         "    effect: {assume: 15%}\n")
MYSTERY = f"  - {{name: mystery-day, when: {{dates: {_dates([(_week(2024, 40), 1)])}}}}}\n"
ASSUMING = {  # name -> calendar, the reference first
    "booked": SCENARIOS["booked"],
    "flash": SCENARIOS["booked"] + FLASH,
    "flash-moved": calendar_text(tournament_week_2024=28) + FLASH,
    "mystery": SCENARIOS["booked"] + MYSTERY,
}
FLASH_LINE = "flash-sale: assumed +15% (only flash, flash-moved)"


def test_each_assumption_once_with_the_scenarios_it_holds_in(result) -> None:  # noqa: F811
    sc = plan_scenarios(result, "2024-01-01", "2024-12-31", ASSUMING, n_sims=0, new_events="zero")
    text = sc.summary()
    block = text[text.index("What the plans assume"):].splitlines()
    assert block[0] == "What the plans assume (one line each, with the scenarios it holds in):"
    assert f"  {FLASH_LINE}" in block
    assert "  mystery-day: new event, no lift (new_events='zero') (only mystery)" in block
    assert text.count("flash-sale: assumed +15%") == 1  # shared by two scenarios, shown once
    # the +15 % is what the plan used: the flash sale's week adds 15 % of its base (whole week, additive)
    plan = make_plan(result, "2024-01-01", "2024-12-31", ASSUMING["flash"], n_sims=0)
    week = plan.table[plan.table["date"] == _week(2024, 30) + pd.Timedelta(days=6)].iloc[0]
    assert week["lift:flash-sale"] == pytest.approx(0.15 * week["base"], rel=1e-9)
    ev = sc.events.set_index("event")
    assert ev.loc["flash-sale", "assumptions"] == FLASH_LINE
    assert ev.loc["flash-sale", "units_before_spread:flash"] == pytest.approx(week["lift:flash-sale"],
                                                                             rel=1e-9)
    assert ev.loc["mystery-day", "assumptions"].startswith("mystery-day: new event, no lift")
    assert ev.loc["promo", "assumptions"] == ""  # estimated from the history: nothing assumed


def test_a_note_about_no_event_has_its_own_row(result, tmp_path: Path) -> None:  # noqa: F811
    """A date file that stops inside the horizon is a note about its event, in the reference only; a
    note about no event of the table gets a ``[note]`` row (the whole-unit rounding here)."""
    dates = tmp_path / "promo-dates.csv"
    dates.write_text("start,end\n2024-04-08,2024-04-14\n")  # the promotion's file stops in April
    filed = ("name: invented shop, promotion from a file\nevents:\n"
             f"  - {{name: promo, when: {{file: {dates}}}}}\n"
             f"  - {{name: tournament, when: {{dates: {_dates([(_week(2024, 24), 4)])}}}}}\n")
    sc = plan_scenarios(result, "2024-01-01", "2024-12-31", {"filed": filed, "booked": SCENARIOS["booked"]},
                        n_sims=0, whole_units=True)
    lines = [ln.strip() for ln in sc.summary().splitlines()]
    assert any(ln.startswith(f"promo: {dates} lists dates up to 2024-04-14") and ln.endswith("(only filed)")
               for ln in lines), lines
    notes = sc.events[sc.events["event"] == NOTE_ROW]
    assert list(notes["assumptions"]) == [ln for ln in lines if ln.startswith("whole units")]
    assert notes["units_before_spread:filed"].isna().all()  # a note has no amount


def _run(shop: Path, out: Path) -> None:  # noqa: F811
    files = []
    for name, text in ASSUMING.items():
        (out.parent / f"{name}.yaml").write_text(text)
        files += ["--scenario", f"{name}={out.parent / f'{name}.yaml'}"]
    res = runner.invoke(app, ["plan", str(shop / "model"), "--from", "2024-01-01", "--to", "2024-12-31",
                              "--sims", "0", "--new-events", "zero", "--out", str(out), *files])
    assert res.exit_code == 0, res.output
    assert FLASH_LINE in res.output and "mystery-day: new event, no lift (--new-events zero) (only mystery)" \
        in res.output


def test_csv_workbook_and_report_show_the_assumptions(shop: Path, tmp_path: Path) -> None:  # noqa: F811
    out = tmp_path / "scenarios.csv"
    _run(shop, out)
    events = pd.read_csv(tmp_path / "scenarios-events.csv", keep_default_na=False).set_index("event")
    assert events.columns[-1] == "assumptions"
    assert events.loc["flash-sale", "assumptions"] == FLASH_LINE
    _run(shop, tmp_path / "scenarios.xlsx")
    rows = list(openpyxl.load_workbook(tmp_path / "scenarios.xlsx")["Events"].values)
    col = rows[0].index("assumptions")
    assert FLASH_LINE in [r[col] for r in rows[1:]]
    html = tmp_path / "report.html"
    section = scenarios_section(shop, out, html)
    assert "What the plans assume" in section and f"<li>{FLASH_LINE}</li>" in section
    assert "<li>mystery-day: new event, no lift (--new-events zero) (only mystery)</li>" in section


@pytest.mark.parametrize("holders, expected", [
    (["a", "b", "c"], "every scenario"), (["a", "c"], "every scenario but b"), (["b"], "only b"),
    (["b", "c"], "every scenario but a"), (["c"], "only c"),
])
def test_held_in_is_the_shorter_true_phrase(holders: list[str], expected: str) -> None:
    assert held_in(["a", "b", "c"], holders) == expected
