"""One series' fitted model: the per-series estimators' path and the fields every fit result carries.

ARIMA errors, count models and the automatic choice among error models are
fitted one series at a time (:func:`fit_series`); series that share a design
and use OLS are solved in blocks (:mod:`evcal.engine.units`). Both end in a
:class:`~evcal.model.FitResult` built by :func:`new_result`, with its tables
from the one table builder (:func:`evcal.effects.block_tables`).
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np
import pandas as pd

from evcal.design.level import LEVEL_COLUMN
from evcal.effects import BlockTables, GroupInfo, SpanContext, block_tables
from evcal.model.estimators import interval_note
from evcal.model.identify import status_notes
from evcal.model.inputs import ModelInputs, average_share_profile, calendar_terms, calendar_text
from evcal.model.options import FitOptions
from evcal.model.passes import estimate_exact, ols_choice
from evcal.model.result import FitResult
from evcal.model.summary import last_full_year
from evcal.model.weekday_share import weekday_share_profile

__all__ = ["fit_series", "block_result"]


def fit_series(history: Any, calendar: Any, options: FitOptions, inp: ModelInputs | None = None,
               sid: int = 0) -> tuple[FitResult, BlockTables]:
    """Fit one series with the per-series estimators (OLS, ARIMA errors, count GLM or the AIC choice).

    ``inp`` is the series' prepared and checked inputs, when the caller has them.
    Returns the result and its block tables (``_sid`` = ``sid``), which a
    panel keeps as they are.
    """
    inp, est, choice = estimate_exact(history, calendar, options, inp)
    smear = 1.0
    if inp.transform == "log":  # the mean of exp(residuals), or the normal factor for ARIMA innovations
        arima = est.error_model.get("kind") == "arima"
        smear = float(np.exp(est.sigma2 / 2.0)) if arima else float(np.nanmean(np.exp(est.resid[inp.rows])))
    result = new_result(history, calendar, options, inp, params=est.params, cov=est.cov, sigma2=est.sigma2,
                        smear=smear, error_model=est.error_model,
                        model_choice={**choice, "covariance": est.cov_note, "transform": inp.transform})
    group = GroupInfo.of_result(result)
    raw_X, coefs = inp.raw_X, result.params
    if est.level is not None:  # differenced errors: the error's level is a base column with coefficient 1
        raw_X = raw_X.assign(**{LEVEL_COLUMN: est.level.to_numpy(dtype=float)})
        coefs = pd.concat([coefs, pd.Series({LEVEL_COLUMN: 1.0})])
        group = replace(group, fitted_cols=list(coefs.index),
                        base_columns=[*group.base_columns, LEVEL_COLUMN])
    ctx = SpanContext.build(raw_X, inp.design.open_share.to_numpy(dtype=float), calendar, inp.periods,
                            history.dates(inp.periods), inp.rows, result.status)
    params = coefs.to_numpy(dtype=float)[:, None]  # in group.fitted_cols' order
    term_cov = result.cov.reindex(index=group.term_cols, columns=group.term_cols).to_numpy(dtype=float)
    se = np.sqrt(np.clip(np.diag(term_cov), 0, None))[:, None]
    actual = inp.actual.to_numpy(dtype=float)[None, :]
    cov = result.cov

    def season_var(names: tuple[str, ...], C: np.ndarray) -> np.ndarray:
        sub = cov.reindex(index=list(names), columns=list(names)).fillna(0.0).to_numpy(dtype=float)
        return np.einsum("ri,ij,rj->r", C, sub, C)[None, :]

    tables = block_tables(ctx, group, params, se, np.array([smear]), actual, np.array([sid]),
                          season_var=season_var, cov=term_cov[None])
    adopt_tables(result, tables, inp)
    return result, tables


def block_result(history: Any, calendar: Any, options: FitOptions, inp: ModelInputs, model: Any) -> FitResult:
    """The :class:`FitResult` of a series solved in a block of one (``model``: its ``BlockModel``)."""
    note = interval_note(model.ar_order)
    choice = {**ols_choice(model.aic, note, options, len(inp.periods)), "covariance": note,
              "transform": inp.transform}
    result = new_result(history, calendar, options, inp, params=model.params, cov=model.cov,
                        sigma2=model.sigma2, smear=model.smear, error_model={"kind": "iid"},
                        model_choice=choice, spec=replace(model.group.info.spec, event_theta=model.theta),
                        status=model.group.info.status)
    adopt_tables(result, model.tables, inp)
    return result


def new_result(history: Any, calendar: Any, options: FitOptions, inp: ModelInputs, *, params: pd.Series,
               cov: pd.DataFrame, sigma2: float, smear: float, error_model: dict[str, Any],
               model_choice: dict[str, Any], spec: Any = None, status: dict[str, Any] | None = None,
               ) -> FitResult:
    """A :class:`FitResult` with its fitted state and what the history and calendar tell (no tables yet)."""
    periods = inp.periods
    roles = inp.design.roles
    spec = inp.spec if spec is None else spec
    return FitResult(
        options=options,
        spec=spec,
        transform=inp.transform,
        label=history.label,
        params=params,
        cov=cov,
        sigma2=sigma2,
        smear=smear,
        error_model=error_model,
        model_choice=model_choice,
        status=inp.status if status is None else status,
        like_map=inp.like_map,
        assumed=inp.assumed,
        base_columns=[c for c in inp.design.X.columns if roles[c] in ("trend", "seasonal")],
        calendar_text=calendar_text(calendar, None),
        calendar_name=calendar.name,
        history_start=str(periods[0]),
        history_end=str(periods[-1]),
        history_source=history.source,
        last_year=last_full_year(history.values, history.label),
        average_share={int(k): float(v) for k, v in average_share_profile(
            history.values.where(inp.rows), closed=inp.design.open_share.to_numpy() <= 1e-9).items()},
        weekday_share=weekday_share_profile(history.values.where(inp.rows),  # {} unless daily
                                            closed=inp.design.open_share.to_numpy() <= 1e-9),
        mean_base=0.0,
        **calendar_terms(calendar),
        _calendar=calendar,
    )


def adopt_tables(result: FitResult, tables: BlockTables, inp: ModelInputs) -> None:
    """Take one series' block tables into ``result`` (lifts, occurrences, profile, fitted, quality)."""
    result.lifts = _plain(tables.lifts).drop(columns=["_fitted"])
    _weak_from_lifts(result)
    result.occurrences = _plain(tables.occurrences)
    result.profile = _plain(tables.profile)
    result.fitted = _plain(tables.fitted[0])
    q = _plain(tables.quality)
    result.mean_base = float(q["mean_base"].iloc[0])
    model_fitted = result.fitted["fitted"].to_numpy()
    observed = inp.actual.where(inp.rows).to_numpy(dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        scale_resid = np.log(observed) - np.log(model_fitted / result.smear) if inp.transform == "log" \
            else observed - model_fitted
    result.residuals = pd.Series(scale_resid, index=inp.periods, name="residual")
    result.quality = {"periods_fitted": int(q["periods_fitted"].iloc[0]),
                      "wape_pct": float(q["wape_pct"].iloc[0]), "resid_sd": float(q["resid_sd"].iloc[0])}
    result.warnings += status_notes(result.status)


def _weak_from_lifts(result: FitResult) -> None:
    """Mark weak the fitted columns the lifts table grades weak by their interval (model.json and plans
    read the status; the rule is evcal.effects.wide.too_wide, applied where the intervals are made)."""
    weak = result.lifts.loc[result.lifts["identifiable"] == "weak", ["event", "note"]]
    for col, note in zip(weak["event"], weak["note"], strict=True):
        st = result.status.get(col)
        if st is not None and st.status == "fitted" and not st.weak:
            result.status = {**result.status, col: replace(st, weak=True, note=str(note))}


def _plain(table: Any) -> pd.DataFrame:
    """A block table of one series as a plain frame: no ``_sid``, text as text."""
    frame = table if isinstance(table, pd.DataFrame) else table.frame()
    frame = frame.drop(columns=["_sid"])
    text = [c for c in frame.columns if isinstance(frame[c].dtype, pd.CategoricalDtype)]
    return frame.astype({c: object for c in text}) if text else frame
