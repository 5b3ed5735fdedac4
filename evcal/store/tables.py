"""The tables of a model folder, written and read back by one writer and one reader.

A single-series folder and a panel folder hold the same tables (``lifts``,
``occurrences``, ``profile``, ``fitted``); a panel's have the key columns
first, a single series' have none. :func:`write_table` writes any of them (CSV
or Parquet by the file name); :func:`read_table` reads a CSV back with the key
and text columns as text and every other column as numbers, and the
``check_*`` functions check the rows against the folder's JSON document, for
one series or for many (:class:`Rows`). Every problem is one
:class:`~evcal.errors.ModelError` line naming the file, the line and the column.

Text cells a spreadsheet would run as a formula are written with a leading
quote and read back without it (:mod:`evcal.formula_safe`).

Examples
--------
>>> write_table(lifts, Path("m/lifts.csv"), digits=6)            # doctest: +SKIP
>>> read_table(Path("m/lifts.csv"), LIFTS, keys=[]).columns[:2]  # doctest: +SKIP
Index(['event', 'lift_pct'], dtype='str')
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from evcal.errors import ModelError, clip
from evcal.formula_safe import formula_safe_frame, unguard_frame
from evcal.store.values import AGAIN, shown


@dataclass(frozen=True)
class Table:
    """One table of the contract: its columns after the key columns, which are text, which are dates."""

    name: str
    columns: tuple[str, ...]
    text: tuple[str, ...] = ()
    dates: tuple[str, ...] = ()
    finite: tuple[str, ...] = ()  # numbers that must be finite on every row


LIFTS = Table("lifts", ("event", "lift_pct", "low_pct", "high_pct", "units_per_occurrence", "identifiable",
                        "note"), ("event", "identifiable", "note", "kind", "label"))
OCCURRENCES = Table("occurrences", ("event", "start", "end", "added_units", "added_pct"), ("event",),
                    ("start", "end"))
PROFILE = Table("profile", ("period", "index"), finite=("period", "index"))
FITTED = Table("fitted", ("date", "actual", "fitted", "base"), dates=("date",), finite=("fitted", "base"))
#: a flag column: True/False (and the yes/weak/no of older lifts tables)
_TRUE, _FALSE = {"true", "yes", "weak"}, {"false", "no"}
#: text whose empty cell is an empty text (not a missing value)
_FREE_TEXT = ("note", "label", "detail")


# ---------------------------------------------------------------- writing


def _significant(values: pd.Series, digits: int) -> pd.Series:
    """Floats rounded to ``digits`` significant digits (as ``%.<digits>g`` prints them)."""
    return values.map(lambda v: float(f"{v:.{digits}g}"), na_action="ignore").astype(float)


def write_table(frame: pd.DataFrame, path: Path, digits: int | None = None) -> None:
    """Write a table as CSV (through pyarrow: several times faster than pandas) or Parquet, by its suffix.

    Text cells a spreadsheet would run get a leading quote
    (:func:`~evcal.formula_safe.formula_safe_frame`); dates are written as
    ``YYYY-MM-DD``, flags as ``True``/``False``, floats in full or rounded to
    ``digits`` significant digits. Parquet keeps the frame as it is.

    Examples
    --------
    >>> frame = pd.DataFrame({"event": ["=x"], "lift_pct": [12.3456789]})
    >>> write_table(frame, Path("l.csv"), digits=6)          # doctest: +SKIP
    >>> Path("l.csv").read_text()                             # doctest: +SKIP
    '"event","lift_pct"\\n"\\'=x",12.3457\\n'
    """
    if path.suffix == ".parquet":
        frame.to_parquet(path, index=False)
        return
    import pyarrow as pa
    import pyarrow.csv as pacsv

    out = formula_safe_frame(frame)
    for c in range(out.shape[1]):
        col = out.iloc[:, c]
        if col.dtype == bool:
            out.isetitem(c, pd.Categorical.from_codes(col.to_numpy().astype(np.int8), ["False", "True"]))
        elif pd.api.types.is_datetime64_any_dtype(col):
            out.isetitem(c, col.dt.strftime("%Y-%m-%d"))
        elif digits is not None and col.dtype.kind == "f":
            out.isetitem(c, _significant(col, digits))
    table = pa.Table.from_pandas(out, preserve_index=False)
    pacsv.write_csv(table, path, write_options=pacsv.WriteOptions(quoting_style="needed"))


# ---------------------------------------------------------------- reading


def read_table(path: Path, table: Table, keys: list[str], required: tuple[str, ...] = ()) -> pd.DataFrame:
    """A CSV table of a model folder: key and text columns as text, the rest parsed by pandas.

    The formula-safe quote is taken off; an empty file, a missing (``keys``,
    ``table.columns`` and ``required``) or a repeated column is one
    :class:`ModelError` line.

    Examples
    --------
    >>> read_table(Path("m/profile.csv"), PROFILE, keys=[])["period"].iloc[0]    # doctest: +SKIP
    1
    """
    need = (*keys, *table.columns, *required)
    try:
        frame = pd.read_csv(path, dtype=dict.fromkeys((*keys, *table.text, *table.dates), str),
                            keep_default_na=False, na_values=[""])
    except pd.errors.EmptyDataError:
        raise ModelError(f"{path}: the file is empty; expected a header row with "
                         f"{clip(', '.join(need), 120)}; {AGAIN}") from None
    except (OSError, UnicodeDecodeError, pd.errors.ParserError, ValueError) as err:
        raise ModelError(f"{path}: cannot be read as CSV ({clip(str(err).strip(), 120)}); {AGAIN}") from None
    frame.columns = [str(c).strip() for c in frame.columns]
    frame = unguard_frame(frame)  # the writer quoted text that a spreadsheet would run (formula_safe)
    absent = [c for c in need if c not in frame.columns]
    if absent:
        raise ModelError(f"{path}: line 1: missing column(s) {clip(', '.join(absent), 80)}; expected "
                         f"{clip(', '.join(need), 120)}; {AGAIN}")
    if frame.columns.duplicated().any():
        dup = frame.columns[frame.columns.duplicated()][0]
        raise ModelError(f"{path}: line 1: column {clip(dup, 40)} appears twice; {AGAIN}")
    return frame


def row_error(path: Path, i: int, col: str, what: str) -> ModelError:
    """The line for a bad cell: file, line (the header is line 1), column, what is wrong."""
    return ModelError(f"{path}: line {i + 2}: column {col}: {what}; {AGAIN}")


def numbers(path: Path, frame: pd.DataFrame, col: str, *, required: bool) -> pd.Series:
    """A column as floats: an empty cell is NaN, refused where ``required`` (with non-finite values)."""
    values = frame[col]
    if values.dtype.kind in "fiu":  # pandas parsed every cell as a number (the usual case: fast)
        num = values.to_numpy(dtype=float)
        bad = ~np.isfinite(num) if required else np.zeros(len(num), dtype=bool)
    else:
        text = values.astype(str).str.strip().where(values.notna(), "")
        num = pd.to_numeric(text.where(text != "", None), errors="coerce").to_numpy(dtype=float)
        bad = ((text != "") & np.isnan(num) & ~text.str.lower().eq("nan")).to_numpy()
        if required:
            bad = bad | ~np.isfinite(num)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raw = values.iloc[i]
        what = "is empty" if pd.isna(raw) or str(raw).strip() == "" else f"{shown(str(raw))} is not a " + (
            "finite number" if required else "number")
        raise row_error(path, i, col, what)
    return pd.Series(num, index=frame.index, dtype=float)


def days(path: Path, frame: pd.DataFrame, col: str) -> pd.Series:
    """A column of ISO dates (``YYYY-MM-DD``) as datetimes; any other cell refused."""
    text = frame[col].fillna("").astype(str).str.strip()
    parsed = pd.to_datetime(text, errors="coerce", format="%Y-%m-%d")
    if parsed.isna().any():
        i = int(np.flatnonzero(parsed.isna().to_numpy())[0])
        raise row_error(path, i, col, f"{shown(text.iloc[i])} is not an ISO date (YYYY-MM-DD)")
    return parsed


def names(path: Path, frame: pd.DataFrame, col: str, allowed: set[str] | None = None,
          rows: np.ndarray | None = None) -> None:
    """Non-empty text (one of ``allowed``) on every row, or on the rows of the mask ``rows``."""
    values = frame[col]
    bad = values.isna().to_numpy() | (values.fillna("").astype(str).str.strip() == "").to_numpy()
    if allowed is not None:
        bad |= ~values.isin(allowed).to_numpy()
    if rows is not None:
        bad &= rows
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raw = values.iloc[i]
        what = "is empty" if pd.isna(raw) or not str(raw).strip() else f"{shown(str(raw))} is not " + (
            f"one of {clip(', '.join(sorted(allowed)), 80)}" if allowed is not None else "allowed")
        raise row_error(path, i, col, what)


def flags(path: Path, frame: pd.DataFrame, col: str) -> pd.Series:
    """A True/False column as booleans."""
    text = frame[col].fillna("").astype(str).str.strip().str.lower()
    ok = text.isin(_TRUE | _FALSE)
    if not ok.all():
        i = int(np.flatnonzero(~ok.to_numpy())[0])
        raise row_error(path, i, col, f"{shown(frame[col].iloc[i])} is not True/False")
    return text.isin(_TRUE)


def typed(path: Path, frame: pd.DataFrame, table: Table, keys: list[str]) -> pd.DataFrame:
    """Dates as datetimes, every column that is not a key or text as numbers, free text without NaN."""
    for col in table.dates:
        frame[col] = days(path, frame, col)
    for col in frame.columns:
        if col in keys or col in table.text or col in table.dates or frame[col].dtype == bool:
            continue  # a flag column (in_fit): pandas reads True/False as booleans
        frame[col] = numbers(path, frame, col, required=col in table.finite)
    for col in _FREE_TEXT:
        if col in frame.columns and col in table.text:
            frame[col] = frame[col].fillna("").astype(str)
    return frame


# ---------------------------------------------------------------- rows of one series or of many


@dataclass
class Rows:
    """The series a folder's tables describe: none of key columns (one series) or ``series.csv``'s keys."""

    keys: list[str]
    index: pd.Index | None = None  # the key index of series.csv; None for one series
    fitted: np.ndarray | None = None  # which series were fitted
    series: pd.DataFrame | None = None

    @property
    def count(self) -> int:
        return 1 if self.index is None else len(self.index)

    def is_fitted(self) -> np.ndarray:
        return np.ones(self.count, dtype=bool) if self.fitted is None else self.fitted

    def positions(self, path: Path, frame: pd.DataFrame) -> np.ndarray:
        """Each row's series (its position in series.csv); a key no series has is refused."""
        if self.index is None:
            return np.zeros(len(frame), dtype=np.int64)
        for k in self.keys:
            names(path, frame, k)
        pos = self.index.get_indexer(key_index(frame, self.keys))
        if (pos < 0).any():
            i = int(np.flatnonzero(pos < 0)[0])
            shown_key = ", ".join(f"{k}={frame[k].iloc[i]}" for k in self.keys)
            raise ModelError(f"{path}: line {i + 2}: {clip(shown_key, 100)} is not a series of series.csv; "
                             f"{AGAIN}")
        return pos

    def counted(self, path: Path, pos: np.ndarray, want: np.ndarray, what: str) -> None:
        """Each series has ``want`` rows (one number per series)."""
        got = np.bincount(pos, minlength=self.count)
        wrong = np.flatnonzero(got != want)
        if not len(wrong):
            return
        j = int(wrong[0])
        if self.series is None:
            raise ModelError(f"{path}: {got[j]} rows; expected {want[j]} ({what}); {AGAIN}")
        shown_key = ", ".join(f"{k}={self.series[k].iloc[j]}" for k in self.keys)
        raise ModelError(f"{path}: series {clip(shown_key, 100)} has {got[j]} row(s); expected {want[j]} "
                         f"({what}); {AGAIN}")

    def once_each(self, path: Path, pos: np.ndarray, frame: pd.DataFrame, col: str) -> None:
        """No value of ``col`` twice for the same series."""
        dup = pd.DataFrame({"_pos": pos, col: frame[col].to_numpy()}).duplicated().to_numpy()
        if dup.any():
            i = int(np.flatnonzero(dup)[0])
            raise row_error(path, i, col, f"{shown(str(frame[col].iloc[i]))} appears twice" + (
                " for the same series" if self.keys else ""))


def key_index(frame: pd.DataFrame, keys: list[str]) -> pd.Index:
    """The series of each row as an index of its key columns (as text)."""
    if len(keys) == 1:
        return pd.Index(frame[keys[0]].astype(str).to_numpy())
    return pd.MultiIndex.from_arrays([frame[k].astype(str).to_numpy() for k in keys])


# ---------------------------------------------------------------- the contract tables


def check_lifts(path: Path, lifts: pd.DataFrame, rows: Rows, events: set[str], per_series: int
                ) -> pd.DataFrame:
    """One row per event and intervention (``per_series`` of them, named in ``events``) per fitted series."""
    pos = rows.positions(path, lifts)
    fitted = rows.is_fitted()
    if (~fitted[pos]).any():
        i = int(np.flatnonzero(~fitted[pos])[0])
        raise ModelError(f"{path}: line {i + 2}: a series that series.csv marks skipped; {AGAIN}")
    what = "one per event and intervention of " + ("panel.json for each fitted series" if rows.keys
                                                   else "model.json")
    rows.counted(path, pos, np.where(fitted, per_series, 0), what)
    names(path, lifts, "event", events)
    rows.once_each(path, pos, lifts, "event")
    if "kind" in lifts.columns:
        names(path, lifts, "kind", {"event", "intervention"})
    lifts["identifiable"] = flags(path, lifts, "identifiable")
    return typed(path, lifts, LIFTS, rows.keys)


def check_occurrences(path: Path, occ: pd.DataFrame, rows: Rows, events: set[str]) -> pd.DataFrame:
    """Past occurrences: a known series and event, ISO dates, numbers."""
    rows.positions(path, occ)
    names(path, occ, "event", events)
    return typed(path, occ, OCCURRENCES, rows.keys)


def check_profile(path: Path, profile: pd.DataFrame, rows: Rows, freq: str, p: int) -> pd.DataFrame:
    """The seasonal index: positions 1..p of the year, once each, for every fitted series."""
    pos = rows.positions(path, profile)
    what = f"a {freq} seasonal index has {p} positions" + (", for each fitted series" if rows.keys else "")
    rows.counted(path, pos, np.where(rows.is_fitted(), p, 0), what)
    profile = typed(path, profile, PROFILE, rows.keys)
    period = profile["period"].to_numpy()
    bad = (period < 1) | (period > p) | (period != np.round(period))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise row_error(path, i, "period", f"{shown(period[i])} is not a position 1..{p} of the year")
    rows.once_each(path, pos, profile, "period")
    profile["period"] = profile["period"].astype(int)
    return profile


def check_fitted(path: Path, fitted: pd.DataFrame, periods: pd.PeriodIndex, label: str,
                 history: str) -> pd.DataFrame:
    """One row per period of the stored history (``history`` names it), dated as it was."""
    if len(fitted) != len(periods):
        raise ModelError(f"{path}: {len(fitted)} rows; the history {history} has {len(periods)} periods; "
                         f"{AGAIN}")
    freq = periods.freqstr
    fitted = typed(path, fitted, FITTED, [])
    want = (periods.end_time if label == "end" else periods.start_time).normalize()
    wrong = fitted["date"].to_numpy() != want.to_numpy()
    if wrong.any():
        i = int(np.flatnonzero(wrong)[0])
        raise row_error(path, i, "date", f"{fitted['date'].iloc[i].date()} is not the {freq} period dated "
                                         f"{want[i].date()} (freq {freq}, label {label} in model.json)")
    return fitted


def parquet_columns(path: Path, needed: tuple[str, ...]) -> list[str]:
    """The column names of a Parquet table (its schema only); a missing one is refused."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        found = list(pq.read_schema(path).names)
    except (OSError, pa.ArrowException, ValueError) as err:
        raise unreadable(path, err) from None
    absent = [c for c in needed if c not in found]
    if absent:
        raise ModelError(f"{path}: missing column(s) {clip(', '.join(absent), 80)}; {AGAIN}")
    return found


def unreadable(path: Path, err: Exception) -> ModelError:
    return ModelError(f"{path}: cannot be read as Parquet ({clip(str(err).strip(), 120)}); {AGAIN}")


__all__ = ["Table", "Rows", "LIFTS", "OCCURRENCES", "PROFILE", "FITTED", "write_table", "read_table",
           "check_lifts", "check_occurrences", "check_profile", "check_fitted", "parquet_columns"]
