"""The workbook of plans reconciled across levels (``evcal plan --reconcile ... --out plan.xlsx``).

A first sheet, Levels, says how the plans were moved (the method, why the data chose it, MinT's
shrinkage intensity λ) and how far each level was moved (the adjustment sizes); then one sheet per
level (the bottom series first, then each level above, the grand total last as given), each the
level's rows of the long ``plan.csv`` with only that level's key columns: ``date``, the reconciled
``plan``, the level's own model's ``plan before`` and the ``adjustment``, amounts in whole units
(the cell keeps the exact number) and a total row of ``SUBTOTAL(109, ...)``, so filtering a sheet
to one product totals that product (:func:`evcal.plan.workbook_panel.total_row`). Notes comes last
with the caution that plans are estimates. Text from the user (key values, level names) is never a
formula (:mod:`evcal.formula_safe`, through :func:`evcal.plan.workbook.write_table`).

Examples
--------
>>> import pandas as pd, tempfile, pathlib
>>> table = pd.DataFrame({"level": ["store", "store", "total"], "store": ["north", "south", ""],
...                       "date": pd.to_datetime(["2027-01-03"] * 3), "plan": [110.0, 55.0, 165.0],
...                       "plan_before": [108.0, 54.0, 170.0], "adjustment": [2.0, 1.0, -5.0]})
>>> summary = pd.DataFrame({"level": ["store", "total"], "series": [2, 1], "mean_abs_pct": [1.8, 2.9],
...                         "max_abs_pct": [1.9, 2.9], "max_abs_units": [2.0, 5.0],
...                         "largest_at": ["store=north", "total"]})
>>> out = pathlib.Path(tempfile.mkdtemp()) / "plan.xlsx"
>>> write_levels_workbook(out, table, summary, ["method: ols"], []).name
'plan.xlsx'
>>> from openpyxl import load_workbook
>>> load_workbook(out).sheetnames
['Levels', 'store', 'total', 'Notes']
"""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd
from openpyxl.styles import Font

from evcal._files import atomic_path
from evcal.formula_safe import workbook_text
from evcal.plan.workbook import new_workbook, notes_sheet, write_table
from evcal.plan.workbook_panel import total_row

__all__ = ["LEVELS_SHEETS", "level_sheet_titles", "write_levels_workbook"]

#: the first and last sheets (a sheet per level between them): how evcal.outputs knows the workbook
LEVELS_SHEETS = ("Levels", "Notes")
#: the amounts of a level's sheet, totalled in its last row
AMOUNTS = ("plan", "plan_before", "adjustment")
#: what a planner reads over each column of the tables (plan.csv's codes are in a hidden row above)
HEADERS = {"plan_before": "plan before", "mean_abs_pct": "adjustments in all (% of plans before)",
           "max_abs_pct": "largest adjustment (% of its series' average period)",
           "max_abs_units": "largest adjustment (units)",
           "largest_at": "largest at"}
#: the adjustment sizes' formats: two decimals, as the command prints them (percentages are fractions)
SIZE_FORMATS = {"mean_abs_pct": "0.00%", "max_abs_pct": "0.00%", "max_abs_units": "#,##0.00"}
#: Excel's limit on a sheet name, and the characters a sheet name cannot hold
_MAX_TITLE = 31
_NOT_IN_TITLE = re.compile(r"[\[\]:*?/\\]")
_ABOUT = (
    "Levels: how the plans of every level were moved so that each parent is the sum of its bottom series "
    "(the method, why it was chosen, and MinT's shrinkage intensity λ), and how far each level was moved: "
    "the mean and largest adjustment in % of the level's own plan, the largest in units and where it was "
    "(percentage columns hold fractions in a percent format: 1.5 % is 0.015).",
    "One sheet per level (the bottom series first): the level's keys, date, plan (reconciled: these add up "
    "across levels), plan before (the level's own model's plan) and adjustment (plan − plan before). "
    "Amounts are shown in whole units; each cell keeps the exact number, so an adjustment below half a "
    "unit shows as 0. The last row totals the rows shown: filter a sheet to one series and it is that "
    "series' total. There is no low–high band here: intervals belong to each level's own plan (plan a "
    "level's model alone for its band).",
)


def level_sheet_titles(levels: list[str]) -> list[str]:
    """A sheet name for each level: Excel's rules (31 characters, no ``[]:*?/\\``), none the same as
    another or as Levels and Notes (Excel compares them ignoring case).

    Examples
    --------
    >>> level_sheet_titles(["product,store", "notes", "a/b", "a:b"])
    ['product,store', 'notes (2)', 'a_b', 'a_b (2)']
    """
    taken = {t.lower() for t in LEVELS_SHEETS}
    titles = []
    for name in levels:
        base = _NOT_IN_TITLE.sub("_", name).strip("'") or "level"
        title, n = base[:_MAX_TITLE], 1
        while title.lower() in taken:
            n += 1
            suffix = f" ({n})"
            title = base[:_MAX_TITLE - len(suffix)] + suffix
        taken.add(title.lower())
        titles.append(title)
    return titles


def write_levels_workbook(out_xlsx: str | Path, table: pd.DataFrame, summary: pd.DataFrame,
                          method_lines: list[str], notes: list[str]) -> Path:
    """Write the reconciled plans' workbook atomically (the whole file or nothing).

    Parameters
    ----------
    out_xlsx : path
        The ``.xlsx`` file to write.
    table : DataFrame
        The long reconciled plan: ``level``, key columns (blank where a level does not have them),
        ``date, plan, plan_before, adjustment`` (:func:`evcal.panel.levels.plan_levels`).
    summary : DataFrame
        The adjustment sizes per level, in the levels' order: ``level, series, mean_abs_pct,
        max_abs_pct, max_abs_units, largest_at``.
    method_lines : list of str
        How the plans were moved: method, why, λ (one line each), above the sizes.
    notes : list of str
        What the reader should know (series left out), on the Notes sheet.

    Returns
    -------
    Path
    """
    wb = new_workbook()
    ws = wb.create_sheet(LEVELS_SHEETS[0])
    ws.append(["Plans across levels: every parent's plan is the sum of its bottom series' plans. Plans are "
               "estimates; the decisions stay with the people who own them."])
    ws["A1"].font = Font(italic=True)
    for line in method_lines:
        ws.append([workbook_text(line)])
    ws.append([])
    header = write_table(ws, summary, headers=[HEADERS.get(str(c), str(c)) for c in summary.columns])
    # a reconciliation moves plans by fractions of a unit and of a percent: shown to two decimals here
    for j, c in enumerate(summary.columns, start=1):
        fmt = SIZE_FORMATS.get(str(c))
        for row in range(header + 1, ws.max_row + 1) if fmt else ():
            ws.cell(row, j).number_format = fmt
    levels = [str(lv) for lv in summary["level"]]
    keys = [c for c in table.columns if c not in ("level", "date", *AMOUNTS, "note")]
    for name, title in zip(levels, level_sheet_titles(levels), strict=True):
        rows = table[table["level"].astype(str) == name]
        mine = [c for c in keys if (rows[c].astype(str).str.strip() != "").any()]
        part = rows[[*mine, "date", *AMOUNTS]].reset_index(drop=True)
        sheet = wb.create_sheet(title)
        n = len(rows[mine].drop_duplicates()) if mine else 1
        sheet.append([workbook_text(f"Level {name}: the reconciled plan of its {n} series, their own model's "
                                    "plan before and the adjustment. Plans are estimates.")])
        sheet["A1"].font = Font(italic=True)
        columns = [str(c) for c in part.columns]
        header = write_table(sheet, part, headers=[HEADERS.get(c, c) for c in columns])
        total_row(sheet, columns, header, lambda c: c in AMOUNTS)
    notes_sheet(wb.create_sheet(LEVELS_SHEETS[1]), list(_ABOUT), notes)
    out = Path(out_xlsx)
    with atomic_path(out) as tmp:
        wb.save(tmp)
    return out
