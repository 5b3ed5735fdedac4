"""Series that share a design: the shared model inputs, the fit-row patterns, one factorisation each.

Series share a design when they have the same transform, the same trend
origin (the year their history starts) and the same *fit-row pattern* (which
periods have a value; exclusions and closures are shared through the
calendar). Each group gets its own identifiability check, exactly as a single
series would (:func:`evcal.model.identify.check_columns` on its rows), and one
QR factorisation.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import period_mid_years
from evcal.design.trend import Trend
from evcal.effects import GroupInfo
from evcal.engine.batched import SharedSolve
from evcal.io.history import History
from evcal.io.panel import Panel
from evcal.model.choose import chosen_settings
from evcal.model.identify import (
    REL_TOL,
    FrameValues,
    check_columns,
    independent_base_columns,
    rows_values,
    status_notes,
)
from evcal.model.inputs import additive_design, calendar_terms, prepare
from evcal.model.options import FitOptions
from evcal.model.passes import exact_passes

__all__ = ["Template", "Group", "group_info", "fit_matrix", "distinct_spans", "pattern_ids"]


@dataclass
class Template:
    """:func:`evcal.model.inputs.prepare` on a placeholder series covering the whole panel.

    Everything that does not depend on a series' values (design, offset,
    exclusions, closures, assumed and borrowed lifts) is computed once here.
    """

    transform: str
    inp: Any  # ModelInputs
    calendar: Any
    periods: pd.PeriodIndex
    identified: bool = False  # inp's statuses were checked on its own rows (a panel of one's inputs)
    _curve: Any = None
    #: what every fit-row pattern of a trend origin shares (the design, its independent base columns on
    #: the template's rows, the calendar's terms): made once, not once per design group
    _at_origin: dict[float, tuple[pd.DataFrame, list[str], list[str]]] = field(default_factory=dict)
    _terms: dict[str, Any] | None = None
    #: the design at each trend origin as values (and the additive model's, scaled), for the checks of
    #: every pattern and the groups' fit matrices
    _values: dict[tuple[float, bool], FrameValues] = field(default_factory=dict)

    @classmethod
    def build(cls, panel: Panel, calendar: Any, options: FitOptions, transform: str,
              inputs: Any = None) -> Template:
        """The shared inputs of ``panel``'s series with ``transform`` (``inputs``: a panel of one's own)."""
        inp = inputs
        if inp is None:
            placeholder = History(pd.Series(1.0, index=panel.periods, name="value"), panel.freq, panel.label,
                                  panel.source, [])
            # each design group is checked on its own rows (group_info): not the placeholder's
            opts = replace(options, transform=transform)
            inp = prepare(placeholder, calendar, opts, identify=False,
                          chosen=chosen_settings(placeholder, calendar, opts))
        return cls(transform, inp, calendar, panel.periods, identified=inputs is not None)

    def curve(self) -> Any:
        """Event columns as functions of θ, when the fit aggregates lifts exactly (:func:`exact_passes`)."""
        if not exact_passes(self.transform, self.inp.spec.freq):
            return None
        if self._curve is None:
            from evcal.design.curved import CurvedEvents

            self._curve = CurvedEvents(self.calendar, list(self.inp.spec.event_columns), self.periods)
        return self._curve

    def origins(self, first: np.ndarray) -> np.ndarray:
        """Trend origins of series whose histories start at periods ``first`` (as prepare sets them)."""
        return np.floor(period_mid_years(self.periods)[np.asarray(first, dtype=int)]).astype(float)

    def at_origin(self, origin: float) -> tuple[pd.DataFrame, list[str], list[str]]:
        """The design with trend ``origin``, its trend and seasonal columns, and those independent on
        the template's rows (every period a series could fit)."""
        if origin not in self._at_origin:
            X = self.with_origin(self.inp.design.X, origin)
            roles = self.inp.design.roles
            all_base = [c for c in X.columns if roles[c] in ("trend", "seasonal")]
            self._at_origin[origin] = (X, all_base, independent_base_columns(X, self.inp.rows, all_base))
        return self._at_origin[origin]

    def values(self, origin: float, graded: bool = False) -> FrameValues:
        """The design with trend ``origin`` as values; ``graded``: as the fit solves it (the additive
        model's rows scaled by the open share, :func:`additive_design`)."""
        key = (origin, graded and self.transform == "none")
        if key not in self._values:
            X = self.at_origin(origin)[0]
            self._values[key] = FrameValues.of(additive_design(X, self.inp) if key[1] else X)
        return self._values[key]

    def terms(self) -> dict[str, Any]:
        """The calendar's names of events, closures and interventions (:func:`calendar_terms`)."""
        if self._terms is None:
            self._terms = {k: v for k, v in calendar_terms(self.calendar).items() if k != "exclusions"}
        return self._terms

    def with_origin(self, frame: pd.DataFrame, origin: float) -> pd.DataFrame:
        spec = self.inp.spec
        if origin == spec.trend_origin:
            return frame
        trend = Trend(origin, spec.trend_order, spec.constant).columns(frame.index)
        out = frame.copy()
        for c in trend.columns:
            out[c] = trend[c].to_numpy()
        return out


@dataclass
class Group:
    """Series that share a design: one factorisation, one set of column statuses."""

    gid: int
    transform: str
    origin: float
    rows: np.ndarray  # bool over the panel's periods
    members: np.ndarray  # series positions
    info: GroupInfo
    template: Template | None  # makes the fit matrix (fit_matrix) when the group is solved
    notes: list[str] = field(default_factory=list)
    offset: np.ndarray | None = None  # model-scale offset on the fit rows
    share: np.ndarray | None = None  # open share on the fit rows (additive model)
    curve: Any = None  # CurvedEvents on the panel's periods, when lifts are aggregated exactly
    refine_cache: dict[str, Any] = field(default_factory=dict)  # refine's group-level inputs, made once
    _solve: SharedSolve | None = field(default=None, repr=False)

    @property
    def solve(self) -> SharedSolve:
        """The factorised fit matrix, made when a unit first solves the group (not when the work is cut).

        A gapped panel has a group per pattern of missing periods; made up front, every group's
        factorisation (about 0.6 MB for 260 weeks x 65 columns) would be held before any unit ran.
        """
        if self._solve is None:
            assert self.template is not None
            self._solve = SharedSolve.of(fit_matrix(self.template, self.info, self.rows, self.origin))
        return self._solve

    def release(self) -> None:
        """Drop the factorisation and refine's cache once every unit of the group has run (made again if
        asked for)."""
        self._solve = None
        self.refine_cache = {}


def group_info(template: Template, observed: np.ndarray, origin: float
               ) -> tuple[GroupInfo, np.ndarray, list[str]]:
    """Fit rows and column statuses for one observed pattern (prepare's last steps; the fit matrix:
    :func:`fit_matrix`)."""
    inp = template.inp
    rows = observed & inp.rows
    roles = inp.design.roles
    X, all_base, base_full = template.at_origin(origin)
    same_rows = np.array_equal(rows, inp.rows)
    if template.identified and origin == inp.spec.trend_origin and same_rows:
        # a panel of one whose inputs were identified on these very rows (evcal.fit): checking the
        # columns again would give the same statuses (measured: a daily 20-year fit with 100 events,
        # benchmarks/fit.py's case, went from a median 0.56 s to 0.50 s over 5 runs without it)
        status, fitted_cols = dict(inp.status), list(inp.fitted_cols)
    else:
        values = template.values(origin)
        base_cols = _independent_base(values, rows, all_base, base_full, same_rows)
        fixed = {c: st for c, st in inp.status.items() if st.status in ("assumed", "like")}
        candidates = [c for c in inp.status if c not in fixed]
        # graded on the rows the fit solves (the additive model's are scaled by the open share)
        graded = template.values(origin, graded=True) if template.transform == "none" else None
        status = check_columns(values, rows, base_cols, candidates, roles, template.calendar,
                               graded_on=graded)
        status.update(fixed)
        fitted_cols = base_cols + [c for c in candidates if status[c].status == "fitted"]
    terms = template.terms()
    info = GroupInfo(transform=template.transform, status=status, fitted_cols=fitted_cols,
                     base_columns=all_base, like_map=dict(inp.like_map), assumed=dict(inp.assumed), **terms,
                     spec=replace(inp.spec, trend_origin=origin), roles=dict(roles))
    return info, rows, status_notes(status)


def fit_matrix(template: Template, info: GroupInfo, rows: np.ndarray, origin: float) -> np.ndarray:
    """A group's regressors (``info.fitted_cols``) on its fit ``rows`` (additive: times the open share)."""
    # (the additive model's scaling is per element: the same numbers as scaling only these columns)
    return rows_values(template.values(origin, graded=True), rows, info.fitted_cols)


#: a column's relative residual on the columns before it, above this, is independent without a doubt:
#: 100 times :data:`evcal.model.identify.REL_TOL`, the threshold of the full check (below it, that check runs)
_CLEAR = 100 * REL_TOL


def _independent_base(X: FrameValues, rows: np.ndarray, all_base: list[str], base_full: list[str],
                      same_rows: bool) -> list[str]:
    """:func:`independent_base_columns` on ``rows``, from its answer on a superset of them (``base_full``).

    Leaving out a few periods keeps a dependent column dependent (exactly: its residual is rounding);
    an independent one stays independent unless the periods that told it apart are gone. One QR of
    the ``base_full`` columns on ``rows`` shows which: when each keeps a relative residual on the
    columns before it (``|Rⱼⱼ| / ‖xⱼ‖``) far above the threshold and each left-out column stays far below
    it, the answer is ``base_full``; otherwise the column-by-column check decides.
    """
    if same_rows:
        return base_full
    if len(base_full):
        Xk = rows_values(X, rows, base_full)
        q, r = np.linalg.qr(Xk)
        with np.errstate(invalid="ignore", divide="ignore"):
            rel = np.abs(np.diagonal(r)) / np.linalg.norm(Xk, axis=0)
        dropped = [c for c in all_base if c not in set(base_full)]
        if np.all(rel > _CLEAR):
            if not dropped:
                return base_full
            # each left-out column against the kept columns before it, as the full check tests it
            pos = {c: i for i, c in enumerate(all_base)}
            Xd = rows_values(X, rows, dropped)
            clear = True
            for j, c in enumerate(dropped):
                q_before = q[:, :sum(pos[k] < pos[c] for k in base_full)]
                norm = float(np.linalg.norm(Xd[:, j]))
                res = Xd[:, j] - q_before @ (q_before.T @ Xd[:, j])
                clear &= norm == 0 or float(np.linalg.norm(res)) / norm < REL_TOL / 100
            if clear:
                return base_full
    return independent_base_columns(X, rows, all_base)


def distinct_spans(spans: np.ndarray, n_periods: int) -> list[tuple[int, int]]:
    """The distinct (first, last) rows of ``spans``, in sorted order."""
    code = np.unique(spans[:, 0].astype(np.int64) * (n_periods + 1) + spans[:, 1])
    return [(int(c // (n_periods + 1)), int(c % (n_periods + 1))) for c in code]


def pattern_ids(obs: np.ndarray, keys: list[np.ndarray]) -> np.ndarray:
    """One id per distinct (extra keys, observed-rows pattern) among the columns of ``obs``."""
    packed = np.packbits(obs, axis=0).T  # (series, bytes)
    extra = np.column_stack([np.asarray(k, dtype=np.int64) for k in keys]) if keys else \
        np.zeros((obs.shape[1], 0), dtype=np.int64)
    table = np.concatenate([extra.view(np.uint8).reshape(obs.shape[1], -1), packed], axis=1)
    table = np.ascontiguousarray(table)
    rows = table.view(np.dtype((np.void, table.shape[1]))).ravel()
    _, first, inv = np.unique(rows, return_index=True, return_inverse=True)
    # number groups in order of their first series, so group ids follow the key order
    order = np.argsort(first, kind="stable")
    rank = np.empty_like(order)
    rank[order] = np.arange(len(order))
    return rank[inv.ravel()]


