"""How well the history pins down each fitted event and intervention: ``yes`` or ``weak``.

:func:`evcal.model.identify.check_columns` finds the columns the history
cannot estimate at all (exact aliasing: ``no``). A column can pass it and
still rest on almost nothing: a festival held every March from the second
year on is told apart from the March season by the one March without it; a
holiday nested in another event's window moves with it in monthly periods;
a holiday kept in two years only. :func:`assess` measures, once for a design
(a panel's design group shares one), on the fitted rows:

* the number of occurrences whose window falls in a fitted period;
* the largest share of the estimate that rests on one period (the term's
  partial leverage ``r_i^2 / sum(r^2)``, ``r`` its column's residual on the
  other fitted columns: the share of the coefficient's variance from period
  ``i``) and the hat-matrix diagonal (leverage) of the fitted design there;
* the variance inflation factor against the trend and seasonal terms, and the
  further factor the other events and interventions add;
* another event whose window holds this one's days in most occurrences.

Each rule that trips makes the term ``weak`` with a note that names the reason
and the fix (merge, widen, drop, assume). The thresholds are the named
constants below, each with where it comes from.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

# the too-wide-interval rule lives with the table builder that applies it; re-exported as part of the grade
from evcal.effects.wide import MAX_INTERVAL_RATIO as MAX_INTERVAL_RATIO
from evcal.effects.wide import interval_ratio as interval_ratio
from evcal.effects.wide import too_wide as too_wide
from evcal.effects.wide import wide_note as wide_note

#: fewer occurrences than this in the fitted history make an event weak: with one or two, the lift
#: cannot be told from whatever else happened in those periods (common practice, no source)
MIN_OCCURRENCES = 3
#: ... unless its occurrences cover at least this many fitted periods (a tournament of several weeks seen
#: twice in weekly data rests on many periods, not two; common practice, no source)
MIN_PERIODS = 6
#: more than this share of a term's estimate resting on one period makes it weak; the bound is Huber's
#: h > 0.5 for a high-leverage point (Huber, Robust Statistics, 1981; from memory), applied to the
#: term's own (partial) leverage
MAX_PERIOD_SHARE = 0.5
#: a variance inflation factor above 10 makes a term weak: the rule of thumb of regression textbooks
#: (Kutner, Nachtsheim, Neter & Li, Applied Linear Statistical Models, 5th ed., 2005, sec. 10.5;
#: from memory)
MAX_VIF = 10.0
#: another event's window holding this one's days in more than this share of its occurrences makes
#: it nested (the majority; common practice, no source); only in periods longer than a day, where
#: both columns count days of the same periods
NESTED_SHARE = 0.5
#: interventions that rest on their first period by construction: the period-share rule is not applied
ONE_PERIOD_TYPES = ("pulse", "temporary")
#: a lift resting on at most this many fitted periods has no residual of its own periods to read their
#: noise from: since the covariance floor (evcal.model.estimators.period_weights) its interval takes the
#: series' usual noise there, and the note says so. Measured on invented daily series
#: (tests/test_strength_interval.py): a one-period lift's 95 % interval holds the true lift in 39 of 40
#: series, a two-period one in 38 (before the floor, the plain HC2 sandwich: 35 % and 82 %)
NARROW_PERIODS = 2


@dataclass(frozen=True)
class Strength:
    """What :func:`assess` measured for one fitted term, and its grade."""

    occurrences: float  # occurrences with a fitted period in their window (NaN for an intervention)
    periods: int  # fitted periods the column touches
    leverage: float  # hat-matrix diagonal at the period carrying most of the estimate
    period_share: float  # that period's share of the estimate (the term's largest partial leverage)
    period: str  # that period
    vif_season: float  # variance inflation by the trend and seasonal terms
    vif_events: float  # the further inflation by the other events and interventions
    partner: str  # the other term it moves with most (largest partial correlation)
    within: str  # an event whose window holds this one's days in most occurrences
    reasons: tuple[str, ...]  # empty: identified; else why it is weak, and the fix

    @property
    def weak(self) -> bool:
        return bool(self.reasons)

    def checks(self) -> dict[str, Any]:
        """The numbers of the lifts table."""
        return {"occurrences_fitted": self.occurrences, "leverage": self.leverage,
                "vif_season": self.vif_season, "vif_events": self.vif_events, "within": self.within}


def assess(X: Any, rows: np.ndarray, fitted_cols: list[str], terms: list[str],
           roles: dict[str, str], calendar: Any) -> dict[str, Strength]:
    """Measure and grade each fitted event and intervention column in ``terms``.

    Parameters
    ----------
    X : DataFrame or FrameValues
        The design on every period (like-events already added onto their target); or its values taken
        out once (:class:`evcal.model.identify.FrameValues`).
    rows : ndarray of bool
        The fitted rows.
    fitted_cols : list of str
        The columns of the fit (trend, seasonal and the fitted terms), independent on ``rows``.
    terms : list of str
        The fitted event and intervention columns to grade.
    roles : dict
        Column -> ``trend``, ``seasonal``, ``event`` or ``intervention``.
    calendar : Calendar
        For the occurrences, windows and intervention types.
    """
    if not terms:
        return {}
    from evcal.model.identify import rows_values  # (identify imports this module)

    Z = rows_values(X, rows, fitted_cols)
    periods = X.index[rows]
    q, r = np.linalg.qr(Z)
    r_inv = np.linalg.solve(r, np.eye(r.shape[0]))
    p_inv = r_inv @ r_inv.T  # (Z'Z)^-1
    hat = np.einsum("ij,ij->i", q, q)
    idx = {c: i for i, c in enumerate(fitted_cols)}
    base = [i for c, i in idx.items() if roles.get(c) in ("trend", "seasonal")]
    qb, _ = np.linalg.qr(Z[:, base]) if base else (np.zeros((len(Z), 0)), None)
    term_idx = np.array([idx[c] for c in terms])
    weights = r_inv[term_idx] @ q.T  # each term's coefficient as weights on the periods
    share = np.square(weights)
    share /= share.sum(axis=1, keepdims=True)
    ss = np.square(_centred(Z[:, term_idx], Z[:, idx["const"]] if "const" in idx else None)).sum(axis=0)
    resid_base = Z[:, term_idx] - qb @ (qb.T @ Z[:, term_idx])
    with np.errstate(divide="ignore", invalid="ignore"):
        vif_full = ss * np.diag(p_inv)[term_idx]
        vif_season = ss / np.square(resid_base).sum(axis=0)
        sd = np.sqrt(np.diag(p_inv))
        pcorr = -p_inv / np.outer(sd, sd)
    daily = isinstance(X.index, pd.PeriodIndex) and X.index.freqstr.startswith("D")
    windows = _Windows(calendar, X.index, rows)
    types = {iv.name: str(iv.type) for iv in calendar.interventions}
    col_event = calendar.event_columns()
    out: dict[str, Strength] = {}
    for n, c in enumerate(terms):
        kind = roles.get(c, "event")
        best = int(np.argmax(share[n]))
        others = [k for k in term_idx if k != idx[c]]
        partner = fitted_cols[max(others, key=lambda k: abs(pcorr[idx[c], k]))] if others else ""
        ev = col_event.get(c, c)
        occurrences, within, held = (windows.count(ev), *windows.within(ev, terms, col_event)) \
            if kind == "event" else (np.nan, "", 0)
        vs = float(vif_season[n]) if np.isfinite(vif_season[n]) else np.inf
        ve = float(vif_full[n] / vif_season[n]) if vs > 0 and np.isfinite(vs) else np.nan
        touched = int((Z[:, idx[c]] != 0).sum())
        s = Strength(float(occurrences), touched, float(hat[best]), float(share[n, best]), str(periods[best]),
                     vs, ve, partner, within, ())
        reasons = _reasons(s, kind, types.get(c, ""), float(vif_full[n]), held, windows.freq_word, daily)
        out[c] = Strength(**{**s.__dict__, "reasons": tuple(reasons)})
    if not daily:  # the event holding a nested one shares its estimate with it: weak as well
        for c, s in list(out.items()):
            holder = next((k for k in terms if col_event.get(k, k) == s.within), None) if s.within else None
            if holder in out:
                why = (f"weakly identified: its window holds the days of {col_event.get(c, c)} in most "
                       f"occurrences, so {windows.freq_word} periods share the estimate between the two; "
                       f"merge {col_event.get(c, c)} into this event, or drop it")
                h = out[holder]
                out[holder] = Strength(**{**h.__dict__, "reasons": (*h.reasons, why)})
    return out


def _centred(cols: np.ndarray, const: np.ndarray | None) -> np.ndarray:
    """``cols`` less their projection on the design's constant column (its mean when there is none).

    The variance inflation factors compare with a design where the term is orthogonal to every
    column but the constant; in the additive model's design the constant is scaled by each period's
    open share like every other column, so centring means projecting on that column, not the mean.
    """
    if const is None or not np.any(const):
        return cols - cols.mean(axis=0)
    return cols - np.outer(const, const @ cols) / float(const @ const)


def _reasons(s: Strength, kind: str, iv_type: str, vif_full: float, held: int, freq_word: str,
             daily: bool) -> list[str]:
    """Why a term is weak, each with its fix (empty: identified)."""
    what = "event" if kind == "event" else "intervention"
    assume = "give effect: {assume: ...}"
    out = []
    if kind == "event" and s.occurrences < MIN_OCCURRENCES and s.periods < MIN_PERIODS:
        out.append(f"weakly identified: rests on {s.occurrences:.0f} occurrence(s) in {s.periods} period(s) "
                   f"of the fitted history (fewer than {MIN_OCCURRENCES}), too few to tell the event from "
                   f"whatever else happened then; {assume}, drop the event, or fit a longer history")
        if s.periods <= NARROW_PERIODS:
            out.append(f"its 95 % interval rests on {s.periods} period(s): the fit leaves no residual there "
                       f"to read their own noise from, so it takes the series' usual noise; an event day "
                       f"more erratic than ordinary days would need a wider one")
    if s.within and not daily:
        out.append(f"weakly identified: {s.within}'s window holds this event's days in {held} of "
                   f"{s.occurrences:.0f} occurrences, so {freq_word} periods cannot tell the two apart; "
                   f"merge it into {s.within} (widen that window), or drop it")
    if s.period_share > MAX_PERIOD_SHARE and iv_type not in ONE_PERIOD_TYPES:
        out.append(f"weakly identified: {100 * s.period_share:.0f} % of the estimate rests on one period "
                   f"({s.period}, leverage {s.leverage:.2f}); merge this {what} with the season or another "
                   f"{what}, {assume}, or drop it")
    if vif_full > MAX_VIF and not out:
        if s.vif_season > MAX_VIF:
            out.append(f"weakly identified: its variance is inflated {s.vif_season:.0f}-fold by the seasonal "
                       f"terms (it falls in nearly the same periods every year); widen its window so it "
                       f"moves between periods, fit finer data, or {assume}")
        else:
            out.append(f"weakly identified: its variance is inflated {vif_full:.0f}-fold, mostly by "
                       f"{s.partner}, which moves with it; merge the two, widen one window, or drop one")
    return out


class _Windows:
    """The occurrence windows of the calendar's events, in days, restricted to the fitted periods."""

    def __init__(self, calendar: Any, index: pd.Index, rows: np.ndarray) -> None:
        self.freq_word = "these"
        self._order: dict[str, int] | None = None  # each present event's row of _cum_all (made when asked)
        self._cum_all = np.zeros((0, 1), dtype=np.int32)
        if not isinstance(index, pd.PeriodIndex) or not len(index):
            self.events, self.w0, self.w1 = np.zeros(0, dtype=object), np.zeros(0, int), np.zeros(0, int)
            self.present: set[str] = set()
            self.fitted_days = np.zeros(0, dtype=bool)
            return
        self.freq_word = {"D": "daily", "W": "weekly", "M": "monthly", "Q": "quarterly"}.get(
            index.freqstr[0], "these")
        first, last, p0, p1 = _period_days(index)
        self.day0 = first
        n_days = (last - first).days + 1
        marks = np.zeros(n_days + 1, dtype=int)
        np.add.at(marks, p0[rows], 1)
        np.add.at(marks, p1[rows] + 1, -1)
        self.fitted_days = np.cumsum(marks)[:n_days] > 0
        events, w0, w1 = _calendar_windows(calendar, first, last)
        cum = np.concatenate([[0], np.cumsum(self.fitted_days)])
        touched = cum[w1 + 1] - cum[w0] > 0
        self.events, self.w0, self.w1 = events[touched], w0[touched], w1[touched]
        self.present = set(self.events.tolist())

    def count(self, event: str) -> int:
        """Occurrences of ``event`` whose window has a day in a fitted period."""
        return int((self.events == event).sum())

    def _held(self, event: str) -> np.ndarray:
        """Per present event (rows of ``_order``): in how many of ``event``'s windows it holds all days."""
        if self._order is None:
            # each present event's cumulative count of the days inside its windows (for range sums), all
            # events in one array: a window's days held by another event are one difference per pair
            self._order = {e: i for i, e in enumerate(sorted(self.present))}
            which = np.array([self._order[e] for e in self.events.tolist()], dtype=np.int64)
            marks = np.zeros((len(self._order), len(self.fitted_days) + 1), dtype=np.int32)
            np.add.at(marks, (which, self.w0), 1)
            np.add.at(marks, (which, self.w1 + 1), -1)
            inside = np.cumsum(marks, axis=1)[:, :-1] > 0
            self._cum_all = np.concatenate([np.zeros((len(self._order), 1), dtype=np.int32),
                                            np.cumsum(inside, axis=1, dtype=np.int32)], axis=1)
        mine = self.events == event
        w0, w1 = self.w0[mine], self.w1[mine]
        return ((self._cum_all[:, w1 + 1] - self._cum_all[:, w0]) == (w1 - w0 + 1)).sum(axis=1)

    def within(self, event: str, terms: list[str], col_event: dict[str, str]) -> tuple[str, int]:
        """The fitted event whose windows hold ``event``'s window days in most occurrences, and how many."""
        mine = self.events == event
        if not mine.any():
            return "", 0
        held_by = self._held(event)
        best, held_best = "", 0
        for other in dict.fromkeys(col_event.get(t, t) for t in terms):
            if other == event or other not in self.present:
                continue
            held = int(held_by[self._order[other]])  # type: ignore[index]  # set by _held
            if held > NESTED_SHARE * int(mine.sum()) and held > held_best:
                best, held_best = other, held
        return best, held_best


#: the first and last day of the index graded last, and each period's first and last day from it
_PERIOD_DAYS_CACHE: dict[int, tuple[pd.PeriodIndex, tuple[Any, ...]]] = {}


def _period_days(index: pd.PeriodIndex) -> tuple[pd.Timestamp, pd.Timestamp, np.ndarray, np.ndarray]:
    """The index's first and last day, and each period's first and last day as days from the first.

    They depend on the index only (a panel grades one index for many fit-row patterns): computed once
    per index and kept (with the index, so its id cannot be reused while kept).
    """
    hit = _PERIOD_DAYS_CACHE.get(id(index))
    if hit is not None and hit[0] is index:
        return hit[1]  # type: ignore[return-value]
    first = index[0].start_time.normalize()
    last = index[-1].end_time.normalize()
    p0 = (index.start_time.normalize() - first).days.to_numpy()
    p1 = (index.end_time.normalize() - first).days.to_numpy()
    out = (first, last, p0, p1)
    if len(_PERIOD_DAYS_CACHE) >= 8:
        _PERIOD_DAYS_CACHE.clear()
    _PERIOD_DAYS_CACHE[id(index)] = (index, out)
    return out


#: the calendar's windows of the spans graded last (a panel grades one span for many fit-row patterns)
_WINDOWS_CACHE: dict[tuple[int, pd.Timestamp, pd.Timestamp], tuple[Any, tuple[np.ndarray, ...]]] = {}


def _calendar_windows(calendar: Any, first: pd.Timestamp, last: pd.Timestamp) -> tuple[np.ndarray, ...]:
    """Each occurrence's event and window (first and last day, as days from ``first``, clipped to the span).

    They depend on the calendar and the span only, not on which periods are fitted: computed once per
    span and kept (with the calendar, so its id cannot be reused while kept).
    """
    key = (id(calendar), first, last)
    hit = _WINDOWS_CACHE.get(key)
    if hit is not None and hit[0] is calendar:
        return hit[1]
    n_days = (last - first).days + 1
    occ = calendar.occurrences(first, last)
    before = {e.name: e.before for e in calendar.events}
    after = {e.name: e.after for e in calendar.events}
    w0 = (pd.to_datetime(occ["start"]) - first).dt.days.to_numpy() - occ["event"].map(before).to_numpy()
    w1 = (pd.to_datetime(occ["end"]) - first).dt.days.to_numpy() + occ["event"].map(after).to_numpy()
    # (int: a calendar with no occurrence in the span gives empty float columns)
    w0 = np.clip(w0, 0, n_days - 1).astype(np.int64)
    w1 = np.clip(w1, 0, n_days - 1).astype(np.int64)
    out = (np.asarray(occ["event"].to_numpy(), dtype=object), w0, w1)
    if len(_WINDOWS_CACHE) >= 8:
        _WINDOWS_CACHE.clear()
    _WINDOWS_CACHE[key] = (calendar, out)
    return out


def grade(X: Any, rows: np.ndarray, fitted_cols: list[str], status: dict[str, Any],
          roles: dict[str, str], calendar: Any) -> dict[str, Any]:
    """``status`` with each fitted term's :func:`assess` numbers, and the weak ones marked with their note.

    (A borrowed ``like`` lift is as weak as the lift it borrows: the lifts table says so.)
    """
    terms = [c for c in fitted_cols if roles.get(c) in ("event", "intervention")
             and getattr(status.get(c), "status", "") == "fitted"]
    found = assess(X, rows, fitted_cols, terms, roles, calendar)
    out = dict(status)
    for c, s in found.items():
        st = out[c]
        note = "; ".join([n for n in (st.note, *s.reasons) if n])
        out[c] = replace(st, note=note, weak=s.weak, checks=s.checks())  # a ColumnStatus
    return out
