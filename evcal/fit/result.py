"""The fitted model as plain data: tables, coefficients, settings; saved without pickles."""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal import __version__
from evcal._files import atomic_dir
from evcal.design.matrix import DesignSpec
from evcal.errors import ModelError
from evcal.fit.identify import ColumnStatus
from evcal.fit.options import FitOptions

FORMAT_VERSION = 1
MODEL_FILES = ("model.json", "lifts.csv", "occurrences.csv", "profile.csv", "fitted.csv")


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
    _open_share: np.ndarray | None = field(default=None, repr=False)
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

    def open_share_at(self, where: np.ndarray | slice) -> np.ndarray:
        """Open share of the history periods selected by a mask or slice."""
        if self._open_share is None:
            n = len(range(*where.indices(10**9))) if isinstance(where, slice) else int(np.sum(where))
            return np.ones(n)
        return self._open_share[where]

    def plan(self, start: Any, end: Any, calendar: Any = None, total: float | None = None,
             **kwargs: Any) -> Any:
        """Forward plan for [start, end]; see :func:`evcal.plan.make_plan`."""
        from evcal.plan import make_plan

        return make_plan(self, start, end, calendar=calendar, total=total, **kwargs)

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
            "status": {k: {"status": v.status, "note": v.note, "twin": v.twin}
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
            "mean_base": self.mean_base,
            "exclusions": self.exclusions,
            "warnings": self.warnings,
            "quality": self.quality,
        }

    def save(self, directory: str | Path) -> Path:
        """Write the output folder of the contract (atomically: all files or none)."""
        directory = Path(directory)
        with atomic_dir(directory, kind="model") as tmp:
            (tmp / "model.json").write_text(json.dumps(json_safe(self.to_json()), indent=1),
                                            encoding="utf-8")
            self.lifts.to_csv(tmp / "lifts.csv", index=False, float_format="%.6g")
            self.occurrences.to_csv(tmp / "occurrences.csv", index=False, float_format="%.6g")
            self.profile.to_csv(tmp / "profile.csv", index=False, float_format="%.6g")
            self.fitted.to_csv(tmp / "fitted.csv", index=False, float_format="%.6g")
        return directory

    @classmethod
    def from_json(cls, d: dict[str, Any]) -> FitResult:
        cols = d["cov"]["columns"]
        return cls(
            options=FitOptions.from_dict(d["options"]),
            spec=DesignSpec.from_dict(d["design"]),
            transform=d["transform"],
            label=d["label"],
            params=pd.Series(d["params"], dtype=float),
            cov=pd.DataFrame(np.array(d["cov"]["values"], dtype=float).reshape(len(cols), len(cols)),
                             index=cols, columns=cols),
            sigma2=float(d["sigma2"]),
            smear=float(d["smear"]),
            error_model=d["error_model"],
            model_choice=d["model"],
            status={k: ColumnStatus(v["status"], v["note"], v.get("twin", ""))
                    for k, v in d["status"].items()},
            like_map=d["like_map"],
            assumed={k: float(v) for k, v in d["assumed"].items()},
            base_columns=d["base_columns"],
            intervention_names=d["intervention_names"],
            closure_events=d["closure_events"],
            event_info=d["event_info"],
            event_labels=d["event_labels"],
            calendar_text=d["calendar_text"],
            calendar_name=d["calendar_name"],
            history_start=d["history"]["start"],
            history_end=d["history"]["end"],
            history_source=d["history"]["source"],
            last_year=d["last_year"],
            average_share={int(k): float(v) for k, v in d["average_share"].items()},
            mean_base=float(d["mean_base"]),
            exclusions=d["exclusions"],
            warnings=d["warnings"],
            quality=d.get("quality", {}),
        )


def json_safe(obj: Any) -> Any:
    """Plain JSON values: NaN and infinity become null, numpy scalars Python ones, keys text."""
    if isinstance(obj, float):
        return obj if np.isfinite(obj) else None
    if isinstance(obj, dict):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [json_safe(v) for v in obj]
    if isinstance(obj, np.floating):
        return json_safe(float(obj))
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, np.bool_):
        return bool(obj)
    return obj


def load_model(directory: str | Path) -> FitResult:
    """Read a model folder written by :meth:`FitResult.save`.

    Raises
    ------
    ModelError
        A file is missing, unreadable, or from an incompatible format version.
    """
    directory = Path(directory)
    if not directory.is_dir():
        raise ModelError(f"{directory}: not a model folder (it does not exist); run evcal fit first")
    missing = [f for f in MODEL_FILES if not (directory / f).is_file()]
    if missing:
        raise ModelError(f"{directory}: model folder is missing {', '.join(missing)}; "
                         "re-run evcal fit to write a complete folder")
    try:
        d = json.loads((directory / "model.json").read_text(encoding="utf-8"))
    except (OSError, json.JSONDecodeError) as err:
        raise ModelError(f"{directory / 'model.json'}: not readable JSON ({err})") from None
    fv = d.get("format_version") if isinstance(d, dict) else None
    if fv != FORMAT_VERSION:
        raise ModelError(
            f"{directory / 'model.json'}: format_version {fv!r} written by evcal "
            f"{d.get('evcal_version', '?') if isinstance(d, dict) else '?'}; this evcal "
            f"({__version__}) reads format_version {FORMAT_VERSION}; re-run evcal fit")
    try:
        res = FitResult.from_json(d)
    except (KeyError, TypeError, ValueError) as err:
        raise ModelError(f"{directory / 'model.json'}: incomplete or damaged (missing {err}); "
                         "re-run evcal fit") from None
    res.lifts = pd.read_csv(directory / "lifts.csv")
    res.occurrences = pd.read_csv(directory / "occurrences.csv")
    res.profile = pd.read_csv(directory / "profile.csv")
    res.fitted = pd.read_csv(directory / "fitted.csv", parse_dates=["date"])
    return res
