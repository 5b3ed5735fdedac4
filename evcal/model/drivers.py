"""The outside drivers' table (``drivers.csv``): each driver's coefficient, interval and contribution.

Built from a fitted model (coefficients, covariance, the fitted table's driver
columns), so a folder written and read back gives the same table.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.amounts import amount
from evcal.model.result import coefficient_interval
from evcal.store.tables import DRIVERS

#: drivers.csv's columns: the store's table definition (evcal.store.tables.DRIVERS), written and read back
DRIVER_COLUMNS = list(DRIVERS.columns)


def _effect(b: np.ndarray, scale: str, transform: str) -> np.ndarray:
    """% change of sales for the table's ``change`` of the driver (NaN in the additive model)."""
    if transform == "none":
        return np.full_like(b, np.nan)
    step = np.log(1.10) if scale == "log" else 1.0
    return 100.0 * np.expm1(b * step)


def driver_table(result: Any) -> pd.DataFrame:
    """One row per outside driver of ``result`` (a :class:`~evcal.model.FitResult`).

    ``coefficient`` is the model-scale coefficient with its 95 % interval
    (``low``, ``high``: beta ± 1.96 se from the fit's covariance): for a ``log``
    driver in a log (or count) model, the elasticity; for a ``level`` driver, the
    log change per unit (in the additive model: units per unit of the driver, or
    per unit of its log). ``effect_pct`` (with its interval) is the % change of
    sales for ``change``: a 10 % rise of a log driver (``10% rise``), one unit of a level
    driver (``1 unit rise``).
    ``contribution_units`` sums what the driver's departure from its history
    average added over the fitted periods; ``mean_abs_units`` is its mean size a
    period (the per-period contributions are the driver's column of ``fitted.csv``).
    """
    rows = []
    fitted = result.fitted
    in_fit = fitted["in_fit"].to_numpy(dtype=bool) if "in_fit" in fitted else np.ones(len(fitted), bool)
    for d in getattr(result.spec, "drivers", None) or []:
        name, scale = d["name"], d["scale"]
        st = result.status.get(name)
        coef = coefficient_interval(result, name)
        effect = _effect(coef, scale, result.transform)
        part = fitted[name].to_numpy(dtype=float)[in_fit] if name in fitted else np.array([np.nan])
        ident = getattr(st, "identifiable", "no") if st is not None else "no"
        rows.append({"driver": name, "scale": scale, "coefficient": coef[0], "low": coef[1], "high": coef[2],
                     "change": "10% rise" if scale == "log" else "1 unit rise", "effect_pct": effect[0],
                     "effect_low_pct": effect[1], "effect_high_pct": effect[2],
                     "contribution_units": float(np.nansum(part)),
                     "mean_abs_units": float(np.nanmean(np.abs(part))),
                     "identifiable": ident, "note": getattr(st, "note", "") or ""})
    return pd.DataFrame(rows, columns=DRIVER_COLUMNS)


def describe_drivers(result: Any) -> str:
    """The drivers' lines of the fit's summary: coefficient, interval and the effect of the table's change."""
    lines = ["outside drivers (drivers.csv):"]
    for row in driver_table(result).itertuples():
        what = "elasticity" if row.scale == "log" and result.transform != "none" else "coefficient"
        effect = "" if not np.isfinite(row.effect_pct) else (
            f"; a {row.change}: {row.effect_pct:+.1f}% "
            f"[{row.effect_low_pct:+.1f}, {row.effect_high_pct:+.1f}]")
        lines.append(f"  {row.driver} ({row.scale}): {what} {row.coefficient:.3f} "
                     f"[{row.low:.3f}, {row.high:.3f}]{effect}; "
                     f"moves sales {amount(row.mean_abs_units)} units a period on average"
                     + (f" ({row.identifiable}: {row.note})" if row.identifiable != "yes" else ""))
    return "\n".join(lines)
