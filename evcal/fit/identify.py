"""Which event and intervention columns the history can actually estimate.

Three reasons a column is not fitted, each reported with a note instead of a
number:

* no occurrence inside the fitted periods;
* it always falls in the same seasonal period (a fixed-date holiday in
  monthly data): the column is a linear combination of the seasonal and trend
  columns, so its effect stays inside the seasonal index;
* it always shares its days with another event: only their sum is estimable,
  so the first one carries the estimate and the note suggests merging them.

The test is numerical rank: the relative residual of a column regressed on
the columns kept before it (least squares), below a tolerance.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

REL_TOL = 1e-6


@dataclass
class ColumnStatus:
    """Fate of one event or intervention column in the fit."""

    status: str  # fitted | no_history | unidentifiable | duplicate
    note: str = ""


def _relative_residual(col: np.ndarray, basis: np.ndarray) -> float:
    """||col - proj(col)|| / ||col|| for the projection on the span of ``basis``."""
    norm = float(np.linalg.norm(col))
    if norm == 0.0:
        return 0.0
    if basis.shape[1] == 0:
        return 1.0
    q = _orthonormal(basis)
    return float(np.linalg.norm(col - q @ (q.T @ col))) / norm


def _orthonormal(basis: np.ndarray) -> np.ndarray:
    """Orthonormal columns spanning ``basis`` (rank-revealing via SVD)."""
    u, s, _ = np.linalg.svd(basis, full_matrices=False)
    keep = s > s[0] * 1e-10 if len(s) else np.zeros(0, dtype=bool)
    return u[:, keep]


def check_columns(
    X: pd.DataFrame, rows: np.ndarray, base_cols: list[str], candidate_cols: list[str],
    kind_of: dict[str, str],
) -> dict[str, ColumnStatus]:
    """Classify each candidate column on the fitted rows.

    Parameters
    ----------
    X : DataFrame
        The full design.
    rows : bool array
        Periods used by the fit.
    base_cols : list of str
        Trend and seasonal columns (always kept).
    candidate_cols : list of str
        Event and intervention columns, in priority order.
    kind_of : dict
        Column -> "event" or "intervention", for the wording of notes.
    """
    Xf = X.loc[rows]
    basis = Xf[base_cols].to_numpy()
    kept: list[str] = []
    out: dict[str, ColumnStatus] = {}
    for c in candidate_cols:
        col = Xf[c].to_numpy()
        if not np.any(np.abs(col) > 0):
            out[c] = ColumnStatus("no_history", "no occurrence inside the fitted history; not fitted")
            continue
        # identical (up to scale) to an event already kept?
        twin = None
        for k in kept:
            other = Xf[k].to_numpy()
            if _relative_residual(col, other[:, None]) < REL_TOL:
                twin = k
                break
        if twin is not None:
            out[c] = ColumnStatus(
                "duplicate",
                f"always falls on the same days as {twin}: only their joint effect can be "
                f"estimated (reported under {twin}); consider merging the two events",
            )
            prev = out[twin].note
            out[twin] = ColumnStatus("fitted", (prev + "; " if prev else "") + f"estimate includes {c}")
            continue
        if _relative_residual(col, basis) < REL_TOL:
            what = "event" if kind_of.get(c) == "event" else "intervention"
            out[c] = ColumnStatus(
                "unidentifiable",
                f"this {what} always falls in the same seasonal period, so it cannot be told "
                "apart from the season; its effect stays inside the seasonal index",
            )
            continue
        trial = np.column_stack([basis, col])
        if _relative_residual(col, basis) < 1e-3 and np.linalg.cond(trial) > 1e10:
            out[c] = ColumnStatus("unidentifiable", "too close to the seasonal terms to estimate")
            continue
        basis = trial
        kept.append(c)
        out.setdefault(c, ColumnStatus("fitted"))
    return out
