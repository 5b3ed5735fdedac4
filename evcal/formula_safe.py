"""Text that a spreadsheet must not run: formula-safe CSV columns and workbook cells.

Calendar names and labels are free text, and a spreadsheet runs a CSV cell
that begins with ``=``, ``+``, ``-``, ``@`` (in some programs a tab or carriage
return) as a formula, e.g. ``=HYPERLINK("http://...?q="&A1, "click")``. The rule
(OWASP, CSV injection): such a text cell, or one beginning with ``'``, gets a
``'`` in front (:func:`guard_text`; :func:`unguard_text` is its exact inverse);
numeric columns are never touched. Python's csv writer quotes only the
characters of its line terminator, so a file with a carriage return in a cell
is written with CRLF line ends (RFC 4180, :func:`write_csv`). In workbooks text
is stored as a text cell, never a formula, without a quote; characters an
.xlsx cannot hold become U+FFFD (:func:`formula_safe_cell`). One implementation
for every writer: plan and compare tables, workbook sheets, model folders.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from typing import Any

import numpy as np
import pandas as pd

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
    return QUOTE + text if text.startswith((*FORMULA_TRIGGERS, QUOTE)) else text


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


def _str_hits(values: Iterable[Any], test: Callable[[pd.Series], pd.Series]) -> np.ndarray:
    """Which of ``values`` are strings passing ``test`` (vectorised, on a Series of those strings).

    Numbers inside a mixed column are not text; a categorical is looked at through its categories.
    """
    values = pd.Series(values)
    if isinstance(values.dtype, pd.CategoricalDtype):
        return np.append(_str_hits(values.cat.categories, test), False)[values.cat.codes.to_numpy()]
    if values.dtype == object:
        is_str = values.map(lambda v: isinstance(v, str)).to_numpy(dtype=bool)
    elif pd.api.types.is_string_dtype(values.dtype):
        is_str = values.notna().to_numpy(dtype=bool)
    else:
        return np.zeros(len(values), dtype=bool)
    hits = np.zeros(len(values), dtype=bool)
    if is_str.any():
        hits[is_str] = test(values[is_str].astype(str)).to_numpy(dtype=bool)
    return hits


def _map_text(frame: pd.DataFrame, fn: Callable[[str], str], prefixes: tuple[str, ...]) -> pd.DataFrame:
    """A copy of ``frame`` with ``fn`` on every text cell and column name starting with ``prefixes``.

    Only the columns with such a cell are copied: a panel's millions of key cells
    mostly hold nothing to change.
    """
    def starts(texts: pd.Series) -> pd.Series:
        return texts.str.startswith(prefixes)

    out = frame.copy(deep=False)
    for j in range(frame.shape[1]):
        series = frame.iloc[:, j]
        if isinstance(series.dtype, pd.CategoricalDtype):
            cats = series.cat.categories
            hits = _str_hits(cats, starts)
            if hits.any():
                out.isetitem(j, series.cat.rename_categories(
                    [fn(c) if hit else c for c, hit in zip(cats, hits, strict=True)]))
        elif _is_text_column(series):  # numbers, dates, booleans: written as they are
            hits = _str_hits(series, starts)
            if hits.any():
                new = series.copy()
                new[hits] = [fn(v) for v in series[hits]]
                out.isetitem(j, new)
    if not isinstance(frame.columns, pd.MultiIndex):
        out.columns = pd.Index([fn(c) if isinstance(c, str) else c for c in frame.columns],
                               name=frame.columns.name)
    return out


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


def write_csv(frame: pd.DataFrame, target: Any, **to_csv: Any) -> None:
    """``frame.to_csv(target, **to_csv)`` with formula-safe text (every evcal CSV writer uses this).

    ``frame`` is not modified; ``to_csv`` is passed to :meth:`pandas.DataFrame.to_csv`.

    Examples
    --------
    >>> import io
    >>> buf = io.StringIO()
    >>> write_csv(pd.DataFrame({"event": ["@x"], "lift_pct": [-2.5]}), buf, index=False)
    >>> buf.getvalue()
    "event,lift_pct\\n'@x,-2.5\\n"
    """
    safe = formula_safe_frame(frame)
    texts = [safe.columns, *(column for _, column in safe.items() if _is_text_column(column))]
    if "lineterminator" not in to_csv and any(
            _str_hits(t, lambda s: s.str.contains("\r", regex=False)).any() for t in texts):
        to_csv["lineterminator"] = "\r\n"
    fmt = to_csv.get("float_format")
    plain = not {"sep", "decimal", "quoting"} & set(to_csv)
    if isinstance(fmt, str) and to_csv.get("index") is False and plain:
        # the numbers formatted here, as pandas formats them (``fmt % x``; NaN as na_rep), without
        # pandas' Python call per cell: a panel plan has millions (after the guard: numbers are not text)
        safe = safe.copy(deep=False)
        for j in range(safe.shape[1]):
            if safe.dtypes.iloc[j] == np.float64:
                safe.isetitem(j, _formatted(safe.iloc[:, j].to_numpy(), fmt, to_csv.get("na_rep", "")))
        to_csv.pop("float_format")
    safe.to_csv(target, **to_csv)


def _formatted(x: np.ndarray, fmt: str, na_rep: str) -> np.ndarray:
    """``fmt % v`` for each float ``v`` of ``x`` (``na_rep`` for NaN), as an object array; zeros once."""
    out = np.full(len(x), na_rep, dtype=object)
    zero = x == 0.0
    out[zero & ~np.signbit(x)] = fmt % 0.0
    out[zero & np.signbit(x)] = fmt % -0.0
    rest = ~zero & ~np.isnan(x)
    out[rest] = list(map(fmt.__mod__, x[rest].tolist()))
    return out


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
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE  # here: openpyxl takes 0.1 s to import

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
    if isinstance(cell.value, str):
        clean = workbook_text(cell.value)
        if clean != cell.value:  # openpyxl's value setter is the slow part of a large sheet
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
        for cell in item if isinstance(item, tuple | list) else (item,):
            formula_safe_cell(cell)
