"""The workbook's Parts sheet: every plan period split into the parts ``evcal explain`` shows for one.

One row per plan period, one column per part (trend, regular season, each level shift or ramp, the
error forecast, the mean correction, each event, outside driver and closure: :func:`evcal.plan.explain.
plan_part_frame`, the one computation), then the spread to the target, the whole units when the plan is
rounded, a check column that adds the row up and the Plan sheet's amount beside it.

The parts are in the model's units, before the target; they do not change with it. The Plan sheet's
amounts are formulas (model amount × factor, :mod:`evcal.plan.workbook_plan`), so the lines that do
change with the target are formulas too: ``spread to the target`` is ``(factor − 1)`` times the row's
parts (the model's number) and ``whole units`` is the Plan sheet's amount less ``factor`` times them, on
the Plan sheet's factor and amount. A planner who types a new target sees every row of this sheet
follow, still adding up to the Plan sheet.
"""

from __future__ import annotations

from typing import Any

import pandas as pd
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from evcal.errors import PlanError
from evcal.formula_safe import formula_safe_cell, workbook_text
from evcal.plan.workbook_plan import PlanCells, PlanLayout

__all__ = ["PARTS_SHEET", "layout_parts", "write_parts_sheet"]

PARTS_SHEET = "Parts"
SPREAD, WHOLE, CHECK, PLAN_SHEET = "spread to the target", "whole units", "sum of parts", "Plan sheet"
CENTS_FORMAT = "#,##0.00"
_LATER = ("target", "rounding")  # the kinds the sheet writes as formulas on the Plan sheet's target


def layout_parts(plan: Any) -> tuple[pd.DataFrame | None, dict[str, str], str]:
    """The plan's parts before the target (periods × parts), each part's kind, and the sheet's header
    line (or, without parts, why there are none).

    Examples
    --------
    >>> parts, kinds, note = layout_parts(plan)                           # doctest: +SKIP
    >>> kinds["trend"], "Shapley" in note                                 # doctest: +SKIP
    ('base', True)
    """
    from evcal.plan.explain import plan_part_frame

    try:
        frame, kinds = plan_part_frame(plan)
    except PlanError as exc:  # a year-to-date re-plan: not split
        return None, {}, f"Parts: not written: {exc}"
    keep = [c for c in frame.columns if kinds.get(c) not in _LATER]
    log = getattr(plan.result, "transform", "none") == "log"
    how = ("Log model: the trend (with the constant) is the level the other base parts act on; the regular "
           "season, level shifts, error forecast and mean correction share the rest of the base by their "
           "Shapley value on the log base, and overlapping events share their joint effect the same way."
           if log else "Additive model: each part is its terms' coefficients times their columns.")
    note = ("Each plan period split into its parts (evcal explain MODEL --date D shows one period with a "
            "line of words per part). " + how + " The parts are in the model's units, before the spread "
            "to the target: 'spread to the target' is (factor - 1) x the model plan and 'whole units' the "
            "rounding, both formulas on the Plan sheet, so they follow a new target there; 'sum of parts' "
            "adds the row up and equals the Plan sheet's amount. An estimate: the people who own the "
            "decision decide.")
    return frame[keep], {c: kinds[c] for c in keep}, note


def write_parts_sheet(ws: Worksheet, table: pd.DataFrame, layout: PlanLayout, cells: PlanCells) -> None:
    """Write the Parts sheet on ``ws``: a header line, the parts' kinds, the header, one row per plan
    period (``table``'s dates) and a total row."""
    from evcal.plan.workbook import HEADER_FILL, HEADER_FONT

    parts = layout.parts
    assert parts is not None and len(parts) == len(table)
    names = [str(c) for c in parts.columns]
    later = [SPREAD] + ([WHOLE] if layout.whole_units else [])
    heads = ["date", *names, *later, CHECK, PLAN_SHEET]
    ws.cell(1, 1, "Parts of each period's plan").font = Font(bold=True, size=13)
    line = ws.cell(2, 1, workbook_text(layout.parts_note))
    line.font, line.alignment = Font(italic=True), Alignment(wrap_text=True, vertical="top")
    ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=min(len(heads), 12))
    ws.row_dimensions[2].height = 90
    kinds = ["kind", *(layout.part_kinds.get(n, "") for n in names), "target",
             *(["rounding"] if layout.whole_units else []), "check", "check"]
    for j, kind in enumerate(kinds, start=1):
        formula_safe_cell(ws.cell(3, j, kind)).font = Font(italic=True)
    header_row, first = 4, 5
    for j, head in enumerate(heads, start=1):
        h = formula_safe_cell(ws.cell(header_row, j, head))  # event names come from the calendar: text
        h.fill, h.font, h.alignment = HEADER_FILL, HEADER_FONT, Alignment(vertical="center", wrap_text=True)
    last_part = get_column_letter(1 + len(names) + len(later))
    for i, (date, row) in enumerate(zip(table["date"], parts.itertuples(index=False, name=None),
                                        strict=True)):
        r, p = first + i, cells.first_row + i
        ws.cell(r, 1, pd.Timestamp(date).to_pydatetime()).number_format = "yyyy-mm-dd"
        values = [float(v) for v in row]
        model = f"SUM(B{r}:{get_column_letter(1 + len(names))}{r})"  # the model's number: its parts
        formulas = [f"=({cells.factors[i]}-1)*{model}"]
        if layout.whole_units:
            formulas.append(f"=Plan!{cells.plan}{p}-{cells.factors[i]}*{model}")
        formulas += [f"=SUM(B{r}:{last_part}{r})", f"=Plan!{cells.plan}{p}"]
        for j, v in enumerate([*values, *formulas], start=2):
            ws.cell(r, j, v).number_format = CENTS_FORMAT
    total = first + len(table)
    ws.cell(total, 1, "Total").font = Font(bold=True)
    for j in range(2, len(heads) + 1):
        c = get_column_letter(j)
        cell = ws.cell(total, j, f"=SUM({c}{first}:{c}{total - 1})")
        cell.number_format, cell.font = CENTS_FORMAT, Font(bold=True)
    ws.column_dimensions["A"].width = 14
    for j, head in enumerate(heads[1:], start=2):
        ws.column_dimensions[get_column_letter(j)].width = min(max(len(head) + 2, 12), 30)
    ws.freeze_panes = ws.cell(first, 2)
