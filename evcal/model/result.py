"""The fitted model as plain data: tables, coefficients, settings; saved without pickles."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal import __version__
from evcal.design.matrix import DesignSpec
from evcal.effects import Z95
from evcal.model.identify import ColumnStatus
from evcal.model.options import FitOptions
from evcal.store import FORMAT_VERSION, MODEL_FILES, json_safe, read_folder, save_folder
from evcal.store.documents import plain, validate_document
from evcal.store.settings import check_model

__all__ = ["FitResult", "cov_frame", "load_model", "json_safe", "FORMAT_VERSION", "MODEL_FILES"]


@dataclass
class FitResult:
    """A fitted evcal model.

    Settings (``options``, ``spec``) are kept apart from fitted state
    (``params``, ``cov``, ``sigma2``, ...) and from the derived tables
    (``lifts``, ``occurrences``, ``profile``, ``fitted``).
    """

    options: FitOptions
    spec: DesignSpec
    transform: str
    label: str
    params: pd.Series
    cov: pd.DataFrame
    sigma2: float
    smear: float
    error_model: dict[str, Any]
    model_choice: dict[str, Any]
    status: dict[str, ColumnStatus]
    like_map: dict[str, str]
    assumed: dict[str, float]
    base_columns: list[str]
    intervention_names: list[str]
    closure_events: list[str]
    event_info: dict[str, dict[str, Any]]
    event_labels: dict[str, str]
    calendar_text: str
    calendar_name: str
    history_start: str
    history_end: str
    history_source: str
    last_year: dict[str, Any]
    average_share: dict[int, float]
    mean_base: float
    exclusions: list[dict[str, str]]
    warnings: list[str] = field(default_factory=list)
    quality: dict[str, float] = field(default_factory=dict)
    lifts: pd.DataFrame = field(default_factory=pd.DataFrame)
    occurrences: pd.DataFrame = field(default_factory=pd.DataFrame)
    profile: pd.DataFrame = field(default_factory=pd.DataFrame)
    fitted: pd.DataFrame = field(default_factory=pd.DataFrame)
    residuals: pd.Series = field(default_factory=lambda: pd.Series(dtype=float))
    #: daily models: the weekday-aware average share (:func:`evcal.model.weekday_share.weekday_share_profile`)
    weekday_share: dict[str, Any] = field(default_factory=dict)
    _calendar: Any = field(default=None, repr=False)

    # ------------------------------------------------------------ helpers
    @property
    def freq(self) -> str:
        return self.spec.freq

    @property
    def calendar(self) -> Any:
        """The fitted calendar (rebuilt from the saved text when loaded)."""
        if self._calendar is None:
            from evcal.calendar import load_calendar

            self._calendar = load_calendar(self.calendar_text)
        return self._calendar

    # ------------------------------------------------------------ persistence
    def to_json(self) -> dict[str, Any]:
        return {
            "format_version": FORMAT_VERSION,
            "evcal_version": __version__,
            "freq": self.spec.freq,
            "label": self.label,
            "transform": self.transform,
            "options": self.options.to_dict(),
            "design": self.spec.to_dict(),
            "params": {k: float(v) for k, v in self.params.items()},
            "cov": {"columns": list(self.cov.columns), "values": self.cov.to_numpy().tolist()},
            "sigma2": self.sigma2,
            "smear": self.smear,
            "error_model": self.error_model,
            "model": self.model_choice,
            "status": {k: {"status": v.status, "note": v.note, "twin": v.twin,
                           **({"weak": True} if v.weak else {})}
                       for k, v in self.status.items()},
            "like_map": self.like_map,
            "assumed": self.assumed,
            "base_columns": self.base_columns,
            "intervention_names": self.intervention_names,
            "closure_events": self.closure_events,
            "event_info": self.event_info,
            "event_labels": self.event_labels,
            "events": [{"name": k, **v} for k, v in self.event_info.items()],
            "calendar_text": self.calendar_text,
            "calendar_name": self.calendar_name,
            "history": {"start": self.history_start, "end": self.history_end,
                        "source": self.history_source},
            "last_year": self.last_year,
            "average_share": {str(k): v for k, v in self.average_share.items()},
            **self._weekday_share_json(),
            "mean_base": self.mean_base,
            "exclusions": self.exclusions,
            "warnings": self.warnings,
            "quality": self.quality,
        }

    def _weekday_share_json(self) -> dict[str, Any]:
        # written for daily models only, so a folder without it (older, or not daily) is written back the same
        if not self.weekday_share:
            return {}
        return {"weekday_share": {"month": {str(k): v for k, v in self.weekday_share["month"].items()},
                                  "weekday": self.weekday_share["weekday"]}}

    def save(self, directory: str | Path) -> Path:
        """Write the output folder of the contract (atomically: all files or none; :mod:`evcal.store`)."""
        tables = {"lifts": self.lifts, "occurrences": self.occurrences, "profile": self.profile,
                  "fitted": self.fitted}
        if self.spec.drivers:  # outside drivers: their own table (evcal.model.drivers)
            from evcal.model.drivers import driver_table

            tables["drivers"] = driver_table(self)
        return save_folder(directory, "model", self.to_json(), tables)

    @classmethod
    def from_json(cls, d: dict[str, Any], source: str | Path = "model.json") -> FitResult:
        """A model from the contents of ``model.json``, checked first (:mod:`evcal.store`).

        Raises
        ------
        ModelError
            One line naming ``source`` and the first key that is missing, of the wrong type,
            not finite where a finite number is needed, or inconsistent with the others.
        """
        doc = validate_document("model", Path(source), d)
        cal, _ = check_model(Path(source), doc)
        res = cls._from_checked(plain(doc, d))
        res._calendar = cal
        return res

    @classmethod
    def _from_checked(cls, d: dict[str, Any]) -> FitResult:
        """A model from a checked ``model.json`` (:func:`evcal.store.documents.plain`): the keys that are
        fields of their own name as they are, the others converted."""
        history = d["history"]
        return cls(
            **{k: d[k] for k in _AS_SAVED},
            options=FitOptions.from_dict(d["options"]),
            spec=DesignSpec.from_dict(d["design"]),
            params=pd.Series(d["params"], dtype=float),
            cov=cov_frame(d),
            model_choice=d["model"],
            status={k: ColumnStatus(v["status"], v["note"], v["twin"], bool(v.get("weak", False)))
                    for k, v in d["status"].items()},
            history_start=history["start"], history_end=history["end"], history_source=history["source"],
            average_share={int(k): v for k, v in d["average_share"].items()},
            # absent (None) in folders fitted before it was stored, and for non-daily models
            weekday_share={"month": {int(k): v for k, v in d["weekday_share"]["month"].items()},
                           "weekday": d["weekday_share"]["weekday"]} if d.get("weekday_share") else {},
        )


def coefficient_interval(result: Any, name: str) -> np.ndarray:
    """``[b, low, high]``: a fit's coefficient with its 95 % interval, ``b ± 1.96 se`` (its covariance).

    NaN where the fit has no such coefficient (or no variance for it).

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> fit = SimpleNamespace(params=pd.Series({"a": 1.0}), cov=pd.DataFrame({"a": [0.25]}, index=["a"]))
    >>> coefficient_interval(fit, "a").round(3).tolist()
    [1.0, 0.02, 1.98]
    """
    b = float(result.params.get(name, np.nan))
    se = float(np.sqrt(result.cov.loc[name, name])) if name in result.cov.index else np.nan
    return np.array([b, b - Z95 * se, b + Z95 * se])


def cov_frame(doc: dict[str, Any]) -> pd.DataFrame:
    """The coefficients' covariance of a ``model.json`` document, labelled by column on both axes.

    Parameters
    ----------
    doc : dict
        The model document (its ``cov`` key: ``columns`` and the ``values`` row by row).

    Returns
    -------
    pandas.DataFrame
        Square, index and columns the coefficient names; 0 x 0 for a model without coefficients.

    Examples
    --------
    >>> cov_frame({"cov": {"columns": ["a", "b"], "values": [[1.0, 0.5], [0.5, 2.0]]}}).loc["b", "a"]
    np.float64(0.5)
    >>> cov_frame({"cov": {"columns": [], "values": []}}).shape
    (0, 0)
    """
    cols = list(doc["cov"]["columns"])
    values = np.array(doc["cov"]["values"], dtype=float).reshape(len(cols), len(cols))
    return pd.DataFrame(values, index=cols, columns=cols)


#: keys of model.json that are fields of FitResult of the same name and type (checked by evcal.store)
_AS_SAVED = ("transform", "label", "sigma2", "smear", "error_model", "like_map", "assumed", "base_columns",
             "intervention_names", "closure_events", "event_info", "event_labels", "calendar_text",
             "calendar_name", "last_year", "mean_base", "exclusions", "warnings", "quality")


def load_model(directory: str | Path) -> FitResult:
    """Read a model folder written by :meth:`FitResult.save`, checking every key and table first.

    Raises
    ------
    ModelError
        A file is missing, unreadable, from another format version, or damaged: one line
        naming the file and the key (see :func:`evcal.store.read_folder`).

    Examples
    --------
    >>> res = load_model("models/garden")                     # doctest: +SKIP
    >>> from evcal.plan import make_plan                    # doctest: +SKIP
    >>> make_plan(res, "2027-01-01", "2027-12-31").table.head()     # doctest: +SKIP
    """
    folder = read_folder(directory, "model")
    res = FitResult._from_checked(folder.document)
    res._calendar = folder.calendar
    for name, table in folder.tables.items():
        setattr(res, name, table)
    return res
