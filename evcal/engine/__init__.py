"""The engine: one fit for a ``periods × series`` block; a single series is a block of one.

Examples
--------
>>> import evcal                                     # doctest: +SKIP
>>> res = evcal.fit("evcal/data/demo/fernhollow-history.csv",   # doctest: +SKIP
...                 "evcal/data/demo/fernhollow-calendar.yaml")
>>> res.lifts[["event", "lift_pct", "low_pct", "high_pct"]]  # doctest: +SKIP
"""

from __future__ import annotations

from typing import Any

from evcal.calendar.datefile import history_notes
from evcal.engine.run import PanelFit, fit_long_panel
from evcal.engine.series import block_result
from evcal.model.choose import chosen_settings
from evcal.model.fit_rows import check_fit_rows, check_history_length
from evcal.model.inputs import load_calendar_any, prepare
from evcal.model.options import FitOptions
from evcal.model.result import FitResult
from evcal.threads import held_blas

__all__ = ["fit", "fit_long_panel", "PanelFit"]


def fit(history: Any, calendar: Any = None, *, date_col: str = "date", value_col: str = "value",
        freq: str | None = None, drivers: Any = None, **options: Any) -> FitResult:
    """Fit base, event lifts and interventions to a history.

    The series is fitted by the same engine as every series of a panel (a
    panel of one): OLS in a block of one, or the per-series estimators (ARIMA
    errors, count models, the automatic choice by AIC).

    Parameters
    ----------
    history : path, DataFrame or evcal.io.History
        The series (see :func:`evcal.io.read_history`).
    calendar : path, YAML text, Calendar or None
        The event calendar.
    date_col, value_col, freq
        Passed to :func:`evcal.io.read_history`.
    drivers : sequence of str, optional
        Outside drivers (``NAME`` or ``NAME:log``) besides the calendar's ``drivers:``; these win
        (``--driver``). Not used when ``history`` is a History already.
    **options
        :class:`~evcal.model.FitOptions` fields: ``transform``, ``errors``, ``arima_order``,
        ``seasonal``, ``fourier_order``, ``trend_order``, ``trading_days``,
        ``allow_negative``.

    Returns
    -------
    FitResult
    """
    from evcal.io.panel import Panel
    from evcal.io.reader import history_for

    opts = FitOptions(**options)
    cal = load_calendar_any(calendar)
    hist = history_for(history, cal, drivers, date_col=date_col, value_col=value_col, freq=freq,
                       allow_negative=opts.allow_negative)
    check_history_length(hist)
    # the design's width before it is built, at most: a seasonal term per period of the year (daily
    # data: Fourier pairs and weekdays), the calendar's columns, trend and trading days
    width = min(hist.periods_per_year, 60) + len(cal.event_columns()) + 12
    with held_blas(len(hist.values), width):
        inp = prepare(hist, cal, opts, chosen=chosen_settings(hist, cal, opts))
        cal = inp.spec.calendar(cal)  # with the run-ups the data chose for `before: auto` events
        short = check_fit_rows(inp, cal, hist)  # the warning line when exclusions leave under two full cycles
        block = fit_long_panel(Panel.of_history(hist), cal, opts, single=inp)
        model = block.models[0]
        result = model if isinstance(model, FitResult) else block_result(hist, cal, opts, inp, model)
    if short:
        result.warnings.insert(0, short)
    # date files whose rows stop inside the history: those periods were fitted as if no event happened
    result.warnings += history_notes(cal, hist.values.index[0].start_time.date(),
                                     hist.values.index[-1].end_time.date())
    return result
