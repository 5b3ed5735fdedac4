"""The workbook of a panel plan: one Plan sheet (the series' keys first) and a Notes sheet.

The sheet is the long table of ``plan.csv`` with the single plan's formats and headers
(:mod:`evcal.plan.workbook`): the events' labels over their columns (the codes of plan.csv
in a hidden row above), dates as dates, amounts in whole units. A line above the table says
how the plan was made (each series by its own model, or how a panel target was allocated),
and a total row sums every amount with ``SUBTOTAL(109, ...)``, so filtering the sheet to one
series or one product family shows that selection's total. There is no target cell: a panel
target is allocated over the series (:mod:`evcal.panel.targets`), which is not a formula a
planner can re-run by editing one cell; re-plan with ``--total`` or ``--totals`` instead.

Examples
--------
>>> import pandas as pd, tempfile, pathlib
>>> table = pd.DataFrame({"store": ["north", "south"], "date": pd.to_datetime(["2027-01-03"] * 2),
...                       "base": [100.0, 50.0], "plan": [110.0, 55.0], "low": [95.0, 45.0],
...                       "high": [125.0, 66.0], "lift:sale": [10.0, 5.0]})
>>> out = pathlib.Path(tempfile.mkdtemp()) / "plan.xlsx"
>>> write_panel_workbook(out, table, {"sale": "Spring sale"}, ["an invented note"]).name
'plan.xlsx'
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pandas as pd
from openpyxl.styles import Font
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from evcal._files import atomic_path
from evcal.formula_safe import workbook_text
from evcal.plan.workbook import PCT_FORMAT, UNITS_FORMAT, new_workbook, notes_sheet, write_table
from evcal.plan.workbook_plan import is_amount, readable

__all__ = ["PANEL_SHEETS", "total_row", "write_panel_workbook"]

#: the sheets of a panel plan's workbook
PANEL_SHEETS = ("Plan", "Notes")
_ABOUT = (
    "Plan: one row per series and period, the series' keys first (filter them to see one series). base is "
    "the trend and regular season with no event; each event's column (headed by its label; the hidden row "
    "above the headers holds the codes of plan.csv, lift:<event>) is its contribution in units; low and "
    "high bound the plan's interval. The last row totals the rows shown: filter to a series and it is "
    "that series' total. The line above the table says how the plan was made; a target is changed by "
    "planning again (evcal plan --total or --totals), not in the sheet. An allocated plan (evcal plan "
    "--allocate) adds share (the child's share of its parent's plan in the period) and own_plan (the child's "
    "own plan before allocation, bottom-up): filter to one parent and the total row sets its top-down plan "
    "beside the sum of its children's own plans."
)
#: an allocated plan's columns: each child's own plan (totalled like the amounts) and its share (a fraction);
#: the names of :mod:`evcal.panel.rollup`, which comes after this step
OWN_PLAN, SHARE = "own_plan", "share"


def write_panel_workbook(out_xlsx: str | Path, table: pd.DataFrame, labels: dict[str, str],
                         notes: list[str]) -> Path:
    """Write a panel plan's workbook atomically (the whole file or nothing).

    Parameters
    ----------
    out_xlsx : path
        The ``.xlsx`` file to write.
    table : DataFrame
        The panel plan as :func:`evcal.panel.planning.plan_panel` returns it (keys, ``date``,
        amounts, ``lift:<event>``..., ``assumptions``), perhaps with ``iso_week`` after ``date``.
    labels : dict
        Event code -> its label from the calendar, for the headers.
    notes : list of str
        The plan's notes (a panel target's allocation rule first when there is one).

    Returns
    -------
    Path
    """
    wb = new_workbook()
    ws = wb.create_sheet(PANEL_SHEETS[0])
    ws.append([workbook_text(how_made(notes))])
    ws["A1"].font = Font(italic=True)
    columns = [str(c) for c in table.columns]
    header_row = write_table(ws, table, headers=[readable(c, labels) for c in columns])
    if SHARE in columns:
        j = columns.index(SHARE) + 1
        for row in range(header_row + 1, ws.max_row + 1):
            ws.cell(row, j).number_format = PCT_FORMAT
    total_row(ws, columns, header_row, lambda c: is_amount(c) or c == OWN_PLAN)
    notes_sheet(wb.create_sheet(PANEL_SHEETS[1]), [_ABOUT], notes)
    out = Path(out_xlsx)
    with atomic_path(out) as tmp:
        wb.save(tmp)
    return out


def total_row(ws: Worksheet, columns: list[str], header_row: int, totalled: Callable[[str], bool]) -> int:
    """A bold Total row under the table whose header is ``header_row``: ``SUBTOTAL(109, ...)`` of each
    column ``totalled`` says yes to, so filtering the sheet totals the rows it shows; returns its row.

    Examples
    --------
    >>> from openpyxl import Workbook
    >>> ws = Workbook().active
    >>> for row in (["store", "plan"], ["north", 110.0], ["south", 55.0]):
    ...     ws.append(row)
    >>> r = total_row(ws, ["store", "plan"], 1, lambda c: c == "plan")
    >>> r, ws.cell(r, 1).value, ws.cell(r, 2).value
    (4, 'Total', '=SUBTOTAL(109,B2:B3)')
    """
    first, last = header_row + 1, ws.max_row
    row = last + 1
    ws.cell(row, 1, "Total").font = Font(bold=True)
    for j, c in enumerate(columns, start=1):
        if not totalled(c) or last < first:
            continue
        ref = f"{get_column_letter(j)}{first}:{get_column_letter(j)}{last}"
        cell = ws.cell(row, j, f"=SUBTOTAL(109,{ref})")  # 109: the sum of the rows a filter shows
        cell.number_format, cell.font = UNITS_FORMAT, Font(bold=True)
    return row


def how_made(notes: list[str]) -> str:
    """The Plan sheet's first line: how the plan was made (a panel target's rule, from the plan's notes).

    Examples
    --------
    >>> how_made([])
    'Each series is planned by its own model; no target was given. Plans are estimates.'
    >>> how_made(["the target 100 is allocated over 2 series", "whole units: each adds up to its target"])
    'How the plan was made: the target 100 is allocated over 2 series; whole units: each adds up to its \
target. Plans are estimates.'
    """
    rules = [n.rstrip(". ") for n in notes if "target" in n or "allocated" in n]
    if rules:
        return "How the plan was made: " + "; ".join(rules) + ". Plans are estimates."
    return "Each series is planned by its own model; no target was given. Plans are estimates."
