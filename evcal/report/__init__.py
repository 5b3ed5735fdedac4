"""report step: the HTML report, its charts and the Excel workbook.

Built from the files the earlier steps write (the model folder, ``plan.csv``,
``backtest.csv``), so a report can be made later, elsewhere, from a folder.
"""

from evcal.plan.workbook import write_workbook
from evcal.report.headlines import headlines
from evcal.report.html import write_report
from evcal.report.model_folder import read_model_folder, workbook_from_files

__all__ = ["write_report", "write_workbook", "workbook_from_files", "read_model_folder", "headlines"]
