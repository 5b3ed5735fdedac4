"""Fit step: history + calendar -> fitted model with lifts, occurrences, profile.

Examples
--------
>>> import evcal                                     # doctest: +SKIP
>>> res = evcal.fit("demo/fernhollow-history.csv",   # doctest: +SKIP
...                 "demo/fernhollow-calendar.yaml")
>>> res.lifts[["event", "lift_pct", "low_pct", "high_pct"]]  # doctest: +SKIP
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.design.seasonal import cycle_length
from evcal.effects import GroupInfo, SpanContext, block_tables
from evcal.fit.model import (
    average_share_profile,
    calendar_text,
    check_history_length,
    estimate_exact,
    load_calendar_any,
    term_info,
)
from evcal.fit.options import FitOptions
from evcal.fit.result import FitResult, load_model

__all__ = ["fit", "FitResult", "FitOptions", "load_model"]


def _read(history: Any, date_col: str, value_col: str, freq: str | None, allow_negative: bool) -> Any:
    from evcal.io import History, read_history

    if isinstance(history, History):
        return history
    return read_history(history, date_col=date_col, value_col=value_col, freq=freq,
                        allow_negative=allow_negative)


def fit(history: Any, calendar: Any = None, *, date_col: str = "date", value_col: str = "value",
        freq: str | None = None, **options: Any) -> FitResult:
    """Fit base, event lifts and interventions to a history.

    Parameters
    ----------
    history : path, DataFrame or evcal.io.History
        The series (see :func:`evcal.io.read_history`).
    calendar : path, YAML text, Calendar or None
        The event calendar.
    date_col, value_col, freq
        Passed to :func:`evcal.io.read_history`.
    **options
        :class:`FitOptions` fields: ``transform``, ``errors``, ``arima_order``,
        ``seasonal``, ``fourier_order``, ``trend_order``, ``trading_days``,
        ``allow_negative``.

    Returns
    -------
    FitResult
    """
    opts = FitOptions(**options)
    hist = _read(history, date_col, value_col, freq, opts.allow_negative)
    cal = load_calendar_any(calendar)
    check_history_length(hist)
    inp, est, choice = estimate_exact(hist, cal, opts)

    periods = inp.periods
    X = inp.design.X
    params = est.params
    rows = inp.rows
    resid = est.resid
    if inp.transform != "none" and est.error_model.get("kind") != "arima":
        smear = float(np.nanmean(np.exp(resid[rows]))) if inp.transform == "log" else 1.0
    elif inp.transform == "log":
        smear = float(np.exp(est.sigma2 / 2.0))
    else:
        smear = 1.0
    event_info = term_info(cal)
    closure_events = [e.name for e in cal.events if e.effect.kind == "zero"]
    last_full = _last_full_year(hist.values)
    result = FitResult(
        options=opts,
        spec=inp.spec,
        transform=inp.transform,
        label=hist.label,
        params=params,
        cov=est.cov,
        sigma2=est.sigma2,
        smear=smear,
        error_model=est.error_model,
        model_choice={**choice, "covariance": est.cov_note, "transform": inp.transform},
        status=inp.status,
        like_map=inp.like_map,
        assumed=inp.assumed,
        base_columns=[c for c in X.columns if inp.design.roles[c] in ("trend", "seasonal")],
        intervention_names=[t["name"] for t in inp.spec.interventions],
        closure_events=closure_events,
        event_info=event_info,
        event_labels={e.name: e.label for e in cal.events},
        calendar_text=calendar_text(cal, calendar),
        calendar_name=cal.name,
        history_start=str(periods[0]),
        history_end=str(periods[-1]),
        history_source=hist.source,
        last_year=last_full,
        average_share={int(k): float(v) for k, v in average_share_profile(
            hist.values.where(rows), closed=inp.design.open_share.to_numpy() <= 1e-9).items()},
        mean_base=0.0,
        exclusions=[{"start": pd.Timestamp(e.start).date().isoformat(),
                     "end": pd.Timestamp(e.end).date().isoformat(), "reason": e.reason}
                    for e in cal.exclusions],
        warnings=list(inp.notes),
        _open_share=inp.design.open_share.to_numpy(),
        _calendar=cal,
    )
    fill_tables(result, cal, inp, hist)
    return result


def fill_tables(result: FitResult, calendar: Any, inp: Any, history: Any) -> None:
    """Fill ``result.fitted``, ``.occurrences``, ``.lifts``, ``.profile``, ``.residuals``, ``.quality``.

    The tables come from the block builder (:func:`evcal.effects.block_tables`)
    with a block of one series: the same code as every series of a panel.
    """
    periods = inp.periods
    ctx = SpanContext.build(inp.raw_X, inp.design.open_share.to_numpy(dtype=float), calendar, periods,
                            history.dates(periods), inp.rows, result.status)
    group = GroupInfo.of_result(result)
    params = result.params.reindex(group.fitted_cols).to_numpy(dtype=float)[:, None]
    se = np.sqrt(np.clip(np.diag(result.cov.reindex(index=group.term_cols, columns=group.term_cols)
                                 .to_numpy(dtype=float)), 0, None))[:, None]
    actual = inp.actual.to_numpy(dtype=float)[None, :]
    tables = block_tables(ctx, group, params, se, np.array([result.smear]), actual, np.zeros(1, dtype=int))
    result.lifts = _plain(tables.lifts).drop(columns=["_fitted"])
    result.occurrences = _plain(tables.occurrences)
    result.profile = _plain(tables.profile)
    fitted = _plain(tables.fitted[0])
    result.fitted = fitted
    q = tables.quality
    result.mean_base = float(q["mean_base"][0])
    model_fitted = fitted["fitted"].to_numpy()
    observed = inp.actual.where(inp.rows).to_numpy(dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        scale_resid = np.log(observed) - np.log(model_fitted / result.smear) if inp.transform == "log" \
            else observed - model_fitted
    result.residuals = pd.Series(scale_resid, index=periods, name="residual")
    result.quality = {"periods_fitted": int(q["periods_fitted"][0]), "wape_pct": float(q["wape_pct"][0]),
                      "resid_sd": float(q["resid_sd"][0])}
    for c, st in result.status.items():
        if st.status in ("unidentifiable", "duplicate"):
            result.warnings.append(f"{c}: {st.note}")
        elif st.status == "no_history":
            result.warnings.append(f"{c}: no occurrence in the history; listed, not fitted")


def _plain(table: Any) -> pd.DataFrame:
    """A block table of one series as a plain frame: no ``_sid``, text as text."""
    frame = table.frame().drop(columns=["_sid"])
    text = [c for c in frame.columns if isinstance(frame[c].dtype, pd.CategoricalDtype)]
    return frame.astype({c: object for c in text}) if text else frame


def _last_full_year(values: pd.Series) -> dict[str, Any]:
    periods = values.index
    p = cycle_length(periods.freqstr)
    years = periods.start_time.year
    counts = pd.Series(values.notna().to_numpy(), index=years).groupby(level=0).sum()
    full = [int(y) for y, n in counts.items() if n >= p]
    if not full:
        return {}
    y = max(full)
    return {"year": y, "total": float(values[years == y].sum())}


from evcal._callable import make_module_callable  # noqa: E402

make_module_callable(__name__, "fit")
