"""Which event and intervention columns the history can actually estimate.

A column is not fitted, with a note instead of a number, when it has no
occurrence in the fitted periods; when it always falls in the same seasonal
period (it is a combination of the seasonal and trend columns, so its effect
stays in the seasonal index); or when it always shares its days with another
event (only their sum is estimable: the first carries it). The test is
numerical rank: a column's relative residual on the columns kept before it.

A column can pass that test and still carry no usable information (a
Father's Day window in quarterly data moves only when a closed Easter day
changes the quarter's count of open days): the fit then gives a lift no event
has (``+1e21 %``) or an interval that overflows. :func:`degenerate_terms`
flags those after the fit, which leaves the column out with a note from
:func:`degenerate_note`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import period_days
from evcal.model.strength import grade

REL_TOL = 1e-6
#: a log-lift no real event reaches: more than x100, or less than 1/100, of base on every day
#: of its window (+9,900 % / -99 %). Past it a fitted lift is a breakdown of the fit, not a
#: measurement (common practice, no source). Known zeros are closures (effect: zero).
MAX_LOG_LIFT = float(np.log(100.0))
#: the same bound for the additive model: a lift of more than 99 times the series' level
MAX_LEVEL_RATIO = 99.0
#: below this share of its column left apart from the trend and season, the note says the
#: event sits in the same period (nearly) every year (wording only, not a rule)
SEASONAL_SHARE = 0.1
Z95 = 1.959963984540054
#: the note of a column with no occurrence in the fitted periods (an intervention after the history
#: says more: :func:`no_history_note`)
NO_HISTORY = "no occurrence inside the fitted history; not fitted"


@dataclass
class ColumnStatus:
    """Fate of one event or intervention column in the fit."""

    status: str  # fitted | no_history | unidentifiable | duplicate | assumed | like | unchecked
    note: str = ""
    twin: str = ""  # for a duplicate: the column that carries the joint estimate
    weak: bool = False  # fitted, but weakly identified (evcal.model.strength): the note says why
    checks: dict[str, Any] = field(default_factory=dict)  # evcal.model.strength's numbers (lifts table)

    @property
    def identifiable(self) -> str:
        """``yes``, ``weak`` or ``no``: whether the history (or an assumption) gives this column a lift."""
        if self.status in ("fitted", "like", "assumed"):
            return "weak" if self.weak else "yes"
        return "no"


@dataclass(frozen=True)
class FrameValues:
    """A design frame's float values, index and column positions, taken out of the frame once.

    A panel checks one design on many fit-row patterns; the checks accept this in place of the frame,
    so each pattern pays no label indexing and no conversion of the whole frame.
    """

    index: pd.Index
    columns: pd.Index
    values: np.ndarray
    pos: dict[str, int]

    @classmethod
    def of(cls, X: pd.DataFrame) -> FrameValues:
        return cls(X.index, X.columns, X.to_numpy(dtype=float), {c: i for i, c in enumerate(X.columns)})


def rows_values(X: pd.DataFrame | FrameValues, rows: np.ndarray, cols: list[str]) -> np.ndarray:
    """``X.loc[rows, cols]`` as floats, without pandas' label indexing (a panel checks one design on
    many fit-row patterns: the indexing cost more than the arithmetic)."""
    if isinstance(X, FrameValues):
        missing = [c for c in cols if c not in X.pos]
        idx = np.array([X.pos[c] for c in cols if c in X.pos], dtype=np.intp)
        values = X.values
    else:
        idx = X.columns.get_indexer(cols)
        missing = [c for c, i in zip(cols, idx, strict=True) if i < 0]
        values = X.to_numpy(dtype=float)
    if missing:
        raise KeyError(f"not in the design: {missing}")
    return values[np.ix_(np.asarray(rows, dtype=bool), idx)]


def _project_out(q: np.ndarray, a: np.ndarray) -> np.ndarray:
    """``a`` less its projection on orthonormal ``q`` (twice: Gram-Schmidt loses orthogonality once)."""
    r = a - q @ (q.T @ a)
    return r - q @ (q.T @ r)


def _relative_residual(col: np.ndarray, q: np.ndarray) -> float:
    """||col - proj(col)|| / ||col|| for the projection on orthonormal columns ``q``."""
    norm = float(np.linalg.norm(col))
    return float(np.linalg.norm(_project_out(q, col))) / norm if norm else 0.0


def _orthonormal(basis: np.ndarray) -> np.ndarray:
    """Orthonormal columns spanning ``basis`` (rank-revealing via SVD)."""
    if basis.shape[1] == 0:
        return basis
    u, s, _ = np.linalg.svd(basis, full_matrices=False)
    keep = s > s[0] * 1e-10 if len(s) and s[0] > 0 else np.zeros(len(s), dtype=bool)
    return u[:, keep]


def _extend(q: np.ndarray, col: np.ndarray) -> np.ndarray:
    r = _project_out(q, col)
    return np.column_stack([q, r / np.linalg.norm(r)])


def independent_base_columns(X: pd.DataFrame | FrameValues, rows: np.ndarray, base_cols: list[str]
                             ) -> list[str]:
    """Trend/seasonal columns that are not constant-zero or collinear on the fitted rows.

    A weekday dummy for a day that is always closed, or a season dummy for a
    week that is always excluded, carries no information; it is left out (its
    coefficient is zero) rather than making the design rank-deficient.
    """
    Xf = rows_values(X, rows, base_cols)
    q = np.zeros((Xf.shape[0], 0))
    keep = []
    for j, c in enumerate(base_cols):
        if _relative_residual(Xf[:, j], q) > REL_TOL:
            q = _extend(q, Xf[:, j])
            keep.append(c)
    return keep


def check_columns(
    X: pd.DataFrame | FrameValues, rows: np.ndarray, base_cols: list[str], candidate_cols: list[str],
    kind_of: dict[str, str], calendar: Any = None, leave_out: Any = (),
    graded_on: pd.DataFrame | FrameValues | None = None,
) -> dict[str, ColumnStatus]:
    """Classify each candidate (event and intervention) column, in priority order, on the fit ``rows``.

    The base (trend and seasonal) columns are projected out once; the
    candidates' remainders are then tested in order on their small Gram
    matrix (an incremental Cholesky that skips dependent columns), so the
    cost is one pass over the data however many events there are.
    ``kind_of`` (column -> role) words the notes.

    With the ``calendar``, the fitted columns are then graded ``yes`` or ``weak``
    (:func:`evcal.model.strength.grade`) on the design of the base columns and
    the fitted candidates, less the ``leave_out`` columns (an earlier pass's
    breakdowns, which the caller marks unidentifiable), on ``graded_on`` (default ``X``).
    """
    out: dict[str, ColumnStatus] = {}
    if not candidate_cols:
        return out
    Xc = rows_values(X, rows, candidate_cols)
    q_base = _orthonormal(rows_values(X, rows, base_cols))
    norms = np.linalg.norm(Xc, axis=0)
    resid = _project_out(q_base, Xc)
    rel_base = np.linalg.norm(resid, axis=0) / np.where(norms > 0, norms, 1.0)
    # Event columns are day counts divided by the period's length, so a February event
    # (always one day in February) still varies with leap years (1/28 vs 1/29) and would
    # pass the test above with a meaningless estimate. Test the day counts as well.
    # (the whole index's days, cached for its run of periods, then the rows: one computation per design)
    days = period_days(X.index)[rows] if isinstance(X.index, pd.PeriodIndex) else np.ones(len(Xc))
    counts = Xc * days[:, None]
    c_norms = np.linalg.norm(counts, axis=0)
    c_resid = _project_out(q_base, counts)
    rel_counts = np.linalg.norm(c_resid, axis=0) / np.where(c_norms > 0, c_norms, 1.0)
    is_event = np.array([kind_of.get(c) == "event" for c in candidate_cols])
    rel_base = np.where(is_event, np.minimum(rel_base, rel_counts), rel_base)
    gram_raw = Xc.T @ Xc
    gram = resid.T @ resid
    tol2 = (10 * REL_TOL) ** 2  # squared residual ratio on the Gram scale
    kept: list[int] = []
    chol = np.zeros((0, 0))
    for j, c in enumerate(candidate_cols):
        if norms[j] == 0.0:
            note = no_history_note(c, calendar, X.index) if kind_of.get(c) == "intervention" else NO_HISTORY
            out[c] = ColumnStatus("no_history", note)
            continue
        twin = None
        for k in kept:
            cos = gram_raw[j, k] / (norms[j] * norms[k])
            if abs(cos) > 1.0 - 1e-10:
                twin = candidate_cols[k]
                break
        if twin is not None:
            out[c] = ColumnStatus(
                "duplicate",
                f"always falls {_together(X.index, twin)}: only their joint effect can be "
                f"estimated (reported under {twin}); consider merging the two events",
                twin=twin,
            )
            prev = out[twin].note
            out[twin] = ColumnStatus("fitted", (prev + "; " if prev else "") + f"estimate includes {c}")
            continue
        if rel_base[j] < REL_TOL:
            what = "event" if kind_of.get(c) == "event" else "intervention"
            out[c] = ColumnStatus(
                "unidentifiable",
                f"this {what} always falls in the same seasonal period, so it cannot be told "
                "apart from the season; its effect stays inside the seasonal index",
            )
            continue
        g = gram[kept, j] if kept else np.zeros(0)
        # small (events x events) system: numpy's solve avoids importing scipy here
        v = np.linalg.solve(chol, g) if kept else g
        res2 = gram[j, j] - float(v @ v)
        if res2 / norms[j] ** 2 < tol2:
            out[c] = ColumnStatus(
                "unidentifiable",
                "a combination of the seasonal terms and the other events already fitted; "
                "its effect cannot be separated from theirs",
            )
            continue
        new = np.zeros((len(kept) + 1, len(kept) + 1))
        new[:-1, :-1] = chol
        new[-1, :-1] = v
        new[-1, -1] = np.sqrt(res2)
        chol = new
        kept.append(j)
        out.setdefault(c, ColumnStatus("fitted"))
    if calendar is not None:
        fitted = base_cols + [c for c in candidate_cols if out[c].status == "fitted" and c not in leave_out]
        out = grade(X if graded_on is None else graded_on, rows, fitted, out, kind_of, calendar)
    return out


def _together(index: pd.Index, twin: str) -> str:
    """How a duplicate goes with its twin: on the same days, or (longer periods) in the same periods."""
    word = {"W": "weeks", "M": "months", "Q": "quarters"}.get(index.freqstr[0], "") \
        if isinstance(index, pd.PeriodIndex) else ""
    return f"in the same {word} as {twin}, in step with it" if word else f"on the same days as {twin}"


def _breaks(params: np.ndarray, se: np.ndarray, bound: Any) -> np.ndarray:
    """The breakdown rule, per coefficient: 0 (a sound estimate), else 1 + which test it failed first."""
    with np.errstate(invalid="ignore"):
        broken = [~np.isfinite(params), ~np.isfinite(se), np.abs(params) > bound, Z95 * se > bound]
    return np.select(broken, [1, 2, 3, 4], 0)


def degenerate_terms(params: pd.Series, se: pd.Series, columns: list[str], transform: str,
                     level: float = 1.0) -> dict[str, str]:
    """Fitted columns whose coefficient is a breakdown of the fit, not a lift; column -> what was seen.

    A column is flagged when its coefficient or standard error is not finite,
    when the coefficient is beyond :data:`MAX_LOG_LIFT` (x100 or 1/100 of base),
    or when the 95 % interval reaches past that bound on both sides of the
    estimate by more than the bound itself (``1.96 se > log 100``: the data do
    not say even the order of magnitude, and ``exp`` of the bounds may overflow).
    For the additive model (``transform="none"``) the bound is
    :data:`MAX_LEVEL_RATIO` times ``level`` (the series' mean, in units).

    Examples
    --------
    >>> p = pd.Series({"a": 0.3, "b": -73.8, "c": 0.1})
    >>> s = pd.Series({"a": 0.05, "b": 30.0, "c": 900.0})
    >>> sorted(degenerate_terms(p, s, ["a", "b", "c"], "log"))
    ['b', 'c']
    """
    cols = [c for c in columns if c in params.index]
    b = params[cols].to_numpy(dtype=float)
    s = se.reindex(cols).to_numpy(dtype=float)
    scale = "x100 either way" if transform != "none" else f"{MAX_LEVEL_RATIO:g} times the level"
    words = {  # how each of _breaks' tests reads in the note
        1: "the fit gave no finite coefficient",
        2: "the fit gave {size} with no finite standard error",
        3: "the fit gave {size}, beyond what any event does",
        4: "the fit gave {size} with a 95 % interval wider than {scale} (standard error {se:.3g})",
    }
    reasons = _breaks(b, s, _bound(transform, level))
    return {c: words[r].format(size=_size(bc, transform), se=sc, scale=scale)
            for c, bc, sc, r in zip(cols, b, s, reasons, strict=True) if r}


def status_notes(status: dict[str, ColumnStatus]) -> list[str]:
    """The warnings a fit gives for columns it could not estimate (one wording for every path)."""
    notes = []
    for c, st in status.items():
        if st.status in ("unidentifiable", "duplicate"):
            notes.append(f"{c}: {st.note}")
        elif st.status == "no_history":  # an intervention after the history: when it starts, what plans do
            notes.append(f"{c}: {st.note}" if st.note != NO_HISTORY else
                         f"{c}: no occurrence in the history; listed, not fitted")
    return notes


def no_history_note(name: str, calendar: Any, index: pd.Index) -> str:
    """The note of an intervention column with nothing in the fitted periods.

    One that starts after the history's last day (``index``'s last period) is a known future change:
    the note says when it starts and what a plan does with it (:mod:`evcal.plan.future`: its assumed
    size, or left out with a note until it has one); any other gets :data:`NO_HISTORY`.

    Examples
    --------
    >>> from evcal.calendar import load_calendar
    >>> cal = load_calendar("name: t\\ninterventions:\\n  - {name: rise, type: level_shift, "
    ...                     "start: 2024-04-01, effect: {assume: -10%}}\\n")
    >>> no_history_note("rise", cal, pd.period_range("2020-01", "2023-12", freq="M"))
    'starts 2024-04-01, after the history: not fitted; plans use its assumed -10%'
    """
    iv = next((i for i in getattr(calendar, "interventions", []) if i.name == name), None)
    last = index[-1].end_time if isinstance(index, pd.PeriodIndex) and len(index) else None
    if iv is None or last is None or iv.start <= last:
        return NO_HISTORY
    start = f"starts {iv.start:%Y-%m-%d}, after the history: not fitted"
    if iv.effect.kind == "assume":
        return f"{start}; plans use its assumed {(iv.effect.assume or 0.0) * 100:+.4g}%"
    return (f"{start}; with no assumed size a plan leaves it out (and says so): add `effect: {{assume: N%}}` "
            "to it in the calendar to plan it")


def _bound(transform: str, level: Any = 1.0) -> Any:
    """Largest size a coefficient may have before it is a breakdown (log scale, or units for additive)."""
    if transform != "none":
        return MAX_LOG_LIFT
    level = np.abs(np.asarray(level, dtype=float))
    return MAX_LEVEL_RATIO * np.where((level > 0) & np.isfinite(level), level, 1.0)


def breakdown(params: np.ndarray, se: np.ndarray | None, transform: str, level: Any = 1.0) -> np.ndarray:
    """For many series (columns), whether any coefficient (rows) breaks :func:`degenerate_terms`' rule.

    ``se`` None checks the coefficients alone (a first pass whose standard
    errors were not computed).

    Examples
    --------
    >>> b = np.array([[0.3, -73.8], [0.1, 0.2]])
    >>> breakdown(b, np.full((2, 2), 0.05), "log").tolist()
    [False, True]
    """
    se = np.zeros_like(params) if se is None else se
    return (_breaks(params, se, _bound(transform, level)) > 0).any(axis=0)


def _size(b: float, transform: str) -> str:
    if transform == "none":
        return f"{b:+,.4g} units"
    if abs(b) <= MAX_LOG_LIFT:
        return f"{100.0 * np.expm1(b):+,.1f} %"
    return f"a log-lift of {b:+.4g}"


def seasonal_share(X: pd.DataFrame, rows: np.ndarray, base_cols: list[str], col: str) -> float:
    """Share of ``col`` (relative norm, 0..1) left after projecting out the trend and season columns.

    Examples
    --------
    >>> X = pd.DataFrame({"const": [1.0] * 4, "s": [1.0, 0, 1, 0], "e": [0.5, 0, 0.5, 0]})
    >>> round(seasonal_share(X, np.ones(4, dtype=bool), ["const", "s"], "e"), 12)
    0.0
    """
    q = _orthonormal(X.loc[rows, base_cols].to_numpy(dtype=float))
    return _relative_residual(X.loc[rows, col].to_numpy(dtype=float), q)


_PERIOD_WORDS = {"D": ("daily", "a longer history"), "W": ("weekly", "daily data"),
                 "M": ("monthly", "weekly or daily data"), "Q": ("quarterly", "weekly or daily data")}


def degenerate_note(seen: str, share: float, freq_base: str, kind: str, nil: bool = False) -> str:
    """The note of a flagged column: why it cannot be estimated and what to do.

    ``seen`` is from :func:`degenerate_terms`, ``share`` from :func:`seasonal_share`;
    ``nil`` (the lift went towards -100 %) adds the advice to mark a closure as one.

    Examples
    --------
    >>> degenerate_note("the fit gave a log-lift of -24.06", 0.004, "Q", "event")[:60]
    'quarterly periods hold this event in the same period nearly '
    """
    word, finer = _PERIOD_WORDS.get(freq_base, ("these", "finer data"))
    if kind != "event":
        return (f"the history cannot pin this {kind} down ({seen}): not fitted; check its dates, "
                "or fit a longer or finer history")
    if share < SEASONAL_SHARE:
        return (f"{word} periods hold this event in the same period nearly every year, so its lift "
                f"cannot be told apart from the season ({seen}); its effect stays inside the seasonal "
                f"index; fit {finer}, or give effect: {{assume: ...}}")
    closed = "; if nothing is sold on those days, mark the event effect: zero" if nil else ""
    return (f"the history cannot pin this lift down ({seen}); not fitted: "
            f"its effect stays inside the base; give effect: {{assume: ...}}, or fit a longer history "
            f"or {finer}{closed}")
