"""The Excel workbook: plan, lifts, seasonal index and past occurrences.

A planner opens this next to their own sheets, so every number is an Excel
number (never text), every date an Excel date, the header row stays in view
when scrolling, and columns are wide enough to read. A last sheet, Notes,
repeats the caution that the plan is an estimate. Text (event names, labels,
notes: free text from the user's calendar) is always a text cell, never a
formula (:mod:`evcal.formula_safe`).

Examples
--------
>>> import pandas as pd, tempfile, pathlib
>>> plan = pd.DataFrame({"date": pd.to_datetime(["2027-01-03"]), "base": [100.0],
...                      "plan": [110.0], "low": [95.0], "high": [125.0]})
>>> empty = pd.DataFrame()
>>> out = pathlib.Path(tempfile.mkdtemp()) / "plan.xlsx"
>>> write_workbook(out, plan, empty, empty, empty).name
'plan.xlsx'
"""

from __future__ import annotations

import datetime as dt
import math
from pathlib import Path

import numpy as np
import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from evcal._files import atomic_path
from evcal.formula_safe import formula_safe_sheet, workbook_text
from evcal.plan.workbook_parts import PARTS_SHEET, write_parts_sheet
from evcal.plan.workbook_plan import PlanLayout, is_amount, write_plan_sheet

CAUTION = (
    "This plan is an estimate. It is built from past sales and the events in the "
    "calendar file, and it is uncertain: the low–high band shows by how much. Use it "
    "as a starting point; the decisions it informs (orders, staffing, targets, "
    "budgets) belong to the people who own them."
)
SHEETS = ("Plan", "Lifts", "Seasonal index", "Past occurrences")
DATE_FORMAT = "yyyy-mm-dd"
UNITS_FORMAT = "#,##0"  # whole units shown; the cell keeps the exact number
PCT_FORMAT = "0.0%"  # a *_pct column is written as a fraction (31.5 % is 0.315) in a percent format
HEADER_FILL = PatternFill("solid", fgColor="1E2B2F")
HEADER_FONT = Font(bold=True, color="FFFFFF")
_MAX_WIDTH = 60
_DATE_COLUMNS = {"date", "start", "end"}


def write_workbook(
    out_xlsx: str | Path,
    plan: pd.DataFrame,
    lifts: pd.DataFrame,
    profile: pd.DataFrame,
    occurrences: pd.DataFrame,
    notes: list[str] | None = None,
    drivers: pd.DataFrame | None = None,
    layout: PlanLayout | None = None,
) -> Path:
    """Write the four-sheet workbook (plus Drivers when there are any, and Notes) atomically.

    Parameters
    ----------
    out_xlsx : path
        The ``.xlsx`` file to write.
    plan : DataFrame
        ``date, base, plan, low, high, lift:<event>..., [assumptions]``; a
        DatetimeIndex is taken as the ``date`` column.
    lifts, profile, occurrences : DataFrame
        As in the model folder's ``lifts.csv``, ``profile.csv`` and
        ``occurrences.csv``. An empty frame gives a sheet with a note.
    notes : list of str, optional
        The plan's notes (what it left out and why), added to the Notes sheet.
    drivers : DataFrame, optional
        The model's outside drivers as in ``drivers.csv``: a Drivers sheet after the four.
    layout : PlanLayout, optional
        How the plan was spread (:func:`evcal.plan.workbook_plan.plan_layout`): its targets,
        factors, actuals and the seasonal index's dates. Without it (a plan read back from
        plan.csv) the Plan sheet has one target, the plan's own total.

    Returns
    -------
    Path
    """
    wb = new_workbook()
    labels = event_labels(lifts)
    plan = _with_date_column(plan)
    cells = None
    if plan.empty and not len(plan.columns):
        _write_sheet(wb.create_sheet(SHEETS[0]), plan)
    else:
        cells = write_plan_sheet(wb.create_sheet(SHEETS[0]), plan, labels, layout)
    _write_sheet(wb.create_sheet(SHEETS[1]), lifts if lifts is not None else pd.DataFrame())
    _write_sheet(wb.create_sheet(SHEETS[2]), _dated_profile(profile, layout))
    _write_sheet(wb.create_sheet(SHEETS[3]), _with_date_column(occurrences))
    if drivers is not None and len(drivers):
        _write_sheet(wb.create_sheet("Drivers"), drivers)
    notes = list(notes or [])
    if layout is not None and layout.parts is not None and cells is not None:
        write_parts_sheet(wb.create_sheet(PARTS_SHEET), plan, layout, cells)
    elif layout is not None and layout.parts_note:  # a plan evcal could not split (a year-to-date re-plan)
        notes.append(layout.parts_note)
    _notes_sheet(wb.create_sheet("Notes"), notes, parts=layout is not None and layout.parts is not None)
    out = Path(out_xlsx)
    with atomic_path(out) as tmp:
        wb.save(tmp)
    return out


def new_workbook() -> Workbook:
    """An empty workbook marked as evcal's (its creator: how ``--out`` knows evcal's own file,
    :mod:`evcal.outputs`)."""
    wb = Workbook()
    wb.properties.creator = "evcal"
    wb.remove(wb.active)
    return wb


def event_labels(lifts: pd.DataFrame | None) -> dict[str, str]:
    """Event code -> its label from the calendar (the lifts table's ``label``), where it has one."""
    if lifts is None or "event" not in getattr(lifts, "columns", ()) or "label" not in lifts.columns:
        return {}
    return {str(e): str(lb) for e, lb in zip(lifts["event"], lifts["label"], strict=True)
            if isinstance(lb, str) and lb.strip()}


def _dated_profile(profile: pd.DataFrame | None, layout: PlanLayout | None) -> pd.DataFrame:
    """The seasonal index with each period's date in the plan's first year beside its number."""
    if profile is None or profile.empty or "period" not in profile.columns or layout is None \
            or not layout.season_dates:
        return profile if profile is not None else pd.DataFrame()
    out = profile.copy()
    dates = [layout.season_dates.get(int(p)) for p in out["period"]]
    out.insert(list(out.columns).index("period") + 1, "date", pd.to_datetime(dates))
    return out


def _with_date_column(frame: pd.DataFrame | None) -> pd.DataFrame:
    if frame is None:
        return pd.DataFrame()
    if isinstance(frame.index, pd.DatetimeIndex) and "date" not in frame.columns:
        frame = frame.rename_axis("date").reset_index()
    return frame


def cell_value(value: object, column: str) -> object:
    """A value as openpyxl should store it: float/int, bool, datetime, str or None.

    Examples
    --------
    >>> cell_value(np.float64(2.5), "plan")
    2.5
    >>> cell_value("2027-03-28", "start")
    datetime.datetime(2027, 3, 28, 0, 0)
    >>> cell_value(float("nan"), "low") is None
    True
    """
    if value is None:
        return None
    if isinstance(value, str):
        if not value.strip():
            return None
        if column in _DATE_COLUMNS:
            ts = pd.to_datetime(value, errors="coerce", format="ISO8601")
            return workbook_text(value) if pd.isna(ts) else ts.to_pydatetime().replace(tzinfo=None)
        return workbook_text(value)
    if isinstance(value, pd.Timestamp | dt.datetime | dt.date | np.datetime64):
        ts = pd.Timestamp(value)
        return None if pd.isna(ts) else ts.to_pydatetime().replace(tzinfo=None)
    if isinstance(value, bool | np.bool_):
        return bool(value)
    if isinstance(value, int | np.integer):
        return int(value)
    if isinstance(value, float | np.floating):
        v = float(value)
        return v if math.isfinite(v) else None
    if pd.isna(value):  # pd.NA, NaT
        return None
    return workbook_text(str(value))


def number_format(column: str, value: object) -> str | None:
    """The number format of a cell: dates, percent fractions (``*_pct``), whole units for amounts."""
    if column in _DATE_COLUMNS or isinstance(value, dt.datetime):
        return DATE_FORMAT
    if isinstance(value, bool):
        return None
    if isinstance(value, float):
        if column.endswith("_pct"):  # every percentage column (lift, interval, added, net, pooled...)
            return PCT_FORMAT
        if column == "index":
            return "0.00"
        return UNITS_FORMAT
    if isinstance(value, int):
        return UNITS_FORMAT if is_amount(column) else "0"  # a whole-unit plan (--round) reads 12,345
    return None


def _write_sheet(ws: Worksheet, frame: pd.DataFrame) -> None:
    write_table(ws, frame)


def write_table(ws: Worksheet, frame: pd.DataFrame, headers: list[str] | None = None) -> int:
    """Write ``frame`` below what ``ws`` holds: a styled header row, one row per record, number formats,
    widths, filter and frozen header; text never a formula.

    Parameters
    ----------
    headers : list of str, optional
        What the header row shows (e.g. an event's label for ``lift:<event>``); the column names when
        left out, else the column names go in a hidden row above the headers (plan.csv's codes).

    Returns
    -------
    int
        The sheet row of the header.
    """
    if frame.empty and not len(frame.columns):
        ws.append(["nothing to show"])
        ws.column_dimensions["A"].width = 24
        return ws.max_row
    columns = [str(c) for c in frame.columns]
    shown = columns if headers is None else headers
    if headers is not None:
        ws.append([workbook_text(c) for c in columns])
        ws.row_dimensions[ws.max_row].hidden = True
    ws.append([workbook_text(c) for c in shown])
    header_row = ws.max_row
    for cell in ws[header_row]:
        cell.fill = HEADER_FILL
        cell.font = HEADER_FONT
        cell.alignment = Alignment(vertical="center")
    widths = [len(c) + 2 for c in shown]
    for row in frame.itertuples(index=False, name=None):
        values = [_as_fraction(cell_value(v, c), c) for v, c in zip(row, columns, strict=True)]
        ws.append(values)
        r = ws.max_row
        for j, (v, c) in enumerate(zip(values, columns, strict=True)):
            fmt = number_format(c, v)
            if v is not None and fmt:
                ws.cell(row=r, column=j + 1).number_format = fmt
            widths[j] = max(widths[j], _display_len(v))
    for j, w in enumerate(widths, start=1):
        ws.column_dimensions[get_column_letter(j)].width = min(w + 1, _MAX_WIDTH)
    formula_safe_sheet(ws.iter_rows())  # text from the calendar is text, never a live formula
    ws.freeze_panes = ws.cell(header_row + 1, 1)
    ws.auto_filter.ref = f"A{header_row}:{get_column_letter(len(columns))}{ws.max_row}"
    return header_row


def _as_fraction(value: object, column: str) -> object:
    """A ``*_pct`` number as the fraction a spreadsheet's percent format shows (31.5 -> 0.315)."""
    if column.endswith("_pct") and isinstance(value, float):
        return value / 100.0
    return value


def _display_len(value: object) -> int:
    if value is None:
        return 0
    if isinstance(value, dt.datetime):
        return 10
    if isinstance(value, float):
        return len(f"{value:,.0f}")
    return len(str(value))


def _notes_sheet(ws: Worksheet, plan_notes: list[str], parts: bool = False) -> None:
    notes_sheet(ws, [
        "Plan: change the target (the yellow cell, named target; target_2027... when each year has its "
        "own) and every period re-spreads: each amount is its model value (the model columns) times the "
        "factor, target over the model plan (less the actuals so far in a year-to-date re-plan), so each "
        "period keeps its share of the base-plus-lifts profile. base is the trend and regular season with "
        "no event; each event's column (headed by its label; the hidden row above the headers holds the "
        "codes of plan.csv, lift:<event>) is its contribution in units; low and high bound the plan's "
        "interval. The last row totals each column.",
        "Lifts: % over base across the event's window with a 95 % interval (the *_pct columns hold "
        "fractions in a percent format: 31.5 % is 0.315); "
        "identifiable = no means the history cannot separate the event from the season; weak means "
        "the lift rests on too little to trust (its note says why).",
        "Seasonal index: the base profile over one cycle, mean 100; date is the period's date in the "
        "plan's first year.",
        "Past occurrences: what each past occurrence of an event added, in units and %.",
        *(["Parts: each plan period split into trend, regular season, level shifts, error forecast, mean "
           "correction, each event, driver and closure (in the model's units, before the target), then the "
           "spread to the target and the rounding as formulas on the Plan sheet; sum of parts equals the "
           "Plan sheet's amount, also after the target changes."] if parts else []),
    ], plan_notes)


def notes_sheet(ws: Worksheet, about: list[str], plan_notes: list[str]) -> None:
    """The Notes sheet: the caution that a plan is an estimate, what each sheet holds, the plan's notes."""
    ws.append(["About this workbook"])
    ws["A1"].font = Font(bold=True, size=13)
    for line in (CAUTION, *about, *(f"Plan note: {n}" for n in plan_notes)):
        ws.append([workbook_text(line)])
    ws.column_dimensions["A"].width = 110
    for row in ws.iter_rows(min_row=2):
        row[0].alignment = Alignment(wrap_text=True, vertical="top")
