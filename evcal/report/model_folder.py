"""Read a model folder (the output contract of ``evcal fit``) for reporting.

The report is built from the files ``evcal fit``, ``evcal plan`` and
``evcal backtest`` write, not from in-memory classes, so a report can be made
on another machine, later, from a folder someone sent. Every problem with a
file is one line naming the file, the line and the column.

Examples
--------
>>> from evcal.report.model_folder import read_model_folder   # doctest: +SKIP
>>> folder = read_model_folder("models/garden")                # doctest: +SKIP
>>> folder.lifts[["event", "lift_pct"]]                         # doctest: +SKIP
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.effects.tables import LIFT_COLUMNS, OCC_COLUMNS
from evcal.errors import ModelError

#: Files ``evcal fit`` writes, with the columns each must have (contract).
MODEL_FILES: dict[str, tuple[str, ...]] = {
    "lifts.csv": tuple(LIFT_COLUMNS),
    "occurrences.csv": tuple(OCC_COLUMNS),
    "profile.csv": ("period", "index"),
    "fitted.csv": ("date", "actual", "fitted", "base"),
}
PLAN_COLUMNS = ("date", "base", "plan", "low", "high")
BACKTEST_COLUMNS = ("year", "method", "spread", "wape", "bias", "peak_error")
LIFT_PREFIX = "lift:"

_TRUE = {"true", "1", "yes", "y", "t"}
_FALSE = {"false", "0", "no", "n", "f", ""}


@dataclass
class ModelFolder:
    """The contents of a model folder, as plain frames.

    Attributes
    ----------
    path : Path
        The folder read.
    model : dict
        ``model.json`` as parsed (read with ``.get``; keys may be missing).
    lifts, occurrences, profile, fitted : DataFrame
        The contract CSV files, with dates parsed and numbers as floats.
        ``lifts`` always has ``kind`` ("event" or "intervention") and ``label``.
    plan, backtest : DataFrame or None
        ``plan.csv`` and ``backtest.csv`` when given.
    """

    path: Path
    model: dict[str, Any]
    lifts: pd.DataFrame
    occurrences: pd.DataFrame
    profile: pd.DataFrame
    fitted: pd.DataFrame
    plan: pd.DataFrame | None = None
    backtest: pd.DataFrame | None = None
    sources: dict[str, Path] = field(default_factory=dict)

    @property
    def freq(self) -> str:
        return str(self.model.get("freq") or "")

    def labels(self) -> dict[str, str]:
        """Event and intervention name -> display label."""
        return dict(zip(self.lifts["event"], self.lifts["label"], strict=True))


def read_model_folder(
    model_dir: str | Path,
    plan_csv: str | Path | None = None,
    backtest_csv: str | Path | None = None,
) -> ModelFolder:
    """Read and check a model folder and the optional plan and backtest files.

    Raises
    ------
    ModelError
        One line per problem: a missing folder or file, a missing column, a
        value that is not a date or a number (with its line in the file).
    """
    folder = Path(model_dir)
    if not folder.is_dir():
        raise ModelError(f"{folder}: model folder not found (write one with `evcal fit`)")
    missing = [name for name in ("model.json", *MODEL_FILES) if not (folder / name).is_file()]
    if missing:
        raise ModelError(
            [f"{folder / name}: missing from the model folder (`evcal fit` writes it)" for name in missing]
        )
    model = _read_model_json(folder / "model.json")
    frames = {name: _read_csv(folder / name, cols) for name, cols in MODEL_FILES.items()}
    problems: list[str] = []

    lifts = frames["lifts.csv"]
    for col in ("lift_pct", "low_pct", "high_pct", "units_per_occurrence"):
        lifts[col] = _numbers(lifts[col], folder / "lifts.csv", col, problems)
    lifts["identifiable"] = _booleans(lifts["identifiable"], folder / "lifts.csv", problems)
    lifts["event"] = lifts["event"].astype(str)
    lifts["note"] = lifts["note"].fillna("").astype(str)
    lifts["kind"] = _kinds(lifts, model)
    lifts["label"] = _labels(lifts, model)

    occ = frames["occurrences.csv"]
    occ["event"] = occ["event"].astype(str)
    for col in ("start", "end"):
        occ[col] = _dates(occ[col], folder / "occurrences.csv", col, problems)
    for col in ("added_units", "added_pct"):
        occ[col] = _numbers(occ[col], folder / "occurrences.csv", col, problems)

    profile = frames["profile.csv"]
    for col in ("period", "index"):
        profile[col] = _numbers(profile[col], folder / "profile.csv", col, problems)

    fitted = frames["fitted.csv"]
    fitted["date"] = _dates(fitted["date"], folder / "fitted.csv", "date", problems)
    for col in ("actual", "fitted", "base"):
        fitted[col] = _numbers(fitted[col], folder / "fitted.csv", col, problems)
    for col in fitted.columns.drop(["date", "actual", "fitted", "base"]):
        fitted[col] = _extra_column(fitted[col], folder / "fitted.csv", col, problems)
    for col in occ.columns.drop(list(MODEL_FILES["occurrences.csv"])):
        occ[col] = _extra_column(occ[col], folder / "occurrences.csv", col, problems)

    plan = None
    if plan_csv is not None:
        plan = read_plan_csv(plan_csv, problems)
    backtest = None
    if backtest_csv is not None:
        backtest = read_backtest_csv(backtest_csv, problems)
    if problems:
        raise ModelError(problems)
    sources = {"model": folder}
    if plan_csv is not None:
        sources["plan"] = Path(plan_csv)
    if backtest_csv is not None:
        sources["backtest"] = Path(backtest_csv)
    return ModelFolder(
        path=folder,
        model=model,
        lifts=lifts.reset_index(drop=True),
        occurrences=occ.sort_values(["start", "event"]).reset_index(drop=True),
        profile=profile.sort_values("period").reset_index(drop=True),
        fitted=fitted.sort_values("date").reset_index(drop=True),
        plan=plan,
        backtest=backtest,
        sources=sources,
    )


def read_plan_csv(path: str | Path, problems: list[str] | None = None) -> pd.DataFrame:
    """Read ``plan.csv`` (``date, base, plan, low, high, lift:<event>..., [assumptions]``)."""
    own = problems is None
    problems = [] if problems is None else problems
    path = Path(path)
    if not path.is_file():
        problems.append(f"{path}: plan file not found (write one with `evcal plan`)")
        return _raise_or_empty(own, problems)
    try:
        plan = _read_csv(path, PLAN_COLUMNS)
    except ModelError as err:
        problems.extend(err.problems)
        return _raise_or_empty(own, problems)
    plan["date"] = _dates(plan["date"], path, "date", problems)
    for col in plan.columns:
        if col in ("date", "assumptions"):
            continue
        plan[col] = _numbers(plan[col], path, col, problems)
    if "assumptions" in plan.columns:
        plan["assumptions"] = plan["assumptions"].fillna("").astype(str)
    if own and problems:
        raise ModelError(problems)
    return plan.sort_values("date").reset_index(drop=True)


def read_backtest_csv(path: str | Path, problems: list[str] | None = None) -> pd.DataFrame:
    """Read ``backtest.csv`` (``year, method, spread, wape, bias, peak_error``)."""
    own = problems is None
    problems = [] if problems is None else problems
    path = Path(path)
    if not path.is_file():
        problems.append(f"{path}: backtest file not found (write one with `evcal backtest`)")
        return _raise_or_empty(own, problems)
    try:
        bt = _read_csv(path, BACKTEST_COLUMNS)
    except ModelError as err:
        problems.extend(err.problems)
        return _raise_or_empty(own, problems)
    for col in ("year", "wape", "bias", "peak_error"):
        bt[col] = _numbers(bt[col], path, col, problems)
    bt["method"] = bt["method"].astype(str)
    bt["spread"] = bt["spread"].astype(str)
    if own and problems:
        raise ModelError(problems)
    return bt


def lift_columns(plan: pd.DataFrame) -> list[str]:
    """The event names that have a ``lift:<event>`` column in a plan, in column order."""
    return [c[len(LIFT_PREFIX) :] for c in plan.columns if str(c).startswith(LIFT_PREFIX)]


# ---------------------------------------------------------------- helpers


def _raise_or_empty(own: bool, problems: list[str]) -> pd.DataFrame:
    if own:
        raise ModelError(problems)
    return pd.DataFrame()


def _read_model_json(path: Path) -> dict[str, Any]:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except json.JSONDecodeError as err:
        raise ModelError(
            f"{path}: line {err.lineno}: not valid JSON ({err.msg}); write it again with `evcal fit`"
        ) from None
    except (OSError, UnicodeDecodeError) as err:
        raise ModelError(f"{path}: cannot be read ({err})") from None
    if not isinstance(data, dict):
        raise ModelError(f"{path}: expected a JSON object at the top, found {type(data).__name__}")
    return data


def _read_csv(path: Path, required: tuple[str, ...]) -> pd.DataFrame:
    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False, na_values=[""])
    except pd.errors.EmptyDataError:
        raise ModelError(
            f"{path}: the file is empty; expected a header row with {', '.join(required)}"
        ) from None
    except (OSError, UnicodeDecodeError, pd.errors.ParserError) as err:
        raise ModelError(f"{path}: cannot be read as CSV ({str(err).strip()})") from None
    frame.columns = [str(c).strip() for c in frame.columns]
    absent = [c for c in required if c not in frame.columns]
    if absent:
        raise ModelError(
            f"{path}: line 1: missing column(s) {', '.join(absent)}; expected {', '.join(required)}"
        )
    return frame


def _numbers(values: pd.Series, path: Path, col: str, problems: list[str]) -> pd.Series:
    as_num = pd.to_numeric(values, errors="coerce")
    bad = values.notna() & as_num.isna() & ~values.astype(str).str.lower().isin(["nan", "inf"])
    for i in list(np.flatnonzero(bad.to_numpy()))[:3]:
        problems.append(f"{path}: line {i + 2}: column {col}: {values.iloc[i]!r} is not a number")
    return as_num.astype(float)


def _extra_column(values: pd.Series, path: Path, col: str, problems: list[str]) -> pd.Series:
    """A column beyond the contract: true/false flags stay flags, other columns are numbers.

    The fit may add columns (e.g. a flag for periods inside the fit); an event
    or intervention contribution must be a number.
    """
    text = values.dropna().astype(str).str.strip().str.lower()
    if len(text) and text.isin(["true", "false"]).all():
        return values.astype(str).str.strip().str.lower().eq("true")
    return _numbers(values, path, col, problems)


def _dates(values: pd.Series, path: Path, col: str, problems: list[str]) -> pd.Series:
    as_date = pd.to_datetime(values, errors="coerce", format="ISO8601")
    bad = as_date.isna()
    for i in list(np.flatnonzero(bad.to_numpy()))[:3]:
        problems.append(
            f"{path}: line {i + 2}: column {col}: {values.iloc[i]!r} is not an ISO date "
            "(expected e.g. 2027-03-28)"
        )
    return as_date


def _booleans(values: pd.Series, path: Path, problems: list[str]) -> pd.Series:
    out = []
    for i, raw in enumerate(values):
        text = "" if pd.isna(raw) else str(raw).strip().lower()
        if text in _TRUE:
            out.append(True)
        elif text in _FALSE:
            out.append(False)
        else:
            problems.append(f"{path}: line {i + 2}: column identifiable: {raw!r} is not true/false")
            out.append(False)
    return pd.Series(out, index=values.index, dtype=bool)


def _kinds(lifts: pd.DataFrame, model: dict[str, Any]) -> pd.Series:
    if "kind" in lifts.columns:
        kind = lifts["kind"].fillna("").astype(str).str.strip().str.lower()
        return kind.where(kind.isin(["event", "intervention"]), "event")
    interventions = {
        str(item.get("name")) for item in model.get("interventions", []) or [] if isinstance(item, dict)
    }
    return lifts["event"].map(lambda n: "intervention" if n in interventions else "event")


def _labels(lifts: pd.DataFrame, model: dict[str, Any]) -> pd.Series:
    from_json: dict[str, str] = {}
    for item in model.get("events", []) or []:
        if isinstance(item, dict) and item.get("name") is not None and item.get("label"):
            from_json[str(item["name"])] = str(item["label"])
    given = (
        lifts["label"].fillna("").astype(str)
        if "label" in lifts.columns
        else pd.Series("", index=lifts.index)
    )
    return pd.Series(
        [g.strip() or from_json.get(n, n) for n, g in zip(lifts["event"], given, strict=True)],
        index=lifts.index,
        dtype=object,
    )
