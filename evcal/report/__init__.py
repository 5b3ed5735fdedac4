"""report step: the HTML report, its charts and the Excel workbook.

Built from the files the earlier steps write (the model folder, ``plan.csv``,
``backtest.csv``), so a report can be made later, elsewhere, from a folder.
"""

from __future__ import annotations

from typing import Any

__all__ = ["write_report", "write_workbook", "read_model_folder"]


def __getattr__(name: str) -> Any:
    # Imported lazily: matplotlib and openpyxl are only paid for when used.
    if name == "write_report":
        from evcal.report.html import write_report

        return write_report
    if name == "write_workbook":
        from evcal.report.workbook import write_workbook

        return write_workbook
    if name == "read_model_folder":
        from evcal.report.model_folder import read_model_folder

        return read_model_folder
    raise AttributeError(f"module 'evcal.report' has no attribute {name!r}")
