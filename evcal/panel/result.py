"""The panel model folder: long tables with the key columns first, written and read back.

A panel folder holds, for every series, what a single-series model folder
holds, as long tables whose first columns are the series keys (the files and
their columns: ``docs/scale.md``; one writer and reader: :mod:`evcal.store`).
The fitted table is Parquet because it has a row per series and period (2.6
million rows for 10,000 weekly series over five years), which CSV writes and
reads many times slower. Any one series' single model can be rebuilt from the
folder (:meth:`PanelResult.series_result`), which is how ``evcal plan`` plans
each series.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import ModelError
from evcal.spelling import option, subject
from evcal.store import folder_kind, read_folder, write_folder

__all__ = ["PanelResult", "load_panel", "is_panel_dir"]


def key_mask(frame: pd.DataFrame, key: dict[str, Any]) -> np.ndarray:
    """Rows of ``frame`` whose key columns equal ``key`` (compared as text)."""
    mask = np.ones(len(frame), dtype=bool)
    for c, v in key.items():
        mask &= frame[c].astype(str).to_numpy() == str(v)
    return mask


@dataclass
class PanelResult:
    """A fitted panel: settings, the long tables and where the fitted rows are.

    Tables carry the key columns first (``key_cols``); ``series`` has one row
    per series of the file, fitted or not.
    """

    settings: dict[str, Any]
    series: pd.DataFrame
    lifts: pd.DataFrame
    pooling: pd.DataFrame
    occurrences: pd.DataFrame
    profile: pd.DataFrame
    coefficients: pd.DataFrame
    skipped: pd.DataFrame
    fitted_path: Path | None = None
    _fitted: pd.DataFrame | None = field(default=None, repr=False)

    @property
    def key_cols(self) -> list[str]:
        return list(self.settings["keys"])

    @property
    def fitted(self) -> pd.DataFrame:
        """The long fitted table (read from ``fitted.parquet`` when the result was loaded)."""
        if self._fitted is None and self.fitted_path is not None:
            self._fitted = pd.read_parquet(self.fitted_path)
        return self._fitted if self._fitted is not None else pd.DataFrame()

    def find(self, key: dict[str, Any] | str | tuple[Any, ...]) -> dict[str, Any]:
        """The full key of one series from ``{"product": "P1"}``, ``"P1"`` or ``("F1", "P1")``.

        Raises
        ------
        ModelError
            No such series, or more than one (name every key column).
        """
        cols = self.key_cols
        if isinstance(key, str):
            parts = [p.strip() for p in key.split(",")]
            if all("=" in p for p in parts):
                key = {p.split("=", 1)[0].strip(): p.split("=", 1)[1].strip() for p in parts}
            elif len(parts) == len(cols) and len(cols) > 1:
                key = dict(zip(cols, parts, strict=True))
            else:
                key = {cols[-1]: key}
        elif isinstance(key, tuple):
            key = dict(zip(cols, key, strict=False))
        unknown = [k for k in key if k not in cols]
        if unknown:
            raise ModelError(f"{subject('series')}: {unknown[0]!r} is not a key column; the keys are "
                             f"{', '.join(cols)}")
        hits = np.flatnonzero(key_mask(self.series, key))
        shown = ", ".join(f"{c}={v}" for c, v in key.items())
        named = option("series", shown, cli_value=shown)  # series='store=north' / --series store=north
        if len(hits) == 0:
            raise ModelError(f"{named}: no such series in the model; see series.csv for the keys")
        if len(hits) > 1:
            raise ModelError(f"{named}: {len(hits)} series match; give every key column "
                             f"({', '.join(cols)})")
        return {c: self.series[c].iloc[hits[0]] for c in cols}

    def history(self, key: dict[str, Any]) -> Any:
        """The series' history as a single-series :class:`~evcal.io.History` (from the fitted rows)."""
        from evcal.io.history import History

        if self._fitted is not None:
            rows = self._fitted[key_mask(self._fitted, {c: key[c] for c in self.key_cols})]
        elif self.fitted_path is not None:
            filters = [(c, "==", key[c]) for c in self.key_cols]
            rows = pd.read_parquet(self.fitted_path, columns=["date", "actual"], filters=filters)
        else:
            raise ModelError("this panel result has no fitted rows to rebuild a series from")
        freq = self.settings["freq"]
        periods = pd.PeriodIndex(pd.DatetimeIndex(rows["date"]).to_period(freq), name="period")
        values = pd.Series(rows["actual"].to_numpy(dtype=float), index=periods,
                           name=self.settings.get("value_col", "value"))
        label = ", ".join(f"{c}={key[c]!r}" for c in self.key_cols)
        return History(values=values, freq=freq, label=self.settings["label"],
                       source=f"{self.settings['source']} [{label}]",
                       missing=list(periods[values.isna().to_numpy()]))

    def series_result(self, key: dict[str, Any] | str | tuple[Any, ...]) -> Any:
        """The single-series :class:`~evcal.model.FitResult` of one series.

        Fitted again from the stored history with the series' own transform and
        the panel's options: the batched solver gives the same numbers (the
        tests check it to 1e-8), so this is the same model.
        """
        from dataclasses import asdict, replace

        from evcal.engine import fit

        full = self.find(key)
        row = self.series.loc[key_mask(self.series, full)].iloc[0]
        if row["status"] != "fitted":
            shown = ", ".join(f"{c}={full[c]!r}" for c in self.key_cols)
            raise ModelError(f"series {shown} was not fitted ({row.get('reason', '')}); see skipped.csv")
        options, calendar = self.fitted_options()
        options = replace(options, transform=row["transform"],
                          errors="ols" if row["engine"] == "batched" else options.errors)
        # every field as given (to_dict is the stored form: it leaves out a False leap year or drift,
        # which fit would then read as "auto" and choose again on this series' rows)
        return fit(self.history(full), calendar, **asdict(options))

    def fitted_options(self) -> tuple[Any, Any]:
        """The options and calendar the series were fitted with: the settings the data chose once for
        the panel (seasonal form, Fourier order, trading days, leap year, drift, Easter run-ups) given
        as settings, so a series fitted again alone is the same model, not a new choice on its own rows.
        """
        from dataclasses import replace

        from evcal.design.matrix import with_windows
        from evcal.model.inputs import load_calendar_any
        from evcal.model.options import FitOptions

        opts = FitOptions.from_dict(self.settings["options"])
        design = self.settings["design"]
        opts = replace(opts, seasonal=design["seasonal"], fourier_order=design["fourier_order"],
                       trading_days=design["trading_days"], leap_year=design.get("leap_year", False),
                       season_drift=design.get("season_drift_origin") is not None)
        calendar = load_calendar_any(self.settings["calendar_text"])
        return opts, with_windows(calendar, design.get("event_windows") or {})

    def write_into(self, directory: Path) -> None:
        """Write every file into ``directory`` (:func:`evcal.store.write_folder`), except ``fitted.parquet``
        when it is there already (streamed while fitting) or the fitted rows are not in memory."""
        tables = {"occurrences": self.occurrences, "profile": self.profile,
                  # event labels are in panel.json ("events"), not on every row
                  "lifts": self.lifts.drop(columns=["_fitted", "label"], errors="ignore"),
                  "series": self.series, "pooling": self.pooling, "skipped": self.skipped,
                  "coefficients": self.coefficients}
        if self._fitted is not None and not (Path(directory) / "fitted.parquet").exists():
            tables["fitted"] = self._fitted
        write_folder(Path(directory), "panel", self.settings, tables)

    def save(self, directory: str | Path) -> Path:
        """Write the panel folder atomically (all files or none)."""
        import shutil

        from evcal._files import atomic_dir

        directory = Path(directory)
        with atomic_dir(directory, kind="panel") as tmp:
            if self._fitted is None and self.fitted_path is not None and self.fitted_path.exists():
                shutil.copyfile(self.fitted_path, tmp / "fitted.parquet")
            self.write_into(tmp)
        self.fitted_path = directory / "fitted.parquet"
        return directory

    def summary(self) -> str:
        from evcal.panel.summary import describe_panel

        return describe_panel(self)


def is_panel_dir(directory: str | Path) -> bool:
    """Whether ``directory`` is a panel folder (its marker says so, or ``panel.json`` is inside)."""
    return folder_kind(directory) == "panel"


def load_panel(directory: str | Path) -> PanelResult:
    """Read a panel folder written by ``evcal fit --series-col``, every key and table checked first
    (:func:`evcal.store.read_folder`).

    Raises
    ------
    ModelError
        One line naming the file and the key (or line and column): a missing
        file, an incompatible format version, a damaged key or table.

    Examples
    --------
    >>> load_panel("models/all").key_cols       # doctest: +SKIP
    ['store', 'product']
    """
    folder = read_folder(directory, "panel")
    return PanelResult(settings=folder.document, fitted_path=folder.path / "fitted.parquet", **folder.tables)
