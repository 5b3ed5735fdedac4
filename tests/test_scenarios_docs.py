"""docs/outputs.md's "Scenarios" section is the contract of ``plan --scenario``'s files: every column
prefix, bracketed row and workbook sheet the command writes is named there (a renamed column or a new
row without its line in the contract fails here). The files are written by the command on the invented
weekly shop of ``test_scenarios_many`` (made-up data)."""

from __future__ import annotations

from pathlib import Path

import openpyxl
import pandas as pd
from test_scenarios_many import _cli, _scenario_args, shop  # noqa: F401

import evcal
from evcal.plan.scenario_events import PART_ROWS
from evcal.plan.scenario_notes import NOTE_ROW

OUTPUTS = Path(evcal.__file__).resolve().parents[1] / "docs" / "outputs.md"  # of the checkout under test


def _section() -> str:
    text = OUTPUTS.read_text(encoding="utf-8")
    start = text.index("\n## Scenarios\n")
    end = text.find("\n## ", start + 1)
    return text[start:end if end > 0 else None]


def _prefix(column: str) -> str:
    """``plan:booked`` -> ``plan:<name>`` as the contract writes a scenario's column."""
    head, colon, _ = column.partition(":")
    return f"{head}:<name>" if colon else column


def test_the_contract_names_what_the_command_writes(shop: Path, tmp_path: Path) -> None:  # noqa: F811
    section = _section()
    out = tmp_path / "scenarios.csv"
    assert _cli(shop, out, *_scenario_args(shop), "--round", "--total", "60000.4").exit_code == 0
    side = pd.read_csv(out)
    events = pd.read_csv(tmp_path / "scenarios-events.csv")
    assert "`scenarios-events.csv`" in section and "`<stem>-events.csv`" in section
    for column in [*side.columns, *events.columns]:
        assert f"`{_prefix(column)}`" in section, column
    assert "`total`" in section and side["date"].iloc[-1] == "total"
    for row in [*PART_ROWS, NOTE_ROW]:  # [outside drivers] needs a model with drivers: named from the code
        assert f"`{row}`" in section, row
    assert set(events["event"]) - set(PART_ROWS) - {NOTE_ROW} <= {"promo", "tournament"}  # events' names
    book = tmp_path / "scenarios.xlsx"
    assert _cli(shop, book, *_scenario_args(shop)).exit_code == 0
    for sheet in openpyxl.load_workbook(book, read_only=True).sheetnames:
        assert f"`{sheet}`" in section, sheet
