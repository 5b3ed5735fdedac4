"""What a plan across levels refuses before planning: levels given twice, and bottom series not fitted.

:func:`evcal.panel.levels.plan_levels` reconciles each level's plan to the sum of the bottom model's
fitted series. A level that is the bottom itself or another level again adds constraints that say the
same thing twice (the system has no single solution), and a level whose histories include a bottom series
the bottom model skipped (too short, all zero) would have that series' volume spread over its fitted
siblings by the reconciliation. Both are refused in one line, naming the folders and what to do.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.errors import PlanError
from evcal.spelling import option

__all__ = ["check_levels", "named", "skipped_inside"]

#: how many skipped series a message names before "and N more"
SHOWN = 3


def named(path: str) -> str:
    """A level's folder as a message names it: ``--reconcile DIR`` / ``level_dirs='DIR'`` (an entry)."""
    return option("level_dirs", str(path), flag="--reconcile")


def _keys_text(keys: list[str]) -> str:
    return ", ".join(keys) if keys else "none: the grand total"


def check_levels(bottom: Any, levels: list[Any]) -> None:
    """Refuse a level outside the bottom's columns, the bottom's own keys, or a level given twice.

    ``bottom`` and ``levels`` are :class:`evcal.panel.levels.LevelModel` (``path``, ``keys``, ``panel``).

    Examples
    --------
    >>> from types import SimpleNamespace as NS
    >>> b = NS(path="items", keys=["product", "store"], panel=NS(settings={}))
    >>> check_levels(b, [NS(path="a", keys=["product"]), NS(path="b", keys=["product"])])
    Traceback (most recent call last):
    ...
    evcal.errors.PlanError: level_dirs='b': its keys (product) are those of level_dirs='a'; give each level \
once
    """
    group = bottom.panel.settings.get("group_col")
    allowed = [*bottom.keys, *([group] if group else [])]
    seen: dict[frozenset[str], str] = {}
    for lv in levels:
        outside = [c for c in lv.keys if c not in allowed]
        if outside or set(lv.keys) == set(bottom.keys):
            raise PlanError(f"{named(lv.path)}: its keys ({_keys_text(lv.keys)}) are "
                            f"{'not among' if outside else 'the same as'} the bottom model's "
                            f"({', '.join(allowed)}); give a model fitted with --level on some of them")
        earlier = seen.get(frozenset(lv.keys))
        if earlier is not None:
            raise PlanError(f"{named(lv.path)}: its keys ({_keys_text(lv.keys)}) are those of "
                            f"{named(earlier)}; give each level once")
        seen[frozenset(lv.keys)] = lv.path


def _ids(frame: pd.DataFrame, keys: list[str]) -> list[tuple[str, ...]]:
    return [tuple(r) for r in frame[keys].astype(str).to_numpy()] if keys else [()] * len(frame)


def skipped_inside(bottom: Any, levels: list[Any]) -> list[str]:
    """Refuse when a level's histories include a bottom series the bottom model did not fit.

    A parent's history includes a skipped bottom series when, on some period, it is not the sum of its
    fitted bottom series' histories (the level model is fitted on the sum of every series of the file,
    skipped or not). Returns the note for skipped series no level includes (empty when none was skipped).
    """
    series = bottom.panel.series
    skipped = series[series["status"].astype(str) != "fitted"]
    if skipped.empty:
        return []
    group = bottom.panel.settings.get("group_col")
    attrs = series[bottom.keys + ["pool_group"]].astype(str).rename(columns={"pool_group": group or "_group"})
    fitted = bottom.panel.fitted
    fitted = fitted.assign(**{c: fitted[c].astype(str) for c in bottom.keys}).merge(attrs, on=bottom.keys)
    fitted["date"] = pd.to_datetime(fitted["date"])
    skipped = skipped[bottom.keys].astype(str).merge(attrs, on=bottom.keys)
    names = [",".join(map(str, r)) for r in skipped[bottom.keys].to_numpy()]
    shown = ", ".join(names[:SHOWN]) + (f" and {len(names) - SHOWN} more" if len(names) > SHOWN else "")
    for lv in levels:
        own = (lv.panel.fitted if lv.panel is not None else lv.single.fitted)
        own = own.assign(date=pd.to_datetime(own["date"]), **{c: own[c].astype(str) for c in lv.keys})
        parent = own.groupby([*lv.keys, "date"])["actual"].sum(min_count=1)
        sums = fitted.groupby([*lv.keys, "date"])["actual"].sum(min_count=1) if lv.keys else \
            fitted.groupby("date")["actual"].sum(min_count=1)
        both = pd.concat([parent.rename("parent"), sums.rename("sum")], axis=1, join="inner").dropna()
        gap = ~np.isclose(both["parent"], both["sum"], rtol=1e-6, atol=1e-6)
        wide = {tuple(map(str, k)) if isinstance(k, tuple) else (str(k),)
                for k in both.index[gap].droplevel(-1)} if lv.keys else ({()} if gap.any() else set())
        inside = [n for n, key in zip(names, _ids(skipped, lv.keys), strict=True) if key in wide]
        if inside:
            listed = ", ".join(inside[:SHOWN]) + (f" and {len(inside) - SHOWN} more" if len(inside) > SHOWN
                                                  else "")
            raise PlanError(f"{named(lv.path)}: its histories include {len(inside)} bottom series the bottom "
                            f"model did not fit ({listed}; skipped in its series.csv), so reconciling would "
                            "spread their volume over the other bottom series; fit every level from a file "
                            "without them, or give those series enough history to be fitted")
    return [f"{len(names)} bottom series were not fitted ({shown}; skipped in the bottom model's "
            "series.csv); "
            "no level's history includes them, so the reconciled plans leave them out"]
