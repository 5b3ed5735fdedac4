"""report step: the HTML report, its charts and the Excel workbook.

Built from the files the earlier steps write (the model folder, ``plan.csv``,
``backtest.csv``), so a report can be made later, elsewhere, from a folder.
"""

from __future__ import annotations

from typing import Any

__all__ = ["write_report", "write_workbook", "workbook_from_files", "read_model_folder", "headlines"]

_WHERE = {
    "write_report": "evcal.report.html",
    "write_workbook": "evcal.plan.workbook",
    "workbook_from_files": "evcal.report.model_folder",
    "read_model_folder": "evcal.report.model_folder",
    "headlines": "evcal.report.headlines",
}


def __getattr__(name: str) -> Any:
    # Imported lazily: matplotlib and openpyxl are only paid for when used.
    if name in _WHERE:
        import importlib

        return getattr(importlib.import_module(_WHERE[name]), name)
    raise AttributeError(f"module 'evcal.report' has no attribute {name!r}")
