"""Panel step: many series (product × location) with one calendar, fitted at once.

``evcal fit history.parquet --series-col product,store --calendar cal.yaml --out m``
fits every series of a long file. Series that share a design are solved
together (one QR factorisation, every series a right-hand side, robust standard
errors for all at once: :mod:`evcal.engine.batched`); ARIMA errors and count
models run the single-series fit per series. Each event's lift is also
partially pooled across the series of a group (:mod:`evcal.panel.pooling`),
roll-ups fit any level of the keys (:mod:`evcal.panel.rollup`) and the work can
run on a Dask cluster (:mod:`evcal.panel.distributed`). Every series is either
fitted or listed in ``skipped.csv`` with its reason.

Examples
--------
>>> from evcal.panel import fit_panel, load_panel                     # doctest: +SKIP
>>> res = fit_panel("sales.parquet", "calendar.yaml", ["product", "store"],
...                 group_col="family", out="models/panel")          # doctest: +SKIP
>>> res.lifts[["product", "store", "event", "lift_pct", "pooled_pct"]]  # doctest: +SKIP
>>> one = res.series_result({"product": "P1", "store": "S1"})        # doctest: +SKIP
>>> make_plan(one, "2027-01-01", "2027-12-31")                             # doctest: +SKIP
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from evcal.panel.planning import plan_panel
from evcal.panel.result import PanelResult, is_panel_dir, load_panel

__all__ = ["fit_panel", "PanelResult", "load_panel", "is_panel_dir", "plan_panel"]


def refuse_drivers(option: str, source: str | None = None) -> None:
    """One line: outside drivers given to a panel (fitted for single series only so far).

    ``option`` names where they came from (``--driver``, ``--drivers``, ``--compare-drivers``, or
    ``drivers:`` of the calendar file ``source``), in front of the line and in its advice. The one
    wording of the panel fit (Python and CLI) and the panel plan.
    """
    from evcal.errors import EvcalError

    where = f"{source}: {option.rstrip(':')}" if source else option  # the calendar's key: "cal.yaml: drivers"
    raise EvcalError(f"{where}: outside drivers are fitted for a single series only so far, not for a "
                     f"panel; fit each series alone, or leave {option} out for the panel")


def fit_panel(history: Any, calendar: Any = None, series_cols: list[str] | str | None = None, *,
              date_col: str = "date", value_col: str = "value", freq: str | None = None,
              level: list[str] | str | None = None, group_col: str | None = None,
              workers: int | None = None, scheduler: str | None = None, progress: bool | None = None,
              out: str | Path | None = None, **options: Any) -> PanelResult:
    """Fit every series of a long table with a shared calendar.

    Parameters
    ----------
    history : path or DataFrame
        Long table: key columns, a date column, a value column (Parquet, CSV, .xlsx).
    calendar : path, YAML text, Calendar or None
        The event calendar shared by every series.
    series_cols : list of str or "a,b"
        Key columns; each distinct combination is one series.
    date_col, value_col, freq
        As for :func:`evcal.fit`.
    level : list of str or "a,b", optional
        Add the series up to these columns first (a roll-up) and fit those. The grand total
        (``total``) is one series: :func:`evcal.panel.total.fit_total` fits it.
    group_col : str, optional
        Column naming each series' pooling group (e.g. ``family``); one group when omitted.
    workers, scheduler : optional
        Run on a local Dask cluster of ``workers`` processes, or on the cluster at ``scheduler``.
    progress : bool, optional
        Progress bar on stderr (default: only when stderr is a terminal).
    out : path, optional
        Write the panel folder there (atomically; the fitted rows are streamed
        to ``fitted.parquet`` instead of being kept in memory).
    **options
        :class:`evcal.model.FitOptions` fields. ``errors="auto"`` means OLS with
        robust intervals for a panel (the batched solver); ``errors="arima"``
        fits regression with ARIMA errors series by series.

    Returns
    -------
    PanelResult
    """
    from threadpoolctl import threadpool_limits

    from evcal._files import atomic_dir
    from evcal.engine.memory import arrow_on_system_heap
    from evcal.model.options import FitOptions
    from evcal.panel.build import FittedWriter, build_result, read_for_panel
    from evcal.panel.distributed import make_runner
    from evcal.panel.total import TOTAL, is_total

    if is_total(level):  # one series, not a panel: its own function, its own folder kind
        from evcal.errors import EvcalError
        from evcal.spelling import option

        raise EvcalError(f"{option('level', TOTAL)}: the grand total is one series; fit it with "
                         "evcal.panel.total.fit_total (a one-series model)")
    opts = FitOptions(**options)
    # the matrices are small: one BLAS thread each, the cores go to the units instead; pyarrow
    # and numpy share one heap, so the pages one frees the other reuses (evcal.engine.memory); a Dask
    # cluster starts meanwhile and is shut down, its processes ended, when the block ends
    with make_runner(workers, scheduler, progress) as runner, threadpool_limits(limits=1), \
            arrow_on_system_heap():
        panel, keys, levels, cal = read_for_panel(history, series_cols, date_col, value_col, freq, level,
                                                  group_col, meanwhile=lambda: _ready_to_fit(calendar))
        from evcal.engine.run import fit_long_panel  # imported by _ready_to_fit while the file was read

        if getattr(cal, "drivers", None):
            refuse_drivers("drivers:", cal.source)

        if out is None:
            fitted = fit_long_panel(panel, cal, opts, runner=runner)
            runner.release()
            return build_result(fitted, keys, levels, group_col, date_col, value_col, None)
        out = Path(out)
        with atomic_dir(out, kind="panel") as tmp:
            writer = FittedWriter(tmp / "fitted.parquet", panel)
            try:
                fitted = fit_long_panel(panel, cal, opts, runner=runner, on_fitted=writer.write)
                runner.release()  # a Dask cluster shuts down while the tables are written
                # the writer's thread finishes the fitted rows while the other tables are built and
                # written (none of them reads fitted.parquet)
                result = build_result(fitted, keys, levels, group_col, date_col, value_col,
                                      tmp / "fitted.parquet")
                result.write_into(tmp)
            finally:
                writer.close()
    result.fitted_path = out / "fitted.parquet"
    return result


def _ready_to_fit(calendar: Any) -> Any:
    """The calendar loaded and the fitting modules imported (done while the file is read)."""
    import importlib

    from evcal.model.inputs import load_calendar_any

    for name in ("evcal.engine.run", "evcal.engine.refine", "evcal.panel.pooling"):
        importlib.import_module(name)
    return load_calendar_any(calendar)
