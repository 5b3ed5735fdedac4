"""From a long file to a :class:`~evcal.panel.result.PanelResult`: reading, roll-up, keys on every table."""

from __future__ import annotations

from collections import deque
from collections.abc import Callable
from concurrent.futures import Future, ThreadPoolExecutor
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal import __version__
from evcal.errors import HistoryError
from evcal.io.longformat import read_panel, split_key_option
from evcal.io.panel import Panel
from evcal.panel.result import PanelResult
from evcal.spelling import option, subject
from evcal.store import PANEL_FORMAT, PANEL_VERSION

__all__ = ["read_for_panel", "build_result", "FittedWriter"]


def keyed(frame: pd.DataFrame, keys: pd.DataFrame) -> pd.DataFrame:
    """Replace the ``_sid`` column by the key columns (categorical: one copy of each key)."""
    if "_sid" not in frame.columns:
        return frame
    sid = frame["_sid"].to_numpy(dtype=np.int64)
    cols: dict[str, Any] = {}
    for c in keys.columns:
        codes, cats = pd.factorize(keys[c], sort=False)
        cols[c] = pd.Categorical.from_codes(codes[sid], categories=cats) if len(cats) else keys[c].iloc[sid]
    for c in frame.columns:
        if c != "_sid":  # one frame built at once: adding columns one by one copies the block each time
            col = frame[c]
            cols[c] = col.array if isinstance(col.dtype, pd.CategoricalDtype) else col.to_numpy()
    return pd.DataFrame(cols)


def read_for_panel(history: Any, series_cols: Any, date_col: str, value_col: str, freq: str | None,
                   level: Any, group_col: str | None, meanwhile: Callable[[], Any] | None = None
                   ) -> tuple[Panel, list[str], list[str], Any]:
    """Read the long file (and add it up to ``level``); return the panel, its keys, the levels.

    Parameters
    ----------
    meanwhile : callable, optional
        Work for this thread while the file is read on another one (loading the
        calendar and the fitting modules is pure Python; pyarrow and numpy read
        the file mostly without the GIL, so the two overlap instead of adding
        up). Its result is the fourth item returned. A problem with the file
        is reported before one that ``meanwhile`` raises, as if the file had
        been read first.
    """
    import pyarrow.parquet  # noqa: F401 -- imported here, not by both threads at once

    from evcal.panel.rollup import aggregate

    keys = split_key_option(series_cols)
    levels = split_key_option(level)
    if levels and not keys:
        raise HistoryError(f"{option('level')} needs {_keys_option()}: the child series to add up")
    if not keys:
        example = option("series_cols", ["product"], flag="--series-col", cli_value="product")
        raise HistoryError(f"{subject('series_cols', flag='--series-col')}: give at least one key column "
                           f"(e.g. {example})")  # as io/longformat.read_panel says it
    attr_cols = [c for c in levels + ([group_col] if group_col else []) if c not in keys]
    extra: Any = None
    problem: BaseException | None = None
    with ThreadPoolExecutor(max_workers=1, thread_name_prefix="evcal-read") as pool:
        reading = pool.submit(read_panel, history, keys, date_col=date_col, value_col=value_col,
                              freq=freq, attr_cols=list(dict.fromkeys(attr_cols)))
        if meanwhile is not None:
            try:
                extra = meanwhile()
            except BaseException as err:  # raised once the file is known to be good
                problem = err
        panel = reading.result()
    if problem is not None:
        raise problem
    if levels:
        panel = aggregate(panel, levels)
        keys = levels
    if group_col:
        try:
            panel.column(group_col)
        except KeyError:
            raise HistoryError(f"{option('group_col', group_col)}: it takes more than one value inside a "
                               f"{option('level')} group ({', '.join(levels)}); pool by a column that is "
                               "constant within each fitted series") from None
    return panel, keys, levels, extra


def _keys_option() -> str:
    """The key columns' setting: ``--series-col`` / ``series_cols=``."""
    return option("series_cols", flag="--series-col")


class FittedWriter:
    """Streams the fitted rows to one Parquet file, a row group per unit, keys first.

    The writing runs on a background thread (pyarrow releases the GIL), so the
    file fills while the next units are being fitted; at most two units wait for it.
    """

    def __init__(self, path: Path, panel: Panel) -> None:
        import pyarrow as pa

        self._thread = ThreadPoolExecutor(max_workers=1, thread_name_prefix="evcal-fitted-writer")
        self._pending: deque[Future[None]] = deque()
        self.path = path
        self.keys = {c: pa.array(panel.keys[c].to_numpy(dtype=object), type=pa.string())
                     for c in panel.key_cols}
        self.key_cols = list(panel.key_cols)
        self.writer: Any = None
        self.schema: Any = None

    def _table(self, block: Any) -> Any:
        import pyarrow as pa

        if isinstance(block, pd.DataFrame):
            sid = block["_sid"].to_numpy(dtype=np.int64)
            cols = {c: block[c].to_numpy() for c in block.columns if c != "_sid"}
        else:
            n = len(block.dates)
            sid = np.repeat(block.sids.astype(np.int64), n)
            cols = {"date": np.tile(block.dates, len(block.sids))}
            for c, v in block.columns.items():
                cols[c] = v.ravel()
            cols["in_fit"] = block.in_fit_rows()
        idx = pa.array(sid.astype(np.int32))
        # keys as dictionary arrays: one copy of each key, an index per row
        arrays = {c: pa.DictionaryArray.from_arrays(idx, k) for c, k in self.keys.items()}
        for c, v in cols.items():
            arrays[c] = pa.array(np.asarray(v, dtype="datetime64[ns]") if c == "date" else v)
        return pa.table(arrays)

    def write(self, blocks: list[Any]) -> None:
        """Queue a unit's fitted blocks (raises here if an earlier write failed)."""
        # a finished write's error is raised now, not after two more units have queued behind it
        while self._pending and (len(self._pending) >= 2 or self._pending[0].done()):
            self._pending.popleft().result()
        self._pending.append(self._thread.submit(self._write_now, blocks))

    def _write_now(self, blocks: list[Any]) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        for block in blocks:
            table = self._table(block)
            if self.writer is None:
                # every column comes from numpy arrays (a missing value is NaN, not null), so the
                # columns are written as required: no definition levels to encode (a third of
                # the writing time)
                self.schema = pa.schema([f.with_nullable(table.column(f.name).null_count > 0)
                                         for f in table.schema])
                table = table.cast(self.schema)
                # dictionary pages and min/max statistics for the keys and dates only (what a
                # reader filters on): computing them for every float column costs time, not space
                self.writer = pq.ParquetWriter(self.path, self.schema, compression="snappy",
                                               use_dictionary=self.key_cols,
                                               write_statistics=self.key_cols + ["date"])
            else:
                table = table.select(self.schema.names).cast(self.schema)
            self.writer.write_table(table)

    def close(self) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        try:
            while self._pending:
                self._pending.popleft().result()
        finally:
            self._thread.shutdown(cancel_futures=True)
        if self.writer is not None:
            self.writer.close()
            self.writer = None
        elif not self.path.exists():
            empty = {c: pa.array([], type=pa.string()) for c in self.keys}
            empty["date"] = pa.array([], type=pa.timestamp("ns"))
            pq.write_table(pa.table(empty), self.path)


def build_result(fit: Any, keys: list[str], levels: list[str], group_col: str | None, date_col: str,
                 value_col: str, fitted_path: Path | None) -> PanelResult:
    """Attach the keys, pool the lifts and assemble the series table and settings."""
    from evcal.model.inputs import calendar_text, design_spec
    from evcal.panel.pooling import pool_lifts

    panel = fit.panel
    n = panel.n_series
    sids = np.arange(n)
    pool_groups = panel.column(group_col).astype(str) if group_col else pd.Series(["all"] * n)
    pool_groups.index = sids

    series = pd.DataFrame({"_sid": sids})
    series["status"] = np.where(np.isin(sids, fit.series["_sid"].to_numpy()), "fitted", "skipped")
    reason = pd.Series("", index=sids, dtype=object)
    reason[fit.skipped["_sid"].to_numpy()] = fit.skipped["reason"].to_numpy()
    series["reason"] = reason.to_numpy()
    info = fit.series.set_index("_sid") if len(fit.series) else pd.DataFrame()
    quality = fit.quality.set_index("_sid") if len(fit.quality) else pd.DataFrame()
    for table, cols in ((info, ("engine", "group", "transform", "method", "sigma2", "smear", "hac_lags",
                                "trend_origin")),
                        (quality, ("periods_fitted", "wape_pct", "resid_sd", "mean_base"))):
        for c in cols:
            series[c] = table[c].reindex(sids).to_numpy() if c in table.columns else np.nan
    for c in ("group", "hac_lags", "periods_fitted"):
        series[c] = pd.array(series[c], dtype="Int64")
    series["start"] = panel.dates(panel.periods[panel.first]).strftime("%Y-%m-%d")
    series["end"] = panel.dates(panel.periods[panel.last]).strftime("%Y-%m-%d")
    series["pool_group"] = pool_groups.to_numpy()
    series["note"] = info["note"].reindex(sids).fillna("").to_numpy() if "note" in info.columns else ""
    # appended (the columns before keep their places): the order of the batched fits' residual AR model
    order = info["error_ar_order"].reindex(sids).to_numpy() if "error_ar_order" in info.columns else np.nan
    series["error_ar_order"] = pd.array(np.broadcast_to(order, n).astype(float), dtype="Int64")
    lifts, pooling = pool_lifts(fit.lifts, pool_groups, pd.Series(series["transform"].to_numpy(), index=sids))
    skipped = fit.skipped[["_sid", "reason", "detail"]]
    labels: dict[str, dict[str, str]] = {}
    if len(lifts):
        first = lifts.drop_duplicates("event")
        labels = {str(r.event): {"kind": str(r.kind), "label": str(r.label)} for r in first.itertuples()}
    settings = {
        "format": PANEL_FORMAT, "format_version": PANEL_VERSION, "evcal_version": __version__,
        "keys": keys, "level": levels or None, "group_col": group_col, "freq": panel.freq,
        "label": panel.label, "source": panel.source, "date_col": date_col, "value_col": value_col,
        "periods": {"start": panel.dates(panel.periods[:1]).strftime("%Y-%m-%d")[0],
                    "end": panel.dates(panel.periods[-1:]).strftime("%Y-%m-%d")[0]},
        "options": fit.options.to_dict(),
        "errors": ("OLS with intervals robust to autocorrelation and heteroskedasticity (AR-prewhitened, "
                   "HC2 with a floor at high leverage), solved in blocks of series that share a design"
                   if fit.options.errors in ("auto", "ols") else f"errors {fit.options.errors}, per series"),
        "calendar_name": fit.calendar.name, "calendar_text": calendar_text(fit.calendar, None),
        # the shared design settings (each series' own trend origin is in series.csv)
        "design": design_spec(fit.calendar, fit.options, panel.periods, panel.freq,
                              chosen=getattr(fit, "chosen", None)).to_dict(),
        "counts": {"series": n, "fitted": int((series["status"] == "fitted").sum()),
                   "skipped": int((series["status"] == "skipped").sum()),
                   "batched": int((series["engine"] == "batched").sum()),
                   "per_series": int((series["engine"] == "per-series").sum())},
        "events": labels,
        "groups": fit.groups,
    }
    fitted_frame = None if fitted_path is not None else fit.fitted
    return PanelResult(
        settings=settings,
        series=keyed(series, panel.keys),
        lifts=keyed(lifts, panel.keys),
        pooling=pooling,
        occurrences=keyed(fit.occurrences, panel.keys),
        profile=keyed(fit.profile, panel.keys),
        coefficients=keyed(fit.params, panel.keys),
        skipped=keyed(skipped, panel.keys),
        fitted_path=fitted_path,
        _fitted=keyed(fitted_frame, panel.keys) if fitted_frame is not None and len(fitted_frame)
        else None,
    )

