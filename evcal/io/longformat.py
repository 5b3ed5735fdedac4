"""Long-format panels: one file of (key columns, date, value) rows in, one wide matrix out.

The file is read once (Parquet through pyarrow, CSV and Excel through
:mod:`evcal.io.tables`), the period index is built once from the distinct
dates, and the values are placed into a ``periods × series`` matrix by
integer codes: no per-series reading, no per-series date parsing. Dates
written as text are parsed once per distinct text.

Bad input stops the run with one line (:class:`~evcal.errors.HistoryError`) naming the row, the
column and, where there is one, the series.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import HistoryError
from evcal.io.cells import MAX_VALUE, count_problems, empty_mask, key_text, parse_dates, parse_values, quote
from evcal.io.frequency import describe_freq, detect_label, parse_freq_option
from evcal.io.isoweeks import week_end_day
from evcal.io.panel import Panel
from evcal.io.series_freq import series_frequency
from evcal.io.tables import PARQUET_SUFFIXES, RawTable, find_column, load_table
from evcal.spelling import option, subject

__all__ = ["Panel", "read_panel", "panel_from_frame", "split_key_option"]

NS_PER_DAY = 86_400 * 10**9
#: the command line's flag for ``series_cols``
_KEYS = "--series-col"


def split_key_option(values: str | list[str] | tuple[str, ...] | None) -> list[str]:
    """``["product,store"]`` or ``["product", "store"]`` -> ``["product", "store"]``.

    Examples
    --------
    >>> split_key_option(["product, store", "region"])
    ['product', 'store', 'region']
    """
    values = [values] if isinstance(values, str) else values or []
    return [p.strip() for v in values for p in str(v).split(",") if p.strip()]


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
        raise HistoryError(f"{subject('series_cols', flag=_KEYS)}: give at least one key column "
                           f"(e.g. {option('series_cols', ['product'], flag=_KEYS, cli_value='product')})")
    attr_cols = [c for c in (attr_cols or []) if c not in series_cols]
    table = _load(source, series_cols, attr_cols, date_col, value_col)
    return panel_from_frame(table, series_cols, date_col, value_col, freq, attr_cols)


def _grouping_column(table: RawTable, wanted: str) -> str:
    # a column asked for by --level or --group-col (the message points back at those options)
    return find_column(table, wanted, "grouping", f"{option('level')} or {option('group_col')}")


def _load(source: Any, series_cols: list[str], attr_cols: list[str], date_col: str, value_col: str
          ) -> RawTable:
    if isinstance(source, str | Path) and Path(source).suffix.lower() in PARQUET_SUFFIXES \
            and Path(source).is_file() and Path(source).stat().st_size > 0:
        return _load_parquet(Path(source), series_cols, attr_cols, date_col, value_col)
    return load_table(source, date_col=date_col)


def _load_parquet(path: Path, series_cols: list[str], attr_cols: list[str], date_col: str, value_col: str
                  ) -> RawTable:
    """Read only the needed columns (the fast path: no text conversion of the whole table)."""
    import pyarrow.parquet as pq

    try:
        names = list(pq.read_schema(path).names)
    except Exception as err:  # pyarrow raises many types for a damaged file
        raise HistoryError(f"{path.name}: not a readable Parquet file ({type(err).__name__})") from None
    probe = RawTable(pd.DataFrame(columns=names), [], path.name)
    wanted = [find_column(probe, c, "key", option("series_cols", flag=_KEYS)) for c in series_cols]
    wanted += [_grouping_column(probe, c) for c in attr_cols]
    wanted += [find_column(probe, date_col, "date", option("date_col")),
               find_column(probe, value_col, "value", option("value_col"))]
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


def _row_number(table: RawTable, i: int) -> int:
    return table.rows[i] if table.rows else i + 2


def panel_from_frame(table: RawTable, series_cols: list[str], date_col: str, value_col: str,
                     freq: str | None, attr_cols: list[str] | None = None) -> Panel:
    """Build the panel from a loaded table (see :func:`read_panel`)."""
    name = table.source
    frame = table.frame
    kcols = [find_column(table, c, "key", option("series_cols", flag=_KEYS)) for c in series_cols]
    dcol = find_column(table, date_col, "date", option("date_col"))
    vcol = find_column(table, value_col, "value", option("value_col"))
    clash = sorted({c for c in kcols if c in (dcol, vcol)} | ({dcol} if dcol == vcol else set()))
    if clash or len(set(kcols)) != len(kcols):
        raise HistoryError(f"{name}: column {(clash or kcols)[0]!r} is named twice among "
                           f"{option('series_cols', flag=_KEYS)}, {option('date_col')} and "
                           f"{option('value_col')}; give each role its own column")
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
                               f"needs a value in each {option('series_cols', flag=_KEYS)} column "
                               f"({int(bad.sum())} such rows)")
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
    attr_names = [_grouping_column(table, c) for c in (attr_cols or [])]
    attrs = _attributes(table, attr_names, sid, n_series, key_frame) if attr_cols else None

    # dates: parsed once per distinct cell
    dcells = frame[dcol]

    def no_date(i: int) -> HistoryError:
        return HistoryError(f"{name} row {_row_number(table, i)}, column {dcol!r}: empty date; every row "
                            "needs a date")

    if pd.api.types.is_datetime64_any_dtype(dcells.dtype):
        stamps = dcells.dt.tz_localize(None) if isinstance(dcells.dtype, pd.DatetimeTZDtype) else dcells
        raw = stamps.to_numpy(dtype="datetime64[ns]")
        if np.isnat(raw).any():
            raise no_date(int(np.flatnonzero(np.isnat(raw))[0]))
        day = raw.view(np.int64) // NS_PER_DAY
        del raw
        d0 = int(day.min())
        day -= d0
        udays, dcode = _dense_codes(day)
        udays += d0
        del day
        u_rows = None
    else:
        dcode, ucells = pd.factorize(dcells, use_na_sentinel=True)
        if (dcode < 0).any():
            raise no_date(int(np.flatnonzero(dcode < 0)[0]))
        # factorize numbers cells in order of first appearance: the first row of each
        _, first_pos = np.unique(dcode, return_index=True)
        u_rows = [_row_number(table, int(p)) for p in first_pos]
        week_end = week_end_day(parse_freq_option(freq) if freq else None)  # ISO labels: Sunday unless told
        parsed, problems = parse_dates(pd.Series(ucells), u_rows, dcol, name, week_end)
        if problems:
            raise HistoryError(sorted(problems)[0].line(name))
        if parsed.isna().any():
            raise no_date(int(first_pos[np.flatnonzero(parsed.isna().to_numpy())[0]]))
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
    used = series_frequency(u_stamps, dcode, sid, n_series, key_frame, name, freq, u_rows)
    u_periods = u_stamps.to_period(used)
    p0 = u_periods.min()
    periods = pd.period_range(p0, u_periods.max(), freq=used, name="period")
    u_pcode = (u_periods.asi8 - p0.ordinal).astype(np.int32)
    pcode = u_pcode[dcode]
    n_per = len(periods)

    cell = sid.astype(np.int64) * n_per + pcode
    counts = np.bincount(cell, minlength=n_series * n_per)
    if counts.max() > 1:
        _raise_duplicates(table, cell, counts, sid, pcode, periods, key_frame, used, u_stamps, dcode)
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
                f"{table.source} row {_row_number(table, i)}, column {c!r}: series {key_text(keys, j)} has "
                f"both {quote(uniq[first[j]])} and {quote(uniq[codes[i]])}; a grouping column needs one "
                f"value per series (add it to {option('series_cols', flag=_KEYS)} if it is part of the key)")
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



def _raise_duplicates(table: RawTable, cell: np.ndarray, counts: np.ndarray, sid: np.ndarray,
                      pcode: np.ndarray, periods: pd.PeriodIndex, keys: pd.DataFrame, freq: str,
                      u_stamps: pd.DatetimeIndex, dcode: np.ndarray) -> None:
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
        f"{table.source} rows {listed}: series {key_text(keys, j)} has more than one row for {what}; "
        f"keep one row per series and period (add the rows up if they are parts of the same period){more}")
