"""Demand lost to stock-outs: what the model expected against what was sold.

A stock-out period is kept out of the fit (an ``exclude`` entry whose reason
says stock-out, or a row of a ``--stockouts`` file), so the fitted model
(base plus the lifts of the events in those periods) predicts what demand
would have been. Units lost = expected demand - actual sales.

The interval is a 95 % prediction interval for the window's total demand by
parametric simulation (Krinsky & Robb 1986, "On approximating the
statistical properties of elasticities", REStat 68:715-719): coefficient
draws from ``N(b, cov)`` (the fit's covariance) plus the model's own noise
(normal on the model scale, Poisson for a count model). Autocorrelation of
the errors inside a long window is not simulated, so the interval of a
window of many periods is too narrow when the fit chose ARIMA errors.
"""

from __future__ import annotations

import csv
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import CalendarError

__all__ = ["StockOut", "LostDemand", "is_stockout", "lost_demand", "read_stockouts", "simulate_lost_demand"]

_STOCKOUT = re.compile(r"stock[\s-]*outs?|out[\s-]+of[\s-]+stock", re.IGNORECASE)


def is_stockout(reason: str | None) -> bool:
    """Does an exclusion's reason say stock-out?

    Examples
    --------
    >>> [is_stockout(r) for r in ("Stock-out at depot", "stockout", "out of stock", "lockdown")]
    [True, True, True, False]
    """
    return bool(reason) and bool(_STOCKOUT.search(str(reason)))


@dataclass(frozen=True)
class StockOut:
    """A stock-out window (inclusive days) and why it is known."""

    start: pd.Timestamp
    end: pd.Timestamp
    reason: str


@dataclass(frozen=True)
class LostDemand:
    """Expected demand against sales over one stock-out window, in units."""

    start: pd.Timestamp
    end: pd.Timestamp
    reason: str
    periods: int
    expected: float
    expected_low: float
    expected_high: float
    actual: float

    @property
    def lost(self) -> float:
        return self.expected - self.actual

    @property
    def lost_low(self) -> float:
        return self.expected_low - self.actual

    @property
    def lost_high(self) -> float:
        return self.expected_high - self.actual

    @property
    def lost_pct(self) -> float:
        return 100.0 * self.lost / self.expected if self.expected else float("nan")


def read_stockouts(path: str | Path) -> list[StockOut]:
    """Read a ``start,end[,reason]`` CSV of stock-out windows (ISO dates).

    Raises
    ------
    CalendarError
        One line per bad row: file, row, column, what is wrong.
    """
    path = Path(path)
    if not path.is_file():
        raise CalendarError(f"{path}: stock-out file not found; give a CSV with columns start,end[,reason]")
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as err:
        raise CalendarError(f"{path}: cannot read the stock-out file ({err})") from None
    rows = list(csv.reader(text.splitlines()))
    if not rows:
        raise CalendarError(f"{path}: stock-out file is empty; expected a header start,end[,reason]")
    header = [h.strip().lower() for h in rows[0]]
    if "start" not in header or "end" not in header:
        raise CalendarError(
            f"{path}: row 1: header {','.join(rows[0])!r} needs columns start and end (and optional reason)")
    i_start, i_end = header.index("start"), header.index("end")
    i_reason = header.index("reason") if "reason" in header else None
    out: list[StockOut] = []
    problems: list[str] = []
    for n, row in enumerate(rows[1:], start=2):
        if not any(cell.strip() for cell in row):
            continue
        cells = [c.strip() for c in row] + [""] * len(header)
        parsed = {}
        for col, i in (("start", i_start), ("end", i_end)):
            try:
                if not re.fullmatch(r"\d{4}-\d{2}-\d{2}", cells[i]):
                    raise ValueError
                parsed[col] = pd.Timestamp(cells[i])
            except ValueError:
                problems.append(f"{path}: row {n}: column {col}: {cells[i]!r} is not an ISO date "
                                "like 2024-03-01")
        if len(parsed) < 2:
            continue
        if parsed["end"] < parsed["start"]:
            problems.append(f"{path}: row {n}: end {cells[i_end]} is before start {cells[i_start]}")
            continue
        reason = cells[i_reason] if i_reason is not None and cells[i_reason] else "stock-out"
        out.append(StockOut(parsed["start"], parsed["end"], reason))
    if problems:
        raise CalendarError(problems)
    if not out:
        raise CalendarError(f"{path}: no stock-out rows under the header")
    return out


def simulate_lost_demand(
    window: StockOut,
    expected: np.ndarray,
    actual: np.ndarray,
    x: np.ndarray,
    cov: np.ndarray,
    sigma2: float,
    transform: str,
    *,
    draws: int = 4000,
    seed: int = 0,
) -> LostDemand:
    """Expected demand over a window's periods with a 95 % simulated interval.

    Parameters
    ----------
    window : StockOut
    expected : array
        The model's expected demand per period of the window, in units (base
        times event lifts, as in ``fitted.csv``).
    actual : array
        Sales per period (NaN = not recorded: left out of both sums).
    x : array (periods, k)
        Model regressors of those periods; ``cov`` their coefficients' covariance.
    sigma2 : float
        Model-scale error variance (unused for a count model).
    transform : {"log", "none", "count"}

    Examples
    --------
    >>> w = StockOut(pd.Timestamp("2024-05-01"), pd.Timestamp("2024-05-31"), "stock-out")
    >>> r = simulate_lost_demand(w, np.array([100.0]), np.array([60.0]), np.ones((1, 1)),
    ...                          np.array([[1e-4]]), 0.0025, "log")
    >>> round(r.lost), r.lost_low < 40 < r.lost_high
    (40, True)
    """
    expected = np.asarray(expected, dtype=float)
    actual = np.asarray(actual, dtype=float)
    recorded = np.isfinite(actual) & np.isfinite(expected)
    e, a, xr = expected[recorded], actual[recorded], np.asarray(x, dtype=float)[recorded]
    rng = np.random.default_rng(seed)
    k = xr.shape[1]
    if k and np.isfinite(cov).all():
        delta = rng.multivariate_normal(np.zeros(k), cov, size=draws, method="eigh")
        shift = delta @ xr.T  # draws x periods, model scale
    else:
        shift = np.zeros((draws, len(e)))
    if transform == "none":
        totals = (e + shift + rng.normal(0.0, np.sqrt(max(sigma2, 0.0)), shift.shape)).sum(axis=1)
    elif transform == "count":
        totals = rng.poisson(np.clip(e * np.exp(shift), 0, None)).sum(axis=1)
    else:
        noise = rng.normal(0.0, np.sqrt(max(sigma2, 0.0)), shift.shape)
        # `expected` already holds the mean of exp(noise); centre the draws on it
        totals = (e * np.exp(shift + noise - sigma2 / 2.0)).sum(axis=1)
    low, high = np.percentile(totals, [2.5, 97.5]) if len(e) else (0.0, 0.0)
    return LostDemand(
        start=window.start,
        end=window.end,
        reason=window.reason,
        periods=int(recorded.sum()),
        expected=float(e.sum()),
        expected_low=float(low),
        expected_high=float(high),
        actual=float(a.sum()),
    )


def lost_demand(result: Any, actual: np.ndarray, x_fit: pd.DataFrame | None, exclusions: list[Any],
                extra: list[StockOut]) -> list[LostDemand]:
    """Expected demand against sales in each stock-out window of a fit (each window once).

    Parameters
    ----------
    result : FitResult
        The fit: its ``fitted`` table, coefficient covariance, ``sigma2`` and transform.
    actual : array
        Sales per period of the fit.
    x_fit : DataFrame, optional
        The fitted regressors (None for a count model: coefficient uncertainty is then not drawn).
    exclusions : list
        The calendar's exclusions (``start``, ``end``, ``reason``); those whose
        reason says stock-out (:func:`is_stockout`) are windows.
    extra : list of StockOut
        Windows from a ``--stockouts`` file, after the calendar's.

    Returns
    -------
    list of LostDemand
        One per window that touches the history, in the order given.
    """
    windows: dict[tuple[pd.Timestamp, pd.Timestamp], StockOut] = {}
    for w in [StockOut(pd.Timestamp(e.start), pd.Timestamp(e.end), e.reason)
              for e in exclusions if is_stockout(e.reason)] + list(extra):
        windows.setdefault((w.start, w.end), w)
    periods = result.residuals.index
    p_start, p_end = periods.start_time.normalize(), periods.end_time.normalize()
    expected = result.fitted["fitted"].to_numpy(dtype=float)
    actual = np.asarray(actual, dtype=float)
    cols = list(x_fit.columns) if x_fit is not None else []
    cov = result.cov.reindex(index=cols, columns=cols).to_numpy(dtype=float)
    x = x_fit.to_numpy(dtype=float) if x_fit is not None else np.zeros((len(periods), 0))
    out = []
    for w in windows.values():
        touched = np.asarray((p_start <= w.end) & (p_end >= w.start))
        if touched.any():
            out.append(simulate_lost_demand(w, expected[touched], actual[touched], x[touched], cov,
                                            float(result.sigma2), result.transform))
    return out
