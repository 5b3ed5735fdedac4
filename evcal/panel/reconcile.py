"""Plans that add up across levels: OLS, WLS and MinT reconciliation.

Plans made at several levels of a hierarchy (product × store, product totals,
store totals, the grand total), each from its own model, do not add up: the
product totals' plan is not the sum of that product's store plans. A
reconciliation moves every plan by as little as it can, in the metric ``W``,
so that each aggregate is exactly the sum of its bottom series.

Stack the plans as ``y = [aggregates; bottoms]`` (``n = n_a + n_b`` series)
and write the ``n_a`` constraints as ``C y = 0`` with ``C = [I, -A]`` (``A``:
which bottoms make each aggregate). The reconciled plans are the projection

    ỹ = ŷ − W Cᵀ (C W Cᵀ)⁻¹ C ŷ,

which equals the generalised least squares form ``S (Sᵀ W⁻¹ S)⁻¹ Sᵀ W⁻¹ ŷ``
(``S = [A; I]``) of the MinT estimator (Wickramasuriya, Athanasopoulos &
Hyndman 2019, JASA 114(526)) but solves an ``n_a × n_a`` system (one
equation per aggregate series) instead of an ``n × n`` one, for all horizon
periods at once. The methods differ only in ``W``:

* ``ols``: ``W = I`` (Hyndman, Ahmed, Athanasopoulos & Shang 2011);
* ``wls``: ``W = diag`` of each series' in-sample residual variance (the
  variance scaling of Wickramasuriya et al. 2019);
* ``mint``: ``W = λ D + (1 − λ) Ŵ``, the residuals' sample covariance ``Ŵ``
  shrunk toward its diagonal ``D`` with the Schäfer & Strimmer (2005)
  intensity ``λ`` (as in Wickramasuriya et al. 2019). ``W`` is never formed:
  ``W Cᵀ = λ D Cᵀ + (1 − λ) Eᵀ (E Cᵀ) / T`` from the ``T × n`` residual
  matrix ``E``, and ``λ`` comes from ``T × T`` products (no ``n²`` work).

``auto`` (the default) takes the most the residuals support: ``mint`` when
every series has residuals with a positive variance on at least
:data:`MINT_MIN_PERIODS` common periods, ``wls`` when they have at least
:data:`WLS_MIN_PERIODS`, else ``ols``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import scipy.linalg
import scipy.sparse as sp

__all__ = ["METHODS", "MINT_MIN_PERIODS", "WLS_MIN_PERIODS", "Reconciled", "Structure", "choose_method",
           "floor_at_zero", "level_sizes", "reconcile", "shrinkage_intensity", "summing_structure"]

METHODS = ("auto", "ols", "wls", "mint")
#: common periods of residuals below which ``auto`` does not estimate a covariance for ``mint``: a year of
#: monthly periods, so each correlation rests on a full seasonal cycle (common practice, no source)
MINT_MIN_PERIODS = 12
#: common periods below which ``auto`` does not estimate variances for ``wls``: a variance needs two
#: values, and the shrinkage's variance of a correlation divides by T (T − 1) (common practice, no source)
WLS_MIN_PERIODS = 2
TOTAL = "total"


@dataclass
class Structure:
    """Which bottom series make each aggregate series.

    Attributes
    ----------
    bottom_keys : DataFrame
        The bottom series' key (and attribute) columns, one row per series, in the order of the plans.
    agg_keys : DataFrame
        ``level`` then the key columns: one row per aggregate series; columns not in the row's level
        hold None.
    A : scipy.sparse.csr_matrix
        ``n_a × n_b``: 1 where the bottom series is part of the aggregate.
    levels : list of str
        The level names, bottom first (its key columns joined by ``,``; ``total`` for the grand total).
    """

    bottom_keys: pd.DataFrame
    agg_keys: pd.DataFrame
    A: sp.csr_matrix
    levels: list[str] = field(default_factory=list)

    @property
    def n_agg(self) -> int:
        return self.A.shape[0]

    @property
    def n_bottom(self) -> int:
        return self.A.shape[1]


def level_name(cols: list[str]) -> str:
    """A level's name: its columns joined by ``,``, or ``total`` for the grand total.

    Examples
    --------
    >>> level_name(["product", "store"]), level_name([])
    ('product,store', 'total')
    """
    return ",".join(cols) if cols else TOTAL


def summing_structure(bottom_keys: pd.DataFrame, levels: list[list[str]],
                      bottom_cols: list[str] | None = None) -> Structure:
    """The summing structure of the bottom series to each level (nested or crossed).

    Parameters
    ----------
    bottom_keys : DataFrame
        One row per bottom series: its key columns and any attribute columns a level may name.
    levels : list of list of str
        Each level's columns (``[]``: the grand total). Product and store levels of a product × store
        panel are crossed: neither nests in the other, and both are allowed.
    bottom_cols : list of str, optional
        The bottom series' key columns, which name the bottom level; the other columns of
        ``bottom_keys`` are attributes (a pooling group). Default: every column.

    Examples
    --------
    >>> keys = pd.DataFrame({"product": ["p", "p", "q", "q"], "store": ["s", "t", "s", "t"]})
    >>> st = summing_structure(keys, [["product"], ["store"], []])
    >>> st.agg_keys.to_dict("list")
    {'level': ['product', 'product', 'store', 'store', 'total'], 'product': ['p', 'q', None, None, None], \
'store': [None, None, 's', 't', None]}
    >>> st.A.toarray().astype(int).tolist()
    [[1, 1, 0, 0], [0, 0, 1, 1], [1, 0, 1, 0], [0, 1, 0, 1], [1, 1, 1, 1]]
    """
    bottom_keys = bottom_keys.reset_index(drop=True)
    n_b = len(bottom_keys)
    shown = [c for c in bottom_keys.columns if any(c in lv for lv in levels)]
    rows, cols, key_rows, names = [], [], [], []
    n_a = 0
    for lv in levels:
        missing = [c for c in lv if c not in bottom_keys.columns]
        if missing:
            raise ValueError(f"levels=: {missing[0]!r} is not a column of bottom_keys= (its columns are "
                             f"{', '.join(map(str, bottom_keys.columns))})")
        if lv:
            codes, uniques = pd.MultiIndex.from_frame(bottom_keys[lv].astype(object)).factorize(sort=True)
            groups = [dict(zip(lv, u, strict=True)) for u in uniques]
        else:
            codes, groups = np.zeros(n_b, dtype=np.int64), [{}]
        rows.append(n_a + np.asarray(codes))
        cols.append(np.arange(n_b))
        key_rows += [{"level": level_name(lv), **{c: g.get(c) for c in shown}} for g in groups]
        n_a += len(groups)
        names.append(level_name(lv))
    data = np.ones(n_b * len(levels))
    A = sp.csr_matrix((data, (np.concatenate(rows) if rows else [], np.concatenate(cols) if cols else [])),
                      shape=(n_a, n_b))
    agg_keys = pd.DataFrame(key_rows, columns=["level", *shown]).astype(object)
    agg_keys = agg_keys.where(agg_keys.notna(), None)
    bottom_name = level_name([str(c) for c in (bottom_keys.columns if bottom_cols is None else bottom_cols)])
    return Structure(bottom_keys, agg_keys, A, [bottom_name, *names])


def shrinkage_intensity(residuals: np.ndarray) -> float:
    """Schäfer & Strimmer (2005) intensity of shrinking the residuals' correlations toward zero.

    ``λ = Σ_{i≠j} Var(r_ij) / Σ_{i≠j} r_ij²``, clipped to [0, 1], on the residuals scaled by their
    (uncentred) root mean square ``z = e / sqrt(mean e²)``: ``r_ij = Σ_t z_ti z_tj / T`` and
    ``Var(r_ij) = (Σ_t z_ti² z_tj² − T r_ij²) / (T (T − 1))``. The sums over ``i ≠ j`` are the sums
    over all pairs minus the diagonal, and the sums over all pairs come from ``T × T`` products
    (``Σ_ij (Σ_t z_ti z_tj)² = ‖Z Zᵀ‖²``, ``Σ_ij Σ_t z_ti² z_tj² = Σ_t (Σ_i z_ti²)²``), so no
    ``n × n`` matrix is made.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> e = rng.normal(size=(40, 3))
    >>> round(shrinkage_intensity(np.c_[e, e[:, 0] + 0.01 * rng.normal(size=40)]), 3) < 0.5
    True
    """
    E = np.asarray(residuals, dtype=float)
    T, n = E.shape
    Z = E / np.sqrt((E**2).mean(axis=0))
    G = Z @ Z.T  # T × T
    q = (Z**2).sum(axis=1)  # Σ_i z_ti² per period
    r2_all = float((G**2).sum()) / T**2  # Σ_ij r_ij², diagonal r_ii = 1
    off_r2 = r2_all - n
    z4_all = float((q**2).sum())  # Σ_ij Σ_t z_ti² z_tj²
    off_z4 = z4_all - float((Z**4).sum())
    off_var = (off_z4 - T * off_r2) / (T * (T - 1))
    if off_r2 <= 0:
        return 1.0
    return float(min(max(off_var / off_r2, 0.0), 1.0))


def choose_method(method: str, residuals: np.ndarray | None) -> tuple[str, str]:
    """The method to use and why: ``method`` as given, or the data's choice for ``auto``.

    Examples
    --------
    >>> choose_method("auto", None)
    ('ols', 'no in-sample residuals were given, so every series weighs the same (ols)')
    >>> choose_method("auto", np.random.default_rng(0).normal(size=(6, 3)))[0]
    'wls'
    """
    if method not in METHODS:
        raise ValueError(f"method={method!r}: use one of {', '.join(METHODS)}")
    T = 0 if residuals is None else residuals.shape[0]
    positive = residuals is not None and T > 0 and bool(np.all((residuals**2).sum(axis=0) > 0))
    if method != "auto":
        if method != "ols" and (T < WLS_MIN_PERIODS or not positive):
            raise ValueError(f"method={method!r} weighs series by their in-sample residuals: give residuals= "
                             f"with at least {WLS_MIN_PERIODS} common periods and no series with all "
                             "residuals zero, or use method='ols'")
        return method, "as asked"
    if residuals is None or T == 0:
        return "ols", "no in-sample residuals were given, so every series weighs the same (ols)"
    if not positive:
        return "ols", "some series have all in-sample residuals zero, so every series weighs the same (ols)"
    if T < WLS_MIN_PERIODS:
        return "ols", f"{T} common period of residuals is too few for a variance, so every series weighs " \
                      "the same (ols)"
    if T < MINT_MIN_PERIODS:
        return "wls", f"{T} common periods of residuals: enough for each series' variance (wls), fewer " \
                      f"than the {MINT_MIN_PERIODS} a covariance across series needs (mint)"
    return "mint", f"{T} common periods of residuals: the series' covariance, shrunk toward its " \
                   "diagonal (mint)"


@dataclass
class Reconciled:
    """Reconciled plans of every series: bottoms (``n_b × H``) and aggregates (``n_a × H``).

    ``*_before`` are the plans as given; ``adjust_*`` the reconciled minus the given; ``summary`` has
    one row per level: series, mean absolute adjustment in % of the plan before, the largest in % and
    in units, and the series of the largest.
    """

    structure: Structure
    bottom: np.ndarray
    agg: np.ndarray
    bottom_before: np.ndarray
    agg_before: np.ndarray
    method: str
    reason: str
    lam: float | None
    summary: pd.DataFrame

    @property
    def adjust_bottom(self) -> np.ndarray:
        return self.bottom - self.bottom_before

    @property
    def adjust_agg(self) -> np.ndarray:
        return self.agg - self.agg_before


def _weights(method: str, E: np.ndarray | None, n: int) -> tuple[np.ndarray, float | None]:
    """The diagonal of W (ols, wls, and mint's target D) and mint's λ."""
    if method == "ols":
        return np.ones(n), None
    d = (E**2).mean(axis=0)  # uncentred, as the in-sample errors' covariance of the MinT papers
    return d, (shrinkage_intensity(E) if method == "mint" else None)


def reconcile(structure: Structure, bottom: np.ndarray, agg: np.ndarray,
              residuals_bottom: np.ndarray | None = None, residuals_agg: np.ndarray | None = None,
              method: str = "auto") -> Reconciled:
    """Plans that add up at every level, by OLS, WLS or MinT reconciliation (see the module notes).

    Parameters
    ----------
    structure : Structure
        From :func:`summing_structure`.
    bottom, agg : ndarray
        The plans before: ``n_b × H`` and ``n_a × H`` (rows in the structure's order; H periods).
    residuals_bottom, residuals_agg : ndarray, optional
        In-sample actual − fitted on the periods all series share: ``T × n_b`` and ``T × n_a``.
    method : {'auto', 'ols', 'wls', 'mint'}

    Examples
    --------
    Two stores and their total; the total's plan is 3 units above the stores' sum, and OLS moves
    each of the three plans by a third of it:

    >>> st = summing_structure(pd.DataFrame({"store": ["s", "t"]}), [[]])
    >>> r = reconcile(st, np.array([[10.0], [20.0]]), np.array([[33.0]]), method="ols")
    >>> r.bottom.ravel().tolist(), r.agg.ravel().tolist()
    ([11.0, 21.0], [32.0])
    """
    A = structure.A
    n_a, n_b = A.shape
    yb = np.asarray(bottom, dtype=float).reshape(n_b, -1)
    ya = np.asarray(agg, dtype=float).reshape(n_a, -1)
    if not (np.isfinite(yb).all() and np.isfinite(ya).all()):
        raise ValueError("bottom=, agg=: plans with gaps (NaN) cannot be reconciled; plan every series")
    E = None
    if residuals_bottom is not None and residuals_agg is not None:
        E = np.hstack([np.asarray(residuals_agg, dtype=float), np.asarray(residuals_bottom, dtype=float)])
        if E.shape[1] != n_a + n_b or not np.isfinite(E).all():
            raise ValueError(f"residuals_bottom=, residuals_agg=: need T × {n_b} and T × {n_a} finite "
                             "values on the periods all series share")
    chosen, reason = choose_method(method, E)
    d, lam = _weights(chosen, E, n_a + n_b)
    d_a, d_b = d[:n_a], d[n_a:]
    At = A.T.tocsr()
    # W Cᵀ (n × n_a) and C W Cᵀ (n_a × n_a), with C = [I, −A]: the diagonal part first
    WCt = np.vstack([np.diag(d_a), -(At.multiply(d_b[:, None])).toarray()])
    CWCt = np.diag(d_a) + (A @ At.multiply(d_b[:, None])).toarray()
    if chosen == "mint":
        T = E.shape[0]
        ECt = E[:, :n_a] - (A @ E[:, n_a:].T).T  # T × n_a: each constraint's residual
        WCt = lam * WCt + (1 - lam) / T * (E.T @ ECt)
        CWCt = lam * CWCt + (1 - lam) / T * (ECt.T @ ECt)
    incoherence = ya - A @ yb  # C ŷ, n_a × H
    step = WCt @ scipy.linalg.solve(CWCt, incoherence, assume_a="pos")
    new_a, new_b = ya - step[:n_a], yb - step[n_a:]
    summary = adjustment_summary(structure, new_b - yb, yb, new_a - ya, ya)
    return Reconciled(structure, new_b, new_a, yb, ya, chosen, reason, lam, summary)


def adjustment_summary(structure: Structure, adj_b: np.ndarray, before_b: np.ndarray,
                       adj_a: np.ndarray, before_a: np.ndarray) -> pd.DataFrame:
    """Adjustment sizes per level: ``level, series, mean_abs_pct, max_abs_pct, max_abs_units, largest_at``.

    ``mean_abs_pct`` is all of a level's adjustments in % of all its plans before; ``max_abs_pct`` the
    largest adjustment in % of its series' average period (:func:`level_sizes`).
    """
    levels = structure.agg_keys["level"].to_numpy()
    parts = [(structure.levels[0], adj_b, before_b, structure.bottom_keys)]
    for name in structure.levels[1:]:
        m = levels == name
        parts.append((name, adj_a[m], before_a[m], structure.agg_keys[m].drop(columns="level")))
    return pd.DataFrame([level_sizes(*part) for part in parts])


def level_sizes(name: str, adj: np.ndarray, before: np.ndarray, keys: pd.DataFrame) -> dict[str, object]:
    """One level's adjustment sizes: how much its plans moved in all and where the most.

    ``mean_abs_pct`` is the level's absolute adjustments added up, in % of its plans before added up
    (absolute); ``max_abs_units`` the largest single adjustment, ``max_abs_pct`` that adjustment in %
    of its series' average period (mean absolute plan before over the horizon), ``largest_at`` that
    series. Both % are of sums over periods, not of one period: a period planned near zero (a holiday,
    a closed day) would make any small adjustment read as hundreds of percent (seen on Chicago station
    ridership by day: 1.8 rides in thousands read +1,562 %).

    Parameters
    ----------
    name : str
        The level's name.
    adj, before : ndarray
        ``series × periods``: the adjustments and the plans before.
    keys : DataFrame
        One row per series: its key columns (None or blank where the level does not have one).

    Examples
    --------
    >>> level_sizes("store", np.array([[1.0, -2.0], [0.5, 0.0]]), np.array([[100.0, 100.0], [50.0, 0.0]]),
    ...             pd.DataFrame({"store": ["s", "t"]}))
    {'level': 'store', 'series': 2, 'mean_abs_pct': 1.4, 'max_abs_pct': 2.0, \
'max_abs_units': 2.0, 'largest_at': 'store=s'}
    """
    size = np.abs(adj)
    if not adj.size:
        return {"level": name, "series": adj.shape[0], "mean_abs_pct": np.nan, "max_abs_pct": np.nan,
                "max_abs_units": 0.0, "largest_at": TOTAL}
    whole = float(np.abs(before).sum())
    row = int(np.argmax(size.max(axis=1)))
    typical = float(np.abs(before[row]).mean())
    largest = float(size.max())
    shown = ", ".join(f"{c}={v}" for c, v in keys.iloc[row].items() if v is not None and str(v) != "")
    return {"level": name, "series": adj.shape[0],
            "mean_abs_pct": 100.0 * float(size.sum()) / whole if whole > 0 else np.nan,
            "max_abs_pct": 100.0 * largest / typical if typical > 0 else np.nan,
            "max_abs_units": largest, "largest_at": shown or TOTAL}


def floor_at_zero(rec: Reconciled) -> tuple[Reconciled, np.ndarray]:
    """Reconciled plans of series that cannot be negative: bottom plans below zero set to zero, every
    aggregate re-derived as the sum of its bottom series (bottom-up after the projection).

    The projection of :func:`reconcile` can move a small series below zero (it moves every series by
    a share of each incoherence, whatever its size). Setting the negative bottom plans to zero and
    adding up again keeps the plans coherent and non-negative, the "set negative to zero" heuristic
    compared with the exact non-negative reconciliation (a constrained least-squares problem,
    Wickramasuriya, Turlach & Hyndman 2020, Statistics and Computing 30) by Di Fonzo & Girolimetto
    (2023, from memory); it gives up a little of the minimum distance to the plans before: the
    aggregates over a zeroed series move up by its negative part. Returns the new plans and the
    ``n_b × H`` mask of the bottom plans set to zero; unchanged when none was below zero.

    Examples
    --------
    Bottoms 0 and 100 with a total of 50, by OLS: -16.7 and 83.3 (total 66.7); floored: 0 and 83.3
    (total 83.3).

    >>> st = summing_structure(pd.DataFrame({"store": ["s", "t"]}), [[]])
    >>> r = reconcile(st, np.array([[0.0], [100.0]]), np.array([[50.0]]), method="ols")
    >>> np.round(r.bottom.ravel(), 1).tolist(), np.round(r.agg.ravel(), 1).tolist()
    ([-16.7, 83.3], [66.7])
    >>> f, hit = floor_at_zero(r)
    >>> np.round(f.bottom.ravel(), 1).tolist(), np.round(f.agg.ravel(), 1).tolist(), hit.ravel().tolist()
    ([0.0, 83.3], [83.3], [True, False])
    """
    from dataclasses import replace

    hit = rec.bottom < 0
    if not hit.any():
        return rec, hit
    bottom = np.where(hit, 0.0, rec.bottom)
    agg = np.asarray(rec.structure.A @ bottom, dtype=float)
    summary = adjustment_summary(rec.structure, bottom - rec.bottom_before, rec.bottom_before,
                                 agg - rec.agg_before, rec.agg_before)
    return replace(rec, bottom=bottom, agg=agg, summary=summary), hit
