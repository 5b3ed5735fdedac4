"""Effects step: fitted model -> base, contributions, lifts, occurrences, seasonal index."""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from evcal.effects.decompose import closure_shares, decompose, term_coefficients
from evcal.effects.tables import lifts_table, occurrences_table, profile_table

__all__ = ["build_tables", "decompose", "closure_shares", "term_coefficients"]


def build_tables(result: Any, calendar: Any, periods: pd.PeriodIndex, X: pd.DataFrame,
                 inp: Any, history: Any) -> None:
    """Fill ``result.fitted``, ``.occurrences``, ``.lifts``, ``.profile``, ``.residuals`` in place."""
    # the fit's own design, before like-events were added into their targets
    raw_X = inp.raw_X
    closures = closure_shares(calendar, periods)
    parts = decompose(result, raw_X, inp.design.open_share, closures)
    result.mean_base = float(parts["base"].mean())
    dates = history.dates(periods)
    cols: dict[str, Any] = {"date": dates, "actual": inp.actual.to_numpy(),
                            "fitted": parts["fitted"].to_numpy(), "base": parts["base"].to_numpy()}
    for c in parts.columns:
        if c not in ("base", "fitted"):
            cols[c] = parts[c].to_numpy()
    cols["in_fit"] = inp.rows
    result.fitted = pd.DataFrame(cols)
    result.occurrences = occurrences_table(result, calendar, periods, raw_X, parts)
    result.lifts = lifts_table(result, raw_X, parts, result.occurrences)
    result.profile = profile_table(result)
    if inp.transform == "log":
        with np.errstate(divide="ignore", invalid="ignore"):
            scale_resid = np.log(inp.actual.where(inp.rows)) - np.log(parts["fitted"] / result.smear)
    else:
        scale_resid = inp.actual.where(inp.rows) - parts["fitted"]
    result.residuals = pd.Series(scale_resid.to_numpy(), index=periods, name="residual")
    ok = inp.rows & np.isfinite(scale_resid.to_numpy())
    a, f = inp.actual.to_numpy()[ok], parts["fitted"].to_numpy()[ok]
    result.quality = {
        "periods_fitted": int(ok.sum()),
        "wape_pct": float(100 * np.abs(a - f).sum() / np.abs(a).sum()) if ok.any() else float("nan"),
        "resid_sd": float(np.nanstd(scale_resid.to_numpy()[ok])),
    }
    for c, st in result.status.items():
        if st.status in ("unidentifiable", "duplicate"):
            result.warnings.append(f"{c}: {st.note}")
        elif st.status == "no_history":
            result.warnings.append(f"{c}: no occurrence in the history; listed, not fitted")
