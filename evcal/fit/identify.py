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

    status: str  # fitted | no_history | unidentifiable | duplicate | assumed | like | unchecked
    note: str = ""
    twin: str = ""  # for a duplicate: the column that carries the joint estimate


def _relative_residual(col: np.ndarray, q: np.ndarray) -> float:
    """||col - proj(col)|| / ||col|| for the projection on orthonormal columns ``q``."""
    norm = float(np.linalg.norm(col))
    if norm == 0.0:
        return 0.0
    if q.shape[1] == 0:
        return 1.0
    r = col - q @ (q.T @ col)
    r = r - q @ (q.T @ r)  # second pass: classical Gram-Schmidt loses orthogonality once
    return float(np.linalg.norm(r)) / norm


def _orthonormal(basis: np.ndarray) -> np.ndarray:
    """Orthonormal columns spanning ``basis`` (rank-revealing via SVD)."""
    if basis.shape[1] == 0:
        return basis
    u, s, _ = np.linalg.svd(basis, full_matrices=False)
    keep = s > s[0] * 1e-10 if len(s) and s[0] > 0 else np.zeros(len(s), dtype=bool)
    return u[:, keep]


def _extend(q: np.ndarray, col: np.ndarray) -> np.ndarray:
    r = col - q @ (q.T @ col)
    r = r - q @ (q.T @ r)
    return np.column_stack([q, r / np.linalg.norm(r)])


def independent_base_columns(X: pd.DataFrame, rows: np.ndarray, base_cols: list[str]) -> list[str]:
    """Trend/seasonal columns that are not constant-zero or collinear on the fitted rows.

    A weekday dummy for a day that is always closed, or a season dummy for a
    week that is always excluded, carries no information; it is left out (its
    coefficient is zero) rather than making the design rank-deficient.
    """
    Xf = X.loc[rows, base_cols].to_numpy()
    q = np.zeros((Xf.shape[0], 0))
    keep = []
    for j, c in enumerate(base_cols):
        if _relative_residual(Xf[:, j], q) > REL_TOL:
            q = _extend(q, Xf[:, j])
            keep.append(c)
    return keep


def check_columns(
    X: pd.DataFrame, rows: np.ndarray, base_cols: list[str], candidate_cols: list[str],
    kind_of: dict[str, str],
) -> dict[str, ColumnStatus]:
    """Classify each candidate column on the fitted rows.

    The base (trend and seasonal) columns are projected out once; the
    candidates' remainders are then tested in order on their small Gram
    matrix (an incremental Cholesky that skips dependent columns), so the
    cost is one pass over the data however many events there are.

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
    out: dict[str, ColumnStatus] = {}
    if not candidate_cols:
        return out
    Xc = X.loc[rows, candidate_cols].to_numpy(dtype=float)
    q_base = _orthonormal(X.loc[rows, base_cols].to_numpy(dtype=float))
    norms = np.linalg.norm(Xc, axis=0)
    resid = Xc - q_base @ (q_base.T @ Xc)
    resid = resid - q_base @ (q_base.T @ resid)
    rel_base = np.linalg.norm(resid, axis=0) / np.where(norms > 0, norms, 1.0)
    # Event columns are day counts divided by the period's length, so a February event
    # (always one day in February) still varies with leap years (1/28 vs 1/29) and would
    # pass the test above with a meaningless estimate. Test the day counts as well.
    from evcal.design.base import period_days

    days = period_days(X.index[rows]) if isinstance(X.index, pd.PeriodIndex) else np.ones(len(Xc))
    counts = Xc * days[:, None]
    c_norms = np.linalg.norm(counts, axis=0)
    c_resid = counts - q_base @ (q_base.T @ counts)
    c_resid = c_resid - q_base @ (q_base.T @ c_resid)
    rel_counts = np.linalg.norm(c_resid, axis=0) / np.where(c_norms > 0, c_norms, 1.0)
    is_event = np.array([kind_of.get(c) == "event" for c in candidate_cols])
    rel_base = np.where(is_event, np.minimum(rel_base, rel_counts), rel_base)
    gram_raw = Xc.T @ Xc
    gram = resid.T @ resid
    tol2 = (10 * REL_TOL) ** 2  # squared residual ratio on the Gram scale
    kept: list[int] = []
    chol = np.zeros((0, 0))
    for j, c in enumerate(candidate_cols):
        if norms[j] == 0.0:
            out[c] = ColumnStatus("no_history", "no occurrence inside the fitted history; not fitted")
            continue
        twin = None
        for k in kept:
            cos = gram_raw[j, k] / (norms[j] * norms[k])
            if abs(cos) > 1.0 - 1e-10:
                twin = candidate_cols[k]
                break
        if twin is not None:
            out[c] = ColumnStatus(
                "duplicate",
                f"always falls on the same days as {twin}: only their joint effect can be "
                f"estimated (reported under {twin}); consider merging the two events",
                twin=twin,
            )
            prev = out[twin].note
            out[twin] = ColumnStatus("fitted", (prev + "; " if prev else "") + f"estimate includes {c}")
            continue
        if rel_base[j] < REL_TOL:
            what = "event" if kind_of.get(c) == "event" else "intervention"
            out[c] = ColumnStatus(
                "unidentifiable",
                f"this {what} always falls in the same seasonal period, so it cannot be told "
                "apart from the season; its effect stays inside the seasonal index",
            )
            continue
        g = gram[kept, j] if kept else np.zeros(0)
        # small (events x events) system: numpy's solve avoids importing scipy here
        v = np.linalg.solve(chol, g) if kept else g
        res2 = gram[j, j] - float(v @ v)
        if res2 / norms[j] ** 2 < tol2:
            out[c] = ColumnStatus(
                "unidentifiable",
                "a combination of the seasonal terms and the other events already fitted; "
                "its effect cannot be separated from theirs",
            )
            continue
        new = np.zeros((len(kept) + 1, len(kept) + 1))
        new[:-1, :-1] = chol
        new[-1, :-1] = v
        new[-1, -1] = np.sqrt(res2)
        chol = new
        kept.append(j)
        out.setdefault(c, ColumnStatus("fitted"))
    return out
