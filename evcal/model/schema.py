"""The model folder's schema: ``model.json`` (pydantic) and the four CSVs, checked whenever a folder is read.

One reader for every consumer: :func:`evcal.model.load_model` (``plan``, ``show``)
and :func:`evcal.report.model_folder.read_model_folder` (``report``, the
workbook) both call :func:`read_folder`, so a damaged folder is refused the same
way everywhere, with one line naming the file and the key, before any number
from it is used.

Non-finite numbers. JSON has no NaN or infinity, and a bare ``null`` cannot
say which it was, so the writer (:func:`json_safe`) puts the strings
``"NaN"``, ``"Infinity"`` and ``"-Infinity"`` where a float is not finite,
and the reader accepts those three strings only where the schema allows a
non-finite number (:data:`Num`). Where a number must be finite (:data:`Finite`:
coefficients, covariances, shares, ...) they are refused like any other bad
value. ``null`` means "absent" and is accepted only where a value may be absent
(an intervention's ``end``, ``arima_order``, a missing period in the ARIMA
error tail). In the CSVs a missing number is an empty cell (pandas' own
convention); ``inf``/``-inf`` are written as such.

Examples
--------
>>> json_safe({"a": float("nan"), "b": [1.5, float("-inf")]})
{'a': 'NaN', 'b': [1.5, '-Infinity']}
>>> read_folder("models/garden").model["freq"]              # doctest: +SKIP
'W-SUN'
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Annotated, Any, Literal

import numpy as np
import pandas as pd
from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, ValidationError

from evcal.design.seasonal import base_freq, cycle_length
from evcal.errors import ModelError, clip
from evcal.formula_safe import unguard_frame

FORMAT_VERSION = 1
MODEL_FILES = ("model.json", "lifts.csv", "occurrences.csv", "profile.csv", "fitted.csv")
#: the writer's spelling of the floats JSON cannot hold
NONFINITE = {"NaN": math.nan, "Infinity": math.inf, "-Infinity": -math.inf}
#: most periods a model's history may span (200 years of days): a damaged start/end
#: must not make the reader build a grid of billions of periods
MAX_PERIODS = 73_050
LIFT_REQUIRED = ("event", "lift_pct", "low_pct", "high_pct", "units_per_occurrence", "identifiable",
                 "note")
OCC_REQUIRED = ("event", "start", "end", "added_units", "added_pct")
FITTED_REQUIRED = ("date", "actual", "fitted", "base")
AGAIN = "re-run evcal fit to write the folder again"


# ---------------------------------------------------------------- writing


def json_safe(obj: Any) -> Any:
    """Plain JSON values: non-finite floats as ``"NaN"``/``"Infinity"``/``"-Infinity"``, numpy scalars
    as Python ones, keys as text (the one writer of the convention the reader takes back).

    Examples
    --------
    >>> json_safe({1: float("inf")})
    {'1': 'Infinity'}
    """
    if isinstance(obj, bool | np.bool_):
        return bool(obj)
    if isinstance(obj, float | np.floating):
        x = float(obj)
        if math.isnan(x):
            return "NaN"
        if math.isinf(x):
            return "Infinity" if x > 0 else "-Infinity"
        return x
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, dict):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [json_safe(v) for v in obj]
    return obj


def dumps(obj: Any) -> str:
    """``obj`` as JSON text in the folder's convention (never a bare NaN token)."""
    return json.dumps(json_safe(obj), indent=1, allow_nan=False)


# ---------------------------------------------------------------- value types


def _shown(v: Any) -> str:
    if v is None:
        return "null"
    try:
        return clip(json.dumps(v), 60)
    except (TypeError, ValueError):
        return clip(repr(v), 60)


def _number(v: Any) -> float:
    if isinstance(v, str) and v in NONFINITE:
        return NONFINITE[v]
    if isinstance(v, bool) or not isinstance(v, int | float):
        raise ValueError(f"{_shown(v)} is not a number")
    return float(v)


def _finite(v: Any) -> float:
    x = _number(v)
    if not math.isfinite(x):
        raise ValueError(f"{_shown(v)} is not a finite number")
    return x


def _nonneg(v: Any) -> float:
    x = _finite(v)
    if x < 0:
        raise ValueError(f"{_shown(v)} is negative; it must be 0 or more")
    return x


def _positive(v: Any) -> float:
    x = _finite(v)
    if x <= 0:
        raise ValueError(f"{_shown(v)} must be a positive number")
    return x


def _whole(v: Any) -> int:
    if isinstance(v, bool) or not isinstance(v, int):
        raise ValueError(f"{_shown(v)} is not a whole number")
    return v


def _count_or_number(v: Any) -> int | float:
    if isinstance(v, int) and not isinstance(v, bool):
        return v
    return _number(v)


def _iso_day(v: Any) -> str:
    if not isinstance(v, str):
        raise ValueError(f"{_shown(v)} is not a date")
    try:
        pd.Timestamp(v)
        if len(v) != 10:
            raise ValueError
    except (ValueError, OverflowError):
        raise ValueError(f"{_shown(v)} is not an ISO date (YYYY-MM-DD)") from None
    return v


#: a number that may be NaN or infinite (written as "NaN", "Infinity", "-Infinity")
Num = Annotated[float, BeforeValidator(_number)]
#: a number that must be finite
Finite = Annotated[float, BeforeValidator(_finite)]
NonNeg = Annotated[float, BeforeValidator(_nonneg)]
Positive = Annotated[float, BeforeValidator(_positive)]
Whole = Annotated[int, BeforeValidator(_whole)]
Day = Annotated[str, BeforeValidator(_iso_day)]
#: a count (kept whole) or any number
CountOrNum = Annotated[int | float, BeforeValidator(_count_or_number)]


class _Strict(BaseModel):
    model_config = ConfigDict(strict=True, extra="forbid")


class Options(_Strict):
    transform: Literal["auto", "log", "none", "count"]
    errors: Literal["auto", "ols", "arima"]
    arima_order: list[Whole] | None = Field(min_length=3, max_length=3)
    seasonal: Literal["auto", "dummies", "fourier"]
    fourier_order: Whole
    trend_order: Whole
    trading_days: bool
    allow_negative: bool


class Intervention(_Strict):
    name: str
    type: Literal["pulse", "level_shift", "temporary", "ramp"]
    start: Day
    end: Day | None
    decay: Finite | None


class Design(_Strict):
    freq: str
    trend_origin: Finite
    trend_order: Whole
    constant: bool
    seasonal: Literal["dummies", "fourier"]
    fourier_order: Whole
    trading_days: bool
    event_columns: list[str]
    interventions: list[Intervention]
    event_theta: dict[str, Finite]


class Cov(_Strict):
    columns: list[str] = Field(min_length=1)
    values: list[list[Finite]]


class Iid(_Strict):
    kind: Literal["iid"]


class Poisson(_Strict):
    kind: Literal["poisson"]


class NegBin(_Strict):
    kind: Literal["negative_binomial"]
    alpha: NonNeg


class Arima(_Strict):
    kind: Literal["arima"]
    order: list[Whole] = Field(min_length=3, max_length=3)
    ar: list[Finite]
    ma: list[Finite]
    sigma2: NonNeg
    tail: list[Num | None] = Field(min_length=1)
    arma_params: list[Finite] = Field(default_factory=list)


class Candidate(_Strict):
    name: str
    criterion: str
    value: Num


class Choice(_Strict):
    chosen: str
    reason: str
    candidates: list[Candidate]
    covariance: str
    transform: str


class Status(_Strict):
    status: Literal["fitted", "no_history", "unidentifiable", "duplicate", "assumed", "like",
                    "unchecked", "new_zero"]
    note: str
    twin: str


class EventInfo(_Strict):
    event: str
    label: str | None
    group: str | None
    effect: str
    shape: str


class EventRow(EventInfo):
    name: str


class History(_Strict):
    start: str
    end: str
    source: str


class LastYear(_Strict):
    year: Whole | None = None
    total: Finite | None = None


class Exclusion(_Strict):
    start: Day
    end: Day
    reason: str


class ModelJson(_Strict):
    """Every key of ``model.json`` (format version 1) and its type."""

    format_version: Literal[1]
    evcal_version: str
    freq: str
    label: Literal["start", "end"]
    transform: Literal["log", "none", "count"]
    options: Options
    design: Design
    params: dict[str, Finite] = Field(min_length=1)
    cov: Cov
    sigma2: NonNeg
    smear: Positive
    error_model: Annotated[Iid | Poisson | NegBin | Arima, Field(discriminator="kind")]
    model: Choice
    status: dict[str, Status]
    like_map: dict[str, str]
    assumed: dict[str, Finite]
    base_columns: list[str]
    intervention_names: list[str]
    closure_events: list[str]
    event_info: dict[str, EventInfo]
    event_labels: dict[str, str | None]
    events: list[EventRow]
    calendar_text: str
    calendar_name: str
    history: History
    last_year: LastYear
    average_share: dict[str, NonNeg]
    mean_base: Finite
    exclusions: list[Exclusion]
    warnings: list[str]
    quality: dict[str, CountOrNum]


# ---------------------------------------------------------------- reading


@dataclass
class Folder:
    """A checked model folder: ``model`` holds model.json with numbers as floats; typed tables."""

    path: Path
    model: dict[str, Any]
    raw: dict[str, Any]
    calendar: Any
    periods: pd.PeriodIndex
    lifts: pd.DataFrame
    occurrences: pd.DataFrame
    profile: pd.DataFrame
    fitted: pd.DataFrame


def _key(loc: tuple[Any, ...]) -> str:
    parts: list[str] = []
    for p in loc:
        if isinstance(p, int):
            parts.append(f"[{p}]")
        elif p in ("iid", "poisson", "negative_binomial", "arima"):
            continue  # the tagged union's branch name is not a key of the file
        else:
            parts.append(("." if parts else "") + str(p))
    return "".join(parts) or "(top)"


def _reason(e: dict[str, Any]) -> str:
    kind = e["type"]
    if kind == "missing":
        return "missing"
    if kind == "extra_forbidden":
        return "is not a key of this format"
    if kind == "value_error":
        return str(e.get("ctx", {}).get("error", e["msg"]))
    msg = str(e["msg"]).replace("Input should be", "should be")
    return f"{_shown(e.get('input'))}: {msg}"


def validation_line(path: Path | str, err: ValidationError) -> str:
    """The first problem of a pydantic error as one line: file, key, what is wrong."""
    errors = err.errors()
    first = errors[0]
    more = f" (and {len(errors) - 1} more problem(s))" if len(errors) > 1 else ""
    return f"{path}: {_key(first['loc'])}: {_reason(first)}{more}; {AGAIN}"


def _bare_constant(token: str) -> float:
    raise ValueError(f"bare {token} is not JSON (write \"{token}\" as a string)")


def read_json(path: Path) -> dict[str, Any]:
    """Parse a JSON file of the folder (bare ``NaN``/``Infinity`` tokens refused) into a dict."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"), parse_constant=_bare_constant)
    except json.JSONDecodeError as err:
        raise ModelError(f"{path}: line {err.lineno}: not valid JSON ({err.msg}); {AGAIN}") from None
    except ValueError as err:
        raise ModelError(f"{path}: not valid JSON ({err}); {AGAIN}") from None
    except RecursionError:  # lists in lists far deeper than anything evcal writes (3 levels)
        raise ModelError(f"{path}: nested far too deeply to be a file evcal wrote; {AGAIN}") from None
    except (OSError, UnicodeDecodeError) as err:
        raise ModelError(f"{path}: cannot be read ({clip(str(err), 120)})") from None
    if not isinstance(data, dict):
        raise ModelError(f"{path}: expected a JSON object at the top, found {type(data).__name__}; {AGAIN}")
    return data


def check_format_version(path: Path, data: dict[str, Any], key: str = "format_version",
                         version: int = FORMAT_VERSION) -> None:
    from evcal import __version__

    fv = data.get(key)
    if fv != version or isinstance(fv, bool):
        raise ModelError(
            f"{path}: {key} {_shown(fv)} (written by evcal {clip(str(data.get('evcal_version', '?')), 20)}); "
            f"this evcal ({__version__}) reads {key} {version}; {AGAIN}")


def validate_model_json(path: Path, data: dict[str, Any]) -> ModelJson:
    """``model.json`` against :class:`ModelJson`; a :class:`ModelError` line on the first problem."""
    check_format_version(path, data)
    try:
        return ModelJson.model_validate(data)
    except ValidationError as err:
        raise ModelError(validation_line(path, err)) from None


def model_dict(m: ModelJson) -> dict[str, Any]:
    """The validated ``model.json`` as plain Python values (non-finite strings back to floats)."""
    d = m.model_dump()
    if d["last_year"]["year"] is None:
        d["last_year"] = {}
    d["error_model"] = m.error_model.model_dump()
    return d


def _fail(path: Path, key: str, what: str) -> ModelError:
    return ModelError(f"{path}: {key}: {what}; {AGAIN}")


def check_freq(path: Path, freq: str, design_freq: str) -> int:
    """Check ``freq`` is a frequency evcal fits and the design's; return its cycle length.

    Shared by the single-series and the panel folder readers.
    """
    try:
        p = cycle_length(freq)
        pd.Period("2020-01-01", freq=freq)
    except (KeyError, ValueError, TypeError, AttributeError):
        raise _fail(path, "freq", f"{_shown(freq)} is not a frequency evcal fits (D, W-SUN..W-SAT, M, "
                                  "Q-DEC)") from None
    if design_freq != freq:
        raise _fail(path, "design.freq", f"{_shown(design_freq)} differs from freq {_shown(freq)}")
    return p


def check_consistency(path: Path, m: ModelJson) -> tuple[Any, pd.PeriodIndex]:
    """What types alone cannot say: frequency, periods, shapes of params/cov, names against the design.

    Returns the fitted calendar (loaded from ``calendar_text``) and the history's periods.
    """
    freq = m.freq
    p = check_freq(path, freq, m.design.freq)
    ends = []
    for k in ("start", "end"):
        text = getattr(m.history, k)
        try:
            per = pd.Period(text, freq=freq)
        except (ValueError, TypeError, OverflowError):
            per = None
        if per is None or str(per) != text:
            raise _fail(path, f"history.{k}", f"{_shown(text)} is not a period of frequency {freq} "
                                              "(freq and the stored history disagree)")
        ends.append(per)
    n = (ends[1] - ends[0]).n + 1
    if not 1 <= n <= MAX_PERIODS:
        raise _fail(path, "history.end", f"{_shown(m.history.end)} is {n - 1} periods after history.start; "
                                         f"expected 0 to {MAX_PERIODS}")
    periods = pd.period_range(ends[0], ends[1], freq=freq)

    names = list(m.params)
    if m.cov.columns != names:
        raise _fail(path, "cov.columns", "not the names of params in the same order "
                                         f"({len(m.cov.columns)} columns, {len(names)} params)")
    k = len(names)
    if len(m.cov.values) != k or any(len(row) != k for row in m.cov.values):
        raise _fail(path, "cov.values", f"not a {k} x {k} matrix (one row and column per coefficient)")
    c = np.asarray(m.cov.values, dtype=float)
    scale = max(float(np.abs(c).max()), 1e-300)
    if float(np.abs(c - c.T).max()) > 1e-6 * scale:
        raise _fail(path, "cov.values", "not symmetric")
    if (np.diag(c) < 0).any():
        bad = names[int(np.flatnonzero(np.diag(c) < 0)[0])]
        raise _fail(path, f"cov.values ({bad})", "negative variance on the diagonal")

    from evcal.design.matrix import DesignSpec
    from evcal.design.trend import Trend

    spec = DesignSpec.from_dict(m.design.model_dump())
    one = periods[:1]
    expected = list(Trend(spec.trend_origin, spec.trend_order, spec.constant).columns(one).columns)
    for block in spec.seasonal_blocks():
        expected += list(block.columns(one).columns)
    if m.base_columns != expected:
        raise _fail(path, "base_columns",
                    f"do not match the design (expected {clip(', '.join(expected), 80)})")
    base = set(expected)
    for name in names:
        st = m.status.get(name)
        if name not in base and (st is None or st.status != "fitted"):
            raise _fail(path, f"params.{name}", "not a column of the design, nor a fitted event")
    for name, st in m.status.items():
        if st.status == "fitted" and name not in m.params:
            raise _fail(path, f"status.{name}", "marked fitted but has no coefficient in params")

    from evcal.calendar import load_calendar
    from evcal.errors import EvcalError

    try:
        cal = load_calendar(m.calendar_text)
    except EvcalError as err:
        raise _fail(path, "calendar_text", f"the saved calendar does not load ({err.problems[0]})") from None
    colmap = cal.event_columns()
    event_cols = [col for col, ev in colmap.items() if cal.event(ev).effect.kind != "zero"]
    if m.design.event_columns != event_cols:
        raise _fail(path, "design.event_columns", "do not match the saved calendar's events")
    inter = [t.name for t in m.design.interventions]
    if m.intervention_names != inter or inter != [t.name for t in cal.interventions]:
        raise _fail(path, "intervention_names", "do not match design.interventions and the saved calendar")
    closures = [e.name for e in cal.events if e.effect.kind == "zero"]
    if m.closure_events != closures:
        raise _fail(path, "closure_events", "do not match the saved calendar's closures")
    terms = set(event_cols) | set(inter)
    for name in m.status:
        if name not in terms:
            raise _fail(path, f"status.{name}", "not an event column or intervention of the design")
    for name in m.design.event_theta:
        if name not in event_cols:
            raise _fail(path, f"design.event_theta.{name}", "not an event column of the design")
    for name in set(m.status) | set(m.closure_events):
        if name not in m.event_info:
            raise _fail(path, f"event_info.{name}", "missing")
    for name, target in m.like_map.items():
        if name not in m.status or (target and target not in m.params):
            raise _fail(path, f"like_map.{name}", "not a borrowing event with a fitted source")
    for name in m.assumed:
        if name not in m.status:
            raise _fail(path, f"assumed.{name}", "not an event column of the design")
    for name, st in m.status.items():
        if st.status == "assumed" and name not in m.assumed:
            raise _fail(path, f"assumed.{name}", "missing (status says assumed)")
        if st.status == "like" and name not in m.like_map:
            raise _fail(path, f"like_map.{name}", "missing (status says like)")
    for key in m.average_share:
        if not key.isdigit() or not 1 <= int(key) <= p:
            raise _fail(path, f"average_share.{clip(key, 20)}", f"not a position 1..{p} of the annual cycle")
    if (m.last_year.year is None) != (m.last_year.total is None):
        raise _fail(path, "last_year", "give both year and total, or neither")
    count_kinds = ("poisson", "negative_binomial")
    if (m.transform == "count") != (m.error_model.kind in count_kinds):
        raise _fail(path, "error_model.kind",
                    f"{m.error_model.kind} does not go with transform {m.transform}")
    return cal, periods


# ---------------------------------------------------------------- the CSVs

_TRUE = {"true", "yes", "weak"}
_FALSE = {"false", "no"}


#: columns read as text; every other column is parsed by pandas (numbers, with an empty cell as NaN)
TEXT_COLUMNS = ("event", "note", "kind", "label", "identifiable", "date", "start", "end")


def read_csv_table(path: Path, required: tuple[str, ...], text: tuple[str, ...] = TEXT_COLUMNS
                   ) -> pd.DataFrame:
    """A CSV table of a model folder (single or panel): ``text`` columns as text, the rest parsed.

    The formula-safe quote is taken off (:func:`evcal.formula_safe.unguard_frame`);
    an empty file, a missing or a repeated column is one :class:`ModelError` line.
    """
    try:
        frame = pd.read_csv(path, dtype=dict.fromkeys(text, str), keep_default_na=False, na_values=[""])
    except pd.errors.EmptyDataError:
        raise ModelError(f"{path}: the file is empty; expected a header row with "
                         f"{clip(', '.join(required), 120)}; {AGAIN}") from None
    except (OSError, UnicodeDecodeError, pd.errors.ParserError, ValueError) as err:
        raise ModelError(f"{path}: cannot be read as CSV ({clip(str(err).strip(), 120)}); {AGAIN}") from None
    frame.columns = [str(c).strip() for c in frame.columns]
    frame = unguard_frame(frame)  # the writer quoted text that a spreadsheet would run (formula_safe)
    absent = [c for c in required if c not in frame.columns]
    if absent:
        raise ModelError(f"{path}: line 1: missing column(s) {clip(', '.join(absent), 80)}; expected "
                         f"{clip(', '.join(required), 120)}; {AGAIN}")
    if frame.columns.duplicated().any():
        dup = frame.columns[frame.columns.duplicated()][0]
        raise ModelError(f"{path}: line 1: column {clip(dup, 40)} appears twice; {AGAIN}")
    return frame


def _cells(path: Path, frame: pd.DataFrame, col: str, *, required: bool) -> pd.Series:
    """A column as floats: an empty cell is NaN, refused where ``required`` (with non-finite values)."""
    values = frame[col]
    if values.dtype.kind in "fiu":  # pandas parsed every cell as a number (the usual case: fast)
        num = values.to_numpy(dtype=float)
        bad = ~np.isfinite(num) if required else np.zeros(len(num), dtype=bool)
    else:
        text = values.astype(str).str.strip().where(values.notna(), "")
        num = pd.to_numeric(text.where(text != "", None), errors="coerce").to_numpy(dtype=float)
        bad = ((text != "") & np.isnan(num) & ~text.str.lower().eq("nan")).to_numpy()
        if required:
            bad = bad | ~np.isfinite(num)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raw = values.iloc[i]
        what = "is empty" if pd.isna(raw) or str(raw).strip() == "" else f"{_shown(str(raw))} is not a " + (
            "finite number" if required else "number")
        raise ModelError(f"{path}: line {i + 2}: column {col}: {what}; {AGAIN}")
    return pd.Series(num, index=frame.index, dtype=float)


def _text(frame: pd.DataFrame, col: str) -> pd.Series:
    return frame[col].fillna("").astype(str)


def _days(path: Path, frame: pd.DataFrame, col: str) -> pd.Series:
    text = _text(frame, col).str.strip()
    days = pd.to_datetime(text, errors="coerce", format="%Y-%m-%d")
    if days.isna().any():
        i = int(np.flatnonzero(days.isna().to_numpy())[0])
        raise ModelError(f"{path}: line {i + 2}: column {col}: {_shown(text.iloc[i])} is not an ISO date "
                         f"(YYYY-MM-DD); {AGAIN}")
    return days


def _flags(path: Path, frame: pd.DataFrame, col: str) -> pd.Series:
    text = _text(frame, col).str.strip().str.lower()
    ok = text.isin(_TRUE | _FALSE)
    if not ok.all():
        i = int(np.flatnonzero(~ok.to_numpy())[0])
        raise ModelError(f"{path}: line {i + 2}: column {col}: {_shown(frame[col].iloc[i])} is not "
                         f"True/False; {AGAIN}")
    return text.isin(_TRUE)


def _names(path: Path, frame: pd.DataFrame, col: str, allowed: set[str] | None = None) -> pd.Series:
    text = _text(frame, col)
    bad = text.str.strip() == ""
    if allowed is not None:
        bad |= ~text.isin(allowed)
    if bad.any():
        i = int(np.flatnonzero(bad.to_numpy())[0])
        what = "is empty" if text.iloc[i].strip() == "" else \
            f"{_shown(text.iloc[i])} is not an event of the model"
        raise ModelError(f"{path}: line {i + 2}: column {col}: {what}; {AGAIN}")
    return text


def read_tables(directory: Path, model: ModelJson, periods: pd.PeriodIndex) -> dict[str, pd.DataFrame]:
    """The four CSVs, checked against the contract and ``model.json``, with numbers, dates and flags typed."""
    out: dict[str, pd.DataFrame] = {}
    # lifts.csv: one row per event column and intervention (status), then one per closure
    path = directory / "lifts.csv"
    lifts = read_csv_table(path, LIFT_REQUIRED)
    expected = list(model.status) + list(model.closure_events)
    if len(lifts) != len(expected):
        raise ModelError(f"{path}: {len(lifts)} rows; model.json has {len(expected)} events and "
                         f"interventions (one row each); {AGAIN}")
    lifts["event"] = _names(path, lifts, "event", set(expected))
    if lifts["event"].duplicated().any():
        i = int(np.flatnonzero(lifts["event"].duplicated().to_numpy())[0])
        raise ModelError(f"{path}: line {i + 2}: column event: {_shown(lifts['event'].iloc[i])} appears "
                         f"twice; {AGAIN}")
    for col in ("lift_pct", "low_pct", "high_pct", "units_per_occurrence"):
        lifts[col] = _cells(path, lifts, col, required=False)
    lifts["identifiable"] = _flags(path, lifts, "identifiable")
    lifts["note"] = _text(lifts, "note")
    if "label" in lifts.columns:
        lifts["label"] = _text(lifts, "label")
    if "kind" in lifts.columns:
        lifts["kind"] = kinds = _text(lifts, "kind").str.strip()
        if not kinds.isin(["event", "intervention"]).all():
            i = int(np.flatnonzero(~kinds.isin(["event", "intervention"]).to_numpy())[0])
            raise ModelError(f"{path}: line {i + 2}: column kind: {_shown(lifts['kind'].iloc[i])} is not "
                             f"event or intervention; {AGAIN}")
    out["lifts"] = lifts

    path = directory / "occurrences.csv"
    occ = read_csv_table(path, OCC_REQUIRED)
    events = {info.event for info in model.event_info.values()} | set(model.closure_events)
    occ["event"] = _names(path, occ, "event", events)
    for col in ("start", "end"):
        occ[col] = _days(path, occ, col)
    for col in occ.columns.drop(["event", "start", "end"]):
        occ[col] = _cells(path, occ, col, required=False)
    out["occurrences"] = occ

    path = directory / "profile.csv"
    prof = read_csv_table(path, ("period", "index"))
    p = cycle_length(model.freq)
    if len(prof) != p:
        raise ModelError(f"{path}: {len(prof)} rows; a {model.freq} model's seasonal index has {p} "
                         f"(one per position of the year); {AGAIN}")
    prof["period"] = _cells(path, prof, "period", required=True)
    prof["index"] = _cells(path, prof, "index", required=True)
    if not np.array_equal(prof["period"].to_numpy(), np.arange(1, p + 1)):
        raise ModelError(f"{path}: column period: expected 1..{p} in order; {AGAIN}")
    prof["period"] = prof["period"].astype(int)
    out["profile"] = prof

    path = directory / "fitted.csv"
    fit = read_csv_table(path, FITTED_REQUIRED)
    if len(fit) != len(periods):
        raise ModelError(f"{path}: {len(fit)} rows; the history {model.history.start} .. "
                         f"{model.history.end} in model.json has {len(periods)} periods; {AGAIN}")
    fit["date"] = _days(path, fit, "date")
    want = (periods.end_time if model.label == "end" else periods.start_time).normalize()
    wrong = fit["date"].to_numpy() != want.to_numpy()
    if wrong.any():
        i = int(np.flatnonzero(wrong)[0])
        raise ModelError(f"{path}: line {i + 2}: column date: {fit['date'].iloc[i].date()} is not the "
                         f"{model.freq} period dated {want[i].date()} (freq {model.freq}, label "
                         f"{model.label} in model.json); {AGAIN}")
    fit["actual"] = _cells(path, fit, "actual", required=False)
    for col in ("fitted", "base"):
        fit[col] = _cells(path, fit, col, required=True)
    for col in fit.columns.drop(list(FITTED_REQUIRED)):
        if fit[col].dtype == bool:  # a flag column (in_fit): pandas reads True/False as booleans
            continue
        fit[col] = _cells(path, fit, col, required=False)
    out["fitted"] = fit
    return out


def read_folder(directory: str | Path) -> Folder:
    """Read and check a model folder written by ``evcal fit``: every key of model.json, every table.

    Raises
    ------
    ModelError
        One line: the file, the key (or line and column) and what is wrong.

    Examples
    --------
    >>> folder = read_folder("models/garden")        # doctest: +SKIP
    >>> folder.fitted[["date", "actual"]].head()      # doctest: +SKIP
    """
    directory = Path(directory)
    if not directory.is_dir():
        raise ModelError(f"{directory}: not a model folder (it does not exist); run evcal fit first")
    missing = [f for f in MODEL_FILES if not (directory / f).is_file()]
    if missing:
        raise ModelError(f"{directory}: model folder is missing {', '.join(missing)}; {AGAIN}")
    path = directory / "model.json"
    raw = read_json(path)
    m = validate_model_json(path, raw)
    cal, periods = check_consistency(path, m)
    tables = read_tables(directory, m, periods)
    return Folder(path=directory, model=model_dict(m), raw=raw, calendar=cal, periods=periods, **tables)


__all__ = ["ModelJson", "Folder", "read_folder", "json_safe", "dumps", "validate_model_json",
           "check_consistency", "read_tables", "FORMAT_VERSION", "MODEL_FILES", "NONFINITE", "base_freq"]
