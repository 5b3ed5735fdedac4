"""Load a history table from CSV, Parquet, Excel or a DataFrame, untouched.

Nothing is interpreted here: CSV cells stay text so a bad cell can be quoted
exactly as the user typed it. Each row keeps the number a spreadsheet shows
(the header is row 1, the first data row is row 2).
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from evcal.errors import HistoryError
from evcal.io.history import period_dates

CSV_SUFFIXES = {".csv", ".txt", ".tsv"}
PARQUET_SUFFIXES = {".parquet", ".pq"}
EXCEL_SUFFIXES = {".xlsx", ".xlsm"}
_EMPTY = "the file is empty; expected a header row (e.g. date,value) and one row per period"


@dataclass(frozen=True)
class RawTable:
    """The table as read, plus what messages need to point at a cell."""

    frame: pd.DataFrame
    rows: list[int]  # spreadsheet row number of each frame row
    source: str


def load_table(
    source: str | Path | pd.DataFrame,
    sheet: str | int | None = None,
    date_col: str = "date",
) -> RawTable:
    """Read ``source`` into a frame with spreadsheet row numbers; fail in one line.

    A DataFrame whose dates are its index (a DatetimeIndex or PeriodIndex)
    rather than a ``date_col`` column is accepted as if the index were that
    column. The caller's frame is never modified. A frame names itself in
    messages by ``frame.attrs["source"]`` (a database query's result), else ``<frame>``.
    """
    if isinstance(source, pd.DataFrame):
        frame, name = source.copy(), str(source.attrs.get("source", "<frame>"))
        frame.columns = [str(c) for c in frame.columns]
        if date_col not in frame.columns and isinstance(frame.index, pd.DatetimeIndex | pd.PeriodIndex):
            index = frame.index
            if isinstance(index, pd.PeriodIndex):  # weekly dates name the week's last day, others the first
                index = period_dates(index, "end" if index.freqstr.startswith("W") else "start")
            frame.index = pd.RangeIndex(len(frame))
            frame.insert(0, date_col, index)
        frame = frame.reset_index(drop=True)
    else:
        frame, name = _read_file(Path(source), sheet), Path(source).name
    frame.columns = [str(c) for c in frame.columns]
    if frame.shape[1] == 0:
        raise HistoryError(f"{name}: {_EMPTY}")
    if len(frame) == 0 or bool(frame.apply(_is_blank_column).all(axis=1).all()):
        raise HistoryError(f"{name}: no data rows below the header; expected one row per period")
    return RawTable(frame, list(range(2, len(frame) + 2)), name)


def _read_file(path: Path, sheet: str | int | None) -> pd.DataFrame:
    if not path.exists():
        raise HistoryError(f"{path}: no such file")
    if path.is_dir():
        raise HistoryError(f"{path}: is a folder; give the history file inside it")
    suffix = path.suffix.lower()
    if path.stat().st_size == 0:
        raise HistoryError(f"{path.name}: {_EMPTY}")
    if suffix in CSV_SUFFIXES:
        return _read_csv(path)
    if suffix in PARQUET_SUFFIXES:
        return _read_parquet(path)
    if suffix in EXCEL_SUFFIXES:
        return _read_excel(path, sheet)
    raise HistoryError(
        f"{path.name}: unsupported file type {suffix or '(none)'!r}; use .csv, .parquet or .xlsx"
    )


def _is_blank_column(col: pd.Series) -> pd.Series:
    text = col.astype("string").str.strip()
    return col.isna() | text.isna() | (text == "")


def _read_csv(path: Path) -> pd.DataFrame:
    sep = _sniff_separator(path)
    for encoding in ("utf-8-sig", "cp1252"):
        try:
            # Blank lines are kept (and dropped later) so row numbers match the file.
            return pd.read_csv(
                path,
                sep=sep,
                dtype=str,
                keep_default_na=False,
                skip_blank_lines=False,
                encoding=encoding,
            )
        except UnicodeDecodeError:
            continue
        except pd.errors.EmptyDataError:
            raise HistoryError(f"{path.name}: {_EMPTY}") from None
        except pd.errors.ParserError as err:
            detail = str(err).strip().splitlines()[-1]
            raise HistoryError(
                f"{path.name}: not a readable CSV table ({detail}); expected one row per "
                "period with the same number of columns in every row"
            ) from None
    raise HistoryError(f"{path.name}: cannot decode the file; save it as UTF-8 CSV")


def _sniff_separator(path: Path) -> str:
    """',' unless the header line has no comma but a ';' or a tab (spreadsheet exports)."""
    with path.open("rb") as fh:
        head = fh.readline().decode("utf-8", errors="replace")
    if "," not in head:
        if "\t" in head:
            return "\t"
        if ";" in head:
            return ";"
    return ","


def _read_parquet(path: Path) -> pd.DataFrame:
    try:
        return pd.read_parquet(path)
    except Exception as err:  # pyarrow raises many types for a damaged file
        raise HistoryError(
            f"{path.name}: not a readable Parquet file ({type(err).__name__}: "
            f"{str(err).splitlines()[0] if str(err) else 'no detail'})"
        ) from None


def _read_excel(path: Path, sheet: str | int | None) -> pd.DataFrame:
    try:
        book = pd.ExcelFile(path, engine="openpyxl")
    except Exception as err:  # openpyxl/zipfile errors for a damaged or mislabelled file
        raise HistoryError(f"{path.name}: not a readable .xlsx workbook ({type(err).__name__})") from None
    with book:
        names = list(book.sheet_names)
        listed = ", ".join(repr(n) for n in names)
        chosen = 0 if sheet is None else sheet
        if not isinstance(chosen, int) and chosen not in names:
            raise HistoryError(f"{path.name}: no sheet named {sheet!r}; sheets: {listed}")
        if isinstance(chosen, int) and not 0 <= chosen < len(names):
            raise HistoryError(f"{path.name}: sheet number {chosen} does not exist; the workbook has "
                               f"{len(names)} sheet(s): {listed}")
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # openpyxl style warnings are not the user's problem
            try:
                return book.parse(chosen)
            except ValueError as err:
                raise HistoryError(f"{path.name}: cannot read sheet {chosen!r} ({err})") from None


def find_column(table: RawTable, wanted: str, role: str, option: str) -> str:
    """The frame column called ``wanted`` (exact, else case- and space-insensitive)."""
    columns = [str(c) for c in table.frame.columns]
    if wanted in columns:
        return wanted
    loose = [c for c in columns if c.strip().lower() == wanted.strip().lower()]
    if len(loose) == 1:
        return loose[0]
    existing = ", ".join(repr(c) for c in columns)
    hint = ""
    if len(columns) == 1 and any(ch in columns[0] for ch in ";\t|"):
        hint = " (the header looks like one column; is the file separated by something else?)"
    raise HistoryError(
        f"{table.source} row 1: no {role} column {wanted!r}; columns found: {existing}{hint}; "
        f"name the {role} column with {option}"
    )
