"""What the ``evcal fit`` / ``show`` commands do for panels (kept here so evcal/cli/ stays thin)."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

__all__ = ["fit_panel_cmd", "show_panel_cmd"]


def fit_panel_cmd(history: str, calendar: str | None, out: str, series_col: list[str] | None, *,
                  echo: Callable[[str], None], level: str | None = None, group_col: str | None = None,
                  workers: int | None = None, scheduler: str | None = None, **options: Any) -> None:
    """``evcal fit FILE --series-col ...``: fit, write the panel folder, print the summary."""
    from evcal.panel import fit_panel

    result = fit_panel(history, calendar, series_col, level=level, group_col=group_col, workers=workers,
                       scheduler=scheduler, out=out, **options)
    echo(result.summary())
    echo(f"\nwrote {out}/ (panel.json, series.csv, lifts.csv, pooling.csv, occurrences.csv, profile.csv, "
         "fitted.parquet, coefficients.parquet, skipped.csv)")


def show_panel_cmd(model_dir: str, series: str | None, echo: Callable[[str], None]) -> None:
    """``evcal show PANEL_DIR [--series KEY]``: the panel summary, or one series' own summary."""
    from evcal.panel import load_panel

    result = load_panel(model_dir)
    if series is None:
        echo(result.summary())
        return
    from evcal.model.summary import describe

    echo(describe(result.series_result(series)))
