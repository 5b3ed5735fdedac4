"""Roll-ups and top-down allocation.

``--level family,region`` adds the child series up to those keys before
fitting, so a model can be fitted at any level of a product × location
hierarchy. A parent's value in a period is the sum of its children's values;
a child outside its own span (not launched yet, or discontinued) adds zero,
but a child *inside* its span without a value makes the parent's period a gap
(NaN): adding up the others would read as a dip that did not happen.

Top-down allocation shares a parent's plan in each period over its children
by each child's **own plan** for that period (:func:`allocate`): its base
(trend × seasonal profile with the persistent interventions) plus the lifts of
the events scheduled there, closures included, as the child's own model plans
them (:mod:`evcal.panel.own_plans`, without simulation). A child whose Easter
lift is +40 % gets more of the Easter week than a sibling whose lift is +15 %,
and a child whose season peaks in May more of May. The shares of one parent's
children add up to 1 in every period (:func:`plan_shares`), so the children's
plans add up to the parent's plan exactly. A child's ``base`` and
``lift:<event>`` columns are its own times the period's factor (parent plan /
sum of the children's own plans), so each row's base and lifts add up to its
plan; only the plans, not the parts, add up to the parent's. Intervals
(``low``, ``high``) are the parent's times the shares, which keeps their order
but is not a statistical interval for the child: the table says so.
``own_plan`` keeps each child's own plan; :func:`plan_gaps` sets each parent's
plan (top-down) against the sum of its children's own plans (bottom-up), per
period.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import PlanError
from evcal.io.panel import Panel
from evcal.spelling import subject

__all__ = ["aggregate", "allocate", "plan_gaps", "plan_shares", "unfitted_note", "ALLOCATED_NOTE",
           "OWN_PLAN"]

#: the amounts of a plan row besides its lifts
AMOUNTS = ("base", "plan", "low", "high")
#: the allocated plan's column holding each child's own plan before allocation (bottom-up)
OWN_PLAN = "own_plan"
#: a group's own plans that add up to at most this fraction of its children's own base count as nothing
#: (a closed period's rounding): it is shared by the base (common practice, no source)
NOTHING = 1e-9
#: the ``note`` of every allocated row
ALLOCATED_NOTE = ("allocated from the parent plan by each child's share of its siblings' own plans in the "
                  "period (base and the events scheduled there); own_plan is the child's own plan before "
                  "allocation; low/high are the parent's interval times the share, not the child's own "
                  "interval")


def aggregate(panel: Panel, level: list[str]) -> Panel:
    """The panel added up to the ``level`` columns (keys or attribute columns of ``panel``).

    An empty ``level`` adds every series up to one, the grand total: a panel of one with no key
    columns, as :meth:`Panel.of_history` makes (its :meth:`~Panel.history` is the total's history).

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
    >>> total = aggregate(p, [])
    >>> total.values.ravel().tolist(), total.key_cols, total.source
    ([8.0, nan, 15.0], [], '<frame> (added up to the total)')
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
    # the grand total: one series and no key columns (a frame of one row, as a panel of one has)
    out_keys = pd.DataFrame({c: keys[c] for c in level}) if level else pd.DataFrame(index=range(1))

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
                 f"{panel.source} (added up to {', '.join(level) or 'the total'})", panel.value_col, attrs)


def plan_shares(own: np.ndarray, groups: np.ndarray, fallback: np.ndarray | None = None
                ) -> tuple[np.ndarray, np.ndarray]:
    """Each row's share of its group (one parent in one period), and whether its own plan gave it.

    A share is the row's own plan over the sum of its group's own plans; a plan
    below zero (an additive model's) or not a number counts as 0. A group whose
    own plans add up to nothing (every child closed, or all below zero: at most
    :data:`NOTHING` of the group's ``fallback``) is shared by ``fallback`` the same
    way (the children's own base), and failing that equally. Every share is ≥ 0
    and each group's add up to 1.

    Parameters
    ----------
    own : array (n,)
        The rows' own plans.
    groups : array of int (n,)
        Each row's group, numbered 0, 1, ...
    fallback : array (n,), optional
        The weights of a group whose own plans add up to nothing.

    Returns
    -------
    share : array (n,)
    by_own : array of bool (n,)
        The rows whose group is shared by its own plans.

    Examples
    --------
    >>> share, by_own = plan_shares(np.array([3.0, 1.0, 0.0, -2.0]), np.array([0, 0, 1, 1]),
    ...                             np.array([1.0, 1.0, 2.0, 6.0]))
    >>> share.tolist(), by_own.tolist()
    ([0.75, 0.25, 0.25, 0.75], [True, True, False, False])
    """
    groups = np.asarray(groups, dtype=np.int64)
    n_groups = int(groups.max()) + 1 if len(groups) else 0

    def weights_and_totals(x: Any) -> tuple[np.ndarray, np.ndarray]:
        w = np.asarray(x, dtype=float)
        w = np.where(np.isfinite(w) & (w > 0), w, 0.0)
        return w, np.bincount(groups, weights=w, minlength=n_groups)[groups]

    steps = [weights_and_totals(own)]
    steps += [weights_and_totals(fallback)] if fallback is not None else []
    steps.append(weights_and_totals(np.ones(len(groups))))
    # own plans that are only the rounding left of a closed period would blow their parts up: the fallback
    floors = [NOTHING * steps[1][1] if fallback is not None else 0.0] + [0.0] * (len(steps) - 1)
    share = np.zeros(len(groups))
    pending = np.ones(len(groups), dtype=bool)
    by_own = pending.copy()
    for step, ((w, total), floor) in enumerate(zip(steps, floors, strict=True)):
        done = pending & (total > floor)
        share[done] = w[done] / total[done]
        if step == 0:
            by_own = done.copy()
        pending &= ~done
    return share, by_own


def allocate(parent_plan: pd.DataFrame, parent_keys: list[str], own: pd.DataFrame,
             child_keys: list[str]) -> pd.DataFrame:
    """Share each parent's plan in each period over its children by the children's own plans there.

    A child's share of a period is its own plan there (its base and the lifts of
    the events scheduled in it, closures included) over its siblings' own plans,
    so the children add up to the parent's plan exactly. The child's ``base`` and
    ``lift:<event>`` columns are its own times the period's factor ``parent plan /
    sum of the children's own plans``: each row's base and lifts still add up to
    its plan. Where the children's own plans add up to nothing the shares are
    those of :func:`plan_shares` and each amount is the parent's times the share.
    ``low``/``high`` are the parent's times the share: not the child's interval.

    Parameters
    ----------
    parent_plan : DataFrame
        ``parent keys..., date, base, plan, low, high, lift:<event>...`` (a panel plan
        at the parent level).
    parent_keys : list of str
        The parent key columns; the child keys must contain them.
    own : DataFrame
        The children's own plans (``child keys..., date, base, plan, lift:<event>...,
        assumptions``; their intervals are not used), over the parent plan's periods.
    child_keys : list of str

    Returns
    -------
    DataFrame
        ``child keys..., date, share, base, plan, low, high, lift:<event>..., assumptions,
        own_plan``, in the order of ``own``: ``own_plan`` is the child's own plan before
        allocation (bottom-up).

    Examples
    --------
    >>> d = pd.Timestamp("2027-04-04")
    >>> parent = pd.DataFrame({"f": ["A"], "date": [d], "base": [110.0], "plan": [143.0], "low": [130.0],
    ...                        "high": [156.0], "lift:easter": [33.0]})
    >>> own = pd.DataFrame({"f": ["A", "A"], "p": ["x", "y"], "date": [d, d], "base": [60.0, 40.0],
    ...                     "plan": [84.0, 46.0], "lift:easter": [24.0, 6.0]})  # +40 % and +15 % Easter
    >>> allocate(parent, ["f"], own, ["f", "p"])[["p", "share", "base", "plan", "lift:easter", "own_plan"]]
       p     share  base  plan  lift:easter  own_plan
    0  x  0.646154  66.0  92.4         26.4      84.0
    1  y  0.353846  44.0  50.6          6.6      46.0
    """
    missing = [c for c in parent_keys if c not in child_keys]
    if missing:
        raise PlanError(f"{subject('allocate')}: the child model has no key column {missing[0]!r}; its keys "
                        f"are {', '.join(child_keys)}; fit the children with the parent columns among "
                        "--series-col")
    if own.empty:
        raise PlanError(f"{subject('allocate')}: the child model has no fitted series to allocate to")
    on = parent_keys + ["date"]
    plan = parent_plan.assign(date=pd.to_datetime(parent_plan["date"]),
                              **{c: parent_plan[c].astype(str) for c in parent_keys})
    amounts = [c for c in plan.columns if c in AMOUNTS or str(c).startswith("lift:")]
    lifts = list(dict.fromkeys([c for c in own.columns if str(c).startswith("lift:")] +
                               [c for c in amounts if str(c).startswith("lift:")]))
    # the children's rows in their own order (an inner merge keeps the left order): no sort afterwards
    left = pd.DataFrame({**{c: own[c].astype(str) for c in parent_keys}, "date": pd.to_datetime(own["date"]),
                         "_row": np.arange(len(own))})
    merged = left.merge(plan[on + amounts].rename(columns={c: f"parent {c}" for c in amounts}), on=on,
                        how="inner")
    orphans = set(map(tuple, plan[parent_keys].drop_duplicates().to_numpy())) - \
        set(map(tuple, merged[parent_keys].drop_duplicates().to_numpy()))
    if orphans:
        first = sorted(orphans)[0]
        shown = ", ".join(f"{c}={v!r}" for c, v in zip(parent_keys, first, strict=True))
        raise PlanError(f"{subject('allocate')}: parent {shown} has no fitted child in the child model; fit "
                        "the children of every parent")
    rows = merged["_row"].to_numpy()
    groups = merged.groupby(on, sort=False).ngroup().to_numpy()

    def mine(c: str) -> np.ndarray:  # a child's own amount, 0 for an event its plan has no column for
        return own[c].to_numpy(dtype=float)[rows] if c in own.columns else np.zeros(len(rows))

    def parents(c: str) -> np.ndarray:
        return merged[f"parent {c}"].to_numpy(dtype=float) if f"parent {c}" in merged else \
            np.full(len(rows), 0.0 if c.startswith("lift:") else np.nan)

    own_plan = mine("plan")
    share, by_own = plan_shares(own_plan, groups, mine("base"))
    positive = np.where(np.isfinite(own_plan) & (own_plan > 0), own_plan, 0.0)
    total = np.bincount(groups, weights=positive)[groups]
    # the period's factor on the child's own parts; 0 for a child whose own plan is nothing (its share)
    factor = np.where(by_own & (positive > 0), parents("plan") / np.where(total > 0, total, 1.0), 0.0)
    out: dict[str, Any] = {c: own[c].iloc[rows].reset_index(drop=True) for c in child_keys}  # dtype kept
    out["date"] = merged["date"]
    out["share"] = share
    out["base"] = np.where(by_own, mine("base") * factor, share * parents("base"))
    out.update({c: share * parents(c) for c in ("plan", "low", "high")})
    out.update({c: np.where(by_own, np.nan_to_num(mine(c)) * factor, share * parents(c)) for c in lifts})
    if "assumptions" in own.columns:
        out["assumptions"] = own["assumptions"].iloc[rows].reset_index(drop=True)
    out[OWN_PLAN] = own_plan
    return pd.DataFrame(out)


def plan_gaps(allocated: pd.DataFrame, parent_keys: list[str]) -> pd.DataFrame:
    """Top-down against bottom-up for each parent and period of an allocated plan.

    ``top_down`` is the parent's plan (the sum of its children's allocated plans),
    ``bottom_up`` the sum of its children's own plans (``own_plan``); ``gap`` is
    top-down minus bottom-up and ``gap_pct`` that in % of bottom-up (empty where
    bottom-up is not above zero).

    Returns
    -------
    DataFrame
        ``parent keys..., date, top_down, bottom_up, gap, gap_pct``.

    Examples
    --------
    >>> t = pd.DataFrame({"f": ["A", "A"], "p": ["x", "y"], "date": ["2027-04-04"] * 2,
    ...                   "plan": [84.0, 46.0], "own_plan": [80.0, 50.0]})
    >>> plan_gaps(t, ["f"]).to_dict("records")[0]["gap_pct"]
    0.0
    >>> plan_gaps(t.assign(plan=[91.0, 52.0]), ["f"]).to_dict("records")[0]["gap_pct"]
    10.0
    """
    sums = allocated.groupby(parent_keys + ["date"], sort=True)[["plan", OWN_PLAN]].sum()
    out = sums.rename(columns={"plan": "top_down", OWN_PLAN: "bottom_up"}).reset_index()
    out["top_down"] = out["top_down"].astype(float)
    out["gap"] = out["top_down"] - out["bottom_up"]
    bottom = out["bottom_up"].to_numpy(dtype=float)
    gap = out["gap"].to_numpy(dtype=float)
    out["gap_pct"] = np.where(bottom > 0, 100.0 * gap / np.where(bottom > 0, bottom, 1.0), np.nan)
    return out


def unfitted_note(children: pd.DataFrame, child_keys: list[str], parents: pd.DataFrame,
                  parent_keys: list[str], shown: int = 3) -> str | None:
    """The note naming the children of planned parents that were not fitted, or None when there are none.

    A parent's model is fitted on the sum of all its children's histories, skipped or not, so its plan
    includes them; the allocation shares it among the fitted children only, so their share goes to their
    fitted siblings.

    Parameters
    ----------
    children : DataFrame
        The child model's ``series`` table (``status`` and the child keys).
    parents : DataFrame
        The parent plan (its key columns): the parents planned.

    Examples
    --------
    >>> kids = pd.DataFrame({"store": ["s", "s", "t"], "product": ["a", "b", "c"],
    ...                      "status": ["fitted", "skipped", "skipped"]})
    >>> unfitted_note(kids, ["product", "store"], pd.DataFrame({"store": ["s"]}), ["store"])[:48]
    '1 child was not fitted (product=b, store=s; skip'
    """
    out = children[children["status"].astype(str) != "fitted"]
    if out.empty or not set(parent_keys) <= set(children.columns):
        return None
    wanted = pd.MultiIndex.from_frame(parents[parent_keys].astype(str).drop_duplicates())
    out = out[pd.MultiIndex.from_frame(out[parent_keys].astype(str)).isin(wanted)]
    if out.empty:
        return None
    names = [", ".join(f"{c}={v}" for c, v in zip(child_keys, row, strict=True))
             for row in out[child_keys].astype(str).to_numpy()]
    listed = "; ".join(names[:shown]) + (f" and {len(names) - shown} more" if len(names) > shown else "")
    n = len(names)
    return (f"{n} {'child was' if n == 1 else 'children were'} not fitted ({listed}; skipped in the child "
            "model's series.csv): the parent's plan includes their history, so their share of it goes to "
            "their fitted siblings")
