"""Read a model folder (the output contract of ``evcal fit``) for reporting.

The report is built from the files ``evcal fit``, ``evcal plan`` and
``evcal backtest`` write, not from in-memory classes, so a report can be made
on another machine, later, from a folder someone sent. The model folder is
read by :func:`evcal.store.read_folder`, the one checked reader that
``evcal plan`` and ``evcal show`` use too: a damaged folder is refused with the
same line naming the file and the key, before any number from it is shown.
Text cells that evcal wrote with a leading quote (formula-safe CSV,
:mod:`evcal.formula_safe`) are read back as the text they were (the quote is
taken off once, by that reader).

Examples
--------
>>> from evcal.report.model_folder import read_model_folder   # doctest: +SKIP
>>> folder = read_model_folder("models/garden")                # doctest: +SKIP
>>> folder.lifts[["event", "lift_pct"]]                         # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from types import SimpleNamespace
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import ModelError
from evcal.formula_safe import unguard_frame

PLAN_COLUMNS = ("date", "base", "plan", "low", "high")
BACKTEST_COLUMNS = ("year", "method", "spread", "wape", "bias", "peak_error")
LIFT_PREFIX = "lift:"


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
        The model folder: one line naming the file and the key (or line and
        column), as ``evcal plan`` says it. The plan and backtest files: one
        line per problem (a missing column, a value that is not a date or a
        number, with its line in the file).
    """
    from evcal.store import read_folder

    folder = Path(model_dir)
    if (folder / "panel.json").is_file() and not (folder / "model.json").is_file():
        # a panel folder holds many series' long tables: write_report reads it with evcal.panel.load_panel
        raise ModelError(f"{folder}: a panel model folder (panel.json), not a single model; read it with "
                         "evcal.panel.load_panel (write_report shows it with a section per series)")
    # the one reader of a model folder: every key of model.json and every table checked as
    # `plan` and `show` check them; the first problem is one ModelError line
    stored = read_folder(folder, "model")
    checked = SimpleNamespace(model=stored.document, calendar=stored.calendar, **stored.tables)
    model = checked.model
    problems: list[str] = []
    lifts = checked.lifts.copy()  # read_folder took the formula-safe quote off already: once only
    lifts["kind"] = _kinds(lifts, model)
    lifts["label"] = _labels(lifts, model)
    occ = checked.occurrences
    profile = checked.profile
    fitted = checked.fitted

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
    plan = unguard_frame(plan)  # the plan writer quotes text that a spreadsheet would run as a formula
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


def _dates(values: pd.Series, path: Path, col: str, problems: list[str]) -> pd.Series:
    as_date = pd.to_datetime(values, errors="coerce", format="ISO8601")
    bad = as_date.isna()
    for i in list(np.flatnonzero(bad.to_numpy()))[:3]:
        problems.append(
            f"{path}: line {i + 2}: column {col}: {values.iloc[i]!r} is not an ISO date "
            "(expected e.g. 2027-03-28)"
        )
    return as_date


def _kinds(lifts: pd.DataFrame, model: dict[str, Any]) -> pd.Series:
    if "kind" in lifts.columns:
        kind = lifts["kind"].fillna("").astype(str).str.strip().str.lower()
        return kind.where(kind.isin(["event", "intervention"]), "event")
    interventions = {str(name) for name in model.get("intervention_names", []) or []}
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


def workbook_from_files(
    out_xlsx: str | Path, model_dir: str | Path, plan_csv: str | Path | None = None
) -> Path:
    """The workbook from a model folder and a ``plan.csv`` (the files, not the classes).

    Without a plan the Plan sheet says so; the other sheets come from the folder.
    """
    from evcal.plan.workbook import write_workbook

    folder = read_model_folder(model_dir, plan_csv=plan_csv)
    lifts = folder.lifts
    return write_workbook(
        out_xlsx,
        folder.plan if folder.plan is not None else pd.DataFrame(),
        lifts,
        folder.profile,
        folder.occurrences,
    )
