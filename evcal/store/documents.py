"""The JSON documents of a model folder: ``model.json`` (one series) and ``panel.json`` (many).

Both share the settings (:class:`Settings`: options, design, calendar text);
each keeps only what is its own: a single model its coefficients, covariance
and error model, a panel its key columns, counts and design groups.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any, Literal

from pydantic import Field, ValidationError

from evcal.errors import ModelError, clip
from evcal.store.values import AGAIN, CountOrNum, Day, Finite, NonNeg, Num, Positive, Strict, Whole, shown
from evcal.store.values import validation_line as _line

FORMAT_VERSION = 1
PANEL_FORMAT = "evcal-panel"
PANEL_VERSION = 1
STATUSES = Literal["fitted", "no_history", "unidentifiable", "duplicate", "assumed", "like", "unchecked",
                   "new_zero"]


# ---------------------------------------------------------------- shared by both documents


class Options(Strict):
    transform: Literal["auto", "log", "none", "count"]
    errors: Literal["auto", "ols", "arima"]
    arima_order: list[Whole] | None = Field(min_length=3, max_length=3)
    seasonal: Literal["auto", "dummies", "fourier"]
    fourier_order: Whole | Literal["auto"]
    trend_order: Whole
    trading_days: bool | Literal["auto"]
    allow_negative: bool
    leap_year: bool | Literal["auto"] = False  # (absent from folders written before it existed)
    season_drift: bool | Literal["auto"] = False  # (absent from folders written before it existed)


class Intervention(Strict):
    name: str
    type: Literal["pulse", "level_shift", "temporary", "ramp"]
    start: Day
    end: Day | None
    decay: Finite | None


class Driver(Strict):  # an outside driver (design.drivers.DriverTerm): its history's values, a plan's added
    name: str
    scale: Literal["level", "log"]
    centre: Finite
    first: str
    last_history: str
    values: list[Finite | None]


class ChoiceCandidate(Strict):
    value: str
    aicc: Num  # AICc above the chosen candidate's


class SettingChoice(Strict):  # one setting the data chose (evcal.model.choose)
    setting: str
    chosen: str
    reason: str
    candidates: list[ChoiceCandidate]


class WeekdayWeights(Strict):  # the weekday weights of a weekly/monthly/quarterly design (design.weekdays)
    source: Literal["calendar", "trading_days", "flat"]
    # absent for flat weights (a default is not validated: a null written in its place is refused)
    levels: Annotated[list[Positive], Field(min_length=7, max_length=7)] = None  # type: ignore[assignment]


class Design(Strict):
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
    # what the data chose (evcal.model.choose); absent from folders written before the choice existed
    leap_year: bool = False
    event_windows: dict[str, Whole] = {}
    choices: list[SettingChoice] = []
    # absent in folders fitted before it was recorded (and daily ones); a null in its place is refused
    weekday_weights: WeekdayWeights = None  # type: ignore[assignment]
    # the year a drifting season's lines start from (design.seasonal.SeasonDrift); absent: a fixed season
    season_drift_origin: Finite = None  # type: ignore[assignment]
    # outside drivers (design.drivers); absent when the fit had none
    drivers: list[Driver] = []


class ColumnNote(Strict):  # what identification said of an event column
    status: STATUSES
    note: str
    weak: bool = False  # fitted but weakly identified (absent in folders written before: False)


class Status(ColumnNote):  # ... and the column it duplicates
    twin: str


class Settings(Strict):
    """The keys both documents hold."""

    evcal_version: str
    freq: str
    label: Literal["start", "end"]
    options: Options
    design: Design
    calendar_text: str
    calendar_name: str


# ---------------------------------------------------------------- model.json (one series)


class Cov(Strict):
    columns: list[str] = Field(min_length=1)
    values: list[list[Finite]]


class Plain(Strict):  # an error model with no parameters of its own
    kind: Literal["iid", "poisson"]


class NegBin(Strict):
    kind: Literal["negative_binomial"]
    alpha: NonNeg


class Arima(Strict):
    kind: Literal["arima"]
    order: list[Whole] = Field(min_length=3, max_length=3)
    ar: list[Finite]
    ma: list[Finite]
    sigma2: NonNeg
    tail: list[Num | None] = Field(min_length=1)
    arma_params: list[Finite] = Field(default_factory=list)


class Candidate(Strict):
    name: str
    criterion: str
    value: Num


class Choice(Strict):
    chosen: str
    reason: str
    candidates: list[Candidate]
    covariance: str
    transform: str


class EventInfo(Strict):
    event: str
    label: str | None
    group: str | None
    effect: str
    shape: str


class EventRow(EventInfo):
    name: str


class History(Strict):
    start: str
    end: str
    source: str


class LastYear(Strict):
    year: Whole | None = None
    total: Finite | None = None


class Span(Strict):  # the days of a panel's first and last periods; an excluded stretch of a history
    start: Day
    end: Day


class Exclusion(Span):
    reason: str


class WeekdayShare(Strict):  # daily models: the weekday-aware average share (evcal.model.weekday_share)
    month: dict[Annotated[str, Field(pattern=r"^(1[0-2]|[1-9])$")], NonNeg]
    weekday: Annotated[list[Annotated[list[NonNeg], Field(min_length=7, max_length=7)]],
                       Field(min_length=12, max_length=12)]


class ModelJson(Settings):
    """Every key of ``model.json`` (format version 1) and its type."""

    format_version: Literal[1]
    transform: Literal["log", "none", "count"]
    params: dict[str, Finite] = Field(min_length=1)
    cov: Cov
    sigma2: NonNeg
    smear: Positive
    error_model: Annotated[Plain | NegBin | Arima, Field(discriminator="kind")]
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
    history: History
    last_year: LastYear
    average_share: dict[str, NonNeg]
    weekday_share: WeekdayShare | None = None  # absent in folders fitted before it was stored
    mean_base: Finite
    exclusions: list[Exclusion]
    warnings: list[str]
    quality: dict[str, CountOrNum]


# ---------------------------------------------------------------- panel.json (many series)


class Counts(Strict):
    series: Whole
    fitted: Whole
    skipped: Whole
    batched: Whole
    per_series: Whole


class EventLabel(Strict):
    kind: Literal["event", "intervention"]
    label: str


class Group(Strict):
    group: Whole
    transform: Literal["log", "none", "count"]
    trend_origin: Finite
    series: Whole
    periods_fitted: Whole
    coefficients: Whole
    hac_lags: Whole | None
    status: dict[str, ColumnNote]
    fitted_columns: list[str]
    notes: list[str]


class PanelJson(Settings):
    """Every key of ``panel.json`` (format ``evcal-panel``, version 1) and its type."""

    format: Literal["evcal-panel"]
    format_version: Literal[1]
    keys: list[str] = Field(min_length=1)
    level: list[str] | None
    group_col: str | None
    source: str
    date_col: str
    value_col: str
    periods: Span
    errors: str
    counts: Counts
    events: dict[str, EventLabel]
    groups: list[Group]


DOCUMENTS: dict[str, type[Settings]] = {"model": ModelJson, "panel": PanelJson}


def _check_version(kind: str, path: Path, data: dict[str, Any]) -> None:
    from evcal import __version__

    written = clip(str(data.get("evcal_version", "?")), 20)
    version = data.get("format_version")
    if kind == "model":
        if version != FORMAT_VERSION or isinstance(version, bool):
            raise ModelError(f"{path}: format_version {shown(version)} (written by evcal {written}); this "
                             f"evcal ({__version__}) reads format_version {FORMAT_VERSION}; {AGAIN}")
        return
    fmt = data.get("format")
    if fmt != PANEL_FORMAT or version != PANEL_VERSION or isinstance(version, bool):
        raise ModelError(f"{path}: format {shown(fmt)}, format_version {shown(version)} (written by evcal "
                         f"{written}); this evcal ({__version__}) reads {PANEL_FORMAT} version "
                         f"{PANEL_VERSION}; {AGAIN}")


def validate_document(kind: str, path: Path, data: dict[str, Any]) -> Any:
    """``data`` (the ``model.json`` or ``panel.json`` of a folder of ``kind``) against its schema.

    The format and version are checked first; then the first key that is missing,
    unknown or of the wrong type is one :class:`ModelError` line naming the file and the key.

    Examples
    --------
    >>> validate_document("model", Path("m/model.json"), {"format_version": 2})  # doctest: +SKIP
    ModelError: m/model.json: format_version 2 (written by evcal ?); this evcal (0.1.0) reads ...
    """
    _check_version(kind, path, data)
    try:
        return DOCUMENTS[kind].model_validate(data)
    except ValidationError as err:
        raise ModelError(_line(path, err)) from None


def plain(doc: Any, raw: dict[str, Any]) -> dict[str, Any]:
    """A validated document as plain Python values (the non-finite strings back to floats), its keys in
    the order of the file ``raw`` was read from (so a panel saved again writes them in that order).

    Keys the file did not have are not added (a folder written before a setting existed, such as
    ``leap_year``, is written back as it was)."""
    dumped = _weak_when_true(doc.model_dump(exclude_unset=True))
    d = {k: dumped[k] for k in raw if k in dumped} | dumped
    if isinstance(doc, ModelJson):
        if d["last_year"]["year"] is None:
            d["last_year"] = {}
        d["error_model"] = doc.error_model.model_dump()
    return d


def _weak_when_true(value: Any) -> Any:
    """``value`` with every column note's ``weak: false`` left out (it is written only when true, so a
    folder written before weak identification is written back as it was)."""
    if isinstance(value, dict):
        if value.get("weak") is False and "status" in value and "note" in value:
            value = {k: v for k, v in value.items() if k != "weak"}
        return {k: _weak_when_true(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_weak_when_true(v) for v in value]
    return value
