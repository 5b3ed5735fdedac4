"""Read a model folder (the output contract of ``evcal fit``) and the plan and backtest files for reporting.

The report is built from files, not in-memory classes, so it can be made later, elsewhere, from a
folder someone sent. The folder is read by :func:`evcal.store.read_folder`, the one checked reader
that ``evcal plan`` and ``evcal show`` use too: a damaged folder is refused with the same line naming
the file and the key, before any number from it is shown.

Examples
--------
>>> folder = read_model_folder("models/garden")                # doctest: +SKIP
>>> folder.lifts[["event", "lift_pct"]]                         # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import ModelError
from evcal.formula_safe import unguard_frame
from evcal.io.weeklabels import ISO_WEEK_COLUMN
from evcal.plan.actuals import split_plan_file
from evcal.plan.spread import DRIVER_PREFIX  # the plan's driver columns, as evcal.plan writes them

PLAN_COLUMNS = ("date", "base", "plan", "low", "high")
BACKTEST_COLUMNS = ("year", "method", "spread", "wape", "bias", "peak_error")
LIFT_PREFIX = "lift:"


@dataclass
class ModelFolder:
    """The contents of a model folder, as plain frames.

    Attributes
    ----------
    model : dict
        ``model.json`` as checked by the store's reader.
    lifts, occurrences, profile, fitted : DataFrame
        The contract tables, sorted (occurrences by start, profile by period, fitted by date).
        ``lifts`` always has ``kind`` ("event" or "intervention") and ``label``.
    plan, backtest : DataFrame or None
        ``plan.csv`` and ``backtest.csv`` when given; ``sources`` their paths.
    drivers : DataFrame or None
        ``drivers.csv`` (outside drivers), when the fit had drivers.
    calendar : Calendar or None
        The calendar the model was fitted with (kept in ``model.json``): what each event is
        (a weekday class, a bridge day, a dip period).
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
    drivers: pd.DataFrame | None = None
    calendar: Any = None

    def __post_init__(self) -> None:
        self.lifts = self.lifts.reset_index(drop=True)
        self.occurrences = self.occurrences.sort_values(["start", "event"]).reset_index(drop=True)
        self.profile = self.profile.sort_values("period").reset_index(drop=True)
        self.fitted = self.fitted.sort_values("date").reset_index(drop=True)

    @property
    def freq(self) -> str:
        return str(self.model["freq"])

    def labels(self) -> dict[str, str]:
        """Event and intervention name -> display label."""
        return dict(zip(self.lifts["event"], self.lifts["label"], strict=True))

    def closures(self) -> set[str]:
        """The events whose days are known zeros (``effect: zero``)."""
        zero = {str(e["name"]) for e in self.model["events"] if e["effect"] == "zero"}
        return zero | set(self.model["closure_events"])

    def assumed(self) -> dict[str, str]:
        """Event -> how its lift was set without history (``assume`` or ``like`` in the calendar)."""
        out = {}
        for e in self.model["events"]:
            # the calendar's EffectSpec.describe(): "estimate", "zero", "assume +15%" or "like other-event"
            kind, _, value = str(e["effect"]).partition(" ")
            if kind == "assume":
                out[str(e["name"])] = f"lift assumed at {value} in the calendar file"
            elif kind == "like":
                out[str(e["name"])] = f"lift borrowed from {value}"
        return out


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
        raise ModelError(
            f"{folder}: a panel model folder (panel.json), not a single model; read it with "
            "evcal.panel.load_panel (write_report shows it with a section per series)"
        )
    stored = read_folder(folder, "model")  # every key and table checked as `plan` and `show` check them
    model = stored.document
    lifts = stored.tables["lifts"].copy()
    if "kind" not in lifts.columns:  # where there is one, the reader checked its values
        interventions = set(model["intervention_names"])
        lifts["kind"] = np.where(lifts["event"].isin(interventions), "intervention", "event")
    from_json = {e["name"]: e["label"] for e in model["events"] if e["label"]}
    labels = lifts["label"] if "label" in lifts.columns else pd.Series("", index=lifts.index)
    lifts["label"] = [g.strip() or from_json.get(n, n) for n, g in zip(lifts["event"], labels, strict=True)]
    sources, extra, problems = {}, {}, []
    given = (("plan", plan_csv, read_plan_csv), ("backtest", backtest_csv, read_backtest_csv))
    for name, path, reader in given:
        if path is None:
            continue
        sources[name] = Path(path)
        try:
            extra[name] = reader(path)
        except ModelError as err:
            problems += err.problems
    if problems:
        raise ModelError(problems)
    tables = {**stored.tables, "lifts": lifts, **extra}  # lifts, occurrences, profile, fitted, plan, backtest
    drivers = read_drivers_csv(folder, model) if model["design"].get("drivers") else None
    return ModelFolder(folder, model, **tables, sources=sources, drivers=drivers, calendar=stored.calendar)


def read_drivers_csv(folder: Path, model: dict[str, Any]) -> pd.DataFrame:
    """Read and check ``drivers.csv`` of a model fitted with outside drivers (the store's reader)."""
    from evcal.store.tables import check_drivers

    return check_drivers(folder / "drivers.csv", {d["name"] for d in model["design"]["drivers"]})


#: the text columns of a plan file: what each period assumed, and its ISO week label (plan --week-labels)
PLAN_TEXT_COLUMNS = ("assumptions", ISO_WEEK_COLUMN)


def read_plan_csv(path: str | Path) -> pd.DataFrame:
    """Read ``plan.csv`` (``date, base, plan, low, high, lift:<event>..., [assumptions]``).

    A plan file made for another report (several levels, a panel's, an allocated one) or another
    evcal table is refused with one line saying where it goes (:func:`not_one_models_plan`).
    """
    wrong = not_one_models_plan(path)
    if wrong:
        raise ModelError(wrong)
    path = Path(path)
    plan = _read_csv(path, PLAN_COLUMNS, "plan")
    problems: list[str] = []
    plan["date"] = _parse(plan["date"], path, "date", problems, date=True)
    for col in plan.columns.drop(["date", *PLAN_TEXT_COLUMNS], errors="ignore"):
        plan[col] = _parse(plan[col], path, col, problems)
    for col in PLAN_TEXT_COLUMNS:
        if col in plan.columns:
            plan[col] = plan[col].fillna("").astype(str)
    if problems:
        raise ModelError(problems)
    plan = unguard_frame(plan)  # the plan writer quotes text that a spreadsheet would run as a formula
    plan, actuals = split_plan_file(plan)  # a year-to-date re-plan's actual rows: kept apart, in attrs
    plan = plan.sort_values("date").reset_index(drop=True)
    plan.attrs["actuals"] = actuals
    return plan


#: the columns only an allocated panel plan has (evcal.panel.rollup: each child's share and own plan)
_ALLOCATED_COLUMNS = ("share", "own_plan")
#: other evcal tables someone may give as a plan: what each is and what to do with it
_NOT_PLANS = {"backtest": ("a backtest table (evcal backtest)", "give it with {backtest}"),
              "explain": ("one period's plan split into parts (evcal explain)",
                          "give {plan} the plan.csv of `evcal plan MODEL_DIR`"),
              "compare": ("two plans side by side (evcal plan --compare)",
                          "give {plan} the plan.csv of one of them (`evcal plan MODEL_DIR`)")}


def not_one_models_plan(path: str | Path) -> str | None:
    """The one line refusing ``path`` as a single model's plan, or None when it may be one.

    By its header row (and the first row of a reconciled plan): ``evcal plan --reconcile``'s plans
    of several levels (``level`` first) go to the report of the bottom panel model, a panel's plan
    (its key columns before ``date``) to its panel model's, an allocated one (``share``,
    ``own_plan``) to the child panel model's; evcal's other tables say what they are. A file that
    cannot be read is left to the reader's own message.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "reconciled.csv"
    >>> _ = p.write_text("level,store,date,plan,plan_before,adjustment,note\\nstore,s1,2027-01-03,1,1,0,\\n")
    >>> print(not_one_models_plan(p).split(": ", 1)[1])  # doctest: +ELLIPSIS
    a plan of several levels (evcal plan --reconcile): give it to the report of the bottom panel model \
(its series by store), write_report(BOTTOM_DIR, 'report.html', plan_csv='...reconciled.csv')
    """
    from evcal.outputs import file_kind
    from evcal.spelling import flags_on, option

    try:
        head = pd.read_csv(path, nrows=1, dtype=str, keep_default_na=False)
    except (OSError, UnicodeDecodeError, ValueError, pd.errors.ParserError):
        return None  # missing, empty or not CSV: read_plan_csv says which
    cols = [str(c).strip() for c in head.columns]

    def report(model: str) -> str:
        if flags_on():
            return f"`evcal report {model} --plan {path}`"
        return f"write_report({model}, 'report.html', plan_csv={str(path)!r})"

    if cols[:1] == ["level"] and {"plan_before", "adjustment"} <= set(cols):
        bottom = str(head["level"].iat[0]).strip() if len(head) and "level" in head.columns else ""
        by = f" (its series by {bottom.replace(',', ', ')})" if bottom else ""
        return (f"{path}: a plan of several levels (evcal plan --reconcile): give it to the report of the "
                f"bottom panel model{by}, {report('BOTTOM_DIR')}")
    if "date" in cols and cols.index("date") > 0 and set(PLAN_COLUMNS) <= set(cols):
        keys = ", ".join(cols[:cols.index("date")])
        if set(_ALLOCATED_COLUMNS) <= set(cols):
            return (f"{path}: an allocated panel plan (evcal plan PARENT_DIR --allocate CHILD_DIR; its "
                    f"series by {keys}): give it to the report of the child panel model, "
                    f"{report('CHILD_DIR')}")
        return (f"{path}: a panel plan (evcal plan PANEL_DIR; its series by {keys}): give it to the report "
                f"of that panel model, {report('PANEL_DIR')}")
    kind = file_kind(path)
    if kind in _NOT_PLANS:
        what, todo = _NOT_PLANS[kind]
        todo = todo.format(backtest=option("backtest_csv", flag="--backtest"),
                           plan=option("plan_csv", flag="--plan"))
        return f"{path}: {what}, not a plan: {todo}"
    return None


def read_backtest_csv(path: str | Path) -> pd.DataFrame:
    """Read ``backtest.csv`` (``year, method, spread, wape, bias, peak_error``)."""
    path = Path(path)
    bt = _read_csv(path, BACKTEST_COLUMNS, "backtest")
    problems: list[str] = []
    for col in ("year", "wape", "bias", "peak_error"):
        bt[col] = _parse(bt[col], path, col, problems)
    bt[["method", "spread"]] = bt[["method", "spread"]].astype(str)
    if problems:
        raise ModelError(problems)
    return bt


def lift_columns(plan: pd.DataFrame) -> list[str]:
    """The event names that have a ``lift:<event>`` column in a plan, in column order."""
    return [c[len(LIFT_PREFIX) :] for c in plan.columns if str(c).startswith(LIFT_PREFIX)]


def driver_columns(plan: pd.DataFrame) -> list[str]:
    """The outside drivers that have a ``driver:<name>`` column in a plan, in column order."""
    return [c[len(DRIVER_PREFIX) :] for c in plan.columns if str(c).startswith(DRIVER_PREFIX)]


def _read_csv(path: Path, required: tuple[str, ...], command: str) -> pd.DataFrame:
    """A file written by ``evcal <command>``, every cell as text; one line if it is not there or not CSV."""
    if not path.is_file():
        raise ModelError(f"{path}: {command} file not found (write one with `evcal {command}`)")
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


def _parse(values: pd.Series, path: Path, col: str, problems: list[str], date: bool = False) -> pd.Series:
    """Text as ISO dates or numbers; the first three cells that are not, one line each in ``problems``."""
    if date:
        parsed = pd.to_datetime(values, errors="coerce", format="ISO8601")
        bad, what = parsed.isna(), "is not an ISO date (expected e.g. 2027-03-28)"
    else:
        parsed = pd.to_numeric(values, errors="coerce").astype(float)
        bad = values.notna() & parsed.isna() & ~values.astype(str).str.lower().isin(["nan", "inf"])
        what = "is not a number"
    for i in np.flatnonzero(bad.to_numpy())[:3]:
        problems.append(f"{path}: line {i + 2}: column {col}: {values.iloc[i]!r} {what}")
    return parsed


def workbook_from_files(
    out_xlsx: str | Path, model_dir: str | Path, plan_csv: str | Path | None = None
) -> Path:
    """The workbook from a model folder and a ``plan.csv`` (the files, not the classes).

    Without a plan the Plan sheet says so; the other sheets come from the folder.
    """
    from evcal.plan.workbook import write_workbook
    from evcal.plan.workbook_plan import PlanLayout

    folder = read_model_folder(model_dir, plan_csv=plan_csv)
    plan = folder.plan if folder.plan is not None else pd.DataFrame()
    layout = None
    if plan.attrs.get("actuals") is not None:  # a year-to-date plan: its actuals first, counted in the target
        layout = PlanLayout(groups=np.zeros(len(plan), dtype=int), actuals=plan.attrs["actuals"])
    return write_workbook(out_xlsx, plan, folder.lifts, folder.profile, folder.occurrences,
                          drivers=folder.drivers, layout=layout)
