"""Fitting one series' model inputs: the error model, the degenerate-fit rule and the exact passes."""

from __future__ import annotations

import warnings
from collections.abc import Callable
from dataclasses import replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.base import period_days
from evcal.design.seasonal import base_freq
from evcal.design.weekdays import calendar_profile, trading_levels, weighted
from evcal.model.arima import Ranked, fit_arima, rank_arima
from evcal.model.choose import chosen_settings
from evcal.model.drift import DIFFERENCED, UNIT_ROOT_P, drift_evidence, kpss_p_text, stationarity_tests
from evcal.model.estimators import Estimate, fit_count, fit_ols
from evcal.model.fit_rows import check_fit_rows
from evcal.model.identify import MAX_LOG_LIFT, ColumnStatus, degenerate_note, degenerate_terms, seasonal_share
from evcal.model.inputs import ModelInputs, additive_design, model_scale_response, prepare
from evcal.model.options import FitOptions
from evcal.model.secant import Secant
from evcal.model.settings import Chosen

LONG_SERIES = 2000  # periods; above this `auto` keeps to OLS (robust intervals) for speed
#: passes of the exact-aggregation refit stop when no log-lift moves more than this
#: (1e-4 on the log scale is a hundredth of a percentage point: far inside any interval)
THETA_TOL = 1e-4
MAX_PASSES = 8


def estimate(inp: ModelInputs, options: FitOptions, start: Any = None) -> tuple[Estimate, dict[str, Any]]:
    """Fit the chosen (or automatically selected) error model.

    ``--errors auto`` ranks OLS, ARIMA(1,0,0) and ARIMA(1,0,1) by AIC without a
    likelihood search (:func:`evcal.model.arima.rank_arima`: Hannan–Rissanen
    estimates on the OLS residuals, one GLS step, the exact Gaussian
    likelihood) and fits only the chosen one exactly; the differenced
    candidates, when the drift tests call for them, the same way. ``start``
    (the ARMA parameters of an earlier pass with the same order) starts the
    exact fit of ``--errors arima``. Numerical warnings (overflow, division by
    zero) are not passed on: a degenerate fit is found from its numbers
    afterwards (:func:`flag_degenerate`) and reported as a note on the event.
    """
    with warnings.catch_warnings(), np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        warnings.simplefilter("ignore", RuntimeWarning)
        X = inp.design.X[inp.fitted_cols]
        y = model_scale_response(inp)
        if inp.transform == "count":
            est = fit_count(y, X, inp.offset)
            return est, {"chosen": est.method, "reason": est.cov_note, "candidates": [
                {"name": est.method, "criterion": "aic", "value": est.aic}]}
        if inp.transform == "none":
            X = additive_design(X, inp)
            share = inp.design.open_share.to_numpy()
            y = y * np.where(share > 0, share, 1.0)  # the open share scales the response as the rows
        offset = inp.offset if inp.transform == "log" else pd.Series(0.0, index=inp.periods)
        if options.errors == "arima":
            order = options.arima_order or (1, 0, 0)
            if order[1] >= 1 and "const" in X.columns:
                X = X.drop(columns=["const"])  # differenced errors leave the constant unidentified
            est = fit_arima(y, X, offset, order, start=start)
            return est, {"chosen": est.method, "reason": "asked for (--errors arima); " + est.cov_note,
                         "candidates": [{"name": est.method, "criterion": "aic", "value": est.aic}]}
        ols = fit_ols(y, X, offset)
        if ols_by_rule(options, 1, len(inp.periods)):
            return ols, ols_choice(ols.aic, ols.cov_note, options, len(inp.periods))
        best, table = ranked_choice(y, X, offset, STATIONARY, "aic", ols)
        reason = (f"lowest AIC among {', '.join(dict.fromkeys(c['name'] for c in table))} (same response, "
                  f"comparable Gaussian likelihoods; {RANKED})")
        tests = stationarity_tests(y - offset - X @ best.params, len(inp.periods), inp.periods.freqstr)
        if tests is None or (tests[0] < UNIT_ROOT_P and tests[1] >= UNIT_ROOT_P):
            if tests is not None:
                reason += (f"; its regression error is stationary (ADF with constant and trend: unit root "
                           f"rejected, p = {tests[0]:.3f}; KPSS: stationarity around the trend not "
                           f"rejected, p {kpss_p_text(tests[1])}), so the level is the trend's")
            return best, {"chosen": best.method, "reason": f"{reason}; {best.cov_note}", "candidates": table}
        # a drifting level: differenced errors (the level is then the error's, evcal.design.level)
        Xd = X.drop(columns=["const"]) if "const" in X.columns else X
        chosen, diffed = ranked_choice(y, Xd, offset, DIFFERENCED, "aic (differenced)")
        if chosen is None:
            return best, {"chosen": best.method, "reason": f"{reason}; {best.cov_note}", "candidates": table}
        table += diffed
        reason = (f"differenced errors: the regression error of {best.method} ({reason}) is not shown to be "
                  f"stationary around the trend ({drift_evidence(*tests)}), and a "
                  "drifting level left to a straight trend biases level shifts; AIC does not compare "
                  "models with and without differencing (different likelihood bases), so the tests decide; "
                  f"then lowest AIC among {', '.join(dict.fromkeys(c['name'] for c in diffed))} (ranked the "
                  f"same way); {chosen.cov_note}")
        return chosen, {"chosen": chosen.method, "reason": reason, "candidates": table}


#: the stationary error models ``--errors auto`` compares with OLS
STATIONARY = ((1, 0, 0), (1, 0, 1))
#: how the ARIMA candidates are ranked, as the reason says it
RANKED = ("ARIMA candidates ranked at Hannan-Rissanen and conditional least-squares estimates of their "
          "ARMA part on the OLS residuals, one GLS step each; the lowest fitted by exact likelihood, and the "
          "next in turn should it then fall behind")


def ranked_choice(y: pd.Series, X: pd.DataFrame, offset: pd.Series, orders: Any, criterion: str,
                   ols: Estimate | None = None) -> tuple[Estimate | None, list[dict[str, Any]]]:
    """The lowest-AIC model of ``orders`` (and ``ols``), fitted exactly; the table it was chosen on.

    ARIMA orders are ranked by :func:`evcal.model.arima.rank_arima`; an order it cannot rank
    (estimates not stationary or invertible) is fitted exactly and enters with its exact AIC. The
    lowest is fitted exactly and its exact AIC replaces its ranking's; should another candidate then
    be lower, that one is fitted (or taken) in turn, until the lowest is an exact fit. A ranking's
    AIC is at most a little above the exact one, so this is one exact fit unless the two disagree
    (a white-noise error, whose ARMA(1,1) likelihood is flat along cancelling roots, can rank an
    ARMA(1,1) on a ridge the likelihood search does not reach). The table has every ranking's AIC
    and the exact AIC of every model fitted exactly.
    """
    pool: list[tuple[float, str, Any]] = []  # (aic, name, Estimate or Ranked)
    table: list[dict[str, Any]] = []
    if ols is not None:
        pool.append((ols.aic, ols.method, ols))
        table.append({"name": ols.method, "criterion": "aic", "value": ols.aic})
    for r in rank_arima(y, X, offset, orders):
        if isinstance(r, Ranked):
            pool.append((r.aic, _name(r.order), r))
            table.append({"name": _name(r.order), "criterion": f"{criterion}, ranking", "value": r.aic})
            continue
        try:
            est = fit_arima(y, X, offset, r)
        except (np.linalg.LinAlgError, ValueError):
            continue
        pool.append((est.aic, est.method, est))
        table.append({"name": est.method, "criterion": criterion, "value": est.aic})
    while pool:
        i = min(range(len(pool)), key=lambda j: pool[j][0])
        _, name, top = pool[i]
        if isinstance(top, Estimate):
            return top, table
        try:
            est = fit_arima(y, X, offset, top.order, start=top.start)
        except (np.linalg.LinAlgError, ValueError):
            pool.pop(i)
            continue
        pool[i] = (est.aic, name, est)
        table.append({"name": name, "criterion": f"{criterion}, exact fit", "value": est.aic})
    return None, table


def _name(order: tuple[int, int, int]) -> str:
    return "arima({},{},{})".format(*order)


def ols_by_rule(options: FitOptions, n_series: int, n_periods: int) -> bool:
    """Whether the error model is OLS (robust intervals), with no choice of error model (solved in blocks).

    ``--errors ols`` asks for it. ``--errors auto`` chooses by AIC among OLS and
    ARIMA(1,0,0)/(1,0,1) errors, except for a panel (a state-space fit per series)
    and for a series longer than :data:`LONG_SERIES` periods. ARIMA errors and
    count models are fitted one series at a time.
    """
    return options.errors == "ols" or (options.errors == "auto" and (n_series > 1 or n_periods > LONG_SERIES))


def ols_choice(aic: float, cov_note: str, options: FitOptions, n_periods: int) -> dict[str, Any]:
    """Why OLS with robust intervals was the error model: asked for, or ``auto`` on a long series."""
    if options.errors == "ols":
        reason = "asked for (--errors ols); " + cov_note
    else:
        reason = (f"long series ({n_periods} periods): OLS, whose intervals stay valid under "
                  f"autocorrelated errors and keep the fit fast; {cov_note}")
    return {"chosen": "ols", "reason": reason,
            "candidates": [{"name": "ols", "criterion": "aic", "value": aic}]}


def flag_degenerate(inp: ModelInputs, est: Estimate, freq: str) -> dict[str, str]:
    """Fitted event and intervention columns whose estimate is a breakdown; column -> note.

    The rule is :func:`evcal.model.identify.degenerate_terms`; the note says
    why (the event sits in the same period every year, or the history cannot
    pin it down) and what to do.
    """
    roles = inp.design.roles
    terms = [c for c in inp.fitted_cols if roles.get(c) in ("event", "intervention")]
    if not terms:
        return {}
    se = pd.Series(np.sqrt(np.clip(np.diag(est.cov.to_numpy(dtype=float)), 0, None)), index=est.cov.index)
    level = 1.0
    if inp.transform == "none":
        y = model_scale_response(inp).to_numpy(dtype=float)
        level = float(np.nanmean(np.abs(y))) if np.isfinite(y).any() else 1.0
    seen = degenerate_terms(est.params, se, terms, inp.transform, level)
    base_cols = [c for c in inp.fitted_cols if roles.get(c) in ("trend", "seasonal")]
    bound = -MAX_LOG_LIFT if inp.transform != "none" else -level
    return {c: degenerate_note(what, seasonal_share(inp.design.X, inp.rows, base_cols, c),
                               base_freq(freq), roles.get(c, "event"), nil=float(est.params[c]) < bound)
            for c, what in seen.items()}


def exact_passes(transform: str, freq: str) -> bool:
    """Whether the event columns aggregate the fitted daily lifts exactly: log-link models of longer periods.

    Daily data need no second pass (each period is one day); additive models keep the linear columns.
    """
    return transform != "none" and base_freq(freq) != "D"


def theta_sources(status: dict[str, ColumnStatus], roles: dict[str, str], like_map: dict[str, str],
                  fitted: Any) -> dict[str, str]:
    """Event column -> fitted column whose coefficient is its log-lift θ (its own, the borrowed, its twin).

    A duplicate is shaped like its twin, so the two stay recognisably the same column.
    """
    sources: dict[str, str] = {}
    for col, st in status.items():
        source = {"fitted": col, "like": like_map.get(col), "duplicate": st.twin}.get(st.status)
        if roles.get(col) == "event" and source in fitted:
            sources[col] = source
    return sources


def theta_moved(new: dict[str, Any], old: dict[str, Any]) -> Any:
    """How far the log-lifts moved in a pass (a column missing from one side counts as 0)."""
    return np.max([np.abs(np.asarray(new.get(k, 0.0)) - old.get(k, 0.0)) for k in new | old], axis=0,
                  initial=0.0)


def fitted_theta(inp: ModelInputs, est: Estimate) -> dict[str, float]:
    """Log-lift of each event column after a pass: fitted, borrowed (like), duplicate and assumed."""
    sources = theta_sources(inp.status, inp.design.roles, inp.like_map, est.params.index)
    theta: dict[str, float] = {}
    for col, st in inp.status.items():
        if col in sources:
            theta[col] = float(est.params[sources[col]])
        elif st.status == "assumed":
            theta[col] = float(np.log1p(inp.assumed[col]))
    return theta


def beyond_days(theta0: np.ndarray, linear: np.ndarray, floor: np.ndarray) -> np.ndarray:
    """Series whose first (share-of-window) pass asks an event's periods for a bigger dip than its days hold.

    ``theta0`` (m,) are the first-pass log-lifts, ``linear`` (n,) the event's
    column at θ = 0 on the fit rows and ``floor`` (n,) the lowest log-effect each
    of those periods can have (:meth:`evcal.design.curved.CurvedEvents.floor`).
    The first pass says the periods the event touches fall by ``θ0 Σ x_p`` on
    the log scale in all; removing every one of the event's days would take
    ``Σ log(1 − s_p)``. When the first is lower, no lift on the event's days
    explains the dip (the days around it fall too), and the exact passes would
    run towards −100 % with an interval of no width: the rule stops them first.
    A window that covers a whole period can explain any dip.

    Examples
    --------
    >>> s = np.array([1 / 7, 1 / 7])  # a one-day event in two weeks (flat weekdays)
    >>> beyond_days(np.array([-0.9, -1.2, 0.5]), s, np.log1p(-s)).tolist()
    [False, True, False]
    """
    theta0 = np.atleast_1d(np.asarray(theta0, dtype=float))
    touched = np.asarray(linear) != 0
    most = float(np.sum(np.asarray(floor)[touched]))
    if not touched.any() or not np.isfinite(most):
        return np.zeros(theta0.shape, dtype=bool)
    asked = theta0 * float(np.sum(np.asarray(linear)[touched]))
    return (theta0 < 0) & (asked < most)


def beyond_days_note(calendar: Any, col: str, asked: float | None = None, most: float | None = None) -> str:
    """The note of a lift stopped by :func:`beyond_days`: what was seen and the window that would fit."""
    ev = calendar.event(calendar.event_columns().get(col, col))
    before, after = int(getattr(ev, "before", 0)), int(getattr(ev, "after", 0))
    days = int(getattr(ev, "length", 1)) + before + after
    window = "one-day window" if days == 1 else f"{days}-day window"
    seen = ""
    if asked is not None and most is not None:
        seen = (f" (the periods that hold it fall by {100 * -np.expm1(asked):.0f} % on average; removing "
                f"every day of its window would take {100 * -np.expm1(most):.0f} %)")
    return (f"the dip is larger than a {window} explains{seen}: this is the share-of-window figure, not a "
            f"lift on the event's days, and is weakly identified; widen the window, e.g. before: "
            f"{before + 1} / after: {after + 2}, or fit daily data")


def _stopped_events(inp: ModelInputs, est: Estimate, calendar: Any) -> dict[str, str]:
    """Fitted event columns of the first pass that :func:`beyond_days` stops; column -> note."""
    from evcal.design.curved import CurvedEvents

    cols = [c for c in inp.fitted_cols if inp.design.roles.get(c) == "event"
            and inp.status.get(c, ColumnStatus("")).status == "fitted" and float(est.params[c]) < 0]
    if not cols:
        return {}
    curve = CurvedEvents(calendar, cols, inp.periods)
    out = {}
    for c in cols:
        linear = inp.design.X[c].to_numpy(dtype=float)[inp.rows]
        floor = curve.floor(c)[inp.rows]
        theta0 = float(est.params[c])
        if beyond_days(np.array([theta0]), linear, floor)[0]:
            touched = linear != 0  # per period that holds some of the window, on average
            out[c] = beyond_days_note(calendar, c, theta0 * float(linear[touched].mean()),
                                      float(floor[touched].mean()))
    return out


def joint_twins(status: dict[str, ColumnStatus], roles: dict[str, str],
                column: Callable[[str], np.ndarray]) -> dict[str, list[str]]:
    """Fitted event column -> its duplicates on other days of the same periods (``column``: at θ = 0).

    Such a coefficient is the joint effect of both events read on one event's days (a 2-day Easter
    weekend carrying Good Friday in monthly data): the exact passes would ask those days alone for
    the joint dip and run away, so the share-of-window figure is kept (:func:`joint_note`). A
    duplicate on the same days (an equal column) has nothing to add: its twin's lift is exact.
    """
    joint: dict[str, list[str]] = {}
    for d, st in status.items():
        twin = st.twin if st.status == "duplicate" else ""
        if getattr(status.get(twin), "status", "") != "fitted" or roles.get(twin) != "event":
            continue
        if not np.allclose(column(twin), column(d), rtol=1e-9, atol=1e-12):
            joint.setdefault(twin, []).append(d)
    return joint


def joint_note(calendar: Any, col: str, others: list[str]) -> str:
    """The note of a lift that carries a duplicate on other days (:func:`joint_twins`)."""
    names = calendar.event_columns()
    return (f"the estimate carries {', '.join(names.get(d, d) for d in others)} too (always in the same "
            f"periods, on other days): it is the share-of-window figure of their joint effect read on "
            f"{names.get(col, col)}'s days, not a lift on those days, and is weakly identified; merge the "
            "events into one window to get a lift on their days, or fit daily data")


def estimate_exact(history: Any, calendar: Any, options: FitOptions, inp: ModelInputs | None = None
                   ) -> tuple[ModelInputs, Estimate, dict]:
    """Fit, then refit with event columns that aggregate the fitted daily lifts exactly.

    Where :func:`exact_passes` says so, the log-lifts from one pass set the columns of the next, until
    they settle (:func:`theta_moved` below :data:`THETA_TOL`, at most
    :data:`MAX_PASSES`; the batched passes of :mod:`evcal.engine.refine` stop
    by the same rule).

    After every pass, columns whose estimate is a breakdown rather than a lift
    (:func:`flag_degenerate`) are left out and the pass is fitted again
    without them; a pass whose lifts run away (a period asking for a bigger
    change than the event's days can make) is caught the same way.
    ``inp`` is the first pass's inputs when the caller has prepared (and checked) them.
    """
    chosen = chosen_settings(history, calendar, options)  # made once per content (cached)
    if inp is None:
        inp = prepare(history, calendar, options, chosen=chosen)
        check_fit_rows(inp, calendar, history)
    dropped: dict[str, str] = {}
    inp, est, choice = _fit_flagged(history, calendar, options, None, dropped, chosen, inp)
    if not exact_passes(inp.transform, history.freq):
        return inp, est, choice
    # a lift whose periods fall by more than its days hold keeps its share-of-window column (θ = 0)
    stopped = _stopped_events(inp, est, calendar)
    joint = joint_twins(inp.status, inp.design.roles,
                        lambda c: inp.design.X[c].to_numpy(dtype=float)[inp.rows])
    stopped.update({c: joint_note(calendar, c, d) for c, d in joint.items() if c not in stopped})
    theta = _free(fitted_theta(inp, est), inp, stopped)
    # without a calendar profile, the trading-day coefficients weigh the days (a fixed point with θ)
    levels = trading_weights(inp, est, calendar)
    used = None  # the weekday levels the current pass's design was built with (None: the calendar's)
    if levels is not None:
        # Identification is judged on the first pass's (flat) columns: weights move a fixed-date
        # holiday's monthly column only by the weekday it falls on, which would make an event that
        # is always in the same month look identified. An event left to the season stays there.
        dropped.update({c: st.note for c, st in inp.status.items()
                        if inp.design.roles.get(c) == "event" and st.status == "unidentifiable"})
    # later passes keep the error model the first pass chose (and its reasons)
    if est.method == "ols":
        fixed = replace(options, errors="ols")
    elif est.method.startswith("arima"):
        fixed = replace(options, errors="arima", arima_order=tuple(est.error_model["order"]))
    else:
        fixed = options
    # every model's passes take the secant step; OLS series take the same one in the batched passes of
    # evcal.engine.refine (evcal.model.secant.secant_step), so a series gives the same fit on either path
    mixer: Secant | None = Secant()
    plain: tuple[dict[str, float], list[float] | None] | None = None  # the last pass's own output
    for _ in range(MAX_PASSES):
        if not theta and levels is None:
            break
        trial = dict(dropped)
        pass_calendar = calendar if levels is None else weighted(calendar, {"levels": levels})
        # the error model's order is kept; its likelihood search starts where the last pass ended
        start = est.error_model.get("arma_params") or None
        inp_next, est_next, _ = _fit_flagged(history, pass_calendar, fixed, theta, trial, chosen, start=start)
        # a column the previous pass did not fit (left to the season there) can break down once the
        # weekday weights move its periods' values a little off the season's: it stays out, the pass holds
        ran_away = [c for c in trial if c not in dropped and c in theta]
        if ran_away and plain is not None:
            # the pass started from an accelerated point: go on from the last pass's own output instead,
            # unaccelerated, so a lift is only stopped where the plain passes would stop it
            (theta, levels), plain, mixer = plain, None, None
            continue
        dropped.update({c: note for c, note in trial.items() if c not in theta})
        if ran_away:
            # A lift that was sound in the previous pass breaks down once its column follows
            # the fitted daily lift exactly: its periods moved more than the event's days alone
            # can make them move (a window too short for what happens around the event). Keep
            # the previous pass, whose share-of-window estimate is finite and fits the periods
            # (dropping the event would push a moving holiday into the seasonal index), and say so.
            stopped.update({c: beyond_days_note(calendar, c) for c in ran_away if c not in stopped})
            break
        inp, est, used = inp_next, est_next, levels
        new = _free(fitted_theta(inp, est), inp, stopped)
        moved = theta_moved(new, theta)
        new_levels = None
        if levels is not None:
            new_levels = trading_weights(inp, est, calendar) or levels
            moved = max(float(moved), float(np.max(np.abs(np.subtract(new_levels, levels)))))
        if moved < THETA_TOL:
            break
        if mixer is not None:
            mixed = mixer.next(theta, levels, new, new_levels)
            plain = (new, new_levels) if mixed is not None else None
            theta, levels = mixed or (new, new_levels)
        else:
            theta, levels = new, new_levels
    if used is not None:
        inp.spec = replace(inp.spec, weekday_weights={"source": "trading_days", "levels": list(used)})
    for c, note in stopped.items():
        st = inp.status.get(c)
        if st is not None and st.status == "fitted":
            # a share-of-window figure, not a lift on the event's days: weak, keeping the strength checks
            inp.status[c] = replace(st, note=f"{note}; {st.note}" if st.note else note, weak=True)
    return inp, est, choice


def trading_weights(inp: ModelInputs, est: Estimate, calendar: Any) -> list[float] | None:
    """Weekday levels from a pass's trading-day coefficients, when they weigh the days (else None).

    They do for a log-scale (or count) fit of monthly or quarterly data with
    trading-day columns, when the calendar gives no ``weekday_profile`` (a
    profile given wins: :func:`evcal.design.weekdays.trading_levels`).
    """
    if calendar_profile(calendar) is not None or inp.transform == "none":
        return None
    return trading_levels(est.params, float(np.mean(period_days(inp.periods[inp.rows]))))


def _free(theta: dict[str, float], inp: ModelInputs, stopped: dict[str, str]) -> dict[str, float]:
    """``theta`` without the stopped lifts and the columns that take theirs (like, duplicate)."""
    if not stopped:
        return theta
    sources = theta_sources(inp.status, inp.design.roles, inp.like_map, inp.fitted_cols)
    return {c: v for c, v in theta.items() if c not in stopped and sources.get(c) not in stopped}


def _fit_flagged(history: Any, calendar: Any, options: FitOptions, theta: dict[str, float] | None,
                 dropped: dict[str, str], chosen: Chosen, inp: ModelInputs | None = None, start: Any = None,
                 ) -> tuple[ModelInputs, Estimate, dict[str, Any]]:
    """One pass: fit, leave out the columns :func:`flag_degenerate` flags (collected in ``dropped``), refit.

    ``start``: the ARMA parameters the exact fit of ``--errors arima`` starts from (:func:`estimate`).

    Each round leaves out at least one more column, so it ends.
    """
    while True:
        if inp is None:
            inp = prepare(history, calendar, options, theta=theta, degenerate=dropped, chosen=chosen)
        est, choice = estimate(inp, options, start)
        flagged = flag_degenerate(inp, est, history.freq)
        if not flagged:
            return inp, est, choice
        dropped.update(flagged)
        inp = None
