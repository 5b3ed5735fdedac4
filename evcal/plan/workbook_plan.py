"""The workbook's Plan sheet: a target a planner changes and formulas that re-spread the plan to it.

Every amount of the spread plan is the model's own amount times one factor per target
(:mod:`evcal.plan.spread`): ``factor = (target - actuals so far) / model plan``. The sheet
writes exactly that as formulas, so changing the target cell (a defined name, ``target``,
or ``target_2027``... when each year has its own) re-spreads every period, keeping its share
of the model's base-plus-lifts profile. The model's amounts before the target stay beside
the plan as plain values (the ``model`` columns), and a total row sums every column.

Layout, top to bottom: one row per target (the target, the model plan it spreads, the
actuals so far when the plan is a year-to-date re-plan, the factor), a line saying what
to edit, a hidden row of column codes (``lift:<event>``, as in plan.csv), the header row
(the events' labels), the actuals' periods (when there are any), the plan's periods and
the total row.

Whole units (``plan --round``): each amount is ``ROUND(model x factor, 0)`` (``low``
rounded down, ``high`` up), so the sheet shows the same integers as plan.csv when opened;
after the target changes the rounded periods can miss it by a few units (the sheet shows
by how much), because largest-remainder apportionment is not a spreadsheet formula.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter, quote_sheetname
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.worksheet import Worksheet

from evcal.formula_safe import formula_safe_cell, workbook_text
from evcal.io.weeklabels import ISO_WEEK_COLUMN, iso_week_labels
from evcal.plan.spread import AMOUNT_COLUMNS, DRIVER_PREFIX

WHOLE_FORMAT = "#,##0"
FACTOR_FORMAT = "0.000000"
DATE_FORMAT = "yyyy-mm-dd"
_INPUT_FILL = PatternFill("solid", fgColor="FFF2CC")
_HEADER_FILL = PatternFill("solid", fgColor="1E2B2F")
_HEADER_FONT = Font(bold=True, color="FFFFFF")
_ROUNDING = {"low": "ROUNDDOWN", "high": "ROUNDUP"}
#: the sheets that hold formulas evcal writes: the Plan sheet and the Parts sheet that follows its target
FORMULA_SHEETS = ("Plan", "Parts")
_CELL, _FACTOR = r"[A-Z]{1,3}\d+", r"factor(?:_\d+)?"
#: every formula the Plan and Parts sheets write, and nothing else (a calendar's text never becomes one)
_OWN_FORMULA = re.compile(
    rf"=(?:(?:ROUND|ROUNDDOWN|ROUNDUP)\({_CELL}\*{_FACTOR},0\)|{_CELL}\*{_FACTOR}"
    rf"|SUM\({_CELL}:{_CELL}\)|\(B\d+-F\d+\)/D\d+|B\d+/D\d+"
    # the Parts sheet (evcal.plan.workbook_parts): the spread line, the whole units, the Plan sheet's amount
    rf"|\({_FACTOR}-1\)\*SUM\({_CELL}:{_CELL}\)|Plan!{_CELL}-{_FACTOR}\*SUM\({_CELL}:{_CELL}\)|Plan!{_CELL})")


def is_own_formula(text: str) -> bool:
    """Whether ``text`` is one of the formulas the Plan and Parts sheets write (a cell reference times a
    factor, a SUM of a range, a factor, the Parts sheet's spread line and its reference to the Plan
    sheet): any other formula in an evcal workbook would be text that leaked.

    Examples
    --------
    >>> is_own_formula("=ROUND(N5*factor,0)"), is_own_formula("=SUM(C5:C12)")
    (True, True)
    >>> is_own_formula("=(factor_2027-1)*SUM(B5:H5)"), is_own_formula("=Plan!C5-factor*SUM(B5:H5)")
    (True, True)
    >>> is_own_formula('=HYPERLINK("http://x.example","click")')
    False
    """
    return bool(_OWN_FORMULA.fullmatch(text))


@dataclass
class PlanCells:
    """Where the Plan sheet put each period (for the Parts sheet's formulas): the sheet row of the first
    plan period, the column letter of the spread ``plan``, and each period's factor name (``factor``,
    ``factor_2027``...)."""

    first_row: int
    plan: str
    factors: list[str]


@dataclass
class PlanLayout:
    """How the plan table was spread, so the sheet can spread it again.

    Attributes
    ----------
    groups : ndarray
        One label per plan row: rows sharing a label share a target (a year for targets
        by year, one label for a single target or none).
    factors : dict
        Group -> the factor the model's amounts were multiplied by (1 when not spread).
    whole_units : bool
        The plan is in whole units (``Plan.whole_units``).
    actuals : DataFrame or None
        ``date, actual`` of the periods before the plan (a year-to-date re-plan); they count
        against the target of the first plan row's group.
    """

    groups: np.ndarray
    factors: dict = field(default_factory=dict)
    whole_units: bool = False
    actuals: pd.DataFrame | None = None
    season_dates: dict[int, pd.Timestamp] = field(default_factory=dict)
    parts: pd.DataFrame | None = None
    part_kinds: dict[str, str] = field(default_factory=dict)
    parts_note: str = ""


def plan_layout(plan: Any) -> PlanLayout:
    """The :class:`PlanLayout` of a :class:`~evcal.plan.result.Plan`.

    One target for the whole horizon (``total=``, or no target: then the target cell holds the
    model's own total), or one per year (``totals=``). ``season_dates``: each position of the
    seasonal index dated in the plan's first year (the period's date label, as in the plan).
    """
    from evcal.design.seasonal import season_position
    from evcal.plan.horizon import period_dates, period_years

    years = period_years(plan.periods, plan.label)
    by_year = plan.target is not None and plan.target_total is None
    groups = years if by_year else np.zeros(len(years), dtype=int)
    factors = ({int(y): f for y, f in plan.factors.items()} if by_year
               else {0: next(iter(plan.factors.values()))} if plan.factors else {})
    year = int(years[0]) if len(years) else None
    season_dates: dict[int, pd.Timestamp] = {}
    if year is not None:
        cycle = pd.period_range(pd.Timestamp(year, 1, 1), pd.Timestamp(year, 12, 31), freq=plan.freq)
        for pos, date in zip(season_position(cycle), period_dates(cycle, plan.label), strict=True):
            if date.year == year:  # a week dated in the year next door is not this year's date
                season_dates.setdefault(int(pos), date)
    layout = PlanLayout(groups=groups, factors=factors, whole_units=bool(plan.whole_units),
                        actuals=getattr(plan, "actuals", None), season_dates=season_dates)
    if getattr(plan, "calendar", None) is not None:  # a plan made by make_plan: its parts for the Parts sheet
        from evcal.plan.workbook_parts import layout_parts

        layout.parts, layout.part_kinds, layout.parts_note = layout_parts(plan)
    return layout


def is_amount(column: str) -> bool:
    """Whether a plan column is an amount in units (spread with the target)."""
    return column in AMOUNT_COLUMNS or column.startswith(("lift:", DRIVER_PREFIX))


def readable(column: str, labels: dict[str, str]) -> str:
    """The header a planner reads for a plan column: the event's label for ``lift:<event>``.

    Examples
    --------
    >>> readable("lift:spring-sale", {"spring-sale": "Spring sale weekend"})
    'Spring sale weekend'
    >>> readable("driver:price", {})
    'driver: price'
    """
    if column.startswith("lift:"):
        code = column[len("lift:"):]
        return labels.get(code) or code
    if column.startswith(DRIVER_PREFIX):
        return f"driver: {column[len(DRIVER_PREFIX):]}"
    return column


def write_plan_sheet(ws: Worksheet, table: pd.DataFrame, labels: dict[str, str],
                     layout: PlanLayout | None) -> PlanCells:
    """Write ``table`` (the plan, ``date`` first) on ``ws`` with target cells and formulas; returns where
    the periods are."""
    from evcal.plan.workbook import cell_value

    n = len(table)
    if layout is None:  # a plan read back from plan.csv: one target, the plan's own total
        layout = PlanLayout(groups=np.zeros(n, dtype=int))
    groups = np.asarray(layout.groups)
    order = list(pd.unique(groups))
    actuals = layout.actuals if layout.actuals is not None and len(layout.actuals) else None
    columns = [str(c) for c in table.columns]
    amounts = [c for c in columns if is_amount(c)]
    shown = columns[:1] + (["actual"] if actuals is not None else []) + columns[1:]
    model_cols = {c: len(shown) + 1 + j for j, c in enumerate(amounts)}  # 1-based sheet columns
    col = {c: j for j, c in enumerate(shown, start=1)}

    top = len(order)  # target rows 1..top, then the line on what to edit, the codes, the header
    codes_row, header_row = top + 2, top + 3
    first_actual = header_row + 1
    n_actual = 0 if actuals is None else len(actuals)
    first_plan = first_actual + n_actual
    last_plan = first_plan + n - 1
    total_row = last_plan + 1

    def letter(c: str, model: bool = False) -> str:
        return get_column_letter(model_cols[c] if model else col[c])

    names = {g: ("" if len(order) == 1 else f"_{g}") for g in order}
    group_rows = {g: np.flatnonzero(groups == g) + first_plan for g in order}
    plan_values = (pd.to_numeric(table["plan"], errors="coerce").fillna(0.0).to_numpy(dtype=float)
                   if "plan" in table else np.zeros(n))
    factor_of = np.array([float(layout.factors.get(g, 1.0) or 1.0) for g in groups])
    actual_sum = 0.0 if actuals is None else float(pd.to_numeric(actuals["actual"]).sum())

    # the target block
    for i, g in enumerate(order, start=1):
        rows = group_rows[g]
        has_actuals = actuals is not None and g == groups[0]
        target = float(plan_values[rows - first_plan].sum()) + (actual_sum if has_actuals else 0.0)
        model_range = f"{letter('plan', True)}{rows[0]}:{letter('plan', True)}{rows[-1]}"
        actual_ref = (f"SUM({letter('actual')}{first_actual}:{letter('actual')}{first_plan - 1})"
                      if has_actuals else "")
        ws.cell(i, 1, "Target" + (f" {g}" if len(order) > 1 else "")).font = Font(bold=True)
        cell = ws.cell(i, 2, round(target) if layout.whole_units else target)
        cell.fill, cell.number_format, cell.font = _INPUT_FILL, WHOLE_FORMAT, Font(bold=True)
        ws.cell(i, 3, "model plan")
        ws.cell(i, 4, f"=SUM({model_range})").number_format = WHOLE_FORMAT
        ws.cell(i, 5, "actuals so far" if has_actuals else None)
        if has_actuals:
            ws.cell(i, 6, f"={actual_ref}").number_format = WHOLE_FORMAT
        ws.cell(i, 7, "factor")
        rest = f"(B{i}-F{i})" if has_actuals else f"B{i}"
        ws.cell(i, 8, f"={rest}/D{i}").number_format = FACTOR_FORMAT
        sheet = quote_sheetname(ws.title)
        ws.parent.defined_names[f"target{names[g]}"] = DefinedName(
            f"target{names[g]}", attr_text=f"{sheet}!$B${i}")
        ws.parent.defined_names[f"factor{names[g]}"] = DefinedName(
            f"factor{names[g]}", attr_text=f"{sheet}!$H${i}")
    ws.cell(top + 1, 1, workbook_text(
        "Change the target (yellow): every amount is its model value (the model columns on the right) "
        "times the factor, so the plan adds up to the target" + (" less the actuals so far" if actuals
                                                                   is not None else "") + "."
        + (" Whole units: each period is rounded, so the total can miss the target by a few units."
           if layout.whole_units else ""))).font = Font(italic=True)

    # codes (hidden) and readable headers
    all_codes = shown + [f"model:{c}" for c in amounts]
    heads = [readable(c, labels) for c in shown] + [f"model {readable(c, labels)}" for c in amounts]
    for j, (code, head) in enumerate(zip(all_codes, heads, strict=True), start=1):
        formula_safe_cell(ws.cell(codes_row, j, code))  # text from the calendar is text, never a formula
        h = formula_safe_cell(ws.cell(header_row, j, head))
        h.fill, h.font, h.alignment = _HEADER_FILL, _HEADER_FONT, Alignment(vertical="center", wrap_text=True)
    ws.row_dimensions[codes_row].hidden = True

    # the actuals so far
    sold = actuals if actuals is not None else pd.DataFrame({"date": [], "actual": []})
    labelled = ISO_WEEK_COLUMN in col  # --week-labels: the actual rows are labelled too, as in plan.csv
    weeks = iso_week_labels(sold["date"]).tolist() if labelled else [None] * len(sold)
    for k, (date, value, week) in enumerate(zip(sold["date"], sold["actual"], weeks, strict=True)):
        r = first_actual + k
        ws.cell(r, 1, cell_value(pd.Timestamp(date), "date")).number_format = DATE_FORMAT
        ws.cell(r, col["actual"], cell_value(value, "actual")).number_format = WHOLE_FORMAT
        if labelled:
            ws.cell(r, col[ISO_WEEK_COLUMN], week)

    # the plan's periods: formulas for the spread amounts, values for the model and the rest
    for i, row in enumerate(table.itertuples(index=False, name=None)):
        r = first_plan + i
        factor = f"factor{names[groups[i]]}"
        for c, value in zip(columns, row, strict=True):
            if not is_amount(c):
                v = cell_value(value, c)
                cell = formula_safe_cell(ws.cell(r, col[c], v))
                if c == "date" and v is not None:
                    cell.number_format = DATE_FORMAT
                continue
            v = cell_value(value, c)
            model = ws.cell(r, model_cols[c], None if v is None else v / factor_of[i])
            model.number_format = WHOLE_FORMAT
            if v is None:
                continue
            formula = f"{letter(c, True)}{r}*{factor}"
            if layout.whole_units:
                formula = f"{_ROUNDING.get(c, 'ROUND')}({formula},0)"
            ws.cell(r, col[c], f"={formula}").number_format = WHOLE_FORMAT

    # the total row
    ws.cell(total_row, 1, "Total").font = Font(bold=True)
    for c in (["actual"] if actuals is not None else []) + amounts:
        for model in ([False, True] if c != "actual" else [False]):
            j = model_cols[c] if model else col[c]
            lo = first_actual if c == "actual" else first_plan
            hi = first_plan - 1 if c == "actual" else last_plan
            ref = f"{get_column_letter(j)}{lo}:{get_column_letter(j)}{hi}"
            total = ws.cell(total_row, j, f"=SUM({ref})")
            total.number_format, total.font = WHOLE_FORMAT, Font(bold=True)

    widths = {j: len(h) + 2 for j, h in enumerate(heads, start=1)}
    widths[1] = max(widths[1], 14)
    for j, w in widths.items():
        ws.column_dimensions[get_column_letter(j)].width = min(max(w, 11), 40)
    ws.freeze_panes = ws.cell(header_row + 1, 2)
    ws.auto_filter.ref = f"A{header_row}:{get_column_letter(len(heads))}{last_plan}"
    return PlanCells(first_row=first_plan, plan=letter("plan") if "plan" in col else "",
                     factors=[f"factor{names[g]}" for g in groups])
