"""What ``discover`` reads: a history (file, frame, series or model folder) and a calendar.

A model folder written by ``evcal fit`` stands in for the history it was
fitted from: a single-series folder gives the ``date`` and ``actual`` columns
of its fitted table, a panel folder the history of the series named by
``series``. The folders are read by their own readers, so a damaged folder is
refused the same way as by ``plan`` or ``show``; without a calendar of its
own, the model's calendar is used.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import yaml

from evcal.errors import CalendarError, HistoryError, ModelError
from evcal.spelling import option

__all__ = ["calendar_text", "read_discover_inputs", "read_history_input", "with_entries"]

#: most series keys named in the line asking for ``series`` on a panel folder
MODEL_SERIES_SHOWN = 5


def read_discover_inputs(history: Any, calendar: Any, *, series: Any = None, date_col: str = "date",
                         value_col: str = "value", freq: str | None = None) -> tuple[Any, str]:
    """The history to search and the YAML text of the calendar it is fitted with.

    The arguments are those of :func:`evcal.discover`; a calendar of None is
    the model folder's own, or no events for a history.

    Raises
    ------
    HistoryError, ModelError, CalendarError
        One line: a panel folder without ``series`` (naming a few of its
        series), ``series`` for anything but a panel folder, a damaged folder,
        a bad history or calendar.

    Examples
    --------
    >>> hist, text = read_discover_inputs("models/all", None, series="P1")  # doctest: +SKIP
    """
    folder = _model_folder(history)
    if folder is None:
        if series is not None:
            raise HistoryError(f"{_shown(history)}: a series is named ({series!r}), but only a panel model "
                               "folder (written by evcal fit --series-col) holds several; drop "
                               f"{option('series')}")
        return read_history_input(history, date_col, value_col, freq), calendar_text(calendar)
    if (folder / "panel.json").is_file():
        hist, model_text = _panel_series(folder, series)
    else:
        if series is not None:
            raise ModelError(f"{folder}: a single-series model folder; drop {option('series')} ({series!r}), "
                             "which names one series of a panel model folder")
        hist, model_text = _single_series(folder)
    _check_freq(folder, freq, hist.freq)
    return hist, (model_text if calendar is None else calendar_text(calendar))


def _shown(history: Any) -> str:
    return str(history) if isinstance(history, str | Path) else f"<{type(history).__name__}>"


def _model_folder(history: Any) -> Path | None:
    """``history`` as a path when it names a folder written by ``evcal fit``, else None.

    Any other folder is left to the history reader, whose message says to name the file inside it.
    """
    if not isinstance(history, str | Path) or (isinstance(history, str) and "\n" in history):
        return None
    try:
        folder = Path(history)
        marked = (folder / "model.json").is_file() or (folder / "panel.json").is_file()
        return folder if folder.is_dir() and marked else None
    except (OSError, ValueError):  # a name the system cannot look up is left to the history reader
        return None


def _single_series(folder: Path) -> tuple[Any, str]:
    from evcal.io import History
    from evcal.model import load_model

    res = load_model(folder)
    fitted = res.fitted
    periods = pd.PeriodIndex(pd.DatetimeIndex(fitted["date"]).to_period(res.freq), name="period")
    values = pd.Series(fitted["actual"].to_numpy(dtype=float), index=periods, name="value")
    hist = History(values=values, freq=res.freq, label=res.label, source=res.history_source,
                   missing=list(periods[values.isna().to_numpy()]))
    return hist, res.calendar_text


def _panel_series(folder: Path, series: Any) -> tuple[Any, str]:
    from evcal.panel import load_panel

    panel = load_panel(folder)
    if series is None:
        raise ModelError(f"{folder}: a panel model of {len(panel.series)} series; name one with "
                         f"{option('series')}, e.g. {_some_keys(panel)} (all in series.csv)")
    key = panel.find(series)
    return panel.history(key), str(panel.settings["calendar_text"])


def _some_keys(panel: Any) -> str:
    """A few fitted series' keys, written the way ``--series`` takes them."""
    cols = panel.key_cols
    table = panel.series
    if "status" in table.columns:
        table = table[table["status"] == "fitted"]
    keys = [str(row[0]) if len(cols) == 1 else ",".join(f"{c}={v}" for c, v in zip(cols, row, strict=True))
            for row in table[cols].head(MODEL_SERIES_SHOWN).itertuples(index=False)]
    more = len(table) - len(keys)
    return "; ".join(keys) + (f"; ... ({more} more)" if more > 0 else "")


def _check_freq(folder: Path, freq: str | None, model_freq: str) -> None:
    if freq is None:
        return
    from evcal.io.frequency import parse_freq_option

    wanted = parse_freq_option(freq)
    same = model_freq.startswith("W-") if wanted is None else wanted == model_freq
    if not same:
        raise HistoryError(f"{option('freq', freq)}: the model in {folder} is {model_freq}; drop "
                           f"{option('freq')} (a model "
                           "folder's history keeps the frequency it was fitted at)")


def read_history_input(history: Any, date_col: str, value_col: str, freq: str | None) -> Any:
    """A history given as a file, frame, Series or :class:`~evcal.io.History`, as a History.

    A Series needs a PeriodIndex (used as it is) or a DatetimeIndex (read like a file).

    Examples
    --------
    >>> s = pd.Series([1.0, 2.0], index=pd.period_range("2024-01", periods=2, freq="M"))
    >>> read_history_input(s, "date", "value", None).freq
    'M'
    """
    from evcal.io import History, read_history

    if isinstance(history, History):
        return history
    if isinstance(history, pd.Series):
        if isinstance(history.index, pd.PeriodIndex):
            full = pd.period_range(history.index.min(), history.index.max(), freq=history.index.freq)
            values = pd.to_numeric(history, errors="coerce").astype(float).reindex(full)
            return History(values, full.freqstr, "start", "<series>",
                           [p for p, v in values.items() if not np.isfinite(v)])
        if isinstance(history.index, pd.DatetimeIndex):
            frame = pd.DataFrame({"date": history.index, "value": history.to_numpy()})
            return read_history(frame, freq=freq)
        raise HistoryError("<series>: a Series history needs a PeriodIndex or DatetimeIndex of dates")
    return read_history(history, date_col=date_col, value_col=value_col, freq=freq)


def calendar_text(calendar: Any) -> str:
    """Validate the user's calendar (errors name their file) and return its YAML text.

    Examples
    --------
    >>> calendar_text(None)
    'name: no events\\n'
    """
    from evcal.model.inputs import load_calendar_any

    text = load_calendar_any(calendar).text  # raises CalendarError with file, line and key
    if not text:
        raise CalendarError("calendar: this Calendar object has no YAML text; pass the calendar "
                            "file path or its YAML text to discover")
    return text


def with_entries(text: str, **sections: list[dict[str, Any]]) -> str:
    """The calendar text with extra entries appended to its sections.

    Examples
    --------
    >>> print(with_entries("name: x\\n", exclude=[{"start": "2024-01-01"}]), end="")
    name: x
    exclude:
    - start: '2024-01-01'
    """
    data = yaml.safe_load(text) or {}
    for key, extra in sections.items():
        if extra:
            data[key] = list(data.get(key) or []) + extra
    return yaml.safe_dump(data, sort_keys=False, allow_unicode=True)
