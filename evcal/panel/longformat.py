"""Long-format panels: one file of (key columns, date, value) rows in, one wide matrix out.

The file is read once (Parquet through pyarrow, CSV and Excel through
:mod:`evcal.io.tables`), the period index is built once from the distinct
dates, and the values are placed into a ``periods × series`` matrix by
integer codes: no per-series reading, no per-series date parsing. Dates
written as text are parsed once per distinct text.

Bad input stops the run with one line (:class:`~evcal.errors.HistoryError`):
a key column that is not there (the columns found are listed), an empty key
cell, two rows for the same series and period (both rows and the series are
quoted), a cell that is not a date or a number, and series at different
frequencies (two of them are named with their frequencies: evcal fits one
frequency per run).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import HistoryError
from evcal.io.cells import MAX_VALUE, count_problems, empty_mask, parse_dates, parse_values, quote
from evcal.io.frequency import (
    check_forced_freq,
    describe_freq,
    detect_freq,
    detect_label,
    parse_freq_option,
    weekly_freq,
)
from evcal.io.history import History
from evcal.io.tables import PARQUET_SUFFIXES, RawTable, find_column, load_table

__all__ = ["Panel", "read_panel", "panel_from_frame", "split_key_option"]

NS_PER_DAY = 86_400 * 10**9
SERIES_CHUNK = 2000  # series per frequency check (a dates x series matrix each)


def split_key_option(values: str | list[str] | tuple[str, ...] | None) -> list[str]:
    """``["product,store"]`` or ``["product", "store"]`` -> ``["product", "store"]``.

    Examples
    --------
    >>> split_key_option(["product, store", "region"])
    ['product', 'store', 'region']
    """
    if values is None:
        return []
    if isinstance(values, str):
        values = [values]
    out: list[str] = []
    for v in values:
        out += [p.strip() for p in str(v).split(",") if p.strip()]
    return out


@dataclass
class Panel:
    """Many series on one period grid.

    Attributes
    ----------
    keys : DataFrame
        One row per series (in sorted key order), one column per key column.
    values : ndarray, shape (n_periods, n_series)
        float64; NaN where a series has no row or an empty value.
    periods : PeriodIndex
        The regular grid from the first to the last period of any series.
    first, last : ndarray of int
        Position in ``periods`` of each series' first and last row (its own span).
    freq, label, source : str
        Period frequency, whether dates name the period's ``start`` or ``end``,
        and the file name for messages.
    """

    keys: pd.DataFrame
    values: np.ndarray
    periods: pd.PeriodIndex
    first: np.ndarray
    last: np.ndarray
    freq: str
    label: str
    source: str
    value_col: str = "value"
    attrs: pd.DataFrame | None = None  # per-series attribute columns (constant within a series)

    @property
    def key_cols(self) -> list[str]:
        return [str(c) for c in self.keys.columns]

    @property
    def n_series(self) -> int:
        return int(self.values.shape[1])

    def key_text(self, j: int) -> str:
        """``product='P1', store='S2'``: how messages name series ``j``."""
        row = self.keys.iloc[j]
        return ", ".join(f"{c}={quote(row[c])}" for c in self.key_cols)

    def span(self, j: int) -> slice:
        return slice(int(self.first[j]), int(self.last[j]) + 1)

    def history(self, j: int) -> History:
        """Series ``j`` as a single-series :class:`~evcal.io.History` on its own span."""
        sl = self.span(j)
        index = self.periods[sl]
        index.name = "period"
        vals = pd.Series(self.values[sl, j].copy(), index=index, name=self.value_col)
        missing = list(index[np.isnan(vals.to_numpy())])
        return History(values=vals, freq=self.freq, label=self.label,
                       source=f"{self.source} [{self.key_text(j)}]", missing=missing)

    def dates(self, periods: pd.PeriodIndex | None = None) -> pd.DatetimeIndex:
        """Date stamps of ``periods`` as the file writes them."""
        periods = self.periods if periods is None else periods
        stamps = periods.end_time.normalize() if self.label == "end" else periods.start_time
        return pd.DatetimeIndex(stamps, name="date").as_unit("ns")

    def subset(self, cols: np.ndarray) -> Panel:
        """The panel restricted to the series at positions ``cols``."""
        cols = np.asarray(cols, dtype=int)
        attrs = None if self.attrs is None else self.attrs.iloc[cols].reset_index(drop=True)
        return Panel(self.keys.iloc[cols].reset_index(drop=True), self.values[:, cols],
                     self.periods, self.first[cols], self.last[cols], self.freq, self.label,
                     self.source, self.value_col, attrs)

    def column(self, name: str) -> pd.Series:
        """A key or attribute column, one value per series."""
        if name in self.keys.columns:
            return self.keys[name]
        if self.attrs is not None and name in self.attrs.columns:
            return self.attrs[name]
        raise KeyError(name)


# ---------------------------------------------------------------- reading


def read_panel(source: str | Path | pd.DataFrame, series_cols: list[str], date_col: str = "date",
               value_col: str = "value", freq: str | None = None, attr_cols: list[str] | None = None
               ) -> Panel:
    """Read a long table of ``key columns, date, value`` rows into a :class:`Panel`.

    Parameters
    ----------
    source : path or DataFrame
        ``.parquet``, ``.csv`` or ``.xlsx`` file, or a frame (``"<frame>"`` in messages).
    series_cols : list of str
        Key columns; each distinct combination is one series.
    date_col, value_col : str
        As for :func:`evcal.io.read_history` (matched exactly, else ignoring case and spaces).
    freq : str, optional
        Force one frequency (``--freq``); detected from the dates when omitted.
    attr_cols : list of str, optional
        Columns that describe a series (a product family for ``--group-col``, the
        parents of ``--level``): each must hold one value per series.

    Examples
    --------
    >>> frame = pd.DataFrame({"item": ["a", "a", "b", "b"],
    ...                       "date": ["2024-01-31", "2024-02-29"] * 2, "value": [1, 2, 3, 4]})
    >>> p = read_panel(frame, ["item"])
    >>> p.freq, p.n_series, p.values.tolist()
    ('M', 2, [[1.0, 3.0], [2.0, 4.0]])
    """
    if not series_cols:
        raise HistoryError("--series-col: give at least one key column (e.g. --series-col product)")
    attr_cols = [c for c in (attr_cols or []) if c not in series_cols]
    table = _load(source, series_cols + attr_cols, date_col, value_col)
    return panel_from_frame(table, series_cols, date_col, value_col, freq, attr_cols)


def _load(source: Any, series_cols: list[str], date_col: str, value_col: str) -> RawTable:
    if isinstance(source, str | Path) and Path(source).suffix.lower() in PARQUET_SUFFIXES \
            and Path(source).is_file() and Path(source).stat().st_size > 0:
        return _load_parquet(Path(source), series_cols, date_col, value_col)
    return load_table(source, date_col=date_col)


def _load_parquet(path: Path, series_cols: list[str], date_col: str, value_col: str) -> RawTable:
    """Read only the needed columns (the fast path: no text conversion of the whole table)."""
    import pyarrow.parquet as pq

    try:
        names = list(pq.read_schema(path).names)
    except Exception as err:  # pyarrow raises many types for a damaged file
        raise HistoryError(f"{path.name}: not a readable Parquet file ({type(err).__name__})") from None
    probe = RawTable(pd.DataFrame(columns=names), [], path.name)
    wanted = [_key_column(probe, c) for c in series_cols]
    wanted += [find_column(probe, date_col, "date", "--date-col"),
               find_column(probe, value_col, "value", "--value-col")]
    keys = list(dict.fromkeys(wanted[:-2]))
    try:
        # key columns as dictionaries: each distinct key is decoded once, rows carry integer codes
        table = pq.read_table(path, columns=list(dict.fromkeys(wanted)), read_dictionary=keys)
        # each column is freed as soon as it is converted: the table and the frame are not both held
        frame = table.to_pandas(split_blocks=True, self_destruct=True)
        del table
        import pyarrow as pa

        pa.default_memory_pool().release_unused()  # the file's buffers, now copied into the frame
    except Exception as err:
        raise HistoryError(f"{path.name}: not a readable Parquet file ({type(err).__name__})") from None
    if len(frame) == 0:
        raise HistoryError(f"{path.name}: no data rows; expected one row per series and period")
    return RawTable(frame, [], path.name)


def _key_column(table: RawTable, wanted: str) -> str:
    columns = [str(c) for c in table.frame.columns]
    if wanted in columns:
        return wanted
    loose = [c for c in columns if c.strip().lower() == wanted.strip().lower()]
    if len(loose) == 1:
        return loose[0]
    raise HistoryError(
        f"{table.source} row 1: no key column {wanted!r} (from --series-col); columns found: "
        f"{', '.join(repr(c) for c in columns)}; name existing columns with --series-col")


def _row_number(table: RawTable, i: int) -> int:
    return table.rows[i] if table.rows else i + 2


def panel_from_frame(table: RawTable, series_cols: list[str], date_col: str, value_col: str,
                     freq: str | None, attr_cols: list[str] | None = None) -> Panel:
    """Build the panel from a loaded table (see :func:`read_panel`)."""
    name = table.source
    frame = table.frame
    kcols = [_key_column(table, c) for c in series_cols]
    dcol = find_column(table, date_col, "date", "--date-col")
    vcol = find_column(table, value_col, "value", "--value-col")
    clash = sorted({c for c in kcols if c in (dcol, vcol)} | ({dcol} if dcol == vcol else set()))
    if clash or len(set(kcols)) != len(kcols):
        raise HistoryError(f"{name}: column {(clash or kcols)[0]!r} is named twice among --series-col, "
                           "--date-col and --value-col; give each role its own column")
    n_rows = len(frame)
    if n_rows == 0:
        raise HistoryError(f"{name}: no data rows; expected one row per series and period")

    # series codes: one integer per distinct key combination, in sorted key order. Arrays with
    # a value per row are the memory of this step: they are kept small (int32) and dropped early.
    codes: np.ndarray | None = None
    uniques: list[Any] = []
    for c in kcols:
        col = frame[c]
        cc, uu = _factorize_sorted(col)
        bad = cc < 0
        if len(uu) and not pd.api.types.is_numeric_dtype(uu.dtype):
            # blank or NA-like key text, checked once per distinct key
            empty_u = empty_mask(pd.Series(np.asarray(uu, dtype=object)))
            if empty_u.any():
                bad = bad | empty_u[np.where(cc < 0, 0, cc)]
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise HistoryError(f"{name} row {_row_number(table, i)}, column {c!r}: empty key; every row "
                               f"needs a value in each --series-col column ({int(bad.sum())} such rows)")
        del bad
        uniques.append(uu)
        # 4 bytes a row while the combinations fit (the usual case), 8 beyond
        wide = np.prod([float(len(u)) for u in uniques]) >= 2**31
        if codes is None:
            codes = cc.astype(np.int64 if wide else np.int32)
        else:
            codes = codes.astype(np.int64) if wide and codes.dtype != np.int64 else codes
            codes *= len(uu)
            codes += cc
        del cc
    assert codes is not None
    sid_unique, sid = _dense_codes(codes)
    del codes
    n_series = len(sid_unique)
    keys = {}
    rem = sid_unique.copy()
    for c, uu in zip(reversed(kcols), reversed(uniques), strict=True):
        keys[c] = np.asarray(uu)[rem % len(uu)]
        rem //= len(uu)
    # keys are text in every output (sorted by their original values)
    key_frame = pd.DataFrame({c: pd.Series(keys[c]).astype(str).to_numpy(dtype=object) for c in kcols})
    attrs = _attributes(table, [_key_column(table, c) for c in (attr_cols or [])], sid, n_series,
                        key_frame) if attr_cols else None

    # dates: parsed once per distinct cell
    dcells = frame[dcol]
    if pd.api.types.is_datetime64_any_dtype(dcells.dtype):
        stamps = dcells.dt.tz_localize(None) if isinstance(dcells.dtype, pd.DatetimeTZDtype) else dcells
        raw = stamps.to_numpy(dtype="datetime64[ns]")
        nat = np.isnat(raw)
        if nat.any():
            i = int(np.flatnonzero(nat)[0])
            raise HistoryError(f"{name} row {_row_number(table, i)}, column {dcol!r}: empty date; every "
                               "row needs a date")
        del nat
        day = raw.view(np.int64) // NS_PER_DAY
        del raw
        d0 = int(day.min())
        day -= d0
        present = np.bincount(day)
        udays = np.flatnonzero(present) + d0
        dcode = (np.cumsum(present > 0) - 1).astype(np.int32)[day]
        del day
        u_stamps = pd.DatetimeIndex((udays * NS_PER_DAY).astype("datetime64[ns]"))
        u_rows = None
    else:
        dcode, ucells = pd.factorize(dcells, use_na_sentinel=True)
        if (dcode < 0).any():
            i = int(np.flatnonzero(dcode < 0)[0])
            raise HistoryError(f"{name} row {_row_number(table, i)}, column {dcol!r}: empty date; every "
                               "row needs a date")
        # factorize numbers cells in order of first appearance: the first row of each
        _, first_pos = np.unique(dcode, return_index=True)
        u_rows = [_row_number(table, int(p)) for p in first_pos]
        parsed, problems = parse_dates(pd.Series(ucells), u_rows, dcol, name)
        blank = parsed.isna().to_numpy()
        if problems or blank.any():
            if problems:
                raise HistoryError(sorted(problems)[0].line(name))
            i = int(np.flatnonzero(blank)[0])
            raise HistoryError(f"{name} row {u_rows[i]}, column {dcol!r}: empty date; every row needs a date")
        day_u = parsed.dt.normalize().to_numpy(dtype="datetime64[ns]").astype(np.int64) // NS_PER_DAY
        udays, inv = np.unique(day_u, return_inverse=True)
        dcode = inv[dcode]
        u_stamps = pd.DatetimeIndex((udays * NS_PER_DAY).astype("datetime64[ns]"))

    # values
    vcells = frame[vcol]
    if pd.api.types.is_numeric_dtype(vcells.dtype) and not pd.api.types.is_bool_dtype(vcells.dtype):
        vals = vcells.to_numpy(dtype="float64", na_value=np.nan)
        bad = np.isinf(vals) | (np.abs(vals) > MAX_VALUE)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise HistoryError(f"{name} row {_row_number(table, i)}, column {vcol!r}: {vals[i]!r} is not a "
                               f"finite number of at most {MAX_VALUE:.0e} in size; check the cell")
    else:
        rows = table.rows or list(range(2, n_rows + 2))
        parsed_v, problems = parse_values(vcells, rows, vcol, allow_negative=True)
        if problems:
            n_bad = count_problems(problems)
            more = f" (and {n_bad - 1} more bad cells)" if n_bad > 1 else ""
            raise HistoryError(sorted(problems)[0].line(name) + more)
        vals = parsed_v.to_numpy(dtype="float64")

    # frequency: from the distinct dates, checked series by series
    used = _frequency(u_stamps, dcode, sid, n_series, key_frame, name, freq, u_rows)
    u_periods = u_stamps.to_period(used)
    p0 = u_periods.min()
    periods = pd.period_range(p0, u_periods.max(), freq=used, name="period")
    u_pcode = (u_periods.asi8 - p0.ordinal).astype(np.int32)
    pcode = u_pcode[dcode]
    n_per = len(periods)

    cell = sid.astype(np.int64) * n_per + pcode
    counts = np.bincount(cell, minlength=n_series * n_per)
    if counts.max() > 1:
        _raise_duplicates(table, cell, counts, sid, pcode, periods, key_frame, dcells, used, u_stamps,
                          dcode)
    del cell
    has_row = counts.reshape(n_series, n_per).T > 0
    del counts
    # filled series by series (rows of one series are usually together: writes stay close), then
    # seen as (periods × series)
    values = np.full((n_series, n_per), np.nan)
    values[sid, pcode] = vals
    values = values.T
    first = np.argmax(has_row, axis=0)
    last = n_per - 1 - np.argmax(has_row[::-1], axis=0)
    return Panel(keys=key_frame, values=values, periods=periods, first=first, last=last, freq=used,
                 label=detect_label(u_stamps, used), source=name, value_col=value_col, attrs=attrs)


def _attributes(table: RawTable, cols: list[str], sid: np.ndarray, n_series: int, keys: pd.DataFrame
                ) -> pd.DataFrame:
    """One value per series for each attribute column, or an error naming a series with two."""
    out = {}
    for c in cols:
        codes, uniq = pd.factorize(table.frame[c], use_na_sentinel=True)
        if (codes < 0).any():
            i = int(np.flatnonzero(codes < 0)[0])
            raise HistoryError(f"{table.source} row {_row_number(table, i)}, column {c!r}: empty value; "
                               "every row needs one")
        first = np.full(n_series, -1, dtype=np.int64)
        first[sid[::-1]] = codes[::-1]  # the first row's value of each series
        clash = np.flatnonzero(codes != first[sid])
        if len(clash):
            i = int(clash[0])
            j = int(sid[i])
            raise HistoryError(
                f"{table.source} row {_row_number(table, i)}, column {c!r}: series {_key_text(keys, j)} has "
                f"both {quote(uniq[first[j]])} and {quote(uniq[codes[i]])}; a grouping column needs one "
                "value per series (add it to --series-col if it is part of the key)")
        out[c] = pd.Series(np.asarray(uniq, dtype=object)[first]).astype(str).to_numpy(dtype=object)
    return pd.DataFrame(out)


def _factorize_sorted(col: pd.Series) -> tuple[np.ndarray, Any]:
    """Codes in sorted order of the distinct values (-1 for missing), categorical columns included.

    For a categorical column the values are its categories, used or not.
    """
    if isinstance(col.dtype, pd.CategoricalDtype):
        cats = col.cat.categories
        order = np.argsort(np.asarray(cats.astype(str)), kind="stable")
        rank = np.empty(len(cats), dtype=np.int64)
        rank[order] = np.arange(len(cats))
        codes = col.cat.codes.to_numpy()
        missing = bool(len(codes)) and int(codes.min()) < 0
        if not (order == np.arange(len(cats))).all():  # a file's dictionary is often sorted already
            rank = rank.astype(np.int32)
            codes = np.where(codes >= 0, rank[np.maximum(codes, 0)], np.int32(-1)) if missing \
                else rank[codes]
        # categories no row uses may stay: the series codes built from these keep only the key
        # combinations that occur (_dense_codes)
        return codes, cats[order]
    return pd.factorize(col, sort=True, use_na_sentinel=True)


def _dense_codes(codes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sorted distinct codes and each row's rank among them (no sort when the range is small)."""
    hi = int(codes.max()) + 1 if len(codes) else 0
    if hi <= 4 * len(codes) + 1024:
        present = np.bincount(codes, minlength=hi) > 0
        rank = (np.cumsum(present) - 1).astype(np.int32)
        return np.flatnonzero(present), rank[codes]
    uniq, inv = np.unique(codes, return_inverse=True)
    return uniq, inv.astype(np.int32)


def _key_text(keys: pd.DataFrame, j: int) -> str:
    row = keys.iloc[int(j)]
    return ", ".join(f"{c}={quote(row[c])}" for c in keys.columns)


def _raise_duplicates(table: RawTable, cell: np.ndarray, counts: np.ndarray, sid: np.ndarray,
                      pcode: np.ndarray, periods: pd.PeriodIndex, keys: pd.DataFrame, dcells: pd.Series,
                      freq: str, u_stamps: pd.DatetimeIndex, dcode: np.ndarray) -> None:
    dup_cells = np.flatnonzero(counts > 1)
    rows = np.flatnonzero(np.isin(cell, dup_cells[:1]))
    j = int(sid[rows[0]])
    same_date = len(set(dcode[rows].tolist())) == 1
    what = (f"date {u_stamps[int(dcode[rows[0]])].date()}" if same_date
            else f"{describe_freq(freq)} period {periods[int(pcode[rows[0]])]}")
    listed = " and ".join(str(_row_number(table, int(r))) for r in rows[:2])
    if len(rows) > 2:
        listed += f" (and {len(rows) - 2} more)"
    extra = int((counts[dup_cells] - 1).sum()) - (len(rows) - 1)
    more = f"; {extra} more duplicate rows in other series or periods" if extra > 0 else ""
    raise HistoryError(
        f"{table.source} rows {listed}: series {_key_text(keys, j)} has more than one row for {what}; "
        f"keep one row per series and period (add the rows up if they are parts of the same period){more}")


# ---------------------------------------------------------------- frequency


def _frequency(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray, n_series: int,
               keys: pd.DataFrame, name: str, option: str | None, u_rows: list[int] | None) -> str:
    """One frequency for every series (or a clear error naming two series that differ)."""
    if option is not None:
        forced = parse_freq_option(option)
        if forced is not None:
            check_forced_freq(u_stamps, u_rows, name, option, forced)  # never a silent misread
            return forced
        weekdays = u_stamps.day_of_week
        if len(set(weekdays.tolist())) > 1:
            _mixed_error(u_stamps, dcode, sid, n_series, keys, name)
        return weekly_freq(int(weekdays[0]))
    # series by series (a panel of monthly series may date some on the 1st and some on the
    # last day: together their dates are no regular grid, each series alone is monthly)
    agreed = _mixed_error(u_stamps, dcode, sid, n_series, keys, name)
    if agreed:
        return agreed
    return detect_freq(u_stamps, source=name, rows=u_rows)


def series_frequencies(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray,
                       n_series: int) -> list[str]:
    """A frequency class per series from its own dates: D, W-XXX, M, Q-DEC or '' (unclear).

    The class is the shortest gap between two of the series' dates (1 day,
    7 days on one weekday, 28-31 days, 89-92 days): enough to tell series apart,
    computed for all series at once on the ``dates × series`` presence matrix.
    """
    n_u = len(u_stamps)
    fast = _frequencies_of_sorted_rows(u_stamps, dcode, sid, n_series)
    if fast is not None:
        return fast
    if n_series > SERIES_CHUNK:  # bound the dates x series matrices
        order = np.argsort(sid, kind="stable")
        bounds = np.searchsorted(sid[order], np.arange(0, n_series + SERIES_CHUNK, SERIES_CHUNK))
        out: list[str] = []
        for a in range(0, n_series, SERIES_CHUNK):
            rows = order[bounds[a // SERIES_CHUNK]:bounds[a // SERIES_CHUNK + 1]]
            out += series_frequencies(u_stamps, dcode[rows], sid[rows] - a, min(SERIES_CHUNK, n_series - a))
        return out
    present = np.zeros((n_u, n_series), dtype=bool)
    present[dcode, sid] = True
    day = _day_numbers(u_stamps)
    prev = np.where(present, day[:, None], np.iinfo(np.int64).min // 2)
    prev = np.maximum.accumulate(prev, axis=0)
    gap = np.full((n_u, n_series), np.iinfo(np.int64).max)
    if n_u > 1:
        g = day[1:, None] - prev[:-1]
        gap[1:] = np.where(present[1:] & (prev[:-1] > np.iinfo(np.int64).min // 4), g, gap[1:])
    min_gap = gap.min(axis=0)
    wd = u_stamps.day_of_week.to_numpy()
    n_weekdays = np.zeros(n_series, dtype=int)
    wd_first = np.zeros(n_series, dtype=int)
    for w in range(7):
        has = present[wd == w].any(axis=0)
        wd_first = np.where(has & (n_weekdays == 0), w, wd_first)
        n_weekdays += has
    return _frequency_classes(min_gap, n_weekdays, wd_first)


def _frequencies_of_sorted_rows(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray,
                                n_series: int) -> list[str] | None:
    """:func:`series_frequencies` when each series' rows are together and in date order (as in most
    long files); None otherwise.

    One pass over the rows: each row's gap to the row before it in the same
    series, the smallest per series (a repeated row, gap 0, is not a gap: the
    duplicate check reports it later).
    """
    if len(sid) < 2:
        return None
    new_series = sid[1:] != sid[:-1]
    starts = np.flatnonzero(np.r_[True, new_series])
    if len(starts) != n_series:  # some series' rows are not together
        return None
    big = np.iinfo(np.int32).max  # "no gap" (one row): no frequency class, as in the matrix path
    day = _day_numbers(u_stamps).astype(np.int32)[dcode]  # days since 1970 fit in 4 bytes
    gap = np.empty(len(day), dtype=np.int32)
    gap[0] = big
    np.subtract(day[1:], day[:-1], out=gap[1:])
    del day
    if (gap[1:][~new_series] < 0).any():  # dates out of order inside a series
        return None
    gap[1:][new_series | (gap[1:] == 0)] = big
    min_gap = np.full(n_series, big, dtype=np.int64)
    min_gap[sid[starts]] = np.minimum.reduceat(gap, starts)
    wd = u_stamps.day_of_week.to_numpy().astype(np.int64)
    if (wd == wd[0]).all():  # every date on one weekday (weekly data): so is every series
        return _frequency_classes(min_gap, np.ones(n_series, dtype=int), np.full(n_series, wd[0]))
    has = np.zeros((n_series, 7), dtype=bool)
    has.reshape(-1)[sid.astype(np.int64) * 7 + wd[dcode]] = True
    return _frequency_classes(min_gap, has.sum(axis=1), np.argmax(has, axis=1))


def _day_numbers(stamps: pd.DatetimeIndex) -> np.ndarray:
    """Days since 1970 whatever the index's resolution (pandas may hold dates in s, ms, us or ns)."""
    return stamps.to_numpy().astype("datetime64[D]").astype(np.int64)


def _frequency_classes(min_gap: np.ndarray, n_weekdays: np.ndarray, wd_first: np.ndarray) -> list[str]:
    """The class of each series from its smallest gap in days and the weekdays it falls on."""
    n_series = len(min_gap)
    weekly = np.array([weekly_freq(w) for w in range(7)], dtype=object)
    out = np.full(n_series, "", dtype=object)
    out[(min_gap % 7 == 0) & (min_gap <= 21) & (n_weekdays == 1)] = \
        weekly[wd_first[(min_gap % 7 == 0) & (min_gap <= 21) & (n_weekdays == 1)]]
    out[min_gap == 1] = "D"
    out[(min_gap >= 28) & (min_gap <= 31)] = "M"
    out[(min_gap >= 89) & (min_gap <= 92)] = "Q-DEC"
    return list(out)


def _mixed_error(u_stamps: pd.DatetimeIndex, dcode: np.ndarray, sid: np.ndarray, n_series: int,
                 keys: pd.DataFrame, name: str) -> str:
    """Raise naming two series at different frequencies; return the one frequency if they agree."""
    classes = series_frequencies(u_stamps, dcode, sid, n_series)
    seen: dict[str, int] = {}
    for j, c in enumerate(classes):
        if c and c not in seen:
            seen[c] = j
    if len(seen) >= 2:
        (fa, ja), (fb, jb) = list(seen.items())[:2]
        raise HistoryError(
            f"{name}: mixed frequencies between series: {_key_text(keys, ja)} is {describe_freq(fa)} "
            f"and {_key_text(keys, jb)} is {describe_freq(fb)}; evcal fits one frequency per run: "
            "split the file by frequency, or aggregate the finer series to the coarser frequency")
    # a series with one or two dates is skipped as too short later; it cannot be read here
    unclear = [j for j, c in enumerate(classes) if not c]
    if unclear:
        n_dates = np.bincount(sid, minlength=n_series)  # rows per series (no duplicates yet)
        unclear = [j for j in unclear if n_dates[j] >= 3]
    if unclear:
        j = unclear[0]
        mine = u_stamps[np.unique(dcode[sid == j])]
        detect_freq(mine, source=f"{name} [{_key_text(keys, j)}]")
    return next(iter(seen)) if len(seen) == 1 else ""
