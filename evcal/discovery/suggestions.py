"""Findings as a table (``suggestions.csv``) and a calendar fragment (``suggestions.yaml``).

The table has one row per finding, columns exactly :data:`COLUMNS`. The YAML
fragment holds the same findings in the calendar contract's vocabulary
(``events``, ``interventions``, ``exclude``), each entry under a comment that
says what was seen, so a planner can review it and paste what they agree with.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from typing import Any

import pandas as pd
import yaml

__all__ = ["COLUMNS", "KINDS", "Row", "Entry", "flow_yaml", "render_yaml", "table"]

COLUMNS = ["kind", "start", "end", "size_pct", "score", "period", "suggestion"]
KINDS = ("cycle", "outlier", "level_shift", "temporary", "recurring", "abnormal_year", "lost_demand")


@dataclass(frozen=True)
class Row:
    """One line of ``suggestions.csv``."""

    kind: str
    start: dt.date | None
    end: dt.date | None
    size_pct: float | None
    score: float
    period: float | None
    suggestion: str

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise ValueError(f"unknown finding kind {self.kind!r}")


@dataclass
class Entry:
    """One entry of the YAML fragment: its section, mapping and comment lines."""

    section: str  # "events" | "interventions" | "exclude"
    mapping: dict[str, Any]
    comment: list[str] = field(default_factory=list)
    active: bool = True  # False: written commented out (an alternative to choose)


def table(rows: list[Row]) -> pd.DataFrame:
    """The suggestions table, columns in contract order."""
    frame = pd.DataFrame(
        [(r.kind, r.start, r.end, r.size_pct, r.score, r.period, r.suggestion) for r in rows],
        columns=COLUMNS,
    )
    frame["period"] = frame["period"].astype("Float64")
    frame["size_pct"] = frame["size_pct"].astype("Float64")
    return frame


def flow_yaml(mapping: dict[str, Any]) -> str:
    """A one-line YAML flow mapping (dates unquoted, month-days quoted).

    Examples
    --------
    >>> flow_yaml({"when": {"fixed": "12-24"}})
    '{when: {fixed: 12-24}}'
    """
    text = yaml.safe_dump(mapping, default_flow_style=True, sort_keys=False, width=10_000,
                          allow_unicode=True)
    return text.strip()


def render_yaml(entries: list[Entry], header: list[str]) -> str:
    """The calendar fragment: a header comment, then one section per kind of entry."""
    lines = [f"# {h}" for h in header]
    for section in ("events", "interventions", "exclude"):
        chosen = [e for e in entries if e.section == section]
        if not chosen:
            continue
        # a section of only commented-out entries would read as `null`
        lines.append(f"{section}:" if any(e.active for e in chosen) else f"# {section}:")
        for e in chosen:
            lines += [f"  # {c}" for c in e.comment]
            prefix = "  - " if e.active else "  # - "
            lines.append(prefix + flow_yaml(e.mapping))
    if not entries:
        lines.append("# nothing to suggest: no finding beyond what the calendar explains")
    return "\n".join(lines) + "\n"
