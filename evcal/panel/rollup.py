"""Roll-ups and top-down allocation.

``--level family,region`` adds the child series up to those keys before
fitting, so a model can be fitted at any level of a product × location
hierarchy. A parent's value in a period is the sum of its children's values;
a child outside its own span (not launched yet, or discontinued) adds zero,
but a child *inside* its span without a value makes the parent's period a gap
(NaN): adding up the others would read as a dip that did not happen.

Top-down allocation spreads a parent's plan over its children in proportion
to each child's own base over the horizon (trend × seasonal profile, with the
persistent interventions, from the child's fitted coefficients): a child
whose season peaks in May gets more of May than one that peaks in December.
The shares of one parent's children add up to 1 in every period, so the
children's plans add up to the parent's plan exactly. Intervals (``low``,
``high``) are allocated by the same shares, which keeps their order but is
not a statistical interval for the child: the table says so.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import PlanError
from evcal.io.panel import Panel
from evcal.spelling import subject

__all__ = ["aggregate", "allocate", "child_base"]


def aggregate(panel: Panel, level: list[str]) -> Panel:
    """The panel added up to the ``level`` columns (keys or attribute columns of ``panel``).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> keys = pd.DataFrame({"item": ["a", "b", "c"]})
    >>> attrs = pd.DataFrame({"family": ["F1", "F1", "F2"]})
    >>> v = np.array([[1.0, 2.0, 5.0], [np.nan, 3.0, 6.0], [4.0, 4.0, 7.0]])
    >>> p = Panel(keys, v, pd.period_range("2024-01", periods=3, freq="M"), np.array([0, 0, 0]),
    ...           np.array([2, 2, 2]), "M", "end", "<frame>", attrs=attrs)
    >>> aggregate(p, ["family"]).values.tolist()
    [[3.0, 5.0], [nan, 6.0], [8.0, 7.0]]
    """
    cols = {c: panel.column(c) for c in level}
    parent_keys = pd.DataFrame({c: v.to_numpy(dtype=object) for c, v in cols.items()})
    codes = np.zeros(panel.n_series, dtype=np.int64)
    uniques = []
    for c in level:
        cc, uu = pd.factorize(parent_keys[c], sort=True)
        codes = codes * len(uu) + cc
        uniques.append(uu)
    pid_u, pid = np.unique(codes, return_inverse=True)
    keys: dict[str, Any] = {}
    rem = pid_u.copy()
    for c, uu in zip(reversed(level), reversed(uniques), strict=True):
        keys[c] = np.asarray(uu, dtype=object)[rem % len(uu)]
        rem //= len(uu)
    out_keys = pd.DataFrame({c: keys[c] for c in level})

    n = len(panel.periods)
    t = np.arange(n)[:, None]
    in_span = (t >= panel.first[None, :]) & (t <= panel.last[None, :])
    vals = np.where(in_span, panel.values, 0.0)
    order = np.argsort(pid, kind="stable")
    starts = np.flatnonzero(np.r_[True, np.diff(pid[order]) != 0])
    sums = np.add.reduceat(vals[:, order], starts, axis=1)
    covered = np.add.reduceat(in_span[:, order].astype(np.int64), starts, axis=1) > 0
    values = np.where(covered, sums, np.nan)
    first = np.minimum.reduceat(panel.first[order], starts)
    last = np.maximum.reduceat(panel.last[order], starts)

    attrs = None
    if panel.attrs is not None:
        keep = {}
        for c in panel.attrs.columns:
            if c in level:
                continue
            col = panel.attrs[c].to_numpy(dtype=object)[order]
            ok = all(len(set(col[a:b])) == 1 for a, b in zip(starts, list(starts[1:]) + [len(col)],
                                                              strict=True))
            if ok:
                keep[c] = col[starts]
        attrs = pd.DataFrame(keep) if keep else None
    return Panel(out_keys, values, panel.periods, first, last, panel.freq, panel.label,
                 f"{panel.source} (added up to {', '.join(level)})", panel.value_col, attrs)


def child_base(children: Any, periods: pd.PeriodIndex, calendar: Any = None) -> pd.DataFrame:
    """Each fitted child's base over ``periods`` from its coefficients: ``keys..., date, base``.

    The base is the plan's base without events: trend and seasonal terms plus
    persistent interventions (``level_shift``, ``ramp``), times the smearing
    factor on the log scale. ARIMA error forecasts are left out (allocation
    uses the profile, not the short-term error).
    """
    from dataclasses import replace

    from evcal.design.interventions import PERSISTENT
    from evcal.design.matrix import DesignSpec, build_design
    from evcal.io.history import period_dates
    from evcal.model.inputs import load_calendar_any

    cal = load_calendar_any(calendar if calendar is not None else children.settings["calendar_text"])
    spec0 = DesignSpec.from_dict(children.settings["design"])
    keys = children.key_cols
    series = children.series[children.series["status"] == "fitted"].reset_index(drop=True)
    coef = children.coefficients.set_index(keys).reindex(pd.MultiIndex.from_frame(series[keys])) \
        if len(keys) > 1 else children.coefficients.set_index(keys[0]).reindex(series[keys[0]])
    out = []
    dates = period_dates(periods, children.settings["label"]).to_numpy()
    for origin, idx in series.groupby("trend_origin").groups.items():
        spec = replace(spec0, trend_origin=float(origin), event_columns=[])
        design = build_design(spec, cal, periods)
        X = design.X
        persistent = [t.name for t in spec.intervention_terms() if t.type in PERSISTENT]
        cols = [c for c in X.columns if design.roles[c] in ("trend", "seasonal")] + \
            [c for c in persistent if c in X.columns]
        beta = coef.iloc[np.asarray(idx)].reindex(columns=cols).fillna(0.0).to_numpy()
        eta = beta @ X[cols].to_numpy().T  # (series, periods)
        rows = series.iloc[np.asarray(idx)]
        additive = rows["transform"].to_numpy() == "none"
        smear = rows["smear"].to_numpy(dtype=float)
        base = np.where(additive[:, None], eta, smear[:, None] * np.exp(eta))
        frame = pd.DataFrame({c: np.repeat(rows[c].to_numpy(dtype=object), len(periods)) for c in keys})
        frame["date"] = np.tile(dates, len(rows))
        frame["base"] = base.ravel()
        out.append(frame)
    return pd.concat(out, ignore_index=True) if out else pd.DataFrame(columns=keys + ["date", "base"])


def allocate(parent_plan: pd.DataFrame, parent_keys: list[str], children: Any,
             calendar: Any = None) -> pd.DataFrame:
    """Spread each parent's plan over its children by the children's own base over the horizon.

    Parameters
    ----------
    parent_plan : DataFrame
        ``parent keys..., date, base, plan, low, high, lift:<event>...`` (a panel plan
        at the parent level).
    parent_keys : list of str
        The parent key columns; every child model key table must contain them.
    children : PanelResult
        The child-level panel model (its keys include the parent keys).

    Returns
    -------
    DataFrame
        ``child keys..., date, share, base, plan, low, high, lift:<event>...``:
        the parent's amounts times each child's share of the parents' base.
    """
    missing = [c for c in parent_keys if c not in children.key_cols]
    if missing:
        raise PlanError(f"{subject('allocate')}: the child model has no key column {missing[0]!r}; its keys "
                        f"are {', '.join(children.key_cols)}; fit the children with the parent columns among "
                        "--series-col")
    freq = children.settings["freq"]
    dates = pd.DatetimeIndex(pd.to_datetime(parent_plan["date"]).unique()).sort_values()
    periods = pd.PeriodIndex(dates.to_period(freq))
    base = child_base(children, periods, calendar)
    if base.empty:
        raise PlanError(f"{subject('allocate')}: the child model has no fitted series to allocate to")
    total = base.groupby(parent_keys + ["date"], sort=False)["base"].transform("sum")
    base["share"] = np.where(total > 0, base["base"] / total, np.nan)
    plan = parent_plan.copy()
    plan["date"] = pd.to_datetime(plan["date"])
    for c in parent_keys:
        plan[c] = plan[c].astype(str)
        base[c] = base[c].astype(str)
    amounts = [c for c in plan.columns if c in ("base", "plan", "low", "high") or str(c).startswith("lift:")]
    merged = base[children.key_cols + ["date", "share"]].merge(
        plan[parent_keys + ["date"] + amounts], on=parent_keys + ["date"], how="inner")
    for c in amounts:
        merged[c] = merged[c].to_numpy(dtype=float) * merged["share"].to_numpy()
    orphans = set(map(tuple, plan[parent_keys].drop_duplicates().to_numpy())) - \
        set(map(tuple, merged[parent_keys].drop_duplicates().to_numpy()))
    if orphans:
        first = sorted(orphans)[0]
        shown = ", ".join(f"{c}={v!r}" for c, v in zip(parent_keys, first, strict=True))
        raise PlanError(f"{subject('allocate')}: parent {shown} has no fitted child in the child model; fit "
                        "the children of every parent")
    return merged.sort_values(children.key_cols + ["date"], kind="stable").reset_index(drop=True)
