"""One chart of the findings: sales against the model, each finding marked.

Drawn with matplotlib's Agg backend (no display needed) and written as
``findings.png`` next to the suggestions.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

__all__ = ["findings_chart"]

_COLOURS = {"outlier": "#d62728", "level_shift": "#9467bd", "temporary": "#ff7f0e",
            "recurring": "#2ca02c", "abnormal_year": "#8c564b", "lost_demand": "#1f77b4"}


def findings_chart(findings: Any, path: str | Path) -> Path:
    """Write a PNG: actual and fitted sales, with findings shaded or marked."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fitted = findings.fit.fitted
    dates = pd.to_datetime(fitted["date"])
    fig, ax = plt.subplots(figsize=(11, 4.2), dpi=110)
    ax.plot(dates, fitted["actual"], color="#444444", lw=1.0, label="actual")
    ax.plot(dates, fitted["fitted"], color="#1f77b4", lw=1.0, alpha=0.8, label="model")
    seen: set[str] = set()
    for row in findings.table.itertuples():
        if row.kind == "cycle" or row.start is None or (isinstance(row.start, float) and np.isnan(row.start)):
            continue
        colour = _COLOURS[row.kind]
        label = None if row.kind in seen else row.kind.replace("_", " ")
        seen.add(row.kind)
        start = pd.Timestamp(row.start)
        if row.kind in ("abnormal_year", "lost_demand"):
            ax.axvspan(start, pd.Timestamp(row.end), color=colour, alpha=0.15, label=label)
        elif row.kind == "level_shift":
            ax.axvline(start, color=colour, lw=1.2, ls="--", label=label)
        elif row.kind != "recurring":
            ax.axvline(start, color=colour, lw=0.8, alpha=0.7, label=label)
    ax.set_title("What the model leaves unexplained")
    ax.set_ylabel("units")
    ax.legend(loc="upper left", fontsize=8, ncol=4, frameon=False)
    fig.tight_layout()
    path = Path(path)
    fig.savefig(path)
    plt.close(fig)
    return path
