"""Settings the data choose: the Easter run-up, trading-day and leap-year columns, the annual Fourier order.

A setting the user leaves open (``auto``: ``--fourier-order auto``, the default;
``--trading-days``/``--leap-year`` not given; ``before: auto`` on an
Easter-relative event) is chosen by AICc among a few candidate designs fitted
on **one likelihood**: the same model-scale response, the same fit rows and the
same error model (Gaussian errors with an AR(1) coefficient fixed at the value
of the fullest candidate's residuals, so every candidate is a GLS fit with the
same error covariance; Poisson for count models). The candidates differ only
in the columns of the setting being chosen.

The settings are chosen one after the other, each with the ones before it
fixed (a coordinate-wise search, not every combination):

1. the run-up of each ``before: auto`` event, among :data:`RUN_UPS` days
   (4 fits each; the 1, 8 and 15 days of the usual Easter regressors of
   regression practice and 10, as the issue names them);
2. trading-day and leap-year columns of monthly and quarterly data, on or off
   (up to 4 fits; Eurostat's handbook tests them together);
3. a drifting season of monthly and quarterly seasonal dummies
   (:class:`evcal.design.seasonal.SeasonDrift`), on or off, on histories of
   :data:`MIN_DRIFT_YEARS` years or more (2 fits);
4. the number of annual Fourier pairs of daily data (and of weekly data fitted
   with ``--seasonal fourier``), among :func:`fourier_candidates` (up to 15 fits;
   a pick at the largest candidate says so in its reason).

So a monthly fit with one ``before: auto`` event makes at most 10 least-squares
fits, a daily one at most 15 plus 4 per such event: each a single solve on the
fit rows.
"""

from __future__ import annotations

import hashlib
import warnings
from collections import OrderedDict
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.events import EventColumns
from evcal.design.matrix import with_windows
from evcal.design.seasonal import cycle_length
from evcal.model.inputs import additive_design, model_scale_response, prepare, seasonal_kind
from evcal.model.options import FitOptions
from evcal.model.settings import STAND_IN_FOURIER, Chosen, auto_events, given, open_settings

__all__ = [
    "Chosen",
    "FOURIER_ORDERS",
    "RUN_UPS",
    "STAND_IN_FOURIER",
    "aicc",
    "auto_events",
    "choose",
    "fourier_candidates",
    "given",
]

#: candidate numbers of annual Fourier pairs (daily data)
FOURIER_ORDERS = (2, 3, 4, 6, 8, 10, 12, 15, 20, 25)
#: the season's shortest wave, in days: the pairs stop where a wave would be shorter than two weeks.
#: Shorter features are days, which the calendar carries as events; more pairs take part of the
#: fixed-date holidays' lifts (daily modeldata::Chicago 2009-2015, US holidays, --errors ols:
#: New Year's Day -58 % at 25 pairs, -48 % at 60; Christmas Day -81 % and -72 %; the moving
#: holidays stay within a point). Common practice, no source, for the two weeks.
SHORTEST_WAVE_DAYS = 14
#: candidate run-ups (days before) of an Easter-relative event with ``before: auto``
RUN_UPS = (1, 8, 10, 15)
#: the shortest history (in years of values) on which a drifting season is tried: its lines are
#: extrapolated a year or more, so they need several years to rest on (common practice, no source)
MIN_DRIFT_YEARS = 6
#: largest AR(1) coefficient the common error model takes (keeps the GLS transform well away from a unit root)
MAX_PHI = 0.95


def fourier_candidates(freq: str, n_periods: int) -> tuple[int, ...]:
    """The numbers of annual Fourier pairs tried on ``n_periods`` of ``freq``.

    :data:`FOURIER_ORDERS` up to half the periods of a year (more pairs repeat
    the same columns: a weekly year has 26 distinct harmonics), with no wave
    shorter than :data:`SHORTEST_WAVE_DAYS` (the season, not single days), and
    up to a tenth of the periods (at least five periods per Fourier column,
    common practice, no source); never fewer than the two smallest.

    Examples
    --------
    >>> [fourier_candidates(freq, n)[-1] for freq, n in (("D", 5698), ("W-SUN", 520), ("D", 200))]
    [25, 25, 20]
    """
    half_year = cycle_length(freq) // 2
    season = 365.25 / SHORTEST_WAVE_DAYS
    fit = [k for k in FOURIER_ORDERS if k <= min(half_year, season) and 2 * k <= n_periods // 5]
    return tuple(fit) if len(fit) >= 2 else FOURIER_ORDERS[:2]


def aicc(loglik: float, k: int, n: int) -> float:
    """Corrected Akaike criterion (Hurvich and Tsai 1989): ``-2 ℓ + 2k + 2k(k+1)/(n-k-1)``.

    Examples
    --------
    >>> round(aicc(-100.0, 3, 50), 3)
    206.522
    """
    return -2.0 * loglik + 2.0 * k + (2.0 * k * (k + 1) / (n - k - 1) if n - k - 1 > 0 else np.inf)


def choose(
    history: Any, calendar: Any, options: FitOptions, seasonal: str, values: pd.Series | None = None
) -> Chosen:
    """Choose the open settings of ``options`` and the ``before: auto`` run-ups by AICc (see the module).

    Parameters
    ----------
    history : evcal.io.History
        The series (its periods, frequency and values).
    calendar : evcal.calendar.Calendar
    options : FitOptions
        The user's options; only the ``auto`` ones are chosen.
    seasonal : {"dummies", "fourier"}
        The seasonal block the design uses.
    values : Series, optional
        Values to choose on instead of the history's (a panel's total).

    Returns
    -------
    Chosen
        Concrete settings, with one record per choice made in ``choices``.
    """

    start = given(options)
    settings = open_settings(options, history.freq, seasonal)
    events = auto_events(calendar)
    if not settings and not events:
        return start
    if values is not None:
        history = type(history)(values.rename("value"), history.freq, history.label, history.source, [])
    # the fullest design: every open column in (trading days, leap year, the largest Fourier order)
    full = Chosen(
        fourier_order=max(fourier_candidates(history.freq, int(history.values.notna().sum())))
        if "fourier_order" in settings else start.fourier_order,
        trading_days=start.trading_days or "trading_days" in settings,
        leap_year=start.leap_year or "leap_year" in settings,
        season_drift=start.season_drift or ("season_drift" in settings and _long_enough(history)),
    )
    inp = prepare(history, calendar, options, chosen=full, grade=False)  # (the grades do not enter a choice)
    lik = _Likelihood.of(inp)
    windows: dict[str, int] = {}
    records: list[dict[str, Any]] = []
    base = [c for c in inp.fitted_cols if inp.design.roles[c] in ("trend", "seasonal")]
    terms = [c for c in inp.fitted_cols if c not in base]
    X = inp.raw_X.copy()

    def score(frame: pd.DataFrame, cols: list[str]) -> float:
        return lik.aicc(_merged(frame, inp)[cols])

    # 1. run-ups of `before: auto` events, with the fullest base
    for ev in events:
        col = ev
        if col not in terms:  # not estimable here (no occurrence, or aliased): keep the stand-in
            records.append(
                {
                    "setting": f"before:{ev}",
                    "chosen": str(calendar.event(ev).before),
                    "candidates": [],
                    "reason": "left at the stand-in: the event's lift is not estimated in this history",
                }
            )
            continue
        scores = {}
        for w in RUN_UPS:
            trial = X.copy()
            trial[col] = EventColumns(with_windows(calendar, {ev: w}), [col]).columns(inp.periods)[col]
            scores[w] = score(trial, base + terms)
        best = min(scores, key=lambda w: scores[w])
        windows[ev] = best
        X[col] = EventColumns(with_windows(calendar, {ev: best}), [col]).columns(inp.periods)[col]
        records.append(_record(f"before:{ev}", scores, best, lik, f"run-up of {ev} (days before)"))

    # 2. trading days and leap year, together
    td_open, ly_open = "trading_days" in settings, "leap_year" in settings
    td_cols = [c for c in base if c.startswith("trading[")]
    ly_cols = [c for c in base if c == "leap_year"]
    trading, leap = full.trading_days, full.leap_year
    if td_open or ly_open:
        scores = {}
        for td in (False, True) if td_open else (start.trading_days,):
            for ly in (False, True) if ly_open else (start.leap_year,):
                cols = [c for c in base if (td or c not in td_cols) and (ly or c not in ly_cols)]
                scores[(td, ly)] = score(X, cols + terms)
        trading, leap = min(scores, key=lambda k: scores[k])
        named = {k: _calendar_terms_name(*k) for k in scores}
        records.append(
            _record(
                "trading_days+leap_year",
                {named[k]: v for k, v in scores.items()},
                named[(trading, leap)],
                lik,
                "trading-day and leap-year columns",
            )
        )
    base = [c for c in base if (trading or c not in td_cols) and (leap or c not in ly_cols)]

    # 3. a drifting season (monthly, quarterly), with the chosen calendar columns
    drift_cols = [c for c in base if c.startswith("season_drift[")]
    drift = full.season_drift
    if "season_drift" in settings and drift_cols:
        fixed = [c for c in base if c not in drift_cols]
        scores = {"fixed": score(X, fixed + terms), "drifting": score(X, base + terms)}
        drift = min(scores, key=lambda k: scores[k]) == "drifting"
        records.append(_record("season_drift", scores, "drifting" if drift else "fixed", lik,
                               "seasonal pattern"))
        base = base if drift else fixed
    elif "season_drift" in settings:
        records.append({"setting": "season_drift", "chosen": "fixed", "candidates": [],
                        "reason": f"seasonal pattern: fixed; a drifting one is tried on {MIN_DRIFT_YEARS} "
                                  "years of history or more"})

    # 4. annual Fourier pairs
    order = full.fourier_order
    if "fourier_order" in settings:
        scores = {}
        for k in fourier_candidates(history.freq, int(history.values.notna().sum())):
            cols = [c for c in base if _harmonic(c) <= k]
            scores[k] = score(X, cols + terms)
        order = min(scores, key=lambda k: scores[k])
        records.append(_record("fourier_order", scores, order, lik, "annual Fourier pairs"))
    return Chosen(
        fourier_order=int(order),
        trading_days=bool(trading),
        leap_year=bool(leap),
        event_windows=windows,
        choices=records,
        season_drift=bool(drift),
    )


def _long_enough(history: Any) -> bool:
    """Whether the history has the values of :data:`MIN_DRIFT_YEARS` cycles (a drifting season is tried)."""
    return int(history.values.notna().sum()) >= MIN_DRIFT_YEARS * cycle_length(history.freq)


def _calendar_terms_name(trading: bool, leap: bool) -> str:
    return {
        (False, False): "neither",
        (True, False): "trading days",
        (False, True): "leap year",
        (True, True): "trading days + leap year",
    }[(trading, leap)]


def _harmonic(col: str) -> int:
    """The harmonic of an annual Fourier column (``sin(3)`` -> 3); 0 for any other column."""
    if col.startswith(("sin(", "cos(")):
        return int(col[4:].split(",")[0].rstrip(")"))
    return 0


def _merged(frame: pd.DataFrame, inp: Any) -> pd.DataFrame:
    """``frame`` (the design before borrowed lifts are added in) as the fit sees it (:func:`prepare`)."""
    if not inp.like_map:
        return frame
    out = frame.copy()
    for c, target in inp.like_map.items():
        if target in out.columns:
            out[target] = out[target] + out[c]
    return out


def _record(setting: str, scores: dict[Any, float], best: Any, lik: _Likelihood, what: str) -> dict[str, Any]:
    """One choice as model.json keeps it: the candidates' AICc and why the chosen one won."""
    ranked = sorted(scores, key=lambda v: scores[v])
    runner = ranked[1] if len(ranked) > 1 else None
    gap = f"; next {runner}: AICc {scores[runner] - scores[best]:+.1f}" if runner is not None else ""
    reason = f"{what}: {best}, lowest AICc of {', '.join(str(v) for v in scores)}{gap} ({lik.describe()})"
    if setting == "fourier_order" and best == max(scores) and len(scores) > 2:
        reason += (
            f"; {best} is the largest candidate tried (no shorter wave than {SHORTEST_WAVE_DAYS} days: "
            "the pairs draw the season, not single days), so the annual shape has sharper features than "
            "the pairs draw, often days of the year that are not in the calendar (e.g. the weeks around "
            "Christmas that are not public holidays): add them as events"
        )
    if setting == "fourier_order" and best != STAND_IN_FOURIER and STAND_IN_FOURIER in scores:
        reason += (
            f"; the former fixed {STAND_IN_FOURIER}: AICc {scores[STAND_IN_FOURIER] - scores[best]:+.1f}"
        )
    return {
        "setting": setting,
        "chosen": str(best),
        "reason": reason,
        "candidates": [{"value": str(v), "aicc": float(scores[v] - scores[best])} for v in scores],
    }


@dataclass
class _Likelihood:
    """The one likelihood every candidate is scored on: response, rows and error model fixed."""

    kind: str  # "gls" (Gaussian, AR(1) errors with phi fixed) or "poisson"
    y: np.ndarray  # model-scale response on the fit rows (prewhitened for "gls")
    rows: np.ndarray  # bool over the periods
    prev: np.ndarray  # for "gls": positions (within the fit rows) of each kept row's predecessor
    keep: np.ndarray  # for "gls": positions of the rows kept (those whose predecessor is a fit row)
    phi: float = 0.0
    offset: np.ndarray | None = None  # "poisson": log offset on the fit rows
    additive: Any = None  # the inputs, when the columns are scaled as the additive model's

    @classmethod
    def of(cls, inp: Any) -> _Likelihood:

        rows = inp.rows.copy()
        y_all = model_scale_response(inp).to_numpy(dtype=float)
        pos = np.flatnonzero(rows)
        if inp.transform == "count":
            return cls("poisson", y_all[pos], rows, pos, pos, offset=inp.offset.to_numpy()[pos])
        if inp.transform == "log":
            y_all = y_all - inp.offset.to_numpy(dtype=float)
        else:
            share = inp.design.open_share.to_numpy()
            y_all = y_all * np.where(share > 0, share, 1.0)
        follows = np.flatnonzero(np.diff(pos) == 1)  # consecutive fit rows: the AR(1) pairs
        lik = cls(
            "gls", y_all[pos], rows, follows, follows + 1, additive=inp if inp.transform == "none" else None
        )
        X = lik._matrix(inp.raw_X if not inp.like_map else _merged(inp.raw_X, inp), inp.fitted_cols)
        resid = lik.y - X @ np.linalg.lstsq(X, lik.y, rcond=None)[0]
        a, b = resid[lik.prev], resid[lik.keep]
        lik.phi = float(np.clip(a @ b / max(a @ a, 1e-300), -MAX_PHI, MAX_PHI)) if len(a) > 2 else 0.0
        return lik

    def _matrix(self, frame: pd.DataFrame, cols: list[str]) -> np.ndarray:
        if self.additive is not None:

            frame = additive_design(frame[cols], self.additive)
        return frame.loc[self.rows, cols].to_numpy(dtype=float)

    def aicc(self, frame: pd.DataFrame) -> float:
        """AICc of the columns of ``frame`` on this likelihood (k = the columns' rank, plus the variance)."""
        X = self._matrix(frame, list(frame.columns))
        if self.kind == "poisson":
            import statsmodels.api as sm

            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                res = sm.GLM(self.y, X, family=sm.families.Poisson(), offset=self.offset).fit()
            return aicc(float(res.llf), int(np.linalg.matrix_rank(X)), len(self.y))
        ys = self.y[self.keep] - self.phi * self.y[self.prev]
        Xs = X[self.keep] - self.phi * X[self.prev]
        beta, _, rank, _ = np.linalg.lstsq(Xs, ys, rcond=None)
        rss = float(np.sum((ys - Xs @ beta) ** 2))
        n = len(ys)
        loglik = -0.5 * n * (np.log(2 * np.pi * max(rss, 1e-300) / n) + 1.0)
        return aicc(loglik, int(rank) + 1, n)

    def describe(self) -> str:
        if self.kind == "poisson":
            return f"Poisson likelihood on the same {len(self.y)} periods"
        return (
            f"same response and {len(self.keep)} consecutive fit periods, Gaussian errors with AR(1) "
            f"coefficient {self.phi:.2f} fixed from the fullest candidate's residuals"
        )


#: the last few choices made, by the content they were made on (a fit prepares its inputs once per
#: pass, and a per-series unit reloads the calendar: the choice is made once)
_CHOSEN: OrderedDict[tuple[Any, ...], Chosen] = OrderedDict()
_CHOSEN_KEEP = 8


def chosen_settings(history: Any, calendar: Any, options: FitOptions, values: pd.Series | None = None
                    ) -> Chosen:
    """The settings the data choose for ``history`` (:func:`choose`), once per content.

    ``values`` (a panel's total) are chosen on instead of the history's own.
    """
    data = history.values if values is None else values
    # (the error model does not enter: every candidate is scored on the same likelihood of its own)
    content = (replace(options, errors="auto", arima_order=None), history.freq, str(data.index[0]), len(data),
               hashlib.sha1(np.ascontiguousarray(data.to_numpy(dtype=float))).hexdigest())

    def key(cal: Any) -> tuple[Any, ...]:
        return (*content, cal.text or id(cal), tuple((e.name, e.before, e.before_auto) for e in cal.events))

    found = _CHOSEN.get(key(calendar))
    if found is None:
        found = choose(history, calendar, options, seasonal_kind(options, history.freq), values)
        # the calendar with the chosen run-ups (what the fit goes on with) has made the same choice
        for cal in (calendar, with_windows(calendar, found.event_windows)):
            _CHOSEN[key(cal)] = found
        while len(_CHOSEN) > _CHOSEN_KEEP:
            _CHOSEN.popitem(last=False)
    return found
